"""A line-up of models: one panel per fitted model on shared axes, or every model on one axis.

The panels (small multiples) share one x scale and one y scale, so a curve that bends
away in one panel and not in another is a difference between the models, not between
the axes. Sharing the axes also frees room: the y tick labels stand once at the left of
each row of panels, the axis names and legend once at the top, and each panel keeps
only its title (rank, model, tail error, parameters) and its own tick marks.

Layout: panels in one row when each gets at least :data:`PANEL_MIN_COLS` ×
:data:`PANEL_MIN_ROWS` canvas cells, else the grid with the fewest rows that does (4
panels: 2 × 2); when no grid gives every panel that room, the lowest-ranked panels are
left out and a last line names them. Like every plot here: exactly ``height`` lines of at most
``width`` cells, and no statistics — the panels are drawn from
:class:`ogive.fit.lineup.ModelLineup`, each by the same painter as its single plot.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..fit.curves import CDFOverlay, Detrended, PlotData, PPPoints, QQData
from ..fit.lineup import ModelLineup, ModelPanel
from ..numbers import number, percent
from .axes import PlotAxes, plot_axes
from .canvas import Layer
from .frame import MIN_HEIGHT, MIN_WIDTH, Figure, LegendItem, PlotLines, header_cells, plot_lines
from .plots import (
    BAND,
    band_legend,
    beyond_legend,
    figure_on,
    mark_beyond,
    paint_cdf,
    paint_detrended,
    paint_pp,
    paint_qq,
)
from .ticks import choose_ticks

PANEL_MIN_COLS = 20
"""Canvas columns a panel needs to stay readable (40 braille dots: three or four tick labels)."""
PANEL_MIN_ROWS = 6
"""Canvas rows a panel needs (24 braille dots: the body and the tail still apart)."""
FOCUS = 0.1
"""A line-up's detrended views take their y range from the deviations at p10 and up
(the body and the upper tail that SLOs and capacity plans read): relative deviations in
the far lower tail of a latency, where the model's quantile is a few µs, run to
thousands of % and would flatten everything else. Points beyond are marked ↑/↓."""
GAP = 2
"""Blank columns between two panels, so their titles and tick labels never run together."""
EACH_MODEL = "each model"
"""What the shared axis names call the reference: every panel has its own."""

SERIES = (("•", "*"), ("∘", "o"), ("×", "x"), ("+", "+"), ("▪", "#"), ("▵", "@"))
"""One-axis view: a glyph per model (Unicode, ASCII), told apart without colour."""
SERIES_ROLES = ("subject", "second", "third", "fourth", "fifth", "sixth")
"""Colour roles of the one-axis series (``style.ROLE_STYLES``)."""

Cell = tuple[str, str]


@dataclass(frozen=True)
class Layout:
    """Where the panels go: a ``columns`` × ``rows`` grid of equal panels."""

    columns: int
    rows: int
    shown: int
    """Panels drawn (the best-ranked ones); the others are named on the last line."""
    canvas_cols: int
    canvas_rows: int
    title_rows: int
    ylabel_width: int
    header_rows: int

    def panel_left(self, index: int) -> int:
        """Column of panel ``index``'s vertical axis line."""
        return self.ylabel_width + (index % self.columns) * (1 + self.canvas_cols + GAP)


@dataclass
class LineupFigure:
    """The assembled line-up: its layout, the shared axes and one bare figure per panel drawn."""

    lineup: ModelLineup
    layout: Layout
    axes: PlotAxes
    figures: list[Figure]
    legend: list[LegendItem]
    """Said once above the panels (the same glyphs in every panel)."""
    width: int
    height: int
    ascii_only: bool
    marked: int | None

    def lines(self) -> PlotLines:
        lay, a, W = self.layout, self.ascii_only, self.width
        rows = header_cells(*_axis_names(self.axes, a), self.legend, lay.header_rows, W, a)
        for first in range(0, lay.shown, lay.columns):
            rows.extend(self._panel_row(range(first, min(first + lay.columns, lay.shown))))
        left_out = self.lineup.panels[lay.shown :]
        while len(rows) < self.height - (1 if left_out else 0):
            rows.append([])
        if left_out:
            names = ", ".join(f"{p.rank}. {p.label}" for p in left_out)
            text = f"+{len(left_out)} more, no room at {W}x{self.height}: {names}"
            if len(text) > W:
                text = text[: W - 1] + ("~" if a else "…")
            rows.append([(ch, "legend") for ch in text])
        out = plot_lines(rows, W)
        assert len(out) == self.height
        return out

    def _panel_row(self, row: range) -> list[list[Cell]]:
        """Titles, canvases with their axis lines, x axes and tick labels of one row of panels."""
        lay, W = self.layout, self.width
        v_axis, v_tick, corner = ("|", "+", "+") if self.ascii_only else ("│", "┤", "└")
        out: list[list[Cell]] = []
        room, a = lay.canvas_cols + 1, self.ascii_only
        titles = {i: _title(self.lineup.panels[i], room, lay.title_rows, a, i == self.marked) for i in row}
        for t in range(lay.title_rows):
            out.append(_join(W, {lay.panel_left(i): titles[i][t] for i in row}))
        cells = {i: self.figures[i].plot_cells() for i in row}
        ticks = self.figures[row[0]].ytick_rows()  # the same rows in every panel: one y scale
        for r in range(lay.canvas_rows):
            label = ticks.get(r)
            axis = [(v_tick if label is not None else v_axis, "axis")]
            parts = {lay.panel_left(i): axis + list(zip(*(c[r] for c in cells[i]), strict=True)) for i in row}
            out.append(_join(W, parts, [(ch, "axis") for ch in (label or "").rjust(lay.ylabel_width)]))
        out.append(
            _join(W, {lay.panel_left(i): [(corner, "axis"), *self.figures[i].x_axis_cells()] for i in row})
        )
        # A label may reach into the gap, never into the next panel nor past the edge
        # (where it is moved left whole, never cut: "p99.99" must not read "p99.9").
        labels = {}
        for i in row:
            room = min(lay.canvas_cols + GAP, W - lay.panel_left(i))
            labels[lay.panel_left(i)] = self.figures[i].x_label_cells(1, room)[0]
        out.append(_join(W, labels))
        return out


# ---------------------------------------------------------------- panels
Painter = Callable[[Figure, PlotData], None]


def _painter(kind: str, x_axis: str) -> Painter:
    def qq(fig: Figure, d: PlotData) -> None:
        assert isinstance(d, QQData)
        paint_qq(fig, d)

    def detrended(fig: Figure, d: PlotData) -> None:
        assert isinstance(d, Detrended)
        paint_detrended(fig, d, x_axis=x_axis)

    def pp(fig: Figure, d: PlotData) -> None:
        assert isinstance(d, PPPoints)
        paint_pp(fig, d)

    def cdf(fig: Figure, d: PlotData) -> None:
        assert isinstance(d, CDFOverlay)
        paint_cdf(fig, d)

    return {"qq": qq, "detrended": detrended, "pp": pp, "cdf": cdf}[kind]


def lineup_figure(
    lineup: ModelLineup,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    x_axis: str = "prob",
    ascii_only: bool = False,
    marked: int | None = None,
) -> LineupFigure:
    """Lay out and draw the panels; ``marked`` is the index of a panel to point out (▶)."""
    if width < MIN_WIDTH or height < MIN_HEIGHT:
        raise ValueError(f"a plot needs at least {MIN_WIDTH}×{MIN_HEIGHT} cells; got {width}×{height}.")
    if not lineup.panels:
        raise ValueError("the line-up holds no models; there is nothing to draw.")
    header_rows = 1
    while True:
        layout, axes = _fit(lineup, width, height, header_rows, log, x_axis, ascii_only)
        figures = _paint(lineup, layout, axes, x_axis, ascii_only)
        # Axis names and legend come first; a second header line is taken when they
        # need it and the panels keep their room.
        legend = _shared_legend(lineup, figures)
        need = len(
            [h for h in header_cells(*_axis_names(axes, ascii_only), legend, 3, width, ascii_only) if h]
        )
        if need <= header_rows or header_rows == 2:
            break
        try:  # a second line, if every panel drawn keeps its room
            wider = _fit(lineup, width, height, 2, log, x_axis, ascii_only)
        except ValueError:
            break
        if wider[0].shown < layout.shown:
            break
        header_rows = 2
    mark = marked if marked is not None and 0 <= marked < layout.shown else None
    return LineupFigure(lineup, layout, axes, figures, legend, width, height, ascii_only, mark)


def _fit(
    lineup: ModelLineup,
    width: int,
    height: int,
    header_rows: int,
    log: bool | None,
    x_axis: str,
    ascii_only: bool,
) -> tuple[Layout, PlotAxes]:
    """The layout for as many of the best-ranked panels as fit, and their shared axes."""
    for shown in range(len(lineup.panels), 0, -1):
        datas = [p.data for p in lineup.panels[:shown]]
        axes = plot_axes(
            lineup.kind,
            datas,
            log=log,
            x_axis=x_axis,
            ascii_only=ascii_only,
            reference_label=EACH_MODEL,
            focus=FOCUS,
        )
        shape = _layout(
            lineup.panels[:shown], len(lineup.panels), axes, width, height, header_rows, ascii_only
        )
        if shape is not None:
            return shape, axes
    raise ValueError(
        f"not even one panel fits in {width}×{height} cells; a panel needs "
        f"{PANEL_MIN_COLS}×{PANEL_MIN_ROWS} for its plot."
    )


def _paint(
    lineup: ModelLineup, layout: Layout, axes: PlotAxes, x_axis: str, ascii_only: bool
) -> list[Figure]:
    paint = _painter(lineup.kind, x_axis)
    figures = []
    for p in lineup.panels[: layout.shown]:
        fig = figure_on(
            axes, width=layout.canvas_cols, height=layout.canvas_rows, ascii_only=ascii_only, bare=True
        )
        paint(fig, p.data)
        figures.append(fig.finish())
    return figures


def _shared_legend(lineup: ModelLineup, figures: list[Figure]) -> list[LegendItem]:
    """Every panel's legend items once (the same glyphs in every panel), in first-seen
    order; a series named after its panel's model is "each model"."""
    out: list[LegendItem] = []
    for p, fig in zip(lineup.panels, figures, strict=False):
        for it in fig.legend:
            item = dataclasses.replace(it, text=EACH_MODEL) if it.text == p.label else it
            if item not in out:
                out.append(item)
    return out


def _axis_names(axes: PlotAxes, ascii_only: bool) -> tuple[str, str]:
    y_name = ("^ " if ascii_only else "↑ ") + axes.y_title
    x_name = ("-> " if ascii_only else "→ ") + axes.x_title if axes.x_title else ""
    return y_name, x_name


def _layout(
    panels: tuple[ModelPanel, ...],
    total: int,
    axes: PlotAxes,
    width: int,
    height: int,
    header_rows: int,
    ascii_only: bool,
) -> Layout | None:
    """The grid with the fewest rows (a single row first) that gives every panel room."""
    n = len(panels)
    footer = 1 if n < total else 0
    # One row first; then, for each number of rows, the fewest columns that hold every
    # panel (4 panels: 2 × 2, not 3 + 1), so panels are as wide as the rows allow.
    for rows in range(1, n + 1):
        columns = math.ceil(n / rows)
        if rows > 1 and math.ceil(n / (rows - 1)) == columns:
            continue  # the same grid as one row fewer
        per_row = (height - header_rows - footer) // rows
        title_rows = 3 if per_row - 5 >= 16 else 2
        canvas_rows = per_row - title_rows - 2
        if canvas_rows < PANEL_MIN_ROWS:
            return None  # more rows are lower still
        ticks = [t for t in choose_ticks(axes.yscale, canvas_rows, axes.yfmt, horizontal=False) if t.major]
        ylabel_width = max([len(t.label) for t in ticks] + [1])
        # A gap after the last panel too: its tick labels get the room every other
        # panel's get, so each panel shows the same labels.
        canvas_cols = (width - ylabel_width - columns * (1 + GAP)) // columns
        if canvas_cols < PANEL_MIN_COLS:
            continue
        # Titles that need fewer lines leave them to the plots (the y ticks were chosen
        # for the smaller canvas; more rows only spread them).
        need = max(len(_wrap(p, canvas_cols + 1, 3, ascii_only, False)) for p in panels)
        titles = min(title_rows, need)
        canvas_rows += title_rows - titles
        return Layout(columns, rows, n, canvas_cols, canvas_rows, titles, ylabel_width, header_rows)
    return None


def _wrap(p: ModelPanel, width: int, rows: int, ascii_only: bool, marked: bool) -> list[str]:
    """The panel's title in at most ``rows`` lines of ``width``: rank and model, tail error,
    then parameters as far as they fit (cut with an ellipsis, never mid-line)."""
    head = (("> " if ascii_only else "▶ ") if marked else "") + f"{p.rank}. {p.label}"
    tokens = [head, f"tail {percent(p.tail_error)}"] + [f"{k}={number(v, 3)}" for k, v in p.params.items()]
    more = "~" if ascii_only else "…"
    lines: list[str] = []
    for n, tok in enumerate(tokens):
        sep = "  " if n <= 2 else " "
        if lines and len(lines[-1]) + len(sep) + len(tok) <= width:
            lines[-1] += sep + tok
            continue
        if len(lines) == rows:
            last = lines[-1]
            while len(last) + 2 > width and " " in last:  # whole parameters only, never "17."
                last = last.rsplit(" ", 1)[0].rstrip()
            lines[-1] = last[: width - 2] + " " + more
            break
        lines.append(tok if len(tok) <= width else tok[: width - 1] + more)
    return lines


def _title(p: ModelPanel, width: int, rows: int, ascii_only: bool, marked: bool) -> list[list[Cell]]:
    lines = _wrap(p, width, rows, ascii_only, marked)
    lines += [""] * (rows - len(lines))
    first = "mark" if marked else "title"
    return [[(ch, first if k == 0 else "legend") for ch in text] for k, text in enumerate(lines)]


def _join(width: int, parts: dict[int, list[Cell]], start: list[Cell] | None = None) -> list[Cell]:
    """One line of ``width`` cells: ``start`` at column 0, each part at its column."""
    line: list[Cell] = [(" ", "")] * width
    for k, cell in enumerate((start or [])[:width]):
        line[k] = cell
    for col, cells in parts.items():
        for k, cell in enumerate(cells):
            if 0 <= col + k < width and cell[0] != " ":
                line[col + k] = cell
    return line


def lineup_plot(
    lineup: ModelLineup,
    *,
    width: int,
    height: int,
    log: bool | None = None,
    x_axis: str = "prob",
    ascii_only: bool = False,
    marked: int | None = None,
) -> PlotLines:
    """The subject against each model, one panel per model, every panel on the same axes.

    Panels are in the line-up's order (best first); ``marked`` points one out. ``log``
    applies to value axes, ``x_axis`` to detrended panels ('prob' or 'value').
    """
    return lineup_figure(
        lineup, width=width, height=height, log=log, x_axis=x_axis, ascii_only=ascii_only, marked=marked
    ).lines()


# ---------------------------------------------------------------- one axis
def one_axis_figure(
    lineup: ModelLineup,
    *,
    width: int,
    height: int,
    ascii_only: bool = False,
    marked: int | None = None,
) -> Figure:
    """Every model's deviation from the data on one tail-stretching probability axis.

    Each model has a glyph of its own (named in the legend, so no colour is needed); the
    band drawn is the first (best-ranked) model's, as the others' are of about its width.
    """
    if lineup.kind != "detrended":
        raise ValueError("the one-axis view draws detrended deviations; the line-up holds another kind.")
    if not lineup.panels:
        raise ValueError("the line-up holds no models; there is nothing to draw.")
    if len(lineup.panels) > len(SERIES):
        raise ValueError(
            f"the one-axis view tells at most {len(SERIES)} models apart; "
            f"this line-up holds {len(lineup.panels)}."
        )
    dets = [p.data for p in lineup.panels if isinstance(p.data, Detrended)]
    if len(dets) != len(lineup.panels):
        raise TypeError("every panel of a detrended line-up must hold a Detrended.")
    # Only the first model's band is drawn, so only it may widen the axis.
    shown = [dets[0], *(dataclasses.replace(d, band_low=None, band_high=None) for d in dets[1:])]
    axes = plot_axes(
        "detrended", shown, x_axis="prob", ascii_only=ascii_only, reference_label=EACH_MODEL, focus=FOCUS
    )
    fig = _one_axis(lineup, dets, axes, width, height, 0, ascii_only, marked)
    need = len(
        [
            h
            for h in header_cells(
                *_axis_names(axes, ascii_only), fig.legend, 4, width, ascii_only, in_order=True
            )
            if h
        ]
    )
    if need > fig.header_rows and height >= 20:  # every model named, rather than a taller plot
        fig = _one_axis(lineup, dets, axes, width, height, min(need, 3), ascii_only, marked)
    return fig.finish()


def _one_axis(
    lineup: ModelLineup,
    dets: list[Detrended],
    axes: PlotAxes,
    width: int,
    height: int,
    header_rows: int,
    ascii_only: bool,
    marked: int | None,
) -> Figure:
    fig = figure_on(
        axes, width=width, height=height, ascii_only=ascii_only, header_rows=header_rows, legend_in_order=True
    )
    first = dets[0]
    if first.band_low is not None and first.band_high is not None:
        band = Layer("band", BAND[0], BAND[1], 0, every=2)
        fig.line(band, first.probs, first.band_low)
        fig.line(band, first.probs, first.band_high)
    fig.line(Layer("reference", None, "."), np.array([fig.xscale.lo, fig.xscale.hi]), np.zeros(2))
    # Drawn worst first, so where curves share a cell the better-ranked model's glyph
    # shows; the marked model is drawn above them all.
    for k in sorted(range(len(dets)), key=lambda k: (k == marked, -k)):
        fig.line(Layer(SERIES_ROLES[k], SERIES[k][0], SERIES[k][1], 1), dets[k].probs, dets[k].deviation)
    beyond = [mark_beyond(fig, d.probs, d.deviation) for d in dets]
    for k, p in enumerate(lineup.panels):
        pointer = ("> " if ascii_only else "▶ ") if k == marked else ""
        fig.legend.append(LegendItem(fig.glyph(*SERIES[k]), f"{pointer}{p.rank}. {p.label}", SERIES_ROLES[k]))
    if first.band_low is not None and first.band_high is not None:
        item = band_legend(first.band_label, fig)
        fig.legend.append(dataclasses.replace(item, text=f"{item.text} of {lineup.panels[0].rank}."))
    if any(beyond):
        fig.legend.append(beyond_legend(fig))
    fig.legend.append(LegendItem(fig.glyph("⠤", "."), "same", "reference"))
    return fig


def one_axis_plot(
    lineup: ModelLineup,
    *,
    width: int,
    height: int,
    ascii_only: bool = False,
    marked: int | None = None,
) -> PlotLines:
    """The one-axis view (:func:`one_axis_figure`) as lines: which model holds at p99.9."""
    return one_axis_figure(lineup, width=width, height=height, ascii_only=ascii_only, marked=marked).lines()
