"""The text plots: Q-Q, detrended Q-Q, P-P, CDF overlay and shift function.

Every plot is a pure function ``(data, width, height, options) -> list[str]`` that
returns exactly ``height`` lines of at most ``width`` cells, legend and labels
included. The ``*_figure`` variants return the assembled :class:`Figure` (marks, label
positions) for callers and tests that need to know where things landed.

No statistics here: every plot takes the one object :func:`ogive.fit.curves.plot_inputs`
makes for it (named points, bands, deviations included); this module only scales and
draws.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from numpy.typing import NDArray

from ..fit.curves import CDFOverlay, Detrended, PlotData, PPPoints, QQData
from ..fit.shift import ShiftFunction
from ..numbers import count
from .axes import PlotAxes, on_axis, plot_axes, prob_format, robust_range, value_format, with_unit
from .canvas import Layer
from .frame import Figure, LegendItem, PlotLines
from .ticks import Scale, make_scale

FloatArray = NDArray[np.float64]

# Glyphs: (unicode, ascii). Braille layers have unicode None.
SUBJECT = ("•", "*")
BAND = ("·", ":")
"""The band is a row of small dots, not a braille line, so it reads apart from y = x without colour."""
SECOND = ("∘", "o")
MARK = ("◆", "O")
UP, DOWN = ("↑", "^"), ("↓", "v")
LEFT, RIGHT = ("←", "<"), ("→", ">")


def _floor_legend(fig: Figure, scale: Scale, counts: tuple[tuple[str, int], ...]) -> None:
    """Say how many values sit at the floor of a log axis (zero or negative: no place on it)."""
    if scale.kind == "log" and counts:
        where = ", ".join(f"{label} {count(n)}" for label, n in counts)
        fig.legend.append(LegendItem(fig.glyph("≤0", "<=0"), f"at floor: {where}", "axis"))


def _braille(role: str, ascii_glyph: str, priority: int = 0) -> Layer:
    return Layer(role, None, ascii_glyph, priority)


def _marker(role: str, glyphs: tuple[str, str], priority: int = 1) -> Layer:
    return Layer(role, glyphs[0], glyphs[1], priority)


def band_legend(label: str, fig: Figure) -> LegendItem:
    # "95% band": the long name and method stay in the data (band_label) and --help.
    short = label.split(" (")[0].replace(" simultaneous", "") if label else "band"
    return LegendItem(fig.glyph(*BAND), short, "band")


def mark_beyond(fig: Figure, x: FloatArray, y: FloatArray, *, across: bool = False) -> bool:
    """Arrows at the frame where points lie beyond an axis; True if any.

    Up (down) arrows on the top (bottom) row above (below) points beyond the y axis;
    with ``across``, left (right) arrows on the first (last) column, at the point's row,
    for points beyond the x axis. For axes that follow only part of the data (a
    line-up's): the curve leaves through the frame, and the arrows say where it went.
    """
    x, y = np.asarray(x, dtype=np.float64), np.asarray(y, dtype=np.float64)
    scale, other = (fig.xscale, y) if across else (fig.yscale, x)
    v = x if across else y
    lo, hi = sorted((scale.lo, scale.hi))
    high, low = np.isfinite(v) & (v > hi), np.isfinite(v) & (v < lo)
    if not (high.any() or low.any()):
        return False
    if across:
        _, pos = fig.to_dots(np.zeros(v.shape), other)
        at = np.rint(pos).astype(np.int64) // 4
        ends = ((high, fig.canvas.cols - 1, RIGHT), (low, 0, LEFT))
    else:
        pos, _ = fig.to_dots(other, np.zeros(v.shape))
        at = np.rint(pos).astype(np.int64) // 2
        ends = ((high, 0, UP), (low, fig.canvas.rows - 1, DOWN))
    for flags, edge, glyph in ends:
        for k in sorted(set(at[flags & np.isfinite(pos)].tolist())):
            fig.put(k, edge, fig.glyph(*glyph), "band") if across else fig.put(
                edge, k, fig.glyph(*glyph), "band"
            )
    return True


def beyond_legend(fig: Figure, *, across: bool = False) -> LegendItem:
    return LegendItem(fig.glyph(*(("←→", "<>") if across else ("↑↓", "^v"))), "beyond the axis", "band")


# ---------------------------------------------------------------- one figure on given axes
def figure_on(
    axes: PlotAxes,
    *,
    width: int,
    height: int,
    ascii_only: bool = False,
    header_rows: int = 0,
    legend_in_order: bool = False,
    bare: bool = False,
) -> Figure:
    """An empty figure with ``axes`` (from :func:`ogive.render.axes.plot_axes`); the
    other options are :class:`Figure`'s (``bare``: a line-up's panel, canvas only)."""
    return Figure(
        width,
        height,
        xscale=axes.xscale,
        yscale=axes.yscale,
        xfmt=axes.xfmt,
        yfmt=axes.yfmt,
        ascii_only=ascii_only,
        x_title=axes.x_title,
        y_title=axes.y_title,
        header_rows=header_rows,
        legend_in_order=legend_in_order,
        bare=bare,
    )


# ---------------------------------------------------------------- Q-Q
def paint_qq(fig: Figure, data: QQData, *, marks: bool = True) -> None:
    """The Q-Q layers, legend and named points on ``fig`` (x and y share one scale)."""
    pairs = data.pairs
    scale = fig.xscale
    ref, sub = on_axis(scale, pairs.reference), on_axis(scale, pairs.subject)
    W, H = fig.canvas.dot_width, fig.canvas.dot_height
    if pairs.band_low is not None and pairs.band_high is not None:
        band = Layer("band", BAND[0], BAND[1], 0, every=2)
        fig.line(band, ref, on_axis(scale, pairs.band_low))
        fig.line(band, ref, on_axis(scale, pairs.band_high))
        fig.legend.append(band_legend(pairs.band_label, fig))
    if data.boxes:
        _draw_boxes(fig, scale, data)
    # Same scale on both axes: the y = x line runs corner to corner.
    fig.line_dots(_braille("reference", "."), np.array([0.0, W - 1.0]), np.array([H - 1.0, 0.0]))
    fig.line(_marker("subject", SUBJECT), ref, sub)
    fig.legend[:0] = [
        LegendItem(fig.glyph(*SUBJECT), "quantiles", "subject"),
        LegendItem(fig.glyph("⠤", "."), "y = x", "reference"),
    ]
    if mark_beyond(fig, ref, sub, across=True):  # a line-up's axes may leave a model's far tail out
        fig.legend.append(beyond_legend(fig, across=True))
    _floor_legend(fig, scale, data.at_or_below_zero)
    if marks:
        for m in data.marks:
            mx, my = on_axis(scale, np.array([m.reference, m.subject]))
            fig.mark(m.label, float(mx), float(my), fig.glyph(*MARK), label=m.label)


def qq_figure(
    data: QQData,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    ascii_only: bool = False,
    marks: bool = True,
) -> Figure:
    axes = plot_axes("qq", [data], log=log, ascii_only=ascii_only)
    fig = figure_on(axes, width=width, height=height, ascii_only=ascii_only)
    paint_qq(fig, data, marks=marks)
    return fig.finish()


BOX = ("▫", "#")
"""Bucket boxes are braille outlines (Unicode) or ``#`` (ASCII); the legend glyph names them."""


def _draw_boxes(fig: Figure, scale: Scale, data: QQData) -> None:
    """Each bucket box as a closed outline; an open side runs to the edge of the plot."""
    lo, hi = scale.lo, scale.hi
    xs: list[float] = []
    ys: list[float] = []
    for b in data.boxes:
        x0, x1, y0, y1 = (float(np.clip(v, lo, hi)) for v in (b.x_low, b.x_high, b.y_low, b.y_high))
        if scale.kind == "log":
            x0, y0 = max(x0, lo), max(y0, lo)
        xs += [x0, x1, x1, x0, x0, np.nan]
        ys += [y0, y0, y1, y1, y0, np.nan]
    fig.line(_braille("bucket", BOX[1]), np.array(xs), np.array(ys))
    fig.legend.append(LegendItem(fig.glyph(*BOX), data.boxes_label or "buckets", "bucket"))


def qq_plot(
    data: QQData,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    ascii_only: bool = False,
    marks: bool = True,
) -> PlotLines:
    """Subject quantiles (y) against reference quantiles (x) with the 45° line.

    Above the line: the subject is slower (larger) than the reference at that
    probability. ``log`` None picks a log axis unless a value is negative (zeros go to
    its floor, counted in the legend).
    """
    return qq_figure(data, width=width, height=height, log=log, ascii_only=ascii_only, marks=marks).lines()


# ---------------------------------------------------------------- detrended
def paint_detrended(fig: Figure, d: Detrended, *, x_axis: str = "prob", marks: bool = True) -> None:
    """The detrended layers, legend and named points on ``fig``."""
    xscale = fig.xscale
    x = d.probs if x_axis == "prob" else on_axis(xscale, d.reference)
    if d.band_low is not None and d.band_high is not None:
        band = Layer("band", BAND[0], BAND[1], 0, every=2)
        fig.line(band, x, d.band_low)
        fig.line(band, x, d.band_high)
        fig.legend.append(band_legend(d.band_label, fig))
    xs = np.array([xscale.lo, xscale.hi])
    fig.line(_braille("reference", "."), xs, np.zeros(2))
    fig.line(_marker("subject", SUBJECT), x, d.deviation)
    fig.legend[:0] = [
        LegendItem(fig.glyph(*SUBJECT), "deviation", "subject"),
        LegendItem(fig.glyph("⠤", "."), "same", "reference"),
    ]
    if mark_beyond(fig, x, d.deviation):
        fig.legend.append(beyond_legend(fig))
    if x_axis == "value":
        _floor_legend(fig, xscale, d.at_or_below_zero)
    if marks:
        for m in d.marks:
            mx = m.q if x_axis == "prob" else float(on_axis(xscale, np.array([m.reference]))[0])
            fig.mark(m.label, mx, m.subject, fig.glyph(*MARK), label=m.label)


def detrended_figure(
    d: Detrended,
    *,
    width: int,
    height: int,
    x_axis: str = "prob",
    log: bool | None = None,
    ascii_only: bool = False,
) -> Figure:
    axes = plot_axes("detrended", [d], log=log, x_axis=x_axis, ascii_only=ascii_only)
    fig = figure_on(axes, width=width, height=height, ascii_only=ascii_only)
    paint_detrended(fig, d, x_axis=x_axis)
    return fig.finish()


def detrended_plot(
    data: Detrended,
    *,
    width: int,
    height: int,
    x_axis: str = "prob",
    log: bool | None = None,
    ascii_only: bool = False,
) -> PlotLines:
    """How far the subject sits from the reference, in % of the reference, along p.

    On the logit probability axis (``x_axis='prob'``) each decade of the tail (p90,
    p99, p99.9) gets equal room, so a 5 % tail departure that a plain Q-Q plot hides
    at terminal resolution is plain to see. ``log`` applies to ``x_axis='value'``.
    """
    return detrended_figure(
        data, width=width, height=height, x_axis=x_axis, log=log, ascii_only=ascii_only
    ).lines()


# ---------------------------------------------------------------- P-P
def paint_pp(fig: Figure, pp: PPPoints, *, marks: bool = True) -> None:
    """The P-P layers, legend and named points on ``fig`` (both axes [0, 1])."""
    W, H = fig.canvas.dot_width, fig.canvas.dot_height
    if pp.epsilon is not None and pp.epsilon > 0:
        band = Layer("band", BAND[0], BAND[1], 0, every=2)
        e = pp.epsilon
        fig.line(band, np.array([0.0, 1.0 - e]), np.array([e, 1.0]))
        fig.line(band, np.array([e, 1.0]), np.array([0.0, 1.0 - e]))
        fig.legend.append(band_legend(pp.band_label, fig))
    fig.line_dots(_braille("reference", "."), np.array([0.0, W - 1.0]), np.array([H - 1.0, 0.0]))
    fig.line(_marker("subject", SUBJECT), pp.reference_p, pp.subject_p)
    fig.legend[:0] = [
        LegendItem(fig.glyph(*SUBJECT), "P-P", "subject"),
        LegendItem(fig.glyph("⠤", "."), "y = x", "reference"),
    ]
    if marks:
        for m in pp.marks:
            fig.mark(m.label, m.reference, m.subject, fig.glyph(*MARK), label=m.label)


def pp_figure(
    pp: PPPoints,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    ascii_only: bool = False,
) -> Figure:
    del log  # probabilities: a log axis means nothing here
    axes = plot_axes("pp", [pp], ascii_only=ascii_only)
    fig = figure_on(axes, width=width, height=height, ascii_only=ascii_only)
    paint_pp(fig, pp)
    return fig.finish()


def pp_plot(
    data: PPPoints,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    ascii_only: bool = False,
) -> PlotLines:
    """F_subject against F_reference at the same x: the body's fit, read on [0, 1].

    ``log`` is accepted for a uniform call signature and ignored (both axes are
    probabilities).
    """
    return pp_figure(data, width=width, height=height, log=log, ascii_only=ascii_only).lines()


# ---------------------------------------------------------------- CDF overlay
def paint_cdf(fig: Figure, ov: CDFOverlay) -> None:
    """The CDF series (first as a braille line, the others as markers) and legend on ``fig``."""
    styles = [
        (_braille("reference", "."), fig.glyph("⠤", ".")),
        (_marker("subject", SUBJECT), fig.glyph(*SUBJECT)),
        (_marker("second", SECOND, priority=2), fig.glyph(*SECOND)),
    ]
    for s, (layer, glyph) in zip(ov.series, styles, strict=False):
        fig.line(layer, on_axis(fig.xscale, s.values), s.probs)
        fig.legend.append(LegendItem(glyph, s.label, layer.role))
    _floor_legend(fig, fig.xscale, ov.at_or_below_zero)


def cdf_figure(
    ov: CDFOverlay,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    prob_axis: str = "linear",
    ascii_only: bool = False,
) -> Figure:
    axes = plot_axes("cdf", [ov], log=log, prob_axis=prob_axis, ascii_only=ascii_only)
    fig = figure_on(axes, width=width, height=height, ascii_only=ascii_only)
    paint_cdf(fig, ov)
    return fig.finish()


def cdf_plot(
    data: CDFOverlay,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    prob_axis: str = "linear",
    ascii_only: bool = False,
) -> PlotLines:
    """Two (up to three) CDFs on one value axis: the first as a braille line, the others as markers.

    ``prob_axis='logit'`` stretches the tails.
    """
    return cdf_figure(
        data, width=width, height=height, log=log, prob_axis=prob_axis, ascii_only=ascii_only
    ).lines()


# ---------------------------------------------------------------- shift function
def _unbounded(a: FloatArray) -> FloatArray:
    return np.where(a >= 1e300, np.inf, np.where(a <= -1e300, -np.inf, a))


def shift_figure(
    sf: ShiftFunction,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    ascii_only: bool = False,
) -> Figure:
    del log  # differences can be negative: the value axis is always linear
    probs = np.asarray(sf.probs, dtype=np.float64)
    delta = np.asarray(sf.delta, dtype=np.float64)
    # Unbounded ends may arrive as ±inf or as ±float max (numpy.nan_to_num's default).
    low = _unbounded(np.asarray(sf.delta_low, dtype=np.float64))
    high = _unbounded(np.asarray(sf.delta_high, dtype=np.float64))
    xscale = make_scale("logit", probs, pad=0.06)
    # The range follows the estimates: an interval far wider than every shift (the far
    # tail of a small sample) would flatten them all onto zero, so it is cut at the edge
    # of the plot and marked with an arrow, as an unbounded end is.
    yscale = make_scale("linear", robust_range([low, high], delta, factor=1.25), pad=0.06)
    off_top = ~np.isfinite(high) | (high > yscale.hi)
    off_bottom = ~np.isfinite(low) | (low < yscale.lo)
    a, b = sf.labels
    fig = Figure(
        width,
        height,
        xscale=xscale,
        yscale=yscale,
        xfmt=prob_format,
        yfmt=value_format(sf.unit, ascii_only),
        ascii_only=ascii_only,
        x_title=f"quantile of {a}",
        y_title=with_unit(f"{b} − {a}" if not ascii_only else f"{b} - {a}", sf.unit),
    )
    fig.line(_braille("reference", "."), np.array([xscale.lo, xscale.hi]), np.zeros(2))
    interval = _braille("band", "|")
    idx = fig.canvas.layer(interval)
    xd, _ = fig.to_dots(probs, delta)
    _, lo_d = fig.to_dots(probs, np.where(off_bottom, yscale.lo, low))
    _, hi_d = fig.to_dots(probs, np.where(off_top, yscale.hi, high))
    for i in range(probs.size):
        fig.canvas.polyline(idx, np.array([xd[i], xd[i]]), np.array([lo_d[i], hi_d[i]]))
    # Points only, not joined: a joining line would hide the intervals, which are the message.
    pts = fig.canvas.layer(_marker("subject", SUBJECT, priority=2))
    xd_pts, yd_pts = fig.to_dots(probs, delta)
    fig.canvas.dots(pts, xd_pts, yd_pts)
    top, bottom = 0, fig.canvas.rows - 1
    for i in range(probs.size):
        col = int(np.rint(xd[i])) // 2
        if off_top[i]:
            fig.put(top, col, fig.glyph(*UP), "band")
        if off_bottom[i]:
            fig.put(bottom, col, fig.glyph(*DOWN), "band")
    fig.legend.extend(
        [
            LegendItem(fig.glyph(*SUBJECT), "shift", "subject"),
            LegendItem(fig.glyph("⡇", "|"), f"{sf.confidence:.0%} simultaneous", "band"),
        ]
    )
    if off_top.any() or off_bottom.any():
        fig.legend.append(beyond_legend(fig))
    return fig.finish()


def shift_plot(
    data: ShiftFunction,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    ascii_only: bool = False,
) -> PlotLines:
    """B − A at each decile and tail quantile, with its simultaneous interval.

    Above zero: B is slower there. An interval that does not reach zero is a credible
    change; arrows mark intervals the data cannot bound. ``log`` is ignored (differences
    can be negative).
    """
    return shift_figure(data, width=width, height=height, log=log, ascii_only=ascii_only).lines()


# ---------------------------------------------------------------- dispatch
def draw(
    kind: str,
    data: PlotData,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    ascii_only: bool = False,
) -> PlotLines:
    """Draw ``data`` (from :func:`ogive.fit.curves.plot_inputs`) as plot ``kind``."""
    table: dict[str, Callable[..., PlotLines]] = {
        "qq": qq_plot,
        "detrended": detrended_plot,
        "pp": pp_plot,
        "cdf": cdf_plot,
        "shift": shift_plot,
    }
    if kind not in table:
        raise ValueError(f"kind must be one of {', '.join(table)}; got {kind!r}.")
    return table[kind](data, width=width, height=height, log=log, ascii_only=ascii_only)
