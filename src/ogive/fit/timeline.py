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

from ..sketch import Sketch, SketchSet, quantile_label, timekeys
from .changes import ALPHA, GRID_QS, Change, ChangeSearch, find_changes
from .ladder import LADDER_QS, QuantileInterval, quantile_intervals
from .spans import locate
from .splits import MIN_TAIL_COUNT
from .strip import STRIP_COLUMNS, Strip, density_strip, strip_range

FloatArray = NDArray[np.float64]

TABLE_QS: tuple[float, ...] = (0.5, 0.9, 0.99, 0.999)
"""The quantiles of the window table."""
CHART_QS: tuple[float, ...] = (0.5, 0.9, 0.99)
"""The quantiles drawn over time unless others are asked for."""
BODY_MAX_Q = 0.9
"""Quantiles up to this are the body; above it, the tail."""
MAX_SPAN_WINDOWS = 1_000_000
"""A timeline longer than this many windows (e.g. 1-second windows over two weeks) is refused."""
LADDER_WINDOWS = 500
"""The windows nearest a change merged into its before and after sketches for the
ladder's estimates (merging costs about 0.3 ms a window; the test of what moved reads
the whole periods, from counts)."""


# ---------------------------------------------------------------- the input
@dataclass
class Stream:
    """The windows of one stream (the whole, or one group), aligned to the timeline."""

    name: str
    whole: Sketch
    windows: list[Sketch | None]
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
    keyed: dict[str | None, list[tuple[float, Sketch]]] = {}
    wholes: dict[str, Sketch] = {}
    widths: set[float] = set()
    notes: list[str] = []
    for name, s in sset.sketches.items():
        key = timekeys.parse_key(name)
        if key is None:
            wholes[name] = s
            continue
        keyed.setdefault(key.group, []).append((key.start_us, s))
        widths.add(key.width_us)
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
        slots: list[Sketch | None] = [None] * count
        for t, s in keyed[group]:
            slots[round((t - first) / width)] = s
        whole = wholes.get(name) or _merged([s for s in slots if s is not None], unit)
        streams[name] = Stream(name, whole, slots)
    return Windows(width, first, count, unit, streams, tuple(notes))


def _plain_windows(sset: SketchSet) -> tuple[dict[str | None, list[tuple[float, Sketch]]], set[float], str]:
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


def _merged(sketches: list[Sketch], unit: str) -> Sketch:
    """The whole of a set saved without one: its windows merged, into a sketch with their
    own tail size (a larger buffer filled from each window's few would not hold the true
    extremes of all of them)."""
    out = Sketch(unit, tail_size=min((s.tail_size for s in sketches), default=1))
    for s in sketches:
        out.merge(s)
    return out


# ---------------------------------------------------------------- counts for the search
def count_matrix(windows: list[Sketch | None], grid: FloatArray) -> tuple[FloatArray, FloatArray]:
    """(counts at or below each grid value, n) per window; zeros for empty windows."""
    counts = np.zeros((len(windows), grid.size))
    sizes = np.zeros(len(windows))
    for i, s in enumerate(windows):
        if s is not None and s.count:
            counts[i] = s.rank(grid)
            sizes[i] = s.count
    return counts, sizes


def grid_of(whole: Sketch) -> FloatArray:
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
class QuantileMove:
    """One quantile before and after a change, and whether it moved beyond chance.

    ``z`` is the standardised gap between the CDFs of the two periods at the whole's
    value of this quantile (the statistic of :mod:`ogive.fit.splits` at one grid point);
    the quantile *moved* when ``|z|`` passes the threshold of the test that found the
    change. That threshold bounds the largest gap over every split and every grid
    point of random orders, so the calls hold for all quantiles at once. The ladder's
    order-statistic intervals are not used here: read through window sketches merged
    by the hundred, they carry the merge's rank error and would hide most tail moves;
    ``ogive gate`` on the logs gives them at full precision.
    """

    label: str
    q: float
    before: float
    after: float
    z: float | None
    """None where the grid has no point for this quantile or too few values lie beyond it."""
    moved: bool

    @property
    def relative(self) -> float:
        return (self.after - self.before) / abs(self.before) if self.before else float("nan")

    def to_dict(self) -> dict[str, Any]:
        return {
            "label": self.label,
            "q": self.q,
            "before": _num(self.before),
            "after": _num(self.after),
            "relative_change": _num(self.relative),
            "z": self.z,
            "moved": self.moved,
        }


@dataclass(frozen=True)
class ChangeReport:
    """A change point in time, and what changed (after against before)."""

    change: Change
    start_us: float
    """A step's moment (a window boundary), or where a span begins."""
    end_us: float
    """Where a span ends (equal to ``start_us`` for a step)."""
    low_us: float
    high_us: float
    """The step's interval (a span: a window either side of it)."""
    split_us: float
    """Where to split for ``gate --split-at``: the step, or the end of a span."""
    before_n: int
    after_n: int
    ladder: tuple[QuantileMove, ...]
    """p50 … p99.9, before against after."""
    kind: str
    """``body``, ``tail``, ``body and tail``, or ``shape`` (no single quantile moved clearly)."""
    moved: tuple[str, ...]
    """Labels of the quantiles that moved, largest relative move first."""

    @property
    def gradual(self) -> bool:
        return self.change.gradual

    def move(self, label: str) -> QuantileMove | None:
        return next((m for m in self.ladder if m.label == label), None)

    @property
    def size(self) -> float:
        """The largest |relative change| of a quantile that moved (0 when none did)."""
        return max((abs(m.relative) for m in self.ladder if m.moved and np.isfinite(m.relative)), default=0.0)

    def to_dict(self) -> dict[str, Any]:
        return {
            "start": timekeys.start_text(self.start_us),
            "end": timekeys.start_text(self.end_us),
            "interval": [timekeys.start_text(self.low_us), timekeys.start_text(self.high_us)],
            "gradual": self.gradual,
            "split_at": timekeys.start_text(self.split_us),
            "kind": self.kind,
            "moved": list(self.moved),
            "before_n": self.before_n,
            "after_n": self.after_n,
            "ladder": [m.to_dict() for m in self.ladder],
            "search": self.change.to_dict(),
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
                "values": [[_num(v) for v in row] for row in self.chart.tolist()],
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


def _num(x: float) -> float | None:
    return float(x) if np.isfinite(x) else None


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
        else density_strip(whole, rows=strip_rows, columns=STRIP_COLUMNS, low=span[0], high=span[1])
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
    reports = _reports(data, stream, search.changes, _Counts(grid, counts, sizes))
    shown = _table_windows(data.count, sizes, search.changes, table)
    rows = tuple(_row(data, stream, i, confidence) for i in shown)
    return StreamTimeline(stream.name, stream.whole.count, chart, sizes, rows, search, reports)


@dataclass(frozen=True)
class _Counts:
    grid: FloatArray
    counts: FloatArray
    sizes: FloatArray


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


def _period(stream: Stream, a: int, b: int, near_end: bool, unit: str) -> Sketch:
    """The windows ``a:b`` merged (at most the LADDER_WINDOWS nearest the change), into a
    sketch with the windows' own tail size: its exact tails then hold the true extremes
    of all of them (a larger buffer would be filled from each window's few)."""
    idx = list(range(a, b))
    idx = idx[-LADDER_WINDOWS:] if near_end else idx[:LADDER_WINDOWS]
    parts = [s for s in (stream.windows[i] for i in idx) if s is not None and s.count]
    tail = min((s.tail_size for s in parts), default=stream.whole.tail_size)
    out = Sketch(unit, compression=stream.whole.compression, tail_size=tail)
    for s in parts:
        out.merge(s)
    return out


def _reports(
    data: Windows, stream: Stream, changes: tuple[Change, ...], cm: _Counts
) -> tuple[ChangeReport, ...]:
    """What moved at each change, after against before, the periods reaching to the
    neighbouring changes.

    A change after which no quantile moved clearly (``shape``) is still reported, but
    does not cut its neighbours' periods short: a chance split beside a real change
    would otherwise leave that change a thin period to be read against. Such changes
    are set aside one at a time, the weakest first, until every change left moved a
    quantile (the test is on counts, so this costs little); the ladders are then read
    from merged window sketches once.
    """
    active = list(changes)
    while active:
        moves = [_moved(stream, c, *_periods(c, active, data.count), cm) for c in active]
        shapes = [c for c, m in zip(active, moves, strict=True) if not any(m)]
        if not shapes:
            break
        active.remove(min(shapes, key=lambda c: c.distance))
    out = []
    for c in changes:
        others = [x for x in active if x is not c]
        out.append(_report(data, stream, c, *_periods(c, others, data.count), cm))
    return tuple(out)


def _periods(c: Change, bounds: list[Change], count: int) -> tuple[tuple[int, int], tuple[int, int]]:
    """The windows before and after ``c``, reaching to the nearest of ``bounds`` either side."""
    before = max((x.last for x in bounds if x.last <= c.first and x is not c), default=0)
    after = min((x.first for x in bounds if x.first >= c.last and x is not c), default=count)
    return (before, c.first), (c.last, after)


def _moved(
    stream: Stream, c: Change, before: tuple[int, int], after: tuple[int, int], cm: _Counts
) -> list[bool]:
    """Per ladder quantile: did the CDF there move beyond the threshold that found ``c``."""
    return [z is not None and abs(z) > c.threshold for z in _gaps(stream.whole, cm, before, after)]


def _report(
    data: Windows,
    stream: Stream,
    c: Change,
    span_before: tuple[int, int],
    span_after: tuple[int, int],
    cm: _Counts,
) -> ChangeReport:
    before = _period(stream, span_before[0], span_before[1], True, data.unit)
    after = _period(stream, span_after[0], span_after[1], False, data.unit)
    qs = np.array(LADDER_QS[:-1])  # p99.99 is beyond what a grid point can carry
    b_est, a_est = before.quantile(qs), after.quantile(qs)
    z = _gaps(stream.whole, cm, span_before, span_after)
    ladder = tuple(
        QuantileMove(quantile_label(q), q, float(b), float(a), zq, moved)
        for q, b, a, zq, moved in zip(
            qs.tolist(), b_est, a_est, z, _moved(stream, c, span_before, span_after, cm), strict=True
        )
    )
    moved = sorted((m for m in ladder if m.moved), key=_size_of_move)
    body = any(m.q <= BODY_MAX_Q for m in moved)
    tail = any(m.q > BODY_MAX_Q for m in moved)
    kind = "body and tail" if body and tail else "body" if body else "tail" if tail else "shape"
    if c.gradual:
        start, end = data.start(c.start), data.start(c.end)
        low, high, split = data.start(c.first - 1), data.start(c.last + 1), data.start(c.last)
    else:
        start = end = split = data.start(c.first)
        # Placed again between the neighbours kept (a chance split set aside beside it
        # would otherwise pinch the bootstrap to a few windows on one side).
        rng = np.random.default_rng(c.first)
        low_i, high_i = locate(cm.counts, cm.sizes, span_before[0], c.first, span_after[1], rng)
        low, high = data.start(low_i), data.start(high_i)
    return ChangeReport(
        c,
        start,
        end,
        low,
        high,
        split,
        before.count,
        after.count,
        ladder,
        kind,
        tuple(m.label for m in moved),
    )


def _size_of_move(m: QuantileMove) -> float:
    return -abs(m.relative) if np.isfinite(m.relative) else 0.0


def _gaps(whole: Sketch, cm: _Counts, before: tuple[int, int], after: tuple[int, int]) -> list[float | None]:
    """The standardised CDF gap between the periods at the whole's p50 … p99.9 (None
    where the grid lacks the point or too few values lie beyond it)."""
    nb, na = float(cm.sizes[before[0] : before[1]].sum()), float(cm.sizes[after[0] : after[1]].sum())
    out: list[float | None] = []
    if nb <= 0 or na <= 0:
        return [None] * (len(LADDER_QS) - 1)
    fb = cm.counts[before[0] : before[1]].sum(axis=0) / nb
    fa = cm.counts[after[0] : after[1]].sum(axis=0) / na
    f = (fb * nb + fa * na) / (nb + na)
    for q in LADDER_QS[:-1]:
        x = float(whole.quantile(q)[()])
        g = int(np.searchsorted(cm.grid, x))
        thin = g >= cm.grid.size or min(f[g], 1 - f[g]) * min(nb, na) < MIN_TAIL_COUNT
        if thin or not np.isclose(cm.grid[g], x):
            out.append(None)
            continue
        out.append(float((fb[g] - fa[g]) / np.sqrt(f[g] * (1 - f[g]) * (1 / nb + 1 / na))))
    return out
