"""Objectives and share limits: interval coverage, width, gate false fails and power.

Run:  python benchmarks/objective_bench.py [--quick] [--part coverage,width,null,power]

The scenario (invented): checkout latency A is lognormal (median 20 ms, sigma 1); the
objective's threshold is A's p99 (1 % over) or p99.9 (0.1 % over).

Parts, each printed as one table:

* ``coverage`` - share of 95 % intervals that hold the true share over the threshold
  (the lognormal's survival function, scipy.stats), at n = 10^3 … 10^7:
  ``raw``: the Clopper–Pearson interval on the exact count, k drawn Binomial(n, p)
  (what an exact-data tool would give; scipy's binomtest interval);
  ``sketch``: the interval ``share_over`` reads from a sketch of generated values
  (count range from the sketch, widened accordingly).
* ``width`` - the sketch interval's width over scipy's on the same raw count (median).
* ``null`` - gate false fails: A and B drawn from the same distribution, limits
  ``over(t)=+0%`` (B's share no higher than A's) and ``over(t)<=p`` (at the true share),
  at joint confidence 95 %; a fail here is a false fail.
* ``power`` - B's share over the threshold doubled (a share p/(1-p) of B's values moved
  above it), how often ``over(t)=+0%`` and ``over(t)=+20%`` fail at n = 10^5 and 10^6.

Only the statistics are printed (the machine is shared; timings are not the point).
"""

from __future__ import annotations

import argparse
import math

import numpy as np
from numpy.typing import NDArray
from scipy import stats

from ogive.fit.gate import gate, parse_limit
from ogive.fit.objective import clopper_pearson, share_over
from ogive.sketch import Sketch

FloatArray = NDArray[np.float64]
BATCH = 1 << 20
MU, SIGMA = math.log(20.0), 1.0
BASE = stats.lognorm(SIGMA, scale=math.exp(MU))


def build(x: FloatArray) -> Sketch:
    s = Sketch("ms")
    for i in range(0, x.size, BATCH):
        s.add(x[i : i + BATCH])
    return s


def draw(rng: np.random.Generator, n: int) -> FloatArray:
    return rng.lognormal(MU, SIGMA, n)


def doubled(rng: np.random.Generator, n: int, t: float, p: float) -> FloatArray:
    """A's distribution with a share p / (1 - p) of values moved above t: share over t is 2p."""
    x = draw(rng, n)
    move = rng.random(n) < p / (1 - p)
    x[move] = t * (1 + rng.exponential(0.5, int(move.sum())))
    return x


def rate_ci(k: int, n: int) -> str:
    lo, hi = clopper_pearson(k, k, n, 0.95)
    return f"{k / n:6.1%} [{lo:.1%}, {hi:.1%}]"


def coverage(runs: dict[int, int], rng: np.random.Generator) -> None:
    print("coverage of the 95% interval of the share over the threshold (true share from scipy.stats)")
    print(
        f"  {'n':>10}  {'share':>6}  {'raw runs':>8}  {'raw (Clopper-Pearson)':>24}  "
        f"{'sketch runs':>11}  sketch"
    )
    for p in (0.01, 0.001):
        t = float(BASE.isf(p))
        for n, reps in runs.items():
            raw_reps = 4000
            ks = rng.binomial(n, p, raw_reps)
            raw = sum(lo <= p <= hi for lo, hi in (clopper_pearson(int(k), int(k), n, 0.95) for k in ks))
            hits = 0
            for _ in range(reps):
                sh = share_over(build(draw(rng, n)), t)
                hits += sh.low <= p <= sh.high
            print(
                f"  {n:>10,}  {p:>6.1%}  {raw_reps:>8}  {rate_ci(raw, raw_reps):>24}  "
                f"{reps:>11}  {rate_ci(hits, reps)}"
            )


def width(ns: list[int], reps: int, rng: np.random.Generator) -> None:
    print("sketch interval width / scipy binomtest exact interval width on the same raw count (median, max)")
    for p in (0.01, 0.001):
        t = float(BASE.isf(p))
        for n in ns:
            ratios = []
            for _ in range(reps):
                x = draw(rng, n)
                sh = share_over(build(x), t)
                k = int((x > t).sum())
                ci = stats.binomtest(k, n).proportion_ci(method="exact")
                assert sh.low <= ci.low + 1e-12 and sh.high >= ci.high - 1e-12
                ratios.append((sh.high - sh.low) / (ci.high - ci.low))
            print(f"  n={n:>10,}  share {p:.1%}:  {np.median(ratios):.3f}  {max(ratios):.3f}")


def null(ns: list[int], reps: int, rng: np.random.Generator) -> None:
    print("gate false fails, A and B from one distribution (joint confidence 95%)")
    for p in (0.01, 0.001):
        t = float(BASE.isf(p))
        limits = [parse_limit(f"over({t})=+0%", "ms"), parse_limit(f"over({t})<={p * 100}%", "ms")]
        for n in ns:
            fails = [0, 0]
            for _ in range(reps):
                a, b = build(draw(rng, n)), build(draw(rng, n))
                for i, lim in enumerate(limits):
                    fails[i] += gate(a, b, [lim]).exit_code == 1
            print(
                f"  n={n:>9,} share {p:.1%}  over(t)=+0%: {rate_ci(fails[0], reps)}   "
                f"over(t)<={p:.1%}: {rate_ci(fails[1], reps)}   ({reps} runs)"
            )


def power(ns: list[int], reps: int, rng: np.random.Generator) -> None:
    print("gate power for a doubled share over the threshold (fails / runs)")
    for p in (0.01, 0.001):
        t = float(BASE.isf(p))
        limits = [parse_limit(f"over({t})=+0%", "ms"), parse_limit(f"over({t})=+20%", "ms")]
        for n in ns:
            fails = [0, 0]
            for _ in range(reps):
                a, b = build(draw(rng, n)), build(doubled(rng, n, t, p))
                for i, lim in enumerate(limits):
                    fails[i] += gate(a, b, [lim]).exit_code == 1
            print(
                f"  n={n:>9,} share {p:.1%} -> {2 * p:.1%}  over(t)=+0%: {rate_ci(fails[0], reps)}   "
                f"over(t)=+20%: {rate_ci(fails[1], reps)}   ({reps} runs)"
            )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer runs and no n = 10^7")
    ap.add_argument("--part", default="coverage,width,null,power")
    args = ap.parse_args()
    parts = set(args.part.split(","))
    rng = np.random.default_rng(2026)
    q = args.quick
    if "coverage" in parts:
        runs = {1_000: 400, 10_000: 400, 100_000: 400, 1_000_000: 200 if q else 400}
        if not q:
            runs[10_000_000] = 100
        coverage(runs, rng)
    if "width" in parts:
        width([10**5, 10**6] + ([] if q else [10**7]), 5 if q else 10, rng)
    if "null" in parts:
        null([10**4, 10**5], 200 if q else 500, rng)
    if "power" in parts:
        power([10**5, 10**6], 50 if q else 200, rng)


if __name__ == "__main__":
    main()
