"""Properties of the text plots, checked against outside references where numbers matter."""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.stats as st
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as hs

from ogive import render
from ogive.fit.band import band_epsilon, dkw_epsilon, with_dkw_band
from ogive.fit.curves import (
    cdf_from_pairs,
    cdf_from_sketches,
    detrended_from_pairs,
    marks_from_pairs,
    pp_from_pairs,
    pp_from_sketches,
    qq_from_pairs,
)
from ogive.fit.qq import QuantilePairs, pairs_from_model, pairs_from_sketches, probability_grid
from ogive.numbers import quantity
from ogive.render.frame import Figure
from ogive.render.ticks import Scale, choose_ticks, nice_step
from ogive.sketch import Sketch


def _sketch(values: np.ndarray, unit: str = "ms") -> Sketch:
    s = Sketch(unit)
    s.add(values)
    return s


def _layer(fig: Figure, role: str) -> np.ndarray:
    for i, layer in enumerate(fig.canvas.layers):
        if layer.role == role:
            return fig.canvas.occupied(i)
    raise AssertionError(f"no layer {role!r}")


def _check_shape(lines: list[str], width: int, height: int) -> None:
    assert len(lines) == height
    assert all(len(line) <= width for line in lines), max(len(x) for x in lines)


def _check_labels(fig: Figure) -> None:
    boxes = [(lab.row, lab.col, lab.col + len(lab.text)) for lab in fig.labels]
    for i, (r1, a1, b1) in enumerate(boxes):
        assert 0 <= r1 < fig.canvas.rows and a1 >= 0 and b1 <= fig.canvas.cols
        for r2, a2, b2 in boxes[i + 1 :]:
            assert r1 != r2 or b1 <= a2 or b2 <= a1, "two labels overlap"
        for mr, mc in fig.marks.values():
            assert not (mr == r1 and a1 <= mc < b1), "a label hides a mark"


# ---------------------------------------------------------------- Q-Q properties
def test_identical_inputs_lie_on_the_diagonal() -> None:
    rng = np.random.default_rng(7)
    s = _sketch(rng.lognormal(4.0, 0.8, 50_000))
    pairs = pairs_from_sketches(s, s)
    for width, height in ((40, 12), (80, 24), (133, 41)):
        fig = render.qq_figure(qq_from_pairs(pairs), width=width, height=height)
        data, line = _layer(fig, "subject"), _layer(fig, "reference")
        rows, cols = np.nonzero(data)
        assert rows.size > 0
        for r, c in zip(rows, cols, strict=True):
            # The y = x line passes through this column within one cell row of the point
            # (a cell holds 4 dot rows, so a point and the line can straddle a boundary).
            line_rows = np.nonzero(line[:, c])[0]
            assert line_rows.size and np.min(np.abs(line_rows - r)) <= 1


def test_lognormal_data_against_normal_model_bends_the_tail_up() -> None:
    rng = np.random.default_rng(11)
    raw = rng.lognormal(0.0, 0.5, 200_000)
    # Outside reference: scipy's maximum-likelihood normal fit on the raw values.
    model = st.norm(*st.norm.fit(raw))
    pairs = pairs_from_model(_sketch(raw, "s"), model, reference_label="normal")
    # The sketch answers like numpy.quantile on the raw data (numpy as the outside check);
    # 1 % relative is far beyond t-digest error at p99.9 with an exact 1024-value tail.
    assert math.isclose(marks_from_pairs(pairs)[-1].subject, float(np.quantile(raw, 0.999)), rel_tol=0.01)
    fig = render.qq_figure(qq_from_pairs(pairs), width=80, height=24, log=False)
    for label, above in (("p50", False), ("p99", True), ("p99.9", True)):
        mark = next(m for m in marks_from_pairs(pairs) if m.label == label)
        r, _c = fig.marks[label]
        diag = fig.to_cell(mark.reference, mark.reference)
        assert diag is not None
        # Row 0 is the top: "above the line" means a smaller row number.
        assert (r < diag[0]) if above else (r >= diag[0]), label
    # The lognormal median (1.0) sits below the normal mean exp(0.125) (handbook moments).
    assert pairs.subject[np.searchsorted(pairs.probs, 0.5)] < model.ppf(0.5)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    width=hs.integers(40, 160),
    height=hs.integers(12, 60),
    sigma=hs.floats(0.05, 2.5),
    shift=hs.floats(-3, 8),
    ascii_only=hs.booleans(),
)
def test_every_plot_fits_its_box(
    width: int, height: int, sigma: float, shift: float, ascii_only: bool
) -> None:
    p = probability_grid(10_000, 120)
    model = st.lognorm(sigma, scale=math.exp(shift))
    data = st.lognorm(sigma * 1.3, scale=math.exp(shift) * 1.1)
    pairs = with_dkw_band(
        QuantilePairs(p, model.ppf(p), data.ppf(p), "ms", "model", "data"), model.ppf, dkw_epsilon(10_000)
    )
    for fig in (
        render.qq_figure(qq_from_pairs(pairs), width=width, height=height, ascii_only=ascii_only),
        render.qq_figure(qq_from_pairs(pairs), width=width, height=height, ascii_only=ascii_only, log=False),
        render.detrended_figure(
            detrended_from_pairs(pairs), width=width, height=height, ascii_only=ascii_only
        ),
        render.detrended_figure(
            detrended_from_pairs(pairs), width=width, height=height, ascii_only=ascii_only, x_axis="value"
        ),
        render.pp_figure(pp_from_pairs(pairs), width=width, height=height, ascii_only=ascii_only),
        render.cdf_figure(cdf_from_pairs(pairs), width=width, height=height, ascii_only=ascii_only),
    ):
        lines = fig.lines()
        _check_shape(lines, width, height)
        _check_labels(fig)
        if ascii_only:
            assert all(ch.isascii() for line in lines for ch in line)
    # Points stay inside the frame: every subject point of the Q-Q maps to a canvas cell.
    fig = render.qq_figure(qq_from_pairs(pairs), width=width, height=height)
    assert all(fig.to_cell(x, y) is not None for x, y in zip(pairs.reference, pairs.subject, strict=True))
    d = detrended_from_pairs(pairs)
    fig = render.detrended_figure(d, width=width, height=height)
    assert all(fig.to_cell(x, y) is not None for x, y in zip(d.probs, d.deviation, strict=True))


def test_marks_are_labelled_without_overlap_at_the_smallest_size() -> None:
    p = probability_grid(100_000)
    model, data = st.lognorm(0.4, scale=50), st.lognorm(0.7, scale=55)
    pairs = QuantilePairs(p, model.ppf(p), data.ppf(p), "ms", "model", "data")
    fig = render.qq_figure(qq_from_pairs(pairs), width=40, height=12)
    _check_labels(fig)
    assert set(fig.marks) == {"p50", "p90", "p99", "p99.9"}
    assert {lab.text for lab in fig.labels} == {"p50", "p90", "p99", "p99.9"}


def test_too_small_a_box_is_refused_in_a_sentence() -> None:
    p = probability_grid(1000, 50)
    pairs = QuantilePairs(p, p + 1, p + 1, "ms", "a", "b")
    with pytest.raises(ValueError, match="at least 40×12"):
        render.qq_plot(qq_from_pairs(pairs), width=39, height=20)


def test_colour_spans_follow_no_color(monkeypatch: pytest.MonkeyPatch) -> None:
    p = probability_grid(1000, 50)
    pairs = QuantilePairs(p, p * 10 + 1, p * 12 + 1, "ms", "a", "b")
    lines = render.qq_plot(qq_from_pairs(pairs), width=60, height=16)
    coloured = render.ansi_lines(lines)
    assert any("\x1b[" in x for x in coloured)
    assert [__import__("re").sub(r"\x1b\[[0-9;]*m", "", x) for x in coloured] == list(lines)
    monkeypatch.setenv("NO_COLOR", "1")
    assert not render.color_allowed(None)
    assert render.rich_text(lines).spans == []


# ---------------------------------------------------------------- other kinds from sketches
def test_pp_and_cdf_from_sketches_match_numpy() -> None:
    rng = np.random.default_rng(3)
    a_raw, b_raw = rng.gamma(2.0, 20.0, 30_000), rng.gamma(2.2, 20.0, 30_000)
    a, b = _sketch(a_raw), _sketch(b_raw)
    pp = pp_from_sketches(b, a)
    # Outside reference: empirical CDFs straight from the raw arrays (numpy searchsorted);
    # 0.005 absorbs t-digest rank error in the body at compression defaults (common practice).
    x = np.quantile(a_raw, pp.reference_p[1:-1])
    expect = np.searchsorted(np.sort(b_raw), x, side="right") / b_raw.size
    assert np.max(np.abs(np.interp(x, np.quantile(a_raw, pp.reference_p), pp.subject_p) - expect)) < 0.01
    overlay = cdf_from_sketches({"a": a, "b": b})
    _check_shape(render.cdf_plot(overlay, width=70, height=20), 70, 20)
    _check_shape(render.pp_plot(pp, width=70, height=20), 70, 20)


def test_shift_plot_of_a_slower_sample_sits_above_zero() -> None:
    from ogive.fit.shift import shift_function

    rng = np.random.default_rng(5)
    a_raw, b_raw = rng.lognormal(4.0, 0.5, 20_000), rng.lognormal(4.1, 0.5, 20_000)
    sf = shift_function(_sketch(a_raw), _sketch(b_raw), labels=("before", "after"))
    # Outside reference: numpy.quantile on the raw draws says B is slower at every
    # probability drawn, so no point may be drawn below the zero line.
    assert np.all(np.quantile(b_raw, sf.probs) > np.quantile(a_raw, sf.probs))
    fig = render.shift_figure(sf, width=80, height=24)
    _check_shape(fig.lines(), 80, 24)
    zero = fig.to_cell(0.5, 0.0)
    rows = np.nonzero(_layer(fig, "subject"))[0]
    assert zero is not None and rows.max() <= zero[0] and rows.min() < zero[0]


# ---------------------------------------------------------------- bands, ticks, formats
def test_dkw_epsilon_against_the_exact_ks_quantile() -> None:
    # Outside reference: scipy.stats.kstwo is the exact distribution of the one-sample KS
    # statistic; DKW–Massart is a conservative bound on it, and tight for large n.
    for n in (50, 500, 5000):
        exact = st.kstwo.ppf(0.95, n)
        eps = dkw_epsilon(n, 0.95)
        assert exact <= eps <= exact * 1.06
    # Handbook formula sqrt(ln(2/alpha) / (2n)) at n=100, alpha=0.05.
    assert math.isclose(dkw_epsilon(100), math.sqrt(math.log(40) / 200))


def test_band_covers_the_model_curve_when_the_model_is_true() -> None:
    rng = np.random.default_rng(21)
    model = st.gamma(2.0, scale=30.0)
    s = _sketch(model.rvs(size=20_000, random_state=rng))
    pairs = pairs_from_model(s, model)
    banded = with_dkw_band(pairs, model.ppf, band_epsilon(s), confidence=0.95)
    assert banded.band_low is not None and banded.band_high is not None
    inside = (banded.subject >= banded.band_low) & (banded.subject <= banded.band_high)
    assert inside.all()


def test_tick_steps_are_1_2_5() -> None:
    assert [nice_step(s, 5) for s in (1.0, 7.0, 33.0, 480.0)] == [0.2, 2.0, 10.0, 100.0]
    ms = lambda v, d: quantity(v, "ms", digits=d, compact=True)  # noqa: E731
    lin = choose_ticks(Scale("linear", 0.0, 1000.0), 70, ms, horizontal=True)
    steps = np.diff([t.value for t in lin])
    assert np.allclose(steps, steps[0])
    mant = steps[0] / 10 ** math.floor(math.log10(steps[0]))
    assert round(mant, 9) in (1.0, 2.0, 5.0)
    log = choose_ticks(
        Scale("log", 1.0, 1e5), 40, lambda v, d: quantity(v, "", digits=d, compact=True), horizontal=True
    )
    majors = [t.value for t in log if t.major]
    assert majors == [1, 10, 100, 1000, 10000, 100000]
    assert {round(t.value / 10 ** math.floor(math.log10(t.value))) for t in log if not t.major} == {2, 5}


def test_short_log_axis_over_a_decade_keeps_several_labels() -> None:
    """A 9-row axis over 1.5-50 ms: 1-2-5 everywhere does not fit, but the decade and
    the 5s and 2s that do must be labelled, not only the top value."""
    fmt = lambda v, d: quantity(v, "ms", digits=d, compact=True)  # noqa: E731
    ticks = choose_ticks(Scale("log", 1.5, 50.0), 9, fmt, horizontal=False)
    values = [t.value for t in ticks if t.major]
    assert 10.0 in values and len(values) >= 3
    cells = np.round(np.array([t.position for t in ticks]) * 8)
    assert np.all(np.diff(cells) >= 2)  # one free row between labels


def test_marks_in_one_cell_share_one_label() -> None:
    # Few distinct values (integer status-like latencies): p90, p99 and p99.9 are all 10 ms.
    a = _sketch(np.repeat([1.0, 2.0, 3.0, 10.0], 1000))
    b = _sketch(np.repeat([1.0, 2.0, 4.0, 10.0], 1000))
    fig = render.qq_figure(qq_from_pairs(pairs_from_sketches(b, a)), width=50, height=14)
    _check_labels(fig)
    assert "p90/p99/p99.9" in {lab.text for lab in fig.labels}


def test_axis_names_and_series_legend_survive_the_smallest_size() -> None:
    p = probability_grid(10_000, 80)
    model, data = st.lognorm(0.4, scale=50), st.lognorm(0.6, scale=55)
    pairs = QuantilePairs(p, model.ppf(p), data.ppf(p), "ms", "gamma fit", "checkout")
    for ascii_only in (False, True):
        head = render.qq_plot(qq_from_pairs(pairs), width=40, height=12, ascii_only=ascii_only)[0]
        assert "checkout" in head and "gamma fit" in head
        # Two CDFs: both series must be named, since they differ only by glyph.
        head = render.cdf_plot(cdf_from_pairs(pairs), width=40, height=12, ascii_only=ascii_only)[0]
        assert "checkout" in head and "gamma fit" in head


def test_two_sample_band_holds_under_no_change_and_flags_a_real_one() -> None:
    rng = np.random.default_rng(8)
    a = _sketch(rng.gamma(2.0, 30.0, 20_000))
    same = _sketch(rng.gamma(2.0, 30.0, 20_000))
    slower = _sketch(rng.gamma(2.0, 33.0, 20_000))  # 10 % slower everywhere

    def outside(b: Sketch) -> int:
        pairs = with_dkw_band(pairs_from_sketches(b, a), a.quantile, band_epsilon(b, a))
        assert pairs.band_low is not None and pairs.band_high is not None
        return int(np.sum((pairs.subject < pairs.band_low) | (pairs.subject > pairs.band_high)))

    # DKW–Massart (see ogive.fit.curves): under no change the whole curve stays inside
    # with probability >= 95 %; this seed is one such draw.
    assert outside(same) == 0
    # A 10 % scale change moves the CDF by up to 0.052 (scipy.stats.gamma CDFs), beyond
    # ε = 2 × 0.0105 (plus sketch rank error) here.
    assert outside(slower) > 0
