"""Sketches that must stay true: merges of unequal tails, sums near the float limit,
files whose checksum is right but whose content is not (issue 12).

Outside references: ``numpy.quantile`` (default linear method) on the raw values;
``numpy.mean`` of the values scaled down by a power of two (exact) for the mean; the
``tdigest`` package's dict layout (``{"centroids": [{"m", "c"}]}``) as written by its
``to_dict``.
"""

from __future__ import annotations

import hashlib
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ogive.sketch import (
    Sketch,
    SketchFormatError,
    SketchSet,
    dumps,
    from_tdigest_dict,
    loads,
    merge,
    merge_all,
)
from ogive.sketch.codec import _canonical


def _sketch(values: np.ndarray, tail: int, unit: str = "ms") -> Sketch:
    s = Sketch(unit, tail_size=tail)
    s.add(values)
    s.check()
    return s


@pytest.mark.parametrize("tails", [(10, 100), (100, 10), (1, 512), (512, 3)])
def test_merge_of_unequal_tails_keeps_only_what_is_exact(tails: tuple[int, int]) -> None:
    """Regression: the smaller-tailed side's values beyond its buffer were missing from
    the 'exact' tail of the merge, so p-low positions answered with wrong values."""
    rng = np.random.default_rng(5)
    a, b = rng.lognormal(0, 1, 5000), rng.lognormal(0, 1, 5000)
    m = merge(_sketch(a, tails[0]), _sketch(b, tails[1]))
    m.check()
    raw = np.concatenate((a, b))
    n = raw.size
    # Every position the merged tails claim exact is exact (numpy.quantile, linear).
    for side, size in (("low", m.low.size), ("high", m.high.size)):
        pos = np.arange(size) if side == "low" else np.arange(n - size, n)
        np.testing.assert_array_equal(m.value_at(pos.astype(float)), np.quantile(raw, pos / (n - 1)))
    assert m.low.size >= min(tails) and m.high.size >= min(tails)


@settings(max_examples=40, deadline=None)
@given(
    st.lists(
        st.tuples(st.integers(1, 40), st.integers(1, 300), st.integers(0, 2**31)), min_size=1, max_size=5
    )
)
def test_any_merge_tree_keeps_true_tails(parts: list[tuple[int, int, int]]) -> None:
    """Sketches of any tail sizes merged at once or one by one, then added to: every
    value the tails hold sits where numpy.quantile puts it, and the invariants hold."""
    raws, sketches = [], []
    for tail, size, seed in parts:
        rng = np.random.default_rng(seed)
        raw = np.round(rng.lognormal(1, 1, size), 1)  # ties, as in real logs
        raws.append(raw)
        sketches.append(_sketch(raw, tail))
    at_once = merge_all(sketches)
    one_by_one = Sketch("ms", tail_size=parts[0][0])
    for s in sketches:
        one_by_one.merge(s)
        one_by_one.check()
    extra = np.round(np.random.default_rng(1).lognormal(1, 1, 200), 1)
    one_by_one.add(extra)
    for m, raw in ((at_once, np.concatenate(raws)), (one_by_one, np.concatenate((*raws, extra)))):
        m.check()
        n = raw.size
        assert m.count == n
        low_pos, high_pos = np.arange(m.low.size), np.arange(n - m.high.size, n)
        np.testing.assert_array_equal(m.value_at(low_pos.astype(float)), np.sort(raw)[low_pos])
        np.testing.assert_array_equal(m.value_at(high_pos.astype(float)), np.sort(raw)[high_pos])
        assert m.min == raw.min() and m.max == raw.max()


def test_sum_near_the_float_limit_keeps_the_mean_and_saves() -> None:
    raw = np.array([1.7e308, 1.7e308, 5.0, 1.6e308])
    s = _sketch(raw, 512)
    # numpy's mean overflows; the mean of the values scaled by 2**-64 (exact), scaled back, does not.
    assert math.isclose(s.mean, math.ldexp(float(np.mean(np.ldexp(raw, -64))), 64), rel_tol=1e-12)
    back = loads(dumps(SketchSet({"all": s})))["all"]
    assert isinstance(back, Sketch) and back.mean == s.mean
    m = merge(back, s)
    m.check()
    assert math.isclose(m.mean, s.mean, rel_tol=1e-12) and m.count == 8


def test_unit_change_of_a_huge_sum_stays_finite() -> None:
    from ogive.sketch.units import in_unit

    s = _sketch(np.array([1e290, 1e290, 2.0]), 512, unit="s")
    ns = in_unit(s, "ns")
    assert isinstance(ns, Sketch)
    assert math.isclose(ns.mean, s.mean * 1e9, rel_tol=1e-12)


def _valid_doc() -> dict:
    s = _sketch(np.random.default_rng(0).lognormal(2, 1, 5000), 64)
    return json.loads(dumps(SketchSet({"all": s})))


def _resealed(doc: dict) -> bytes:
    doc["checksum"] = "sha256:" + hashlib.sha256(_canonical(doc)).hexdigest()
    return json.dumps(doc).encode()


def _swap_low(body: dict) -> None:
    body["low"][0], body["low"][5] = body["low"][5], body["low"][0]


def _high_above(body: dict) -> None:
    body["low"][-1] = body["high"][-1] * 2


def _weights_off(body: dict) -> None:
    body["centroids"]["weight"][3] += 7


def _low_below_high(body: dict) -> None:
    # A low tail above the high one: p90 would come out below p50.
    body["low"] = [body["high"][0] * 0.999] * len(body["low"])
    body["low"][0] = 0.001


def _mean_outside(body: dict) -> None:
    body["sum"] = body["sum"] * 1e6


def _negatives(body: dict) -> None:
    body["negative_count"] = 3


@pytest.mark.parametrize(
    ("edit", "words"),
    [
        (_swap_low, "is not sorted"),
        (_high_above, "outside [min, max]"),
        (_weights_off, "add up to"),
        (_low_below_high, ""),
        (_mean_outside, "mean"),
        (_negatives, "negative_count"),
    ],
)
def test_consistent_checksum_inconsistent_content_is_refused(edit, words: str) -> None:  # type: ignore[no-untyped-def]
    doc = _valid_doc()
    edit(doc["sketches"]["all"])
    pattern = r"malformed: .*" + words.replace("[", r"\[")
    with pytest.raises(SketchFormatError, match=pattern) as info:
        loads(_resealed(doc))
    assert "\n" not in str(info.value)


@pytest.mark.parametrize("bad", [math.nan, math.inf, -1.0, 0.0, 1e308])
def test_tdigest_dict_with_bad_weights_is_a_format_error(bad: float) -> None:
    doc = {"centroids": [{"m": 1.0, "c": 2.0}, {"m": 2.0, "c": bad}, {"m": 3.0, "c": 1e308}]}
    with pytest.raises(SketchFormatError):
        from_tdigest_dict(doc)


def test_deeply_nested_json_is_refused_not_a_recursion_error() -> None:
    deep = b'{"format": "ogive-sketch-set", "x": ' + b"[" * 100_000 + b"]" * 100_000 + b"}"
    with pytest.raises(SketchFormatError, match="nested too deep"):
        loads(deep)
