"""The sketch's bounds (count_bounds, order_statistic_bounds, rank errors) hold for any layout.

Outside reference: the raw data sorted by ``np.sort`` and counted with
``np.searchsorted`` (the ranks ``numpy.quantile``'s default linear method uses). The
bounds are built from each centroid's smallest and largest value, so they must hold
whatever the digest does with the values; the cases are chosen to give it every kind
of layout: smooth and heavy-tailed data, ties, two modes with a gap, a spike of one
repeated value, sorted and reversed arrival, tiny and huge batches, every scale,
left-fold and tree merges (of unequal compressions and scales), and points fed in
pre-binned with only their bin edges known (a batch summarised before it reaches the
digest). A failure here means an interval could miss while claiming its confidence.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pytest
from numpy.typing import NDArray

from ogive.sketch import Sketch, merge
from ogive.sketch.digest import TDigest
from ogive.sketch.runs import merge_sorted as _merge_sorted
from ogive.sketch.runs import sort_floats as _sort_floats
from rank_check import rank_error

FloatArray = NDArray[np.float64]
GRID = np.linspace(0.0005, 0.9995, 2000)


def shapes(rng: np.random.Generator, n: int) -> dict[str, FloatArray]:
    gap = np.where(rng.random(n) < 0.5, rng.uniform(0, 1, n), rng.uniform(100, 101, n))
    body = rng.lognormal(3, 1, n)
    spike = body.copy()
    spike[rng.random(n) < 0.3] = 20.0
    return {
        "lognormal": body,
        "pareto": rng.pareto(1.1, n),
        "1-decimal": np.round(rng.lognormal(1, 1, n), 1),
        "integer": np.ceil(rng.lognormal(1.5, 0.6, n)),
        "spike": spike,
        "sorted": np.sort(body),
        "reversed": np.sort(body)[::-1].copy(),
        "gap": gap,
        "gap sorted": np.sort(gap),
    }


def build(x: FloatArray, compression: float = 400.0, batch: int = 1 << 14, **kw: object) -> Sketch:
    s = Sketch("ms", compression=compression, tail_size=kw.pop("tail_size", 64), **kw)  # type: ignore[arg-type]
    for i in range(0, x.size, batch):
        s.add(x[i : i + batch])
    return s


def prebinned(x: FloatArray, compression: float) -> Sketch:
    """Batches summarised into 2^-8-wide log bins (count, sum, edges) before the digest."""
    s = Sketch("ms", compression=compression, tail_size=16)
    for chunk in np.array_split(x, 5):
        pos = chunk[chunk > 0]
        key = np.floor(np.log2(pos) * 256)
        uniq, inv = np.unique(key, return_inverse=True)
        counts = np.bincount(inv).astype(float)
        sums = np.bincount(inv, weights=pos)
        lo, hi = 2.0 ** (uniq / 256), 2.0 ** ((uniq + 1) / 256)
        mins = np.full(uniq.size, np.inf)
        np.minimum.at(mins, inv, pos)
        maxs = np.full(uniq.size, -np.inf)
        np.maximum.at(maxs, inv, pos)
        pure = mins == maxs
        means = np.clip(sums / counts, lo, hi)
        means = np.where(pure, mins, means)
        s.digest.add_centroids(means, counts, pure, (np.where(pure, mins, lo), np.where(pure, maxs, hi)))
        # The counts and exact tails as Sketch.add keeps them (the digest got the values).
        s.count += pos.size
        s.add_sum(float(pos.sum()), 0)
        s._fold_tails(pos, pos)
    return s


def layouts(x: FloatArray) -> dict[str, Callable[[], Sketch]]:
    parts = np.array_split(x, 16)

    def tree() -> Sketch:
        level = [build(p, 100.0) for p in parts]
        while len(level) > 1:
            level = [merge(level[i], level[i + 1]) for i in range(0, len(level), 2)]
        return level[0]

    def fold_mixed() -> Sketch:
        out = build(parts[0], 60.0, scale="k1")
        for i, p in enumerate(parts[1:]):
            out = merge(out, build(p, [50.0, 300.0, 2000.0][i % 3], scale=["k1", "k2", "k1-ladder"][i % 3]))
        return out

    return {
        "batches of 16k": lambda: build(x),
        "batches of 7": lambda: build(x[:20_000], batch=7),
        "one batch, k1": lambda: build(x, scale="k1", batch=x.size),
        "k2": lambda: build(x, scale="k2"),
        "coarse k1": lambda: build(x, 30.0, scale="k1"),
        "tree of 16": tree,
        "left fold, mixed": fold_mixed,
        "merged with itself": lambda: merge(build(x), build(x)),
        "pre-binned": lambda: prebinned(x, 200.0),
    }


def check_bounds(x: FloatArray, s: Sketch, label: str) -> None:
    xs = np.sort(x)
    n = xs.size
    assert s.count == n, label
    # count_bounds bracket the true count of values <= probe, everywhere.
    lo, hi = s.digest.ranges()
    probe = np.unique(np.concatenate((np.quantile(xs, GRID), lo, hi, np.nextafter(hi, -np.inf), xs[::97])))
    truth = np.searchsorted(xs, probe, side="right")
    at_least, at_most = s.count_bounds(probe)
    assert np.all(at_least <= truth) and np.all(truth <= at_most), label
    # order_statistic_bounds bracket the true order statistics.
    ranks = np.unique(np.concatenate((np.linspace(0, n - 1, 3001).round(), [0, n - 1])))
    below, above = s.order_statistic_bounds(ranks)
    true_v = xs[ranks.astype(np.int64)]
    assert np.all(below <= true_v) and np.all(true_v <= above), label
    # The rank errors of the answers are within their bounds (one position of slack
    # for the interpolation convention between ranks).
    err = rank_error(xs, s.quantile(GRID), GRID)
    assert np.all(err <= s.rank_error_at(GRID) + 1 / n), label
    assert err.max() <= s.rank_error_bound() + 1 / n, label
    cdf_err = np.abs(s.rank(probe) - truth).max() / n
    assert cdf_err <= s.rank_error_bound() + 1e-12, label


@pytest.mark.parametrize("shape", ["lognormal", "pareto", "1-decimal", "integer", "spike", "sorted", "gap"])
def test_bounds_hold_for_every_layout(shape: str) -> None:
    x = shapes(np.random.default_rng(31), 60_000)[shape]
    for label, make in layouts(x).items():
        s = make()
        data = x[:20_000] if label == "batches of 7" else x
        data = data[data > 0] if label == "pre-binned" else data
        if label == "merged with itself":
            data = np.concatenate((x, x))
        check_bounds(data, s, f"{shape}, {label}")


@pytest.mark.parametrize("shape", ["reversed", "gap sorted"])
def test_bounds_hold_for_adversarial_arrival(shape: str) -> None:
    x = shapes(np.random.default_rng(32), 60_000)[shape]
    for batch in (1000, 1 << 14, 1 << 20):
        check_bounds(x, build(x, 200.0, batch=batch), f"{shape}, batch {batch}")


def test_bound_is_not_vacuous_where_a_centroid_straddles_a_gap() -> None:
    """On two modes with nothing between, the k1 centroid at the seam holds values from
    both sides, and the interpolated answer really is off by most of the bound."""
    x = shapes(np.random.default_rng(2), 200_000)["gap"]
    s = build(x, 50.0, scale="k1")
    err = rank_error(x, s.quantile(GRID), GRID)
    assert err.max() >= 0.3 * s.rank_error_bound()


def test_bounds_are_tight_around_the_ladder_quantiles() -> None:
    """Under the default scale the bracket of an order statistic near a ladder quantile
    spans a small share of that quantile's sampling spread sqrt(n p (1 - p)) in ranks:
    the cap is FOCUS_WEIGHT (0.15) of a deviation per centroid, and neighbours from
    different flushes overlap a little, so allow 0.6 (measured 0.2-0.4)."""
    from ogive.sketch.scale import FOCUS_QS

    rng = np.random.default_rng(7)
    n = 2_000_000
    x = rng.lognormal(3, 1, n)
    s = build(x, 2000.0, batch=1 << 16, tail_size=64)
    xs = np.sort(x)
    for p in FOCUS_QS:
        sd = np.sqrt(n * p * (1 - p))
        ranks = np.round(p * n + np.array([-2.0, 0.0, 2.0]) * sd)
        below, above = s.order_statistic_bounds(ranks)
        span = np.searchsorted(xs, above, side="right") - np.searchsorted(xs, below, side="left")
        assert np.all(span <= 0.6 * sd), (p, span / sd)


def test_bound_is_zero_where_exact() -> None:
    s = build(np.random.default_rng(0).normal(size=100), 100.0)
    assert s.exact and s.rank_error_bound() == 0.0
    s = build(np.random.default_rng(0).normal(size=100_000), 100.0)
    at = s.rank_error_at(np.array([0.0, 10 / 100_000, 0.5, 1 - 10 / 100_000, 1.0]))
    assert at[0] == at[1] == at[3] == at[4] == 0.0 and at[2] > 0


def test_pure_means_single_valued_range() -> None:
    """A centroid marked pure holds one repeated value: its range is that value."""
    x = np.ceil(np.random.default_rng(3).lognormal(1.5, 0.6, 300_000))
    s = build(x, 400.0)
    _, _, pure = s.digest.centroids()
    lo, hi = s.digest.ranges()
    np.testing.assert_array_equal(pure, lo == hi)


# ---------------------------------------------------------------------- fast path
def _general(d: TDigest, x: FloatArray) -> None:
    ones = np.ones(x.size)
    mine = (d._means, d._weights, d._pure, d._lo, d._hi)
    d._regroup(*_merge_sorted(mine, (x, ones, ones.astype(bool), x, x)))


@pytest.mark.parametrize("scale", ["k1", "k2", "k3", "k1-ladder"])
@pytest.mark.parametrize("kind", ["normal", "integers", "three-values"])
def test_fast_flush_equals_general_path(scale: str, kind: str) -> None:
    """``_absorb_sorted`` must cluster exactly like ``_regroup(_merge_sorted(...))``.

    Checked over several flushes on continuous data and from an empty digest on tied
    data; on later flushes of tied data the two may differ where a mixed centroid's
    mean happens to equal a repeated value (documented in ``_heavy_runs``).
    """
    rng = np.random.default_rng(hash((scale, kind)) % 2**32)
    for trial in range(20):
        fast = TDigest(float(rng.choice([20, 100, 500])), scale)
        slow = TDigest(fast.compression, scale)
        flushes = 4 if kind == "normal" else 1
        for _ in range(flushes):
            n = int(rng.integers(1, 4000))
            if kind == "normal":
                x = rng.normal(size=n)
            elif kind == "integers":
                x = np.round(rng.lognormal(2, 1, n))
            else:
                x = rng.choice([1.0, 2.0, 5.0], n)
            x.sort()
            fast._absorb_sorted(x.copy())
            _general(slow, x)
            np.testing.assert_array_equal(fast._weights, slow._weights, err_msg=f"trial {trial}")
            np.testing.assert_array_equal(fast._pure, slow._pure)
            np.testing.assert_allclose(fast._means, slow._means, rtol=1e-11, atol=1e-300)
            np.testing.assert_array_equal(fast._lo, slow._lo)
            np.testing.assert_array_equal(fast._hi, slow._hi)


def test_int64_key_sort_matches_numpy() -> None:
    rng = np.random.default_rng(6)
    tiny = np.finfo(float).tiny
    cases = [
        rng.normal(size=100_001),
        rng.lognormal(size=5000),
        np.array(
            [0.0, -0.0, -tiny, tiny, -5.0, 3.0, np.finfo(float).max, -np.finfo(float).max, 5e-324, -5e-324]
        ),
        rng.integers(-3, 3, 1000).astype(float),
        np.empty(0),
    ]
    for x in cases:
        a = x.copy()
        _sort_floats(a)
        np.testing.assert_array_equal(a, np.sort(x))
