"""The line-up of models (issue 19): panels on shared axes, the one-axis view, the CLI.

Golden files hold the drawing at 80×24 and 160×48 in braille and ASCII, from
closed-form quantiles of scipy.stats (so only a change in drawing can move them):

    OGIVE_UPDATE_GOLDEN=1 python -m pytest tests/test_lineup.py
    git diff tests/golden/

The properties are checked against outside references: scipy.stats draws the data and
gives the fitted models' quantiles; the DKW band is the handbook formula of fit/band.py.
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import scipy.stats as st

from ogive.cli import main
from ogive.fit.band import dkw_epsilon, with_dkw_band
from ogive.fit.curves import detrended_from_pairs, plot_inputs, qq_from_pairs
from ogive.fit.lineup import ModelLineup, ModelPanel, lineup_inputs
from ogive.fit.models import fit_sketch
from ogive.fit.qq import QuantilePairs, probability_grid
from ogive.render.frame import Figure
from ogive.render.lineup import (
    GAP,
    PANEL_MIN_COLS,
    PANEL_MIN_ROWS,
    SERIES,
    lineup_figure,
    lineup_plot,
    one_axis_figure,
    one_axis_plot,
)
from ogive.sketch import Sketch, SketchSet
from ogive.store import save_sketches

GOLDEN = Path(__file__).parent / "golden"
UPDATE = os.environ.get("OGIVE_UPDATE_GOLDEN") == "1"
DEMO = Path(__file__).resolve().parents[1] / "demo_logs"
SIZES = ((80, 24), (160, 48))
TAIL_QS = np.array([0.5, 0.9, 0.99, 0.999])


def _sketch(values: np.ndarray, unit: str = "ms") -> Sketch:
    s = Sketch(unit)
    s.add(values)
    return s


# ---------------------------------------------------------------- closed-form line-up
# Invented scenario: checkout latency (a lognormal with a heavy tail) against three
# models with parameters as a fit might give them.
DATA = st.lognorm(0.62, scale=40.0)
MODELS: list[tuple[str, str, dict[str, float], Any]] = [
    ("lognormal", "lognormal", {"median": 41.0, "sigma": 0.55}, st.lognorm(0.55, scale=41.0)),
    ("gamma", "gamma", {"shape": 2.4, "scale": 20.5}, st.gamma(2.4, scale=20.5)),
    ("weibull", "Weibull", {"shape": 1.55, "scale": 55.0}, st.weibull_min(1.55, scale=55.0)),
]


def _closed_form(kind: str, n_models: int = 3) -> ModelLineup:
    p = probability_grid(100_000)
    panels = []
    for rank, (family, label, params, dist) in enumerate(MODELS[:n_models], start=1):
        pairs = QuantilePairs(p, dist.ppf(p), DATA.ppf(p), "ms", label, "checkout")
        pairs = with_dkw_band(pairs, dist.ppf, dkw_epsilon(100_000))
        tail = float(np.max(np.abs(dist.ppf(TAIL_QS) / DATA.ppf(TAIL_QS) - 1)))
        data = qq_from_pairs(pairs) if kind == "qq" else detrended_from_pairs(pairs)
        panels.append(ModelPanel(rank, label, family, params, tail, data))
    return ModelLineup(kind, "checkout", "ms", "bic", tuple(panels))


def _golden(name: str, lines: list[str], width: int, height: int, ascii_only: bool) -> None:
    assert len(lines) == height
    assert all(len(line) <= width for line in lines), max(len(x) for x in lines)
    if ascii_only:
        assert all(ch.isascii() for line in lines for ch in line)
    path = GOLDEN / f"{name}_{width}x{height}_{'ascii' if ascii_only else 'braille'}.txt"
    text = "\n".join(lines) + "\n"
    if UPDATE:
        path.write_text(text, encoding="utf-8")
    assert path.exists(), f"{path.name} is missing; run with OGIVE_UPDATE_GOLDEN=1 to create it"
    assert text == path.read_text(encoding="utf-8"), f"{path.name} differs; see the module docstring"


@pytest.mark.parametrize("ascii_only", [False, True], ids=["braille", "ascii"])
@pytest.mark.parametrize("size", SIZES, ids=[f"{w}x{h}" for w, h in SIZES])
def test_golden_panels(size: tuple[int, int], ascii_only: bool) -> None:
    width, height = size
    lines = lineup_plot(_closed_form("qq"), width=width, height=height, ascii_only=ascii_only, marked=1)
    _golden("lineup_qq", lines, width, height, ascii_only)


@pytest.mark.parametrize("ascii_only", [False, True], ids=["braille", "ascii"])
@pytest.mark.parametrize("size", SIZES, ids=[f"{w}x{h}" for w, h in SIZES])
def test_golden_one_axis(size: tuple[int, int], ascii_only: bool) -> None:
    width, height = size
    lines = one_axis_plot(_closed_form("detrended"), width=width, height=height, ascii_only=ascii_only)
    _golden("lineup_one_axis", lines, width, height, ascii_only)


def test_golden_detrended_panels() -> None:
    lines = lineup_plot(_closed_form("detrended"), width=80, height=24)
    _golden("lineup_detrended", lines, 80, 24, False)


# ---------------------------------------------------------------- layout
def _titles_row(lines: list[str], n: int) -> str:
    return next(line for line in lines if all(f"{k}. " in line for k in range(1, n + 1)))


@pytest.mark.parametrize("n", [2, 3])
def test_at_80x24_the_panels_stand_in_one_row_and_keep_their_room(n: int) -> None:
    fig = lineup_figure(_closed_form("qq", n), width=80, height=24)
    lay = fig.layout
    assert (lay.columns, lay.rows, lay.shown) == (n, 1, n)
    assert lay.canvas_cols >= PANEL_MIN_COLS and lay.canvas_rows >= PANEL_MIN_ROWS
    lines = fig.lines()
    row = _titles_row(lines, n)
    starts = [row.index(f"{k}. ") for k in range(1, n + 1)]
    assert starts == sorted(starts)
    # Each panel names its model, tail error and (as far as they fit) its parameters.
    text = "\n".join(lines)
    for _, label, params, _ in MODELS[:n]:
        assert label in text
        assert f"{next(iter(params))}=" in text
    assert text.count("tail ") >= n


def test_panels_go_to_a_grid_when_a_row_is_too_narrow_and_the_rest_are_named() -> None:
    base = _closed_form("qq")
    many = ModelLineup("qq", "checkout", "ms", "bic", tuple(
        ModelPanel(k + 1, f"{p.label}-{k}", p.family, p.params, p.tail_error, p.data)
        for k, p in enumerate(base.panels * 4)
    ))  # fmt: skip
    four = ModelLineup("qq", "checkout", "ms", "bic", many.panels[:4])
    lay = lineup_figure(four, width=80, height=24).layout
    assert (lay.columns, lay.rows, lay.shown) == (2, 2, 4)
    fig = lineup_figure(many, width=80, height=24)
    assert fig.layout.shown < 12
    lines = fig.lines()
    assert lines[-1].startswith(f"+{12 - fig.layout.shown} more")
    assert many.panels[fig.layout.shown].label in lines[-1]


def test_too_small_is_refused_with_a_sentence() -> None:
    with pytest.raises(ValueError, match="at least 40"):
        lineup_plot(_closed_form("qq"), width=30, height=24)


@pytest.mark.parametrize("kind", ["qq", "detrended", "pp", "cdf"])
@pytest.mark.parametrize("size", [(80, 24), (100, 30), (160, 48), (40, 12)])
def test_every_panel_shares_the_axes(kind: str, size: tuple[int, int], gamma_fit: tuple[Sketch, Any]) -> None:
    sketch, report = gamma_fit
    lineup = lineup_inputs(kind, sketch, report.ranked, subject_label="gamma data")
    fig = lineup_figure(lineup, width=size[0], height=size[1])
    figs = fig.figures
    assert len(figs) >= 1
    for f in figs[1:]:
        assert f.xscale == figs[0].xscale and f.yscale == figs[0].yscale
        assert f.xticks == figs[0].xticks and f.yticks == figs[0].yticks
        assert (f.canvas.cols, f.canvas.rows) == (figs[0].canvas.cols, figs[0].canvas.rows)
    lines = fig.lines()
    assert len(lines) == size[1] and all(len(x) <= size[0] for x in lines)
    if kind == "qq":  # the shared range covers every panel's data
        lo, hi = sorted((figs[0].yscale.lo, figs[0].yscale.hi))
        assert lo <= sketch.min and sketch.max <= hi


def test_the_marked_panel_is_pointed_out_in_its_title() -> None:
    lines = lineup_plot(_closed_form("qq"), width=80, height=24, marked=2)
    assert "▶ 3. Weibull" in "\n".join(lines)
    ascii_lines = lineup_plot(_closed_form("qq"), width=80, height=24, marked=2, ascii_only=True)
    assert "> 3. Weibull" in "\n".join(ascii_lines)
    assert "▶" not in "\n".join(lineup_plot(_closed_form("qq"), width=80, height=24))


# ---------------------------------------------------------------- properties against scipy
@dataclass(frozen=True)
class _Itself:
    """A 'model' that is the sketch itself: identical inputs on both axes."""

    sketch: Sketch
    rank: int
    label: str
    family: str = "itself"
    tail_error: float = 0.0

    @property
    def params(self) -> dict[str, float]:
        return {}

    def ppf(self, q: Any) -> np.ndarray:
        return self.sketch.quantile(np.asarray(q, dtype=np.float64))

    def cdf(self, x: Any) -> np.ndarray:
        return self.sketch.cdf(np.asarray(x, dtype=np.float64))


def _layer(fig: Figure, role: str) -> np.ndarray:
    for i, layer in enumerate(fig.canvas.layers):
        if layer.role == role:
            return fig.canvas.occupied(i)
    raise AssertionError(f"no layer {role!r}")


@pytest.mark.parametrize("kind", ["qq", "pp"])
def test_identical_inputs_put_every_panels_points_on_its_diagonal(kind: str) -> None:
    rng = np.random.default_rng(19)
    sk = _sketch(st.lognorm(0.8, scale=12.0).rvs(5000, random_state=rng))
    models = [_Itself(sk, k, f"copy {k}") for k in (1, 2, 3)]
    lineup = lineup_inputs(kind, sk, models, subject_label="data")
    for p in lineup.panels:
        if kind == "qq":
            pairs = p.data.pairs  # type: ignore[union-attr]
            np.testing.assert_array_equal(pairs.subject, pairs.reference)
    fig = lineup_figure(lineup, width=80, height=24)
    assert fig.layout.shown == 3
    for f in fig.figures:
        subject, diagonal = _layer(f, "subject"), _layer(f, "reference")
        rows, cols = np.nonzero(subject)
        assert rows.size > 10
        for r, c in zip(rows, cols, strict=True):
            near = diagonal[max(r - 1, 0) : r + 2, c]
            assert near.any(), f"a point at row {r}, column {c} is off the diagonal"


@pytest.fixture(scope="module")
def gamma_fit() -> tuple[Sketch, Any]:
    """20,000 draws from a gamma (scipy.stats), sketched, with gamma and exponential fitted."""
    x = st.gamma(2.5, scale=8.0).rvs(20_000, random_state=np.random.default_rng(7))
    sk = _sketch(x)
    report = fit_sketch(sk, ["gamma", "exponential"], bootstrap=0)
    return sk, report


def test_gamma_data_stay_in_the_gamma_band_and_leave_the_exponential_one(
    gamma_fit: tuple[Sketch, Any],
) -> None:
    sk, report = gamma_fit
    lineup = lineup_inputs("qq", sk, report.ranked, subject_label="gamma data")
    panels = {p.family: p for p in lineup.panels}
    assert set(panels) == {"gamma", "exponential"}
    assert lineup.panels[0].family == "gamma"  # ranked first, so drawn first

    def outside(p: ModelPanel) -> int:
        pairs = p.data.pairs  # type: ignore[union-attr]
        lo, hi, y = pairs.band_low, pairs.band_high, pairs.subject
        return int(np.sum((y < lo) | (y > hi)))

    assert outside(panels["gamma"]) == 0
    assert outside(panels["exponential"]) > 20

    # The model quantiles are scipy's: the fitted parameters in scipy.stats.gamma / expon,
    # and within 2 % of scipy's own maximum-likelihood fit to the raw draws (p50-p99.9).
    g = panels["gamma"]
    pairs = g.data.pairs  # type: ignore[union-attr]
    ref = st.gamma(g.params["shape"], scale=g.params["scale"]).ppf(pairs.probs)
    np.testing.assert_allclose(pairs.reference, ref, rtol=1e-9)
    raw = st.gamma(2.5, scale=8.0).rvs(20_000, random_state=np.random.default_rng(7))
    a, _, scale = st.gamma.fit(raw, floc=0)
    np.testing.assert_allclose(
        np.interp(TAIL_QS, pairs.probs, pairs.reference), st.gamma(a, scale=scale).ppf(TAIL_QS), rtol=0.02
    )
    e = panels["exponential"]
    epairs = e.data.pairs  # type: ignore[union-attr]
    np.testing.assert_allclose(
        np.interp(TAIL_QS, epairs.probs, epairs.reference), st.expon(scale=raw.mean()).ppf(TAIL_QS), rtol=0.02
    )


def test_a_panel_holds_what_the_single_plot_of_its_model_holds(gamma_fit: tuple[Sketch, Any]) -> None:
    sk, report = gamma_fit
    for kind in ("qq", "detrended", "pp", "cdf"):
        lineup = lineup_inputs(kind, sk, report.ranked, subject_label="data")
        for p, c in zip(lineup.panels, report.ranked, strict=True):
            single = plot_inputs(kind, sk, c, subject_label="data", reference_label=c.label)
            assert json.dumps(p.data.to_dict()) == json.dumps(single.to_dict())
            assert p.to_dict()["plot"] == p.data.to_dict()


# ---------------------------------------------------------------- one axis
def test_one_axis_tells_every_model_apart_without_colour() -> None:
    lineup = _closed_form("detrended")
    for ascii_only in (False, True):
        fig = one_axis_figure(lineup, width=80, height=24, ascii_only=ascii_only)
        glyphs, _ = fig.plot_cells()
        drawn = {ch for row in glyphs for ch in row}
        head = "\n".join(fig.lines()[:3])
        for k, p in enumerate(lineup.panels):
            glyph = SERIES[k][1 if ascii_only else 0]
            assert glyph in drawn, f"model {p.label} has no glyph on the plot"
            assert f"{glyph} {p.rank}. {p.label}" in head


def test_one_axis_refuses_what_it_cannot_tell_apart() -> None:
    base = _closed_form("detrended")
    seven = ModelLineup("detrended", "x", "ms", "bic", base.panels * 3)
    with pytest.raises(ValueError, match="at most 6 models"):
        one_axis_plot(seven, width=80, height=24)
    with pytest.raises(ValueError, match="detrended"):
        one_axis_plot(_closed_form("qq"), width=80, height=24)


# ---------------------------------------------------------------- the commands
def test_fit_plot_top_3_shows_three_panels_at_80_columns(capsys: pytest.CaptureFixture[str]) -> None:
    src = str(DEMO / "checkout-day.csv")
    argv = ["fit", src, "--column", "latency_ms", "--plot", "--top", "3", "--width", "80", "--height", "24"]
    assert main([*argv, "--quiet"]) == 0
    out = capsys.readouterr().out.split("\n")
    plot = out[-25:-1]
    assert len(plot) == 24 and all(len(line) <= 80 for line in plot)
    assert plot[0].startswith("↑ all (ms)")
    row = _titles_row(plot, 3)
    assert row.index("1. ") < row.index("2. ") < row.index("3. ")


def test_plot_several_models_json_gives_every_panels_numbers(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], gamma_fit: tuple[Sketch, Any]
) -> None:
    sk, _ = gamma_fit
    path = tmp_path / "g.ogive"
    save_sketches(path, SketchSet({"g": sk}))
    assert main(["plot", str(path), "--model", "gamma,exponential", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["kind"] == "qq" and doc["one_axis"] is False
    assert [p["family"] for p in doc["panels"]] == ["gamma", "exponential"]
    assert all(len(p["plot"]["subject"]) == len(p["plot"]["reference"]) > 100 for p in doc["panels"])
    assert main(["plot", str(path), "--model", "gamma,exponential", "--one-axis", "--width", "80",
                 "--height", "24", "--ascii"]) == 0  # fmt: skip
    lines = capsys.readouterr().out.rstrip("\n").split("\n")
    assert len(lines) == 24 and "* 1. gamma" in lines[0] + lines[1]


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["--model", "gamma,lognormal", "--kind", "shift"], "shift function compares two"),
        (["--model", "gamma,lognormal", "--one-axis", "--kind", "qq"], "--one-axis draws the detrended"),
        (["--model", ","], "names no family"),
        (["--model", "gamma,nosuch"], "unknown family"),
    ],
)
def test_plot_refuses_what_a_line_up_cannot_draw(
    argv: list[str],
    message: str,
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
    gamma_fit: tuple[Sketch, Any],
) -> None:
    sk, _ = gamma_fit
    path = tmp_path / "g.ogive"
    save_sketches(path, SketchSet({"g": sk}))
    assert main(["plot", str(path), *argv]) == 3
    assert message in capsys.readouterr().err


def test_fit_refuses_a_top_below_one(capsys: pytest.CaptureFixture[str]) -> None:
    src = str(DEMO / "checkout-day.csv")
    assert main(["fit", src, "--column", "latency_ms", "--plot", "--top", "0", "--quiet"]) == 3
    assert "--top must be 1 or more" in capsys.readouterr().err


def test_a_model_without_a_relative_scale_makes_every_panel_absolute(gamma_fit: tuple[Sketch, Any]) -> None:
    """A normal's lower quantiles are negative (no relative deviation there): one y axis
    for all panels means differences in ms everywhere, subject − model, checked against
    scipy.stats.norm's quantiles at the fitted parameters."""
    sk, _ = gamma_fit
    report = fit_sketch(sk, ["normal", "lognormal"], bootstrap=0)
    lineup = lineup_inputs("detrended", sk, report.ranked, subject_label="data")
    assert all(not p.data.relative for p in lineup.panels)  # type: ignore[union-attr]
    normal = next(p for p in lineup.panels if p.family == "normal")
    d = normal.data
    ref = st.norm(normal.params["mean"], normal.params["sd"]).ppf(d.probs)  # type: ignore[union-attr]
    np.testing.assert_allclose(d.reference, ref, rtol=1e-9)  # type: ignore[union-attr]
    np.testing.assert_allclose(d.deviation, sk.quantile(d.probs) - ref, rtol=1e-9, atol=1e-9)  # type: ignore[union-attr]
    lines = lineup_plot(lineup, width=80, height=20)
    assert "relative" not in lines[0] and "(ms)" in lines[0]


def test_every_panel_shows_the_same_tick_labels_even_at_the_right_edge(gamma_fit: tuple[Sketch, Any]) -> None:
    """The last panel's tick labels are moved left whole at the edge, never cut ("p99.9" for "p99.99")."""
    sk, _ = gamma_fit
    report = fit_sketch(sk, ["normal", "lognormal"], bootstrap=0)
    lineups = [_closed_form("detrended"), lineup_inputs("detrended", sk, report.ranked, subject_label="d")]
    for lineup in lineups:
        for width in range(78, 100):
            fig = lineup_figure(lineup, width=width, height=20)
            lines, lay = fig.lines(), fig.layout
            labels = lines[lay.header_rows + lay.title_rows + lay.canvas_rows + 1]
            per_panel = [
                labels[lay.panel_left(i) : lay.panel_left(i) + lay.canvas_cols + GAP].split()
                for i in range(lay.shown)
            ]
            assert all(p == per_panel[0] for p in per_panel), (width, per_panel)
