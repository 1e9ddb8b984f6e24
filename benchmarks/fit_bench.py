"""Fit from a sketch vs scipy.stats.<dist>.fit on the raw values, side by side in one run.

For each family: draw n values, sketch them, time ``fit_sketch(sketch, [family])`` and
``scipy.stats.<dist>.fit(raw, floc=0)``, and compare the fitted quantiles at p50, p99
and p99.9. Then time all default families on one sketch at two sizes, to show the fit
cost does not grow with n. Last, small samples, where p-values come from a parametric
bootstrap (99 replicates, each sketched and refitted): ``fit_sketch`` beside
``scipy.stats.goodness_of_fit`` (99 Monte Carlo samples, each refitted by scipy) for the
same families on the same values.

    python benchmarks/fit_bench.py            # n = 10^7 (several minutes: scipy is the slow side)
    python benchmarks/fit_bench.py --n 200000 # quick
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from scipy import stats

from ogive.fit import fit_sketch
from ogive.sketch import Sketch

CASES: dict[str, tuple[object, object, dict[str, float]]] = {
    "normal": (stats.norm, stats.norm(100, 15), {}),
    "lognormal": (stats.lognorm, stats.lognorm(0.6, scale=20), {"floc": 0}),
    "gamma": (stats.gamma, stats.gamma(2.5, scale=8), {"floc": 0}),
    "weibull": (stats.weibull_min, stats.weibull_min(1.4, scale=30), {"floc": 0}),
    "exponential": (stats.expon, stats.expon(scale=12), {"floc": 0}),
    "loglogistic": (stats.fisk, stats.fisk(4.0, scale=20), {"floc": 0}),
    "invgauss": (stats.invgauss, stats.invgauss(0.4, scale=30), {"floc": 0}),
    "lomax": (stats.lomax, stats.lomax(3.0, scale=20), {"floc": 0}),
}
PROBS = np.array([0.5, 0.99, 0.999])


def sketch_of(x: np.ndarray) -> Sketch:
    s = Sketch("ms")
    for i in range(0, x.size, 1 << 20):  # batches, as a scan feeds them
        s.add(x[i : i + (1 << 20)])
    return s


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--n", type=int, default=10_000_000, help="raw values per family (default 10^7)")
    ap.add_argument("--families", default=",".join(CASES), help="comma-separated subset")
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args()
    rng = np.random.default_rng(args.seed)

    print(f"n = {args.n:,} raw values per family")
    cols = f"{'family':<12} {'sketch s':>9} {'fit s':>7} {'scipy s':>8} {'ratio':>7}"
    hdr = cols + "   rel. diff of quantiles p50 / p99 / p99.9"
    print(hdr)
    print("-" * len(hdr))
    worst = 0.0
    for name in args.families.split(","):
        dist, truth, kw = CASES[name]
        x = truth.rvs(args.n, random_state=rng)  # type: ignore[attr-defined]
        t0 = time.perf_counter()
        sk = sketch_of(x)
        t1 = time.perf_counter()
        model = fit_sketch(sk, [name], bootstrap=0).models[0]
        t2 = time.perf_counter()
        ref = dist(*dist.fit(x, **kw))  # type: ignore[attr-defined, operator]
        t3 = time.perf_counter()
        rel = model.ppf(PROBS) / ref.ppf(PROBS) - 1
        worst = max(worst, float(np.abs(rel).max()))
        diffs = " / ".join(f"{r * 100:+.3f}%" for r in rel)
        print(
            f"{name:<12} {t1 - t0:9.2f} {t2 - t1:7.3f} {t3 - t2:8.2f} {(t3 - t2) / (t2 - t1):6.1f}x   {diffs}"
        )
    print(f"largest quantile difference: {worst * 100:.3f}% (goal: within 1%)")

    print("\nall default families on one sketch (lognormal + 3 ms floor data):")
    for n in (max(args.n // 100, 10_000), args.n):
        x = stats.lognorm(0.6, scale=20).rvs(n, random_state=rng) + 3
        sk = sketch_of(x)
        t0 = time.perf_counter()
        report = fit_sketch(sk, bootstrap=0)
        dt = time.perf_counter() - t0
        best = report.models[0]
        count = len(report.models) + len(report.tail_models)
        print(f"  n = {n:>12,}: {dt:6.2f} s for {count} models; best {best.label}")

    print("\nsmall samples, p-values by parametric bootstrap (99 replicates), lognormal data:")
    for n, decimals in ((500, 3), (3000, None)):
        x = stats.lognorm(0.5, scale=20).rvs(n, random_state=rng)
        x = np.round(x, decimals) if decimals is not None else x
        sk = sketch_of(x)
        t0 = time.perf_counter()
        report = fit_sketch(sk, ["lognormal", "gamma"], bootstrap=99, bootstrap_top=2)
        t1 = time.perf_counter()
        for dist in (stats.lognorm, stats.gamma):
            stats.goodness_of_fit(dist, x, known_params={"loc": 0}, statistic="ks", n_mc_samples=99, rng=rng)
        t2 = time.perf_counter()
        p = {m.model.family: m.scores.p_values["ks"] for m in report.models if m.scores.p_values}
        lattice = f"on a {10.0**-decimals:g} lattice" if decimals is not None else "unrounded"
        print(
            f"  n = {n:>5,} {lattice:<16}: {t1 - t0:6.2f} s (scipy goodness_of_fit {t2 - t1:6.2f} s, "
            f"ratio {(t1 - t0) / (t2 - t1):.2f}x); KS p {p}"
        )


if __name__ == "__main__":
    main()
