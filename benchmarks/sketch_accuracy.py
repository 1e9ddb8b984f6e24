"""Accuracy, size and speed of the sketch, side by side with the ``tdigest`` package.

Run:  python benchmarks/sketch_accuracy.py [--n 1e7] [--tdigest-n 1e5]

For each scale function (k1, k2, k3 of Dunning & Ertl 2019; our k1-ladder) and compression it builds
a sketch of ``--n`` generated values per distribution, in 64 Ki-value batches as the
reader sends them, and prints:

* rank error at p50 … p99.99 against the exact order statistics of the same data
  (``numpy.sort``): an estimate v at q is correct when the 0-based target position
  ``q (n - 1)`` lies in v's rank interval, and the error is the distance, as a
  fraction of n (so ties are not mis-scored);
* centroid count and the size of a one-sketch ``.ogive`` file;
* ingest speed (values/s) of ``Sketch.add``, and, measured in the same run, the speed
  of the general (pre-optimisation) flush path, so the ratio is like for like.

Then the same accuracy on a ``--tdigest-n`` subset for our sketch and the PyPI
``tdigest`` package (``TDigest(delta=1/compression)``, ``batch_update``,
``percentile``) at equal compression, with both speeds. That package is pure Python
(~4*10^4 values/s), hence the subset.

Timings share a 2-core machine with other work: read them as ratios within one run.
"""

from __future__ import annotations

import argparse
import time
from collections.abc import Callable

import numpy as np
from numpy.typing import NDArray

from ogive.sketch import DEFAULT_COMPRESSION, DEFAULT_TAIL, Sketch, SketchSet, dumps
from ogive.sketch.digest import TDigest
from ogive.sketch.runs import merge_sorted as _merge_sorted
from ogive.sketch.sums import add_scaled, block_sum

QS = np.array([0.5, 0.9, 0.99, 0.999, 0.9999])
BATCH = 1 << 16
FloatArray = NDArray[np.float64]


def distributions(rng: np.random.Generator, n: int) -> dict[str, FloatArray]:
    """Invented latency shapes: a service whose requests mostly hit a cache."""
    body = rng.lognormal(np.log(18.0), 0.6, n)
    hit = rng.random(n) < 0.85
    bimodal = np.where(hit, rng.lognormal(np.log(2.0), 0.35, n), rng.lognormal(np.log(60.0), 0.5, n))
    return {
        "continuous": body,
        "3-decimal ms": np.round(body, 3),
        "integer ms": np.round(body),
        "bimodal": bimodal,
    }


def rank_error(sorted_x: FloatArray, v: FloatArray, qs: FloatArray) -> FloatArray:
    """Distance of q (n - 1) from v's rank interval, as a fraction of n."""
    n = sorted_x.size
    p = qs * (n - 1)
    left = np.searchsorted(sorted_x, v, side="left")
    right = np.searchsorted(sorted_x, v, side="right")
    return np.maximum(0.0, np.maximum(left - 1 - p, p - right)) / n


class _GeneralPath(TDigest):
    """The flush as first written: ndarray.sort, materialised merge, ``_regroup``."""

    def _merge_first(self, k: int) -> None:
        x = np.concatenate(self._buf)
        rest = x[k:].copy()
        x = x[:k].copy()
        self._buf, self._buf_n = ([rest] if rest.size else []), rest.size
        self._raw_sum = add_scaled(self._raw_sum, block_sum(x))
        self._version += 1
        x.sort()
        ones = np.ones(x.size)
        mine = (self._means, self._weights, self._pure, self._lo, self._hi)
        self._regroup(*_merge_sorted(mine, (x, ones, ones.astype(bool), x, x)))


def build(x: FloatArray, compression: float, scale: str, general: bool = False) -> tuple[Sketch, float]:
    s = Sketch("ms", compression=compression, scale=scale)
    if general:
        s.digest = _GeneralPath(compression, scale)
    t = time.perf_counter()
    for i in range(0, x.size, BATCH):
        s.add(x[i : i + BATCH])
    s.digest.flush()
    return s, time.perf_counter() - t


def fmt_err(e: FloatArray) -> str:
    return " ".join(f"{v:8.1e}" for v in e)


def study(n: int, scales: list[str], compressions: list[float], seed: int) -> None:
    rng = np.random.default_rng(seed)
    data = distributions(rng, n)
    print(f"\n## Our sketch, n = {n:.0e} per distribution, tail_size {DEFAULT_TAIL}, batches of {BATCH}")
    head = "  ".join(f"{'p' + format(q * 100, 'g'):>8s}" for q in QS)
    print(f"{'distribution':14s} {'scale':5s} {'comp':>5s}  {head}  {'cents':>5s} {'KB':>6s} {'Mval/s':>7s}")
    for name, x in data.items():
        xs = np.sort(x)
        for scale in scales:
            for c in compressions:
                s, dt = build(x, c, scale)
                err = rank_error(xs, s.quantile(QS), QS)
                size = len(dumps(SketchSet({"latency": s}))) / 1024
                cents = s.digest.centroids()[0].size
                print(
                    f"{name:14s} {scale:5s} {c:5.0f}  {fmt_err(err)}  "
                    f"{cents:5d} {size:6.1f} {n / dt / 1e6:7.2f}"
                )
    print("\n## Ingest speed, this code vs the general flush path, same data, same run")
    x = data["continuous"]
    for scale in ("k1-ladder", "k1", "k2"):
        c = DEFAULT_COMPRESSION
        _, fast = build(x, c, scale)
        _, slow = build(x, c, scale, general=True)
        print(
            f"{scale} c={c:.0f}: Sketch.add {x.size / fast / 1e6:.2f} Mval/s "
            f"({fast / x.size * 1e9:.0f} ns/value), "
            f"general path {x.size / slow / 1e6:.2f} Mval/s; ratio {slow / fast:.2f}x"
        )


def versus_tdigest(n: int, compressions: list[float], seed: int) -> None:
    from tdigest import TDigest as PyTDigest  # the PyPI ``tdigest`` package

    rng = np.random.default_rng(seed + 1)
    data = distributions(rng, n)
    print(f"\n## Same data, n = {n:.0e} subset: ours (k1) vs the `tdigest` package (delta = 1/compression)")
    head = "  ".join(f"{'p' + format(q * 100, 'g'):>8s}" for q in QS)
    print(f"{'distribution':14s} {'who':8s} {'comp':>5s}  {head}  {'cents':>5s} {'val/s':>9s}")
    for name, x in data.items():
        xs = np.sort(x)
        for c in compressions:
            s, dt = build(x, c, "k1")
            e = rank_error(xs, s.quantile(QS), QS)
            cents = s.digest.centroids()[0].size
            print(f"{name:14s} {'ogive':8s} {c:5.0f}  {fmt_err(e)}  {cents:5d} {n / dt:9.3g}")
            td = PyTDigest(delta=1.0 / c)
            t = time.perf_counter()
            td.batch_update(x.tolist())
            td.compress()
            dt_td = time.perf_counter() - t
            percentile: Callable[[float], float] = td.percentile
            v = np.array([percentile(q * 100) for q in QS])
            e_td = rank_error(xs, v, QS)
            print(
                f"{name:14s} {'tdigest':8s} {c:5.0f}  {fmt_err(e_td)}  {len(td.C):5d} {n / dt_td:9.3g}"
                f"   (ours {dt_td / dt:.0f}x faster)"
            )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--n", type=float, default=1e6, help="values per distribution (default 1e6)")
    ap.add_argument("--tdigest-n", type=float, default=1e5, help="subset for the tdigest package (1e5)")
    ap.add_argument("--scales", default="k1-ladder,k1,k2,k3")
    ap.add_argument("--compressions", default="400,800,1600")
    ap.add_argument("--seed", type=int, default=20261201)
    ap.add_argument("--skip-tdigest", action="store_true")
    args = ap.parse_args()
    comps = [float(c) for c in args.compressions.split(",")]
    study(int(args.n), args.scales.split(","), comps, args.seed)
    if not args.skip_tdigest:
        versus_tdigest(int(args.tdigest_n), comps, args.seed)


if __name__ == "__main__":
    main()
