"""Quantile intervals from sketches at every n: width, coverage, power and false calls.

Run:  python benchmarks/interval_bench.py [--quick] [--runs 100] [--part power,width,coverage]

The scenario (invented): a checkout service whose latency A is lognormal (median 20 ms,
sigma 1). A release B raises only the slow end: every value above A's p98 is scaled by
a factor that ramps from 1 at p98 to 1.05 at p99 and stays there, so B's p99, p99.9 and
p99.99 are exactly 5 % above A's and nothing below p98 moves (a continuous, monotone
change: no gap in B for the sketch or the ranks to trip on).

Parts, each printed as one table:

* ``power`` - per n in 10^5, 10^6 and ``--runs`` pairs of samples: how often the
  ladder calls p99 "higher"; the same non-overlap test on the raw values with the
  order-statistic intervals of ``scipy.stats.quantile_test`` (the reference: what an
  exact-data tool would say); how often ``gate --limit p99=+0%`` exits 1. The same
  with B drawn from A's own distribution (null runs): false "higher"/"lower" calls per
  ladder row and false gate failures.
* ``width`` - interval width over the width of ``scipy.stats.quantile_test``'s interval
  on the same raw values, per ladder quantile, at 10^6 and 10^7 (median over runs).
* ``drift`` - the same ratio where the sketch is weakest: quantiles that move while
  it is built (a rising median, sorted arrival) and merges of hosts that differ, once
  (``merge_all``) and as a left fold; each interval is also checked to contain the
  exact one.
* ``coverage`` - share of 95 % intervals that hold the true (population) quantile, over
  shapes chosen to stress a sketch: smooth, heavy tail, integer ms, two modes with a gap,
  a spike of one repeated value, sorted arrival, and a sketch merged from 16 parts.
  The true quantile is the distribution's ppf (scipy.stats), inverted by hand for the
  integer and spike shapes.

The machine is shared: only the statistics are printed, not timings.
"""

from __future__ import annotations

import argparse
import time
from collections.abc import Callable

import numpy as np
from numpy.typing import NDArray
from scipy import stats

from ogive.fit.gate import gate, parse_limit
from ogive.fit.ladder import LADDER_QS, ladder, quantile_intervals
from ogive.sketch import Sketch, merge, merge_all

FloatArray = NDArray[np.float64]
BATCH = 1 << 16
QS = np.array([q for q in LADDER_QS if q < 0.9999])  # p50 .. p99.9: the goal rows
MU, SIGMA = np.log(20.0), 1.0
BASE = stats.lognorm(SIGMA, scale=np.exp(MU))


def build(x: FloatArray) -> Sketch:
    s = Sketch("ms")
    for i in range(0, x.size, BATCH):
        s.add(x[i : i + BATCH])
    return s


def raise_tail(x: FloatArray) -> FloatArray:
    """B from A's values: above A's p98 scaled up, ramping to +5 % at p99."""
    ramp = np.clip((BASE.cdf(x) - 0.98) / 0.01, 0.0, 1.0)
    return np.asarray(x * (1.0 + 0.05 * ramp), dtype=np.float64)


def exact_interval(xs_sorted: FloatArray, q: float, confidence: float) -> tuple[float, float]:
    """``scipy.stats.quantile_test(x, p=q).confidence_interval`` on sorted raw values.

    Computed from the same binomial ranks scipy uses (checked against scipy itself on
    the first sample of each run, see ``check_reference``) so that 10^7 values need one
    sort, not one per quantile.
    """
    n = xs_sorted.size
    a = (1 - confidence) / 2
    lo = int(stats.binom.ppf(a, n, q)) - 1
    hi = int(stats.binom.isf(a, n, q))
    low = xs_sorted[lo] if lo >= 0 else -np.inf
    high = xs_sorted[hi] if hi < n else np.inf
    return float(low), float(high)


def check_reference(x: FloatArray) -> None:
    xs = np.sort(x)
    for q in QS:
        ref = stats.quantile_test(x, q=0.0, p=float(q)).confidence_interval(0.95)
        got = exact_interval(xs, float(q), 0.95)
        assert (ref.low, ref.high) == got, (q, ref, got)


def separated(a: tuple[float, float], b: tuple[float, float]) -> str:
    if b[0] > a[1]:
        return "higher"
    if b[1] < a[0]:
        return "lower"
    return "no clear change"


# ---------------------------------------------------------------- power and false calls
def power(ns: list[int], runs: int, rng: np.random.Generator) -> None:
    print("\n== power (B's p99 and above +5 %) and false calls (B drawn like A) ==")
    head = ("n", "case", "ladder p99 higher", "exact-data test", "gate p99=+0% exit 1", "false calls/row")
    print(f"{head[0]:>9} {head[1]:<6} {head[2]:>18} {head[3]:>16} {head[4]:>20} {head[5]:>16}")
    limit = parse_limit("p99=+0%", "ms")
    for n in ns:
        for case in ("shift", "null"):
            hits = exact_hits = gate_fail = 0
            false_rows = 0
            rows_total = 0
            for r in range(runs):
                xa = BASE.rvs(n, random_state=rng)
                xb0 = BASE.rvs(n, random_state=rng)
                xb = raise_tail(xb0) if case == "shift" else xb0
                if r == 0:
                    check_reference(xa[:20000])
                a, b = build(xa), build(xb)
                rows = ladder(a, b, 0.95)
                p99 = next(row for row in rows if row.label == "p99")
                hits += p99.verdict == "higher"
                xas, xbs = np.sort(xa), np.sort(xb)
                exact_hits += (
                    separated(exact_interval(xas, 0.99, 0.95), exact_interval(xbs, 0.99, 0.95)) == "higher"
                )
                gate_fail += gate(a, b, [limit]).exit_code == 1
                if case == "null":
                    tested = [row for row in rows if row.q is not None and row.verdict != "too few values"]
                    false_rows += sum(row.verdict in ("higher", "lower") for row in tested)
                    rows_total += len(tested)
            fc = f"{false_rows / rows_total:.2%}" if rows_total else "-"
            rates = f"{hits / runs:>18.0%} {exact_hits / runs:>16.0%} {gate_fail / runs:>20.0%}"
            print(f"{n:>9,} {case:<6} {rates} {fc:>16}")


# ---------------------------------------------------------------- width
def width(ns: list[int], runs: int, rng: np.random.Generator) -> None:
    print("\n== interval width / exact-data width (scipy.stats.quantile_test), median over runs ==")
    print(f"{'n':>11} " + " ".join(f"{'p' + format(q * 100, 'g'):>8}" for q in QS))
    for n in ns:
        ratios = []
        for _ in range(runs):
            x = BASE.rvs(n, random_state=rng)
            s = build(x)
            xs = np.sort(x)
            ivs = quantile_intervals(s, tuple(QS), 0.95)
            row = []
            for iv in ivs:
                lo, hi = exact_interval(xs, iv.q, 0.95)
                row.append((iv.high - iv.low) / (hi - lo))
            ratios.append(row)
        med = np.median(np.array(ratios), axis=0)
        print(f"{n:>11,} " + " ".join(f"{r:>8.3f}" for r in med))


# ---------------------------------------------------------------- width where the sketch is weakest
def drift(ns: list[int], rng: np.random.Generator) -> None:
    """Width when the quantiles move while the sketch is built: the case the fine
    centroids around the ladder's quantiles cannot anticipate (they sit where those
    quantiles were at each flush)."""
    print("\n== width / exact width when the data drift or differ (one run each; valid either way) ==")
    print(f"{'n':>11} {'feed':<28} " + " ".join(f"{'p' + format(q * 100, 'g'):>8}" for q in QS))
    for n in ns:
        base = BASE.rvs(n, random_state=rng)
        hosts = [BASE.rvs(n // 8, random_state=rng) * (1 + 0.1 * i) for i in range(8)]
        cases = {
            "shuffled (reference)": base,
            "median rises 30 % in time": base * np.linspace(1.0, 1.3, n),
            "sorted arrival": np.sort(base),
            "8 hosts differing, merge_all": np.concatenate(hosts),
            "8 hosts differing, left fold": np.concatenate(hosts),
        }
        for label, x in cases.items():
            if label.endswith("merge_all"):
                s = merge_all([build(h) for h in hosts])
            elif label.endswith("left fold"):
                s = build(hosts[0])
                for h in hosts[1:]:
                    s = merge(s, build(h))
            else:
                s = build(x)
            xs = np.sort(x)
            ratios = []
            for iv in quantile_intervals(s, tuple(QS), 0.95):
                lo, hi = exact_interval(xs, iv.q, 0.95)
                assert iv.low <= lo and iv.high >= hi, (label, iv.q)  # validity, checked on the way
                ratios.append((iv.high - iv.low) / (hi - lo))
            print(f"{n:>11,} {label:<28} " + " ".join(f"{r:>8.3f}" for r in ratios))


# ---------------------------------------------------------------- coverage
def shapes(
    rng: np.random.Generator,
) -> dict[str, tuple[Callable[[int], FloatArray], Callable[[float], float]]]:
    pareto = stats.lomax(1.5, scale=10.0)

    def integer(n: int) -> FloatArray:
        return np.ceil(BASE.rvs(n, random_state=rng) / 4.0)

    def gap(n: int) -> FloatArray:
        hit = rng.random(n) < 0.6
        return np.where(hit, rng.uniform(1.0, 2.0, n), rng.uniform(50.0, 51.0, n))

    def spike(n: int) -> FloatArray:
        x = BASE.rvs(n, random_state=rng)
        x[rng.random(n) < 0.3] = 20.0
        return x

    def spike_ppf(q: float) -> float:
        # F(x) = 0.7 F_base(x) + 0.3 [x >= 20]: invert each branch (scipy's ppf).
        below = 0.7 * float(BASE.cdf(20.0))
        if q <= below:
            return float(BASE.ppf(q / 0.7))
        if q <= below + 0.3:
            return 20.0
        return float(BASE.ppf((q - 0.3) / 0.7))

    return {
        "lognormal": (lambda n: BASE.rvs(n, random_state=rng), lambda q: float(BASE.ppf(q))),
        "lomax 1.5": (lambda n: pareto.rvs(n, random_state=rng), lambda q: float(pareto.ppf(q))),
        # P(ceil(X / 4) <= k) = F(4 k): the true quantile is ceil(Q(q) / 4).
        "integer": (integer, lambda q: float(np.ceil(BASE.ppf(q) / 4.0))),
        "gap 60/40": (gap, lambda q: 1.0 + q / 0.6 if q < 0.6 else 50.0 + (q - 0.6) / 0.4),
        "spike 30%": (spike, spike_ppf),
    }


def coverage(ns: list[int], runs: int, rng: np.random.Generator) -> None:
    print("\n== coverage of 95 % intervals (share holding the true quantile) ==")
    print(
        f"{'n':>9} {'shape':<18} "
        + " ".join(f"{'p' + format(q * 100, 'g'):>7}" for q in QS)
        + "   mean width/exact"
    )
    t0 = time.process_time()
    for n in ns:
        for name, (gen, truth) in shapes(rng).items():
            for feed in ("shuffled", "sorted", "merged x16"):
                if feed != "shuffled" and name not in ("lognormal", "gap 60/40"):
                    continue
                hold = np.zeros(QS.size)
                wr = np.zeros(QS.size)
                for _ in range(runs):
                    x = gen(n)
                    if feed == "sorted":
                        s = build(np.sort(x))
                    elif feed == "merged x16":
                        parts = [build(p) for p in np.array_split(x, 16)]
                        s = parts[0]
                        for p in parts[1:]:
                            s = merge(s, p)
                    else:
                        s = build(x)
                    xs = np.sort(x)
                    for k, iv in enumerate(quantile_intervals(s, tuple(QS), 0.95)):
                        t = truth(iv.q)
                        hold[k] += iv.low <= t <= iv.high
                        lo, hi = exact_interval(xs, iv.q, 0.95)
                        wr[k] += (iv.high - iv.low) / (hi - lo) if hi > lo else 1.0
                label = name if feed == "shuffled" else f"{name}, {feed}"
                print(f"{n:>9,} {label:<18} " + " ".join(f"{h / runs:>7.1%}" for h in hold)
                      + f"   {np.mean(wr / runs):.3f}")  # fmt: skip
    print(f"(coverage part: {time.process_time() - t0:.0f} CPU-s)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--quick", action="store_true", help="fewer runs and smaller n")
    ap.add_argument("--runs", type=int, default=100)
    ap.add_argument("--part", default="power,width,drift,coverage")
    ap.add_argument("--seed", type=int, default=2026)
    args = ap.parse_args()
    rng = np.random.default_rng(args.seed)
    parts = args.part.split(",")
    runs = 20 if args.quick else args.runs
    if "power" in parts:
        power([100_000] if args.quick else [100_000, 1_000_000], runs, rng)
    if "width" in parts:
        width([1_000_000] if args.quick else [1_000_000, 10_000_000], 2 if args.quick else 5, rng)
    if "drift" in parts:
        drift([1_000_000] if args.quick else [1_000_000, 10_000_000], rng)
    if "coverage" in parts:
        coverage([100_000] if args.quick else [100_000, 1_000_000], runs if args.quick else 2 * runs, rng)


if __name__ == "__main__":
    main()
