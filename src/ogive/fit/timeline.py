"""A timeline: quantiles per time window, and when the distribution changed, into what.

Input is a sketch set holding one sketch per time window beside the whole, named
``[GROUP@]START/DURATION`` (:mod:`ogive.sketch.timekeys`), as ``ogive timeline``
scans it or saves it; sets of ``scan``'s plain window names (``2026-03-04T13:00:00Z``)
are read too, their width taken from the closest two starts. Windows with no values
(a quiet hour) keep their place, so window ``i`` always starts at ``first + i * width``.

Per window: n, bad rows and p50/p90/p99/p99.9 with the ladder's distribution-free
intervals (:func:`ogive.fit.ladder.quantile_intervals`). Per stream (the whole, and each
``--by`` group): the change points of :mod:`ogive.fit.changes`, each with p50 … p99.9
of the period before and after it and which of them moved beyond chance
(:class:`QuantileMove`): the body (p50 to p90), the tail (p95 and up), or both. Nothing
here reads a file: everything comes from the sketches.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..sketch import Binned, Sketch, SketchSet, merge_binned, timekeys
from ..sketch.distribution import Dist
from .changes import ALPHA, GRID_QS, Change, ChangeSearch, find_changes
from .distances import num_or_none
from .ladder import QuantileInterval, quantile_intervals
from .moves import ChangeReport, Counts, Stretch, describe_changes
from .strip import STRIP_COLUMNS, Strip, density_strip, strip_range

FloatArray = NDArray[np.float64]

TABLE_QS: tuple[float, ...] = (0.5, 0.9, 0.99, 0.999)
"""The quantiles of the window table."""
CHART_QS: tuple[float, ...] = (0.5, 0.9, 0.99)
"""The quantiles drawn over time unless others are asked for."""
MAX_SPAN_WINDOWS = 1_000_000
"""A timeline longer than this many windows (e.g. 1-second windows over two weeks) is refused."""


# ---------------------------------------------------------------- the input
@dataclass
class Stream:
    """The windows of one stream (the whole, or one group), aligned to the timeline."""

    name: str
    whole: Dist
    windows: list[Dist | None]
    """One per timeline window; None where the stream had no value."""


@dataclass
class Windows:
    """Window sketches read back from a set, in time order (plain data, no statistics)."""

    width_us: float
    first_us: float
    count: int
    """Windows from the first to the last that holds values, empty ones included."""
    unit: str
    streams: dict[str, Stream]
    """``all`` first, then the groups in the set's order."""
    notes: tuple[str, ...] = ()

    def start(self, i: float) -> float:
        """Epoch microseconds where window position ``i`` (fractional) begins."""
        return self.first_us + i * self.width_us


def read_windows(sset: SketchSet) -> Windows:
    """The windows of a sketch set; ValueError (a sentence) when it holds none."""
    keyed: dict[str | None, list[tuple[float, Dist]]] = {}
    wholes: dict[str, Dist] = {}
    widths: set[float] = set()
    notes: list[str] = []
    for name, s in sset.sketches.items():
        key = timekeys.parse_key(name)
        if key is None:
            wholes[name] = s
            continue
        keyed.setdefault(key.group, []).append((key.start_us, s))
        widths.add(key.width_us)
    if not keyed and timekeys.WHOLE in sset.sketches:
        raise ValueError(
            "no time window holds a value: no record had both a usable value and a readable time "
            f"({sset[timekeys.WHOLE].count:,} values in all)."
        )
    if not keyed:
        keyed, widths, note = _plain_windows(sset)
        wholes = {}
        notes.append(note)
    if len(widths) != 1:
        raise ValueError("the set mixes windows of different widths; a timeline needs one width.")
    width = widths.pop()
    starts = np.array([t for pairs in keyed.values() for t, _ in pairs])
    first, last = float(starts.min()), float(starts.max())
    count = round((last - first) / width) + 1
    if count > MAX_SPAN_WINDOWS:
        raise ValueError(
            f"the windows span {count:,} widths; a timeline holds at most {MAX_SPAN_WINDOWS:,}. "
            "Scan again with a wider --window."
        )
    units = {s.unit for pairs in keyed.values() for _, s in pairs}
    if len(units) > 1:
        raise ValueError(f"the windows are in different units ({', '.join(sorted(units))}).")
    unit = units.pop()
    streams: dict[str, Stream] = {}
    for group in sorted(keyed, key=lambda g: (g is not None, list(keyed).index(g))):
        name = group or timekeys.WHOLE
        slots: list[Dist | None] = [None] * count
        for t, s in keyed[group]:
            slots[round((t - first) / width)] = s
        whole = wholes.get(name) or _merged([s for s in slots if s is not None], unit)
        streams[name] = Stream(name, whole, slots)
    return Windows(width, first, count, unit, streams, tuple(notes))


def _plain_windows(sset: SketchSet) -> tuple[dict[str | None, list[tuple[float, Dist]]], set[float], str]:
    """Windows named by their start alone (``scan``/``compare --window``): the width is
    the closest spacing of two starts, which is right unless no two windows are adjacent."""
    pairs = []
    for name, s in sset.sketches.items():
        key = timekeys.parse_key(f"{name}/PT1S")
        if key is None:
            raise ValueError(
                f"the sketch {name!r} is not a time window; make a timeline with "
                "'ogive timeline SOURCE --time-field FIELD --window WIDTH'."
            )
        pairs.append((key.start_us, s))
    starts = np.unique([t for t, _ in pairs])
    if starts.size < 2:
        raise ValueError("a timeline needs at least two time windows.")
    width = float(np.diff(starts).min())
    note = f"window width read from the closest two window starts ({timekeys.duration_text(width)})"
    return {None: pairs}, {width}, note


def _merged(windows: list[Dist], unit: str) -> Dist:
    """The whole of a set saved without one: its windows merged, into a sketch with their
    own tail size (a larger buffer filled from each window's few would not hold the true
    extremes of all of them); binned windows (telemetry histograms) add their buckets."""
    binned = [w for w in windows if isinstance(w, Binned)]
    if binned and len(binned) == len(windows):
        return merge_binned(binned)
    if binned:
        raise ValueError("the windows mix histogram buckets with sketches of raw values; time them apart.")
    sketches = [w for w in windows if isinstance(w, Sketch)]
    out = Sketch(unit, tail_size=min((s.tail_size for s in sketches), default=1))
    for s in sketches:
        out.merge(s)
    return out


# ---------------------------------------------------------------- counts for the search
def count_matrix(windows: list[Dist | None], grid: FloatArray) -> tuple[FloatArray, FloatArray]:
    """(counts at or below each grid value, n) per window; zeros for empty windows."""
    counts = np.zeros((len(windows), grid.size))
    sizes = np.zeros(len(windows))
    for i, s in enumerate(windows):
        if s is not None and s.count:
            counts[i] = s.rank(grid)
            sizes[i] = s.count
    return counts, sizes


def grid_of(whole: Dist) -> FloatArray:
    """Distinct values of the whole at :data:`GRID_QS` (repeated values give fewer)."""
    return np.unique(whole.quantile(np.array(GRID_QS))) if whole.count else np.empty(0)


# ---------------------------------------------------------------- results
@dataclass(frozen=True)
class WindowRow:
    """One window of one stream: its size, bad rows and quantiles with intervals."""

    start_us: float
    n: int
    skipped: int
    quantiles: tuple[QuantileInterval, ...]

    def to_dict(self) -> dict[str, Any]:
        return {
            "start": timekeys.start_text(self.start_us),
            "n": self.n,
            "skipped": self.skipped,
            "quantiles": [q.to_dict() for q in self.quantiles],
        }


@dataclass(frozen=True)
class StreamTimeline:
    """The timeline of one stream."""

    name: str
    n: int
    chart: FloatArray
    """Quantile per window (rows: windows, columns: ``Timeline.chart_qs``); NaN where empty."""
    sizes: FloatArray
    rows: tuple[WindowRow, ...]
    """The window table: every window, or those asked for."""
    search: ChangeSearch
    changes: tuple[ChangeReport, ...]

    @property
    def largest_move(self) -> float:
        """The largest |relative change| of a moved quantile over its changes (sorts groups)."""
        return max((c.size for c in self.changes), default=0.0)

    def to_dict(self, chart_qs: tuple[float, ...]) -> dict[str, Any]:
        return {
            "name": self.name,
            "n": self.n,
            "windows": [r.to_dict() for r in self.rows],
            "chart": {
                "quantiles": list(chart_qs),
                "values": [[num_or_none(v) for v in row] for row in self.chart.tolist()],
            },
            "changes": [c.to_dict() for c in self.changes],
            "search": self.search.to_dict(),
        }


@dataclass(frozen=True)
class Timeline:
    width_us: float
    first_us: float
    count: int
    unit: str
    chart_qs: tuple[float, ...]
    confidence: float
    streams: tuple[StreamTimeline, ...]
    """The whole first, then the groups, those that changed most first."""
    strip: Strip | None = None
    """The whole's density strip (None when it has no positive values to place)."""
    notes: tuple[str, ...] = field(default=())

    def start(self, i: float) -> float:
        return self.first_us + i * self.width_us

    def to_dict(self) -> dict[str, Any]:
        return {
            "window": timekeys.duration_text(self.width_us),
            "first": timekeys.start_text(self.first_us),
            "windows": self.count,
            "unit": self.unit,
            "confidence": self.confidence,
            "streams": [s.to_dict(self.chart_qs) for s in self.streams],
            "notes": list(self.notes),
        }


# ---------------------------------------------------------------- building
def build_timeline(
    data: Windows,
    *,
    chart_qs: tuple[float, ...] = CHART_QS,
    alpha: float = ALPHA,
    confidence: float = 0.95,
    table: str = "all",
    seed: int = 0,
    strip_rows: int = 8,
) -> Timeline:
    """Quantiles per window and change points for every stream of ``data``.

    ``table``: ``all`` windows get table rows with intervals, ``changes`` only the
    windows next to a change (intervals cost about 1.5 ms a window), ``none`` none.
    """
    streams = [
        stream_timeline(
            data, s, chart_qs=chart_qs, alpha=alpha, confidence=confidence, table=table, seed=seed
        )
        for s in data.streams.values()
    ]
    head, groups = streams[:1], sorted(streams[1:], key=lambda s: -s.largest_move)
    whole = next(iter(data.streams.values()))
    span = strip_range(whole.whole)
    strip = (
        None
        if span is None
        else density_strip(whole.windows, rows=strip_rows, columns=STRIP_COLUMNS, low=span[0], high=span[1])
    )
    return Timeline(
        data.width_us, data.first_us, data.count, data.unit, tuple(chart_qs), confidence,
        tuple(head + groups), strip, data.notes,
    )  # fmt: skip


def stream_timeline(
    data: Windows,
    stream: Stream,
    *,
    chart_qs: tuple[float, ...] = CHART_QS,
    alpha: float = ALPHA,
    confidence: float = 0.95,
    table: str = "all",
    seed: int = 0,
) -> StreamTimeline:
    qs = np.asarray(chart_qs, dtype=np.float64)
    chart = np.full((data.count, qs.size), np.nan)
    for i, s in enumerate(stream.windows):
        if s is not None and s.count:
            chart[i] = s.quantile(qs)
    grid = grid_of(stream.whole)
    counts, sizes = count_matrix(stream.windows, grid)
    search = find_changes(counts, sizes, alpha=alpha, seed=seed, grid=tuple(grid.tolist()))
    stretch = Stretch(stream.windows, stream.whole, data.unit, data.start)
    reports = describe_changes(stretch, search.changes, Counts(grid, counts, sizes))
    shown = _table_windows(data.count, sizes, search.changes, table)
    rows = tuple(_row(data, stream, i, confidence) for i in shown)
    return StreamTimeline(stream.name, stream.whole.count, chart, sizes, rows, search, reports)


def _table_windows(count: int, sizes: FloatArray, changes: tuple[Change, ...], table: str) -> list[int]:
    if table == "none":
        return []
    if table == "all":
        return list(range(count))
    near: set[int] = set()
    for c in changes:
        near.update(range(max(c.first - 2, 0), min(c.last + 2, count)))
    return sorted(near)


def _row(data: Windows, stream: Stream, i: int, confidence: float) -> WindowRow:
    s = stream.windows[i]
    start = data.start(i)
    if s is None or not s.count:
        return WindowRow(start, 0, s.provenance.skipped_total if s is not None else 0, ())
    qi = tuple(quantile_intervals(s, TABLE_QS, confidence))
    return WindowRow(start, s.count, s.provenance.skipped_total + s.nan_count + s.inf_count, qi)
