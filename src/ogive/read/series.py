"""Histogram points into windows, and windows into named binned distributions.

Temporality (opentelemetry-proto ``metrics.proto``, ``AggregationTemporality``; the
OpenMetrics counter semantics for classic histograms):

* A DELTA point counts the values of its own interval (start, time]: it is a window.
* A CUMULATIVE point counts everything since its series' start. Its window is the
  difference from the series' previous point, bucket by bucket; the first point of a
  series is the window from the start (one snapshot = since the process started).
  A **reset** — a new start time, or any count going down (a restarted process) —
  makes the point's own counts the window (since the restart), and is counted. A
  point no newer than the previous one, or a repeated DELTA point, is counted and
  left out. Min and max cannot be differenced (the cumulative ones cover the whole
  run), so a differenced window has none; sums difference exactly.
* A series is what OTLP's data model calls a stream: metric name, resource, scope and
  point attributes (OpenMetrics: family and labels but ``le``).

Each window goes to one distribution, by the options, by its **end time** (the point's
``timeUnixNano``, the moment it was recorded): ``all``, ``ATTRIBUTE=VALUE`` (``--by``),
``before``/``after`` (``--split-at``; an interval ending exactly at the moment is before
it) or a window of ``--window`` width (likewise). A window whose
interval reaches across the split moment or a window edge cannot be divided (nothing
says when inside it each value came); those are counted in a warning.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from ..errors import OgiveError
from ..sketch import Binned, SketchSet, SkipTally, timekeys
from ..sketch.buckets import ExplicitPart, ExponentialPart, Extremes, Part
from ..sketch.units import duration_factor
from . import times
from .options import ScanOptions
from .otlp_metrics import Point
from .route import MISSING, OTHER

STALE = "older_point"
LAYOUT_CHANGED = "layout_changed"
REASON_TEXT = {
    STALE: "a point no newer than its series' previous one (or a repeated delta point)",
    LAYOUT_CHANGED: "a cumulative point whose explicit bounds differ from its series' previous one",
}

UCUM_UNITS = {"s": "s", "ms": "ms", "us": "us", "ns": "ns", "min": "m", "h": "h", "By": "bytes",
              "bytes": "bytes"}  # fmt: skip
"""OTLP metric units (UCUM case-sensitive codes) as ogive's units; others are kept as written."""
NON_NEGATIVE = ("s", "ms", "us", "ns", "m", "h", "bytes")


def our_unit(unit: str) -> str:
    """A metric's unit in ogive's words: ``s``, ``ms``, ``bytes``; ``1`` and ``{request}`` say none."""
    if unit in ("", "1") or unit.startswith("{"):
        return ""
    return UCUM_UNITS.get(unit, unit)


def floor_of(unit: str) -> float:
    """Where the first explicit bucket starts: 0 for durations and sizes (never negative)."""
    return 0.0 if our_unit(unit) in NON_NEGATIVE else -math.inf


def downscaled(p: ExponentialPart, scale: int) -> ExponentialPart:
    """The same counts on a coarser scale: bucket i becomes i >> (p.scale - scale), exactly
    (each coarser bucket is the union of 2^k finer ones; nothing is interpolated)."""
    k = p.scale - scale

    def merge(off: int, c: np.ndarray) -> tuple[int, np.ndarray]:
        if not c.size:
            return 0, c
        idx = (np.arange(c.size) + off) >> k
        lo = int(idx.min())
        return lo, np.bincount(idx - lo, weights=c).astype(np.float64)

    po, pc = merge(p.positive_offset, p.positive)
    no, nc = merge(p.negative_offset, p.negative)
    return replace(p, scale=scale, positive_offset=po, positive=pc, negative_offset=no, negative=nc)


def _minus(new: Part, old: Part) -> Part | None:
    """new - old bucket by bucket (same layout), or None where a count went down (a reset)."""
    if isinstance(new, ExplicitPart) and isinstance(old, ExplicitPart):
        diff = new.counts - old.counts
        if np.any(diff < 0):
            return None
        total = new.extremes.total - old.extremes.total
        return ExplicitPart(new.bounds, diff, new.floor, Extremes(math.nan, math.nan, total))
    assert isinstance(new, ExponentialPart) and isinstance(old, ExponentialPart)
    neg_old = replace(old, positive=-old.positive, negative=-old.negative, zero_count=-old.zero_count,
                      extremes=Extremes())  # fmt: skip
    d = replace(new, extremes=Extremes()).plus(neg_old)
    if np.any(d.positive < 0) or np.any(d.negative < 0) or d.zero_count < 0:
        return None
    return replace(d, extremes=Extremes(math.nan, math.nan, new.extremes.total - old.extremes.total))


@dataclass
class Window:
    part: Part
    start_ns: int
    """0 when unknown."""
    end_ns: int
    """0 when unknown (an exposition without timestamps)."""
    point: Point


@dataclass
class SeriesBook:
    """The last cumulative point of every series, and what differencing them met."""

    last: dict[Any, Point] = field(default_factory=dict)
    resets: int = 0
    reset_at: list[str] = field(default_factory=list)
    rescaled: int = 0

    def window(self, p: Point, where: str) -> Window | str:
        """The point's window, or the reason it gives none."""
        prev = self.last.get(p.series)
        if not p.cumulative:
            if prev is not None and (prev.start_ns, prev.time_ns) == (p.start_ns, p.time_ns):
                return STALE
            self.last[p.series] = p
            return Window(p.part, p.start_ns, p.time_ns, p)
        if prev is None:
            self.last[p.series] = p
            return Window(p.part, p.start_ns, p.time_ns, p)
        if p.time_ns and prev.time_ns and p.time_ns <= prev.time_ns:
            return STALE
        self.last[p.series] = p
        if p.start_ns and prev.start_ns and p.start_ns != prev.start_ns:
            return self._reset(p, where)
        new, old = p.part, prev.part
        if isinstance(new, ExponentialPart) and isinstance(old, ExponentialPart) and new.key != old.key:
            if (new.zero_threshold, new.factor) != (old.zero_threshold, old.factor):
                return LAYOUT_CHANGED
            self.rescaled += 1
            coarse = min(new.scale, old.scale)
            new, old = downscaled(new, coarse), downscaled(old, coarse)
        elif new.key != old.key:
            return LAYOUT_CHANGED
        diff = _minus(new, old)
        if diff is None:
            return self._reset(p, where)
        return Window(diff, prev.time_ns, p.time_ns, p)

    def _reset(self, p: Point, where: str) -> Window:
        self.resets += 1
        if len(self.reset_at) < 5 and where not in self.reset_at:  # a line may hold many series
            self.reset_at.append(where)
        return Window(p.part, p.start_ns, p.time_ns, p)


class Collector:
    """Windows into named binned distributions (``all``, groups, halves, time windows)."""

    def __init__(self, options: ScanOptions) -> None:
        self.options = options
        self.split_ns = None if options.split_at is None else times.parse_moment(options.split_at) * 1e3
        self.width_ns = None if options.window_us is None else options.window_us * 1e3
        self.out: dict[tuple[str, str], Binned] = {}
        self.groups: dict[str, str] = {}
        self.overflow: set[str] = set()
        self.straddling = 0
        self.unit: str | None = options.unit
        self.spans: dict[tuple[str, str], list[int]] = {}

    def _unit_factor(self, p: Point) -> float:
        src = our_unit(p.unit)
        if self.unit is None:
            self.unit = "ms" if duration_factor(src, "ms") is not None else src
        factor = duration_factor(src, self.unit)
        if factor is None:
            if not src or src == self.unit:
                return 1.0
            raise OgiveError(
                f"metric {p.metric!r} is in {src!r} and cannot be read in {self.unit!r}: only durations "
                "(ns, us, ms, s, m, h) convert into one another."
            )
        return factor

    def add(self, w: Window) -> bool:
        """Put the window in its distribution; False when it needs a time it does not have."""
        p = w.point
        factor = self._unit_factor(p)
        part = w.part.scaled(factor) if factor != 1.0 else w.part
        names = self._names(w)
        if names is None:
            return False
        first = w.start_ns or w.end_ns
        for name in names:
            key = (p.metric, name)
            b = self.out.get(key)
            if b is None:
                b = self.out[key] = Binned(self.unit or "")
            b.add_part(part)
            b.provenance.rows_read += 1
            span = self.spans.setdefault(key, [0, 0])
            if first and (not span[0] or first < span[0]):
                span[0] = first
            if w.end_ns > span[1]:
                span[1] = w.end_ns
        return True

    def _names(self, w: Window) -> list[str] | None:
        """The distributions the window goes to (None: it needs a time it lacks).

        One name, except for a timeline: there the window's own (``START/DURATION``,
        and the group's ``GROUP@START/DURATION``) beside the whole and the group's
        whole, named as the log reader names them (:mod:`.route`).
        """
        o = self.options
        label = self._label(w) if o.by else ""
        if self.split_ns is None and self.width_ns is None:
            return [label or "all"]
        if not w.end_ns:
            return None
        if self.split_ns is not None:
            # An interval (start, end] that ends at the moment holds nothing after it.
            half = "after" if w.end_ns > self.split_ns else "before"
            if w.start_ns and w.start_ns < self.split_ns < w.end_ns:
                self.straddling += 1
            return [f"{half}/{label}" if label else half]
        assert self.width_ns is not None
        width = round(self.width_ns)
        start = (w.end_ns - 1) // width * width  # (start, end]: the end's last ns; integers, exact
        if w.start_ns and w.start_ns < start:
            self.straddling += 1
        if not o.timeline:
            return [times.iso(start / 1e3)]
        key = timekeys.window_key(start / 1e3, width / 1e3)
        return [timekeys.WHOLE, key] + ([label, f"{label}@{key}"] if label else [])

    def _label(self, w: Window) -> str:
        """The window's ``--by`` group (``FIELD=VALUE``; past the cap, the shared other)."""
        o = self.options
        key = w.point.attributes.get(o.by or "", MISSING)
        if key not in self.groups:
            if len(self.groups) < o.max_groups:
                self.groups[key] = f"{o.by}={key}"
            else:
                self.overflow.add(key)
        return self.groups.get(key, f"{o.by}={OTHER}")

    def finish(
        self, sources: list[str], description: str, lines: int, skipped: dict[str, SkipTally]
    ) -> SketchSet:
        metrics = {m for m, _ in self.out}
        several = len(metrics) > 1
        if several and self.options.timeline:
            raise OgiveError(
                f"the input holds {len(metrics)} histogram metrics ({', '.join(sorted(metrics))}); "
                "a timeline follows one: name it with --metric."
            )
        sset = SketchSet()
        for (metric, name), b in sorted(self.out.items(), key=lambda kv: (kv[0][0], _order(kv[0][1]))):
            b.provenance.sources = list(sources)
            kinds = " and ".join(sorted({p.kind for p in b.parts}))
            b.provenance.field = f"histogram {metric} ({description}, {kinds} buckets)"
            b.provenance.lines_read = lines
            first, last = self.spans.get((metric, name), [0, 0])
            b.provenance.time_first = times.iso(first / 1e3) if first else None
            b.provenance.time_last = times.iso(last / 1e3) if last else None
            sset.sketches[
                f"{metric}/{name}" if several and name != "all" else metric if several else name
            ] = b
        if len(sset.sketches) == 1 and not (self.options.by or self.split_ns or self.width_ns):
            only = next(iter(sset.sketches.values()))
            for reason, tally in skipped.items():
                only.provenance.skip(reason, tally.count, tally.examples)
        else:
            sset.unassigned = {r: SkipTally(t.count, list(t.examples)) for r, t in skipped.items()}
        return sset

    def warnings(self, book: SeriesBook) -> list[str]:
        out = []
        if book.resets:
            out.append(
                f"{book.resets:,} counter reset(s) in cumulative series (a new start time, or counts "
                "that went down): each such point's own counts were taken as the window since the "
                f"restart (first at {', '.join(book.reset_at)})."
            )
        if book.rescaled:
            out.append(
                f"{book.rescaled:,} cumulative exponential point(s) changed scale within their series: "
                "the two points were differenced on the coarser scale (exact: each coarser bucket is "
                "the union of finer ones)."
            )
        if self.straddling:
            what = "--split-at moment" if self.split_ns is not None else "--window edge"
            out.append(
                f"{self.straddling:,} point(s) counted over an interval that spans a {what}: each was put "
                "where its interval ends (its time), since nothing says when inside it each value came."
            )
        if self.overflow:
            o = self.options
            out.append(
                f"--by {o.by}: more than {o.max_groups} distinct values; {len(self.overflow)} further "
                f"values share the group {o.by}={OTHER} (raise --max-groups to keep them apart)."
            )
        return out


def _order(name: str) -> tuple[int, str]:
    return ({"before": 0, "after": 1}.get(name.split("/")[0], 2), name)
