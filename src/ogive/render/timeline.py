"""The timeline's pictures: quantiles over time, the density strip, and a time axis.

Pure functions from :mod:`ogive.fit.timeline` results to lines of text; nothing here
computes a statistic (the strip's levels, the quantiles and the change points come
from ``fit``). Times are UTC. The time axis ticks fall on round moments (13:00, 13:15,
midnight) and read as people say them: ``13:00``, ``13:00:30``, ``Mar 04``.
"""

from __future__ import annotations

import datetime as dt
import itertools
import math
from collections.abc import Callable

import numpy as np

from ..fit.timeline import StreamTimeline, Strip, Timeline
from ..numbers import quantity
from ..sketch import quantile_label
from .canvas import Layer
from .frame import Figure, LegendItem, PlotLines
from .ticks import Scale, Tick, choose_ticks, make_scale

_EPOCH = dt.datetime(1970, 1, 1, tzinfo=dt.UTC)
DAY_S = 86_400
TIME_STEPS_S: tuple[int, ...] = (
    1, 2, 5, 10, 15, 30, 60, 120, 300, 600, 900, 1800, 3600, 2 * 3600, 3 * 3600, 6 * 3600,
    12 * 3600, DAY_S, 2 * DAY_S, 7 * DAY_S, 14 * DAY_S, 28 * DAY_S,
)  # fmt: skip
"""Tick steps a person counts in: seconds, minutes, hours, days, weeks."""

SERIES = (("subject", "."), ("second", "+"), ("reference", "*"), ("band", "o"), ("label", "#"))
"""Role (colour key) and ASCII glyph of each quantile line, in the order asked."""
STRIP_GLYPHS = {False: " ░▒▓█", True: " .:+#"}
"""Glyph per strip level (0 = outside the 99.9 % region ... 4 = densest half)."""
CHANGE = ("┊", ":")


_FIRST_US = (dt.datetime.min.replace(tzinfo=dt.UTC) - dt.datetime(1970, 1, 1, tzinfo=dt.UTC)) // dt.timedelta(
    microseconds=1
)
_LAST_US = (dt.datetime.max.replace(tzinfo=dt.UTC) - dt.datetime(1970, 1, 1, tzinfo=dt.UTC)) // dt.timedelta(
    microseconds=1
)


def _moment(us: float) -> dt.datetime:
    # The end of a window that starts late in year 9999 lies past what a datetime holds.
    return _EPOCH + dt.timedelta(microseconds=round(min(max(us, _FIRST_US), _LAST_US)))


def time_label(us: float, step_s: float, *, days: bool) -> str:
    """A tick label: ``Mar 04`` for whole days (or midnight on a timeline over days),
    ``13:00`` for minutes and hours, ``13:00:30`` below a minute."""
    m = _moment(us)
    if step_s >= DAY_S or (days and m.hour == 0 and m.minute == 0 and m.second == 0):
        return m.strftime("%b %d")
    return m.strftime("%H:%M:%S" if step_s < 60 else "%H:%M")


def when(us: float, *, days: bool, seconds: bool = False) -> str:
    """A moment in text: ``13:00`` (``13:00:30``), with the date when the timeline spans days."""
    m = _moment(us)
    clock = m.strftime("%H:%M:%S" if seconds or m.second else "%H:%M")
    return f"{m.strftime('%b %d')} {clock}" if days else clock


def span_text(seconds: float) -> str:
    """A width of time: ``5m``, ``1h30m``, ``45s``, ``2d``."""
    s = round(seconds)
    parts = []
    for size, unit in ((DAY_S, "d"), (3600, "h"), (60, "m"), (1, "s")):
        if s >= size:
            parts.append(f"{s // size}{unit}")
            s %= size
    return "".join(parts[:2]) or f"{seconds:g}s"


def time_ticks(lo_us: float, hi_us: float, cols: int, *, min_gap: int = 2) -> list[Tick]:
    """Ticks on round moments between ``lo_us`` and ``hi_us`` whose labels fit ``cols`` cells."""
    span_s = (hi_us - lo_us) / 1e6
    if span_s <= 0 or cols < 2:
        return []
    days = _moment(lo_us).date() != _moment(hi_us - 1).date()
    for step in TIME_STEPS_S:
        first = math.ceil(lo_us / 1e6 / step) * step
        moments = np.arange(first, hi_us / 1e6 + 1e-9, step, dtype=np.float64)
        if moments.size > cols // 4 + 1:
            continue
        labels = [time_label(t * 1e6, step, days=days) for t in moments]
        pos = (moments * 1e6 - lo_us) / (hi_us - lo_us)
        cells = pos * (cols - 1)
        widths = np.array([len(x) for x in labels], dtype=np.float64)
        if moments.size < 2 or np.all(np.diff(cells) >= (widths[1:] + widths[:-1]) / 2 + min_gap):
            return [
                Tick(float(t * 1e6), lab, float(p)) for t, lab, p in zip(moments, labels, pos, strict=True)
            ]
    return []


def _value_fmt(unit: str, ascii_only: bool) -> Callable[[float, int], str]:
    return lambda v, d: quantity(v, unit, digits=d, compact=True, ascii_only=ascii_only)


# ---------------------------------------------------------------- the chart
def chart_figure(
    timeline: Timeline,
    stream: StreamTimeline,
    *,
    width: int,
    height: int,
    ascii_only: bool = False,
    changes: bool = True,
) -> Figure:
    """The chosen quantiles of every window over time, on a log value axis when every
    value is positive; change points as dotted verticals numbered at the top."""
    lo, hi = timeline.first_us, timeline.start(timeline.count)
    values = stream.chart[np.isfinite(stream.chart)]
    kind = "log" if values.size and bool(np.all(values > 0)) else "linear"
    fig = Figure(
        width,
        height,
        xscale=Scale("linear", lo, hi),
        yscale=make_scale(kind, values),
        xfmt=lambda v, d: "",
        yfmt=_value_fmt(timeline.unit, ascii_only),
        ascii_only=ascii_only,
        x_title="UTC",
        y_title=f"{stream.name} ({timeline.unit})" if timeline.unit else stream.name,
    )
    fig.xticks = time_ticks(lo, hi, fig.canvas.cols)
    x = timeline.first_us + (np.arange(timeline.count, dtype=np.float64) + 0.5) * timeline.width_us
    if changes:
        for k, c in enumerate(stream.changes, 1):
            edges = [c.start_us] if not c.gradual else [c.start_us, c.end_us]
            for at in edges:
                fig.line(
                    Layer("mark", CHANGE[0], CHANGE[1], -1),
                    np.array([at, at]),
                    np.array([fig.yscale.lo, fig.yscale.hi]),
                )
            cell = fig.to_cell(c.start_us, fig.yscale.hi)
            if cell is not None:
                fig.put(0, cell[1], str(k), "label")
        if stream.changes:
            fig.legend.append(LegendItem(fig.glyph(*CHANGE), "change", "mark"))
    for i, _q in enumerate(timeline.chart_qs):
        role, glyph = SERIES[i % len(SERIES)]
        fig.line(Layer(role, None, glyph, 1), x, stream.chart[:, i])
    _end_labels(fig, timeline, stream, x)
    return fig.finish()


def _end_labels(fig: Figure, timeline: Timeline, stream: StreamTimeline, x: np.ndarray) -> None:
    """Each line's name at the right edge, at the height of its last stretch: the lines
    never cross (a higher quantile is never lower), so position tells them apart."""
    taken: set[int] = set()
    rows = fig.canvas.rows
    for i in reversed(range(len(timeline.chart_qs))):
        col = stream.chart[:, i]
        ok = np.flatnonzero(np.isfinite(col))
        if ok.size == 0:
            continue
        tail = ok[-max(1, ok.size // 10) :]
        cell = fig.to_cell(float(x[tail[-1]]), float(np.median(col[tail])))
        if cell is None:
            continue
        row = cell[0]
        while row in taken and row < rows - 1:
            row += 1
        taken.add(row)
        label = quantile_label(timeline.chart_qs[i])
        fig.put(row, fig.canvas.cols - len(label), label, SERIES[i % len(SERIES)][0])


def chart_lines(
    timeline: Timeline, stream: StreamTimeline, *, width: int, height: int, ascii_only: bool = False
) -> PlotLines:
    """:func:`chart_figure` as lines of text."""
    return chart_figure(timeline, stream, width=width, height=height, ascii_only=ascii_only).lines()


# ---------------------------------------------------------------- the density strip
def strip_lines(
    timeline: Timeline, strip: Strip, *, width: int, label_width: int | None = None, ascii_only: bool = False
) -> PlotLines:
    """The strip: one text row per value band (lowest at the bottom), one column per
    stretch of time, shaded by the highest-density region each cell falls in, over a
    time axis; a key line first. ``label_width`` aligns it under a chart."""
    rows = strip.levels.shape[0]
    scale = Scale("log", float(strip.edges[0]), float(strip.edges[-1]))
    fmt = _value_fmt(timeline.unit, ascii_only)
    ticks = [t for t in choose_ticks(scale, rows, fmt, horizontal=False) if t.major]
    lw = max([len(t.label) for t in ticks] + [label_width or 1])
    cols = max(width - lw - 1, 1)
    lo, hi = timeline.first_us, timeline.start(timeline.count)
    # Which strip column each text column shows (strip columns may be fewer).
    window = np.minimum(((np.arange(cols) + 0.5) / cols * timeline.count).astype(int), timeline.count - 1)
    starts = np.array([a for a, _ in strip.columns])
    col_of = np.searchsorted(starts, window, side="right") - 1
    glyphs = STRIP_GLYPHS[ascii_only]
    label_at: dict[int, str] = {}
    for t in ticks:
        label_at.setdefault(round((1 - t.position) * (rows - 1)), t.label)
    out = PlotLines()
    out.spans = []
    key = "  ".join(f"{glyphs[k]} {b:.3g}%" for k, b in zip((4, 3, 2, 1), (50, 90, 99, 99.9), strict=True))
    out.append(f"{'':>{lw}} densest share of each column: {key}"[:width].rstrip())
    out.spans.append([])
    for r in range(rows):
        level = strip.levels[rows - 1 - r]
        line = (
            label_at.get(r, "").rjust(lw) + ("+" if ascii_only else "┤")
            if r in label_at
            else " " * lw + ("|" if ascii_only else "│")
        )
        line += "".join(glyphs[int(level[j])] for j in col_of)
        out.append(line.rstrip())
        out.spans.append([(0, lw + 1, "axis"), (lw + 1, len(line.rstrip()), "subject")])
    axis = " " * lw + ("+" if ascii_only else "└") + ("-" if ascii_only else "─") * cols
    labels = [" "] * (lw + 1 + cols)
    marks = list(axis)
    for t in time_ticks(lo, hi, cols):
        c = lw + 1 + round(t.position * (cols - 1))
        marks[c] = "+" if ascii_only else "┬"
        s = max(min(c - (len(t.label) - 1) // 2, len(labels) - len(t.label)), 0)
        if all(ch == " " for ch in labels[max(s - 1, 0) : s + len(t.label) + 1]):
            labels[s : s + len(t.label)] = list(t.label)
    out.append("".join(marks).rstrip())
    out.append("".join(labels).rstrip())
    out.spans += [[(0, len(out[-2]), "axis")], [(0, len(out[-1]), "axis")]]
    return out


# ---------------------------------------------------------------- one line per group
SPARK = {False: "▁▂▃▄▅▆▇█", True: "_.-~=+*#"}


def sparkline(values: np.ndarray, lo: float, hi: float, cols: int, *, ascii_only: bool = False) -> str:
    """``values`` (one per window) squeezed into ``cols`` cells of eight heights on a log
    scale between ``lo`` and ``hi``; blank where a stretch has no value. Each cell
    shows the largest value of its stretch (the eye looks for peaks)."""
    marks = SPARK[ascii_only]
    if values.size == 0 or cols < 1:
        return ""
    cuts = np.linspace(0, values.size, min(cols, values.size) + 1).round().astype(int)
    out = []
    span = math.log(hi / lo) if hi > lo > 0 else 0.0
    for a, b in itertools.pairwise(cuts):
        part = values[a:b]
        part = part[np.isfinite(part) & (part > 0)]
        if part.size == 0:
            out.append(" ")
            continue
        level = math.log(float(part.max()) / lo) / span if span > 0 else 0.5
        out.append(marks[int(np.clip(round(level * (len(marks) - 1)), 0, len(marks) - 1))])
    return "".join(out)
