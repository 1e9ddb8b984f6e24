"""Merging sketches: parts merged against the whole, order independence, many parts.

Outside reference: ``numpy.quantile`` (default linear method) and ``np.sort`` ranks of the
concatenated raw data. Rank error as in ``test_sketch.py``: distance of q (n - 1) from
the estimate's rank interval, over n.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.typing import NDArray

from ogive.sketch import Sketch, merge, merge_all
from rank_check import rank_error

FloatArray = NDArray[np.float64]
QS = np.array([0.001, 0.01, 0.1, 0.5, 0.9, 0.99, 0.999, 0.9999])


def sketch_of(x: FloatArray, **kw: object) -> Sketch:
    s = Sketch("ms", **kw)  # type: ignore[arg-type]
    s.add(x)
    return s


def test_parts_merged_match_the_whole() -> None:
    """Eight hosts' sketches merged vs one sketch of everything, 8 x 10^5 lognormal values."""
    rng = np.random.default_rng(21)
    parts = [rng.lognormal(3 + 0.1 * i, 1, 100_000) for i in range(8)]
    whole = np.concatenate(parts)
    merged = merge_all([sketch_of(p) for p in parts])
    folded = sketch_of(parts[0])
    for p in parts[1:]:
        folded = merge(folded, sketch_of(p))
    single = sketch_of(whole)
    e_m = rank_error(whole, merged.quantile(QS), QS)
    e_f = rank_error(whole, folded.quantile(QS), QS)
    e_s = rank_error(whole, single.quantile(QS), QS)
    # All within their own bounds. The single sketch within 5e-5 of n at these
    # quantiles (a centroid's Brownian wander, see test_sketch.py). Merged hosts that
    # *differ*: around the merged ladder quantiles the small centroids the scale wants
    # cannot be cut from the hosts' bigger ones, which interleave there and put an
    # answer off by up to half of one (measured 1.0e-4 at p50 regrouped once, i.e.
    # 0.2 of the p50's own sampling spread; 4.6e-4 in a left fold, whose every step
    # sized centroids for quantiles that then moved), so the once-merge gets 1.5e-4
    # and the fold only its bound.
    assert e_m.max() <= merged.rank_error_bound() and e_f.max() <= folded.rank_error_bound()
    assert e_m.max() <= 1.5e-4 and e_s.max() <= 5e-5
    assert merged.count == single.count == whole.size
    assert merged.min == whole.min() and merged.max == whole.max()
    np.testing.assert_array_equal(merged.high, np.sort(whole)[-merged.tail_size :])
    assert merged.mean == pytest.approx(whole.mean(), rel=1e-12)


def test_merge_is_commutative_and_associative_within_error() -> None:
    rng = np.random.default_rng(4)
    xa, xb, xc = rng.normal(50, 5, 60_000), rng.exponential(30, 60_000), np.round(rng.lognormal(3, 1, 60_000))
    a, b, c = sketch_of(xa), sketch_of(xb), sketch_of(xc)
    whole = np.concatenate((xa, xb, xc))
    variants = [merge(merge(a, b), c), merge(a, merge(b, c)), merge(merge(c, a), b), merge(b, merge(c, a))]
    for v in variants:
        err = rank_error(whole, v.quantile(QS), QS)
        assert np.all(err <= v.rank_error_bound()), err
        assert v.count == whole.size
    # Pairwise the estimates differ by no more than the two bounds together (in rank).
    ref = variants[0]
    for v in variants[1:]:
        gap = np.abs(ref.cdf(v.quantile(QS)) - QS)
        assert np.all(gap <= ref.rank_error_bound() + v.rank_error_bound() + 1e-6)


def test_merge_does_not_touch_inputs() -> None:
    rng = np.random.default_rng(8)
    a, b = sketch_of(rng.normal(size=5000)), sketch_of(rng.normal(size=5000))
    before = (a.quantile(QS).copy(), b.quantile(QS).copy(), a.count, b.count)
    merge(a, b)
    np.testing.assert_array_equal(a.quantile(QS), before[0])
    np.testing.assert_array_equal(b.quantile(QS), before[1])
    assert (a.count, b.count) == before[2:]


def test_merge_refuses_different_units() -> None:
    with pytest.raises(ValueError, match="different units"):
        merge(Sketch("ms"), Sketch("s"))


def test_thousand_small_sketches_in_a_tree() -> None:
    """1000 partitions of 500 values each, merged pairwise level by level."""
    rng = np.random.default_rng(99)
    parts = [rng.lognormal(2, 0.8, 500) for _ in range(1000)]
    whole = np.concatenate(parts)
    level = [sketch_of(p) for p in parts]
    while len(level) > 1:
        level = [
            merge(level[i], level[i + 1]) if i + 1 < len(level) else level[i] for i in range(0, len(level), 2)
        ]
    top = level[0]
    err = rank_error(whole, top.quantile(QS), QS)
    assert top.count == whole.size
    assert err.max() <= top.rank_error_bound()
    # Measured 4.7e-5 at 5 * 10^5 values; 2e-4 leaves room for other seeds.
    assert err.max() <= 2e-4, err
    assert top.min == whole.min() and top.max == whole.max()
    np.testing.assert_array_equal(top.low, np.sort(whole)[: top.tail_size])
    assert top.digest.centroids()[0].size <= top.compression  # still compressed


def test_merging_integer_ties_keeps_them_exact() -> None:
    # Exact needs each distinct value in a pure centroid of its own: true where values
    # repeat often (up to p99 here) and in the exact buffers (the top 512); between,
    # integers seen a handful of times each share centroids, off by a position or two
    # (within the bound).
    rng = np.random.default_rng(12)
    parts = [np.round(rng.lognormal(3, 1, 50_000)) for _ in range(6)]
    whole = np.concatenate(parts)
    top = sketch_of(parts[0])
    for p in parts[1:]:
        top = merge(top, sketch_of(p))
    qs = np.concatenate((np.linspace(0, 0.99, 991), 1 - np.arange(0, 500, 25) / whole.size))
    assert rank_error(whole, top.quantile(qs), qs).max() == 0.0
    rest = np.linspace(0.99, 1, 101)
    assert np.all(rank_error(whole, top.quantile(rest), rest) <= top.rank_error_at(rest) + 1 / whole.size)


@settings(max_examples=30, deadline=None)
@given(
    sizes=st.lists(st.integers(0, 800), min_size=2, max_size=6),
    seed=st.integers(0, 2**32 - 1),
    compression=st.sampled_from([20.0, 100.0]),
    tail=st.sampled_from([1, 16]),
)
def test_property_merged_parts_within_bound(
    sizes: list[int], seed: int, compression: float, tail: int
) -> None:
    rng = np.random.default_rng(seed)
    parts = [np.round(rng.lognormal(1, 1, k), int(rng.integers(0, 4))) for k in sizes]
    whole = np.concatenate(parts)
    top = sketch_of(parts[0], compression=compression, tail_size=tail)
    for p in parts[1:]:
        top = merge(top, sketch_of(p, compression=compression, tail_size=tail))
    assert top.count == whole.size
    if whole.size == 0:
        assert np.isnan(top.quantile(0.5))
        return
    qs = np.linspace(0, 1, 101)
    err = rank_error(whole, top.quantile(qs), qs)
    assert np.all(err <= top.rank_error_bound() + 1.0 / whole.size)
    assert top.min == whole.min() and top.max == whole.max()


def test_a_copy_stays_as_it_was_while_the_original_grows() -> None:
    """The screen reads copies of sketches a scan keeps filling (``Sketch.copy``): the copy
    must answer for the values it was taken at, whatever the original does next, and be
    the same sketch, byte for byte, as one built from those values alone."""
    from ogive.sketch import SketchSet, dumps

    rng = np.random.default_rng(11)
    first = rng.lognormal(3.0, 1.0, 700_000)  # buffered: fewer than a digest buffer (2^20)
    later = rng.lognormal(6.0, 0.5, 900_000)
    s = sketch_of(first)
    s.provenance.sources = ["a.log"]
    c = s.copy()
    s.add(later)  # passes the buffer: the original merges and sorts
    s.add(np.array([np.nan, -1.0]))
    s.provenance.sources.append("b.log")
    s.provenance.skip("not a number", 3, ["b.log:7"])
    assert (c.count, c.nan_count, c.negative_count) == (first.size, 0, 0)
    assert c.provenance.sources == ["a.log"] and not c.provenance.skipped
    alone = sketch_of(first)
    alone.provenance.sources = ["a.log"]
    assert dumps(SketchSet({"x": c})) == dumps(SketchSet({"x": alone}))
    # And it is right: numpy.quantile's ranks on the raw values it holds.
    assert rank_error(first, c.quantile(QS), QS).max() <= c.rank_error_bound() + 1e-9
