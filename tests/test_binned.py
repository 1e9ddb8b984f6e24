"""Binned distributions through the codec, merges, the ladder, the gate, the plot and the fit.

Outside references: numpy.quantile (type 7) of the raw sample behind the buckets;
scipy.stats.fit on scipy.stats.CensoredData.interval_censored of the same bucket
intervals, through ``rv_continuous.fit`` (``scipy.stats.fit`` itself takes no
censored data in scipy 1.17) — the grouped likelihood, Kendall & Stuart vol. 2 ch. 18); the .ogive format
text in sketch/codec.py (version 1 files still load).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy import stats

from ogive.fit.compare import compare_sketches
from ogive.fit.curves import plot_inputs
from ogive.fit.gate import COARSE, EXCEEDED, gate, parse_limit
from ogive.fit.ladder import quantile_intervals
from ogive.fit.models import fit_sketch
from ogive.sketch import Binned, Sketch, SketchSet, dumps, loads, merge_binned
from ogive.sketch.buckets import ExplicitPart, ExponentialPart, Extremes

BOUNDS = np.array([0.5, 1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000.0])


def explicit(x: np.ndarray, bounds: np.ndarray = BOUNDS, *, extremes: bool = False) -> ExplicitPart:
    c = np.bincount(np.searchsorted(bounds, x, side="left"), minlength=bounds.size + 1).astype(float)
    ex = Extremes(float(x.min()), float(x.max()), float(x.sum())) if extremes else Extremes()
    return ExplicitPart(bounds, c, 0.0, ex)


def exponential(x: np.ndarray, scale: int) -> ExponentialPart:
    i = np.ceil(np.log2(x) * 2.0**scale).astype(np.int64) - 1
    return ExponentialPart(scale, int(i.min()), np.bincount(i - i.min()).astype(float))


@pytest.mark.parametrize("seed", range(6))
def test_bounds_hold_for_layouts_and_parts(seed: int) -> None:
    rng = np.random.default_rng(seed)
    a, b = rng.lognormal(3, 1.2, 3000), rng.weibull(0.8, 2000) * 40 + 0.001
    q = np.linspace(0, 1, 201)
    for dist, raw in (
        (Binned("ms", [explicit(a)]), a),
        (Binned("ms", [explicit(a, extremes=True)]), a),
        (Binned("ms", [exponential(b, 2)]), b),
        (Binned("ms", [explicit(a), exponential(b, 3)]), np.concatenate((a, b))),  # two layouts together
    ):
        lo, hi = dist.quantile_bounds(q)
        truth = np.quantile(raw, q)
        assert np.all(lo <= truth) and np.all(truth <= hi)
        r = np.arange(raw.size, dtype=float)
        olo, ohi = dist.order_statistic_bounds(r)
        s = np.sort(raw)
        assert np.all(olo <= s) and np.all(s <= ohi)


def test_merge_adds_same_layout_and_keeps_others_apart() -> None:
    rng = np.random.default_rng(1)
    x, y = rng.lognormal(2, 1, 500), rng.lognormal(2, 1, 700)
    m = merge_binned([Binned("ms", [explicit(x)]), Binned("ms", [explicit(y)])])
    assert len(m.parts) == 1
    np.testing.assert_array_equal(m.parts[0].counts, explicit(np.concatenate((x, y))).counts)
    mixed = merge_binned([m, Binned("ms", [exponential(y, 2)]), Binned("ms", [exponential(x, 2)])])
    assert [p.kind for p in mixed.parts] == [
        "explicit",
        "exponential",
    ]  # exponential: one grid, offsets aligned
    assert mixed.count == 2400


def test_codec_round_trip_and_version_1_files() -> None:
    rng = np.random.default_rng(2)
    x = rng.lognormal(2, 1, 500)
    b = Binned("ms", [explicit(x, extremes=True), exponential(x, 3)])
    s = Sketch("ms")
    s.add(x)
    data = dumps(SketchSet({"bins": b, "raw": s}))
    doc = json.loads(data)
    assert doc["version"] == 2 and doc["sketches"]["bins"]["kind"] == "binned"
    back = loads(data)
    got = back["bins"]
    assert isinstance(got, Binned)
    q = np.linspace(0, 1, 51)
    np.testing.assert_array_equal(got.quantile_bounds(q), b.quantile_bounds(q))
    assert got.min == b.min and got.parts[0].extremes == Extremes(x.min(), x.max(), x.sum())
    # A version-1 file (no 'kind', version 1) loads as before; a binned entry in it does not.
    v1 = json.loads(dumps(SketchSet({"raw": s})))
    v1["version"] = 1
    import hashlib

    from ogive.sketch.codec import _canonical

    v1["checksum"] = "sha256:" + hashlib.sha256(_canonical(v1)).hexdigest()
    assert loads(json.dumps(v1).encode())["raw"].count == 500


def test_bad_binned_entries_are_refused() -> None:
    from ogive.sketch import SketchFormatError
    from ogive.sketch.binned_codec import binned_from_dict, binned_to_dict

    body = binned_to_dict(Binned("ms", [explicit(np.array([1.0, 3.0, 7.0]), extremes=True)]))
    for change, why in (
        ({"bounds": [2, 1, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13]}, "strictly increasing"),
        ({"counts": [-1] + [0] * 13}, "non-negative"),
        ({"max": 0.1}, "above its own max|below its own min|'min' is above"),
    ):
        bad = {**body, "parts": [{**body["parts"][0], **change}]}
        with pytest.raises((ValueError, SketchFormatError), match=why):
            binned_from_dict(bad)


def side(seed: int, median: float, n: int = 20000) -> tuple[Binned, np.ndarray]:
    x = np.random.default_rng(seed).lognormal(np.log(median), 0.6, n)
    return Binned("ms", [explicit(x)]), x


def test_ladder_says_when_the_buckets_are_too_coarse() -> None:
    a, _ = side(1, 60.0)
    b, _ = side(2, 66.0)  # p50 moved inside the bucket (50, 100]
    c = compare_sketches(a, b)
    row = c.row("p50")
    assert row.verdict == "buckets too coarse" and row.bucket == (50.0, 100.0)
    assert any("50.0 ms to 100 ms" in n for n in c.notes)
    far, _ = side(3, 160.0)
    assert compare_sketches(a, far).row("p50").verdict == "higher"


def test_touching_buckets_still_order_the_sides() -> None:
    a = Binned("ms", [ExplicitPart(BOUNDS, np.array([0, 0, 0, 0, 0, 0, 0, 1000, 0, 0, 0, 0, 0, 0.0]), 0.0)])
    b = Binned("ms", [ExplicitPart(BOUNDS, np.array([0, 0, 0, 0, 0, 0, 0, 0, 1000, 0, 0, 0, 0, 0.0]), 0.0)])
    # A's values lie in (50, 100], B's in (100, 200]: B is higher though the intervals touch at 100.
    assert compare_sketches(a, b).row("p50").verdict == "higher"


def test_gate_coarse_is_undecided() -> None:
    a, _ = side(1, 60.0)
    b, _ = side(2, 66.0)
    r = gate(a, b, [parse_limit("p50=+5%", "ms")])
    assert r.checks[0].status == COARSE and r.exit_code == 2
    assert "50.0 ms to 100 ms" in r.checks[0].reason
    far, _ = side(3, 300.0)
    assert gate(a, far, [parse_limit("p50=+5%", "ms")]).checks[0].status == EXCEEDED


def test_intervals_are_conservative_against_the_raw_sample() -> None:
    """The binned interval contains the one scipy.stats.quantile_test gives on the raw values."""
    b, x = side(4, 40.0, 5000)
    for iv in quantile_intervals(b, (0.5, 0.9, 0.99), 0.95):
        ci = stats.quantile_test(x, q=np.quantile(x, iv.q), p=iv.q).confidence_interval(0.95)
        assert iv.low <= ci.low and ci.high <= iv.high


def test_plot_draws_bucket_boxes_holding_the_truth() -> None:
    a, xa = side(1, 60.0)
    b, xb = side(2, 90.0)
    qq = plot_inputs("qq", b, a)
    assert qq.boxes and "buckets of" in qq.boxes_label
    for box in qq.boxes:
        p = 0.5 * (box.p_low + box.p_high)
        assert box.y_low <= np.quantile(xb, p) <= box.y_high
        assert box.x_low <= np.quantile(xa, p) <= box.x_high
    raw = Sketch("ms")
    raw.add(xa)
    assert plot_inputs("qq", b, raw).to_dict()["boxes"]  # a log's sketch against a binned distribution


@pytest.mark.parametrize(
    ("family", "scipy_dist"),
    [("lognormal", stats.lognorm), ("gamma", stats.gamma), ("weibull", stats.weibull_min)],
)
def test_fit_matches_scipy_interval_censored(family: str, scipy_dist: stats.rv_continuous) -> None:
    """Grouped MLE on the buckets within 1% of scipy.stats.fit on the same intervals."""
    x = np.random.default_rng(7).gamma(2.5, 12.0, 8000)
    part = explicit(x)
    b = Binned("ms", [part])
    model = fit_sketch(b, [family], bootstrap=0).models[0].model
    bk = b.buckets()
    used = bk.counts > 0
    lows = np.repeat(bk.lows[used], bk.counts[used].astype(int))
    highs = np.repeat(bk.highs[used], bk.counts[used].astype(int))
    data = stats.CensoredData.interval_censored(low=lows, high=highs)
    # scipy.stats.fit takes only uncensored samples; the distributions' own fit takes CensoredData.
    frozen = scipy_dist(*scipy_dist.fit(data, floc=0))
    probs = np.array([0.1, 0.5, 0.9, 0.99])
    np.testing.assert_allclose(model.ppf(probs), frozen.ppf(probs), rtol=0.01)


def test_a_copy_stays_as_it_was_while_the_original_grows() -> None:
    """The screen's copy of a binned distribution (``Binned.copy``, as ``Sketch.copy``)
    answers for the parts it was taken at, byte for byte, while the original grows."""
    rng = np.random.default_rng(4)
    x, y = rng.lognormal(3, 0.6, 5000), rng.lognormal(4, 0.6, 5000)
    b = Binned("ms", [explicit(x)])
    b.provenance.sources = ["a.otlp"]
    c = b.copy()
    b.add_part(explicit(y))  # same layout: folded into the first part
    b.add_part(exponential(y, 2))
    b.provenance.sources.append("b.otlp")
    alone = Binned("ms", [explicit(x)])
    alone.provenance.sources = ["a.otlp"]
    assert c.count == x.size and b.count == x.size + 2 * y.size
    assert dumps(SketchSet({"x": c})) == dumps(SketchSet({"x": alone}))
