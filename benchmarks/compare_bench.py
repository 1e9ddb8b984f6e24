"""Comparison speed: two 10^8-value sketches, and ``--by`` with 200 groups.

Sketch size does not grow with n, so the 10^8-value sketches are built from one
10^7-value sketch per side merged ten times (count 10^8). Printed side by side in one
run: the same comparison on 10^6-value sketches (it should cost about the same), and
scipy's ks_2samp + wasserstein_distance on 10^7 raw values (what the sketch saves).
Goals (issue 4): compare_sketches on 10^8-value sketches well under 1 s; ``ogive
compare A B --by`` with 200 groups under 5 s (loading both sketch files included).

Run: python benchmarks/compare_bench.py [--quick]
"""

from __future__ import annotations

import contextlib
import io
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from scipy import stats

from ogive.cli import main
from ogive.fit.compare import compare_groups, compare_sketches
from ogive.sketch import Sketch, SketchSet, merge
from ogive.store import load_sketches, save_sketches


def _build(x: np.ndarray) -> Sketch:
    s = Sketch("ms")
    for chunk in np.array_split(x, max(1, x.size // 1_000_000)):
        s.add(chunk)
    return s


def _best(fn, repeat: int = 5) -> float:  # type: ignore[no-untyped-def]
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def main_bench(quick: bool) -> None:
    rng = np.random.default_rng(7)
    n_raw = 2_000_000 if quick else 10_000_000
    xa = rng.lognormal(3.0, 0.6, n_raw)
    xb = rng.lognormal(3.03, 0.62, n_raw)
    t = time.perf_counter()
    a1, b1 = _build(xa), _build(xb)
    build = time.perf_counter() - t
    a, b = a1, b1
    for _ in range(9):
        a, b = merge(a, a1), merge(b, b1)
    small_a, small_b = _build(xa[:1_000_000]), _build(xb[:1_000_000])

    t_big = _best(lambda: compare_sketches(a, b))
    t_small = _best(lambda: compare_sketches(small_a, small_b))
    t_raw = _best(lambda: (stats.ks_2samp(xa, xb), stats.wasserstein_distance(xa, xb)), repeat=1)
    print(f"sketches: {a.count:,} and {b.count:,} values, {a.digest.centroids()[0].size} centroids each side")
    print(f"build two {n_raw:,}-value sketches:          {build:8.3f} s")
    print(f"compare_sketches, {a.count:.0e}-value sketches:   {t_big:8.3f} s   (goal: well under 1 s)")
    print(
        f"compare_sketches, 1e+06-value sketches:      {t_small:8.3f} s"
        f"   ratio big/small {t_big / t_small:5.2f}"
    )
    print(
        f"scipy ks_2samp + W1 on {n_raw:,} raw values: {t_raw:8.3f} s   ratio raw/sketch {t_raw / t_big:5.1f}"
    )

    groups = 200
    per = 5_000 if quick else 20_000
    sa, sb = SketchSet(), SketchSet()
    for g in range(groups):
        k = f"route=/api/r{g:03d}"
        sa.sketches[k] = _build(rng.lognormal(3.0, 0.6, per))
        sb.sketches[k] = _build(rng.lognormal(3.0 + (0.1 if g % 17 == 0 else 0.0), 0.6, per))
    with tempfile.TemporaryDirectory() as d:
        pa, pb = Path(d) / "a.ogive", Path(d) / "b.ogive"
        save_sketches(pa, sa)
        save_sketches(pb, sb)
        argv = ["compare", str(pa), str(pb), "--by", "route"]

        def run_cli() -> None:
            with contextlib.redirect_stdout(io.StringIO()):
                assert main(argv) == 0

        t_by = _best(run_cli, repeat=3)
        t_load = _best(lambda: (load_sketches(pa), load_sketches(pb)), repeat=3)
    t_groups = _best(lambda: compare_groups(sa, sb), repeat=3)
    print(
        f"ogive compare --by, {groups} groups of {per:,} (load included): {t_by:6.3f} s   (goal: under 5 s)"
    )
    print(f"  of which loading the two sketch files:          {t_load:6.3f} s   share {t_load / t_by:4.0%}")
    print(
        f"  compare_groups alone:                           {t_groups:6.3f} s   share {t_groups / t_by:4.0%}"
    )


if __name__ == "__main__":
    main_bench("--quick" in sys.argv)
