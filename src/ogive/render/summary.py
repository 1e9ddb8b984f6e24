"""The summary of a sketch set as text lines and as a JSON-ready dict.

Shared by ``scan``, ``show`` and ``merge`` so the three always print the same thing for
the same sketch. Nothing here computes a statistic: every number is asked of the sketch
(its counts, its quantiles), and this module only lays it out.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import printable
from ..numbers import quantity
from ..sketch import Binned, Sketch, SketchSet, is_binned, quantile_label
from .tables import table, text_lines

LADDER = (0.5, 0.9, 0.99, 0.999, 0.9999)
"""The quantiles every summary shows, between min and max."""


def _json_number(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


# ---------------------------------------------------------------------- the result
@dataclass(frozen=True)
class SketchSummary:
    name: str
    unit: str
    n: int
    minimum: float
    maximum: float
    mean: float
    quantiles: tuple[tuple[float, float], ...]
    """(q, value) pairs in the sketch's unit."""
    skipped: tuple[tuple[str, int, tuple[str, ...]], ...]
    """(reason, count, first example locations) for rows kept out of the sketch."""
    nan_count: int
    inf_count: int
    negative_count: int
    zero_count: int
    exact: bool
    """True when every value is held exactly (small sketches)."""
    sources: tuple[str, ...]
    field: str
    lines_read: int
    rows_read: int
    time_first: str | None
    time_last: str | None
    partial: str | None
    compression: float
    bounds: tuple[tuple[float, float], ...] = ()
    """Binned distributions: per quantile (same order), the range sure to hold it; () for a sketch."""
    extreme_bounds: tuple[tuple[float, float], tuple[float, float]] | None = None
    """Binned: the ranges sure to hold the min and the max (one value each when the export gave it)."""
    interpolation: str = ""
    """Binned: how estimates are read inside a bucket (linear, log-linear)."""
    layouts: int = 0

    @property
    def skipped_total(self) -> int:
        return sum(c for _, c, _ in self.skipped) + self.nan_count + self.inf_count

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "name": self.name,
            "unit": self.unit,
            "n": self.n,
            "min": _json_number(self.minimum),
        }
        out.update({quantile_label(q): _json_number(v) for q, v in self.quantiles})
        out.update(
            {
                "max": _json_number(self.maximum),
                "mean": _json_number(self.mean),
                "skipped": {r: {"count": c, "examples": list(e)} for r, c, e in self.skipped},
                "skipped_total": self.skipped_total,
                "nan_count": self.nan_count,
                "inf_count": self.inf_count,
                "negative_count": self.negative_count,
                "zero_count": self.zero_count,
                "exact": self.exact,
                "sources": list(self.sources),
                "field": self.field,
                "lines_read": self.lines_read,
                "rows_read": self.rows_read,
                "time_first": self.time_first,
                "time_last": self.time_last,
                "partial": self.partial,
                "compression": self.compression,
            }
        )
        if self.extreme_bounds is not None:
            (mn_lo, mn_hi), (mx_lo, mx_hi) = self.extreme_bounds
            out["kind"] = "binned"
            out["interpolation"] = self.interpolation
            out["layouts"] = self.layouts
            out["bounds"] = {
                "min": [_json_number(mn_lo), _json_number(mn_hi)],
                **{
                    quantile_label(q): [_json_number(lo), _json_number(hi)]
                    for (q, _), (lo, hi) in zip(self.quantiles, self.bounds, strict=True)
                },
                "max": [_json_number(mx_lo), _json_number(mx_hi)],
            }
        return out


@dataclass(frozen=True)
class SetSummary:
    sketches: tuple[SketchSummary, ...]
    warnings: tuple[str, ...] = ()
    unassigned: tuple[tuple[str, int, tuple[str, ...]], ...] = ()
    """(reason, count, first locations) of rows read but given to no sketch."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "sketches": {s.name: s.to_dict() for s in self.sketches},
            "unassigned": {r: {"count": c, "examples": list(e)} for r, c, e in self.unassigned},
            "warnings": list(self.warnings),
        }


def _binned_fields(b: Binned, qs: Sequence[float]) -> dict[str, Any]:
    if not b.count:
        return {}
    lo, hi = b.quantile_bounds(np.asarray(qs, dtype=np.float64))
    ends_lo, ends_hi = b.order_statistic_bounds(np.array([0.0, b.count - 1.0]))
    return {
        "bounds": tuple((float(x), float(y)) for x, y in zip(lo, hi, strict=True)),
        "extreme_bounds": ((float(ends_lo[0]), float(ends_hi[0])), (float(ends_lo[1]), float(ends_hi[1]))),
        "interpolation": b.interpolation,
        "layouts": len(b.parts),
    }


def summarise_sketch(name: str, s: Sketch | Binned, qs: Sequence[float] = LADDER) -> SketchSummary:
    p = s.provenance
    values = s.quantile(np.asarray(qs, dtype=np.float64)) if s.count else np.full(len(qs), np.nan)
    extra = _binned_fields(s, qs) if is_binned(s) else {}
    return SketchSummary(
        name=name,
        unit=s.unit,
        n=s.count,
        minimum=s.min,
        maximum=s.max,
        mean=s.mean,
        quantiles=tuple((float(q), float(v)) for q, v in zip(qs, values, strict=True)),
        skipped=tuple(
            (r, t.count, tuple(t.examples)) for r, t in sorted(p.skipped.items(), key=lambda kv: -kv[1].count)
        ),
        nan_count=s.nan_count,
        inf_count=s.inf_count,
        negative_count=s.negative_count,
        zero_count=s.zero_count,
        exact=s.exact,
        sources=tuple(p.sources),
        field=p.field,
        lines_read=p.lines_read,
        rows_read=p.rows_read,
        time_first=p.time_first,
        time_last=p.time_last,
        partial=p.partial,
        compression=s.compression if isinstance(s, Sketch) else 0.0,
        **extra,
    )


def summarise(sset: SketchSet, warnings: Sequence[str] = (), qs: Sequence[float] = LADDER) -> SetSummary:
    return SetSummary(
        sketches=tuple(summarise_sketch(name, sset[name], qs) for name in sset.names()),
        warnings=tuple(warnings),
        unassigned=tuple(
            (r, t.count, tuple(t.examples))
            for r, t in sorted(sset.unassigned.items(), key=lambda kv: -kv[1].count)
        ),
    )


def summary_dict(
    sset: SketchSet, warnings: Sequence[str] = (), qs: Sequence[float] = LADDER
) -> dict[str, Any]:
    return summarise(sset, warnings, qs).to_dict()


# ---------------------------------------------------------------------- text
def _table(header: Sequence[str], rows: Sequence[Sequence[str]], left: int = 1) -> list[str]:
    """The one table layout (:func:`.tables.text_lines`): the first ``left`` columns left-aligned."""
    return text_lines(table(header, rows, range(left, len(header))))


def _short(name: str, limit: int = 28) -> str:
    return name if len(name) <= limit else name[: limit - 1] + "…"


def _describe(summary: SetSummary) -> list[str]:
    """Where the numbers come from: sources, field, unit, time range (shared ones once)."""
    if not summary.sketches:
        return []
    out: list[str] = []
    sources: list[str] = []
    for s in summary.sketches:
        sources.extend(x for x in s.sources if x not in sources)
    if sources:
        shown = ", ".join(sources[:4]) + (f", … ({len(sources) - 4} more)" if len(sources) > 4 else "")
        out.append(f"source: {shown}")
    fields = sorted({s.field for s in summary.sketches if s.field})
    units = sorted({s.unit for s in summary.sketches})
    bits = []
    if fields:
        bits.append("value: " + "; ".join(fields))
    bits.append("unit: " + (", ".join(u or "none (numbers as written)" for u in units)))
    # Groups and splits of one scan each record the whole scan's line count: count it once
    # per scan (sketches of one scan share their sources), and add up different scans
    # (a set the workspace wrote from two files).
    per_scan: dict[tuple[str, ...], int] = {}
    for s in summary.sketches:
        per_scan[s.sources] = max(per_scan.get(s.sources, 0), s.lines_read)
    lines = sum(per_scan.values())
    if lines:
        bits.append(f"lines read: {lines:,}")
    out.append("   ".join(bits))
    timed = [s for s in summary.sketches if s.time_first and s.time_last]
    if timed:
        line = f"time: {min(s.time_first or '' for s in timed)} to {max(s.time_last or '' for s in timed)}"
        if len(timed) < len(summary.sketches):
            # e.g. a followed log without --time-field: only the recent window has a span,
            # and it must not read as the span of the whole file.
            line += f" ({', '.join(s.name for s in timed[:3])}{', ...' if len(timed) > 3 else ''} only)"
        out.append(line)
    return out


def summary_lines(summary: SetSummary) -> list[str]:
    """The whole summary: provenance, the quantile table, skipped rows, notes, warnings."""
    out = _describe(summary)
    header = ["sketch", "n", "skipped", "min", *(quantile_label(q) for q, _ in _first_ladder(summary)), "max"]
    rows = []
    for s in summary.sketches:
        ends = s.extreme_bounds or ((math.nan, math.nan), (math.nan, math.nan))
        rows.append(
            [
                _short(s.name),
                f"{s.n:,}",
                f"{s.skipped_total:,}",
                bounded(s.minimum, ends[0], s.unit),
                *(bounded(v, b, s.unit) for (_, v), b in zip(s.quantiles, _bounds_of(s), strict=True)),
                bounded(s.maximum, ends[1], s.unit),
            ]
        )
    if out:
        out.append("")
    out.extend(_table(header, rows))
    out.extend(_skipped_lines(summary))
    out.extend(_notes(summary))
    for w in summary.warnings:
        out.append(f"warning: {w}")
    return [printable(line) for line in out]  # sources, fields and provenance come from the input


def _bounds_of(s: SketchSummary) -> tuple[tuple[float, float], ...]:
    return s.bounds or tuple((math.nan, math.nan) for _ in s.quantiles)


def bounded(value: float, bound: tuple[float, float], unit: str) -> str:
    """A value, and for a binned distribution the range sure to hold it: ``38.2 ms [25ms, 50ms]``
    (one value when the range is one point: an exact min or max)."""
    lo, hi = bound
    if math.isnan(lo) and math.isnan(hi):
        return quantity(value, unit)
    if lo == hi:
        return quantity(lo, unit)
    ends = (
        quantity(x, unit, compact=True) if math.isfinite(x) else ("-∞" if x < 0 else "∞") for x in (lo, hi)
    )
    return f"{quantity(value, unit)} [{', '.join(ends)}]"


def _first_ladder(summary: SetSummary) -> tuple[tuple[float, float], ...]:
    return summary.sketches[0].quantiles if summary.sketches else tuple((q, math.nan) for q in LADDER)


def _skipped_lines(summary: SetSummary) -> list[str]:
    """Rows kept out of the sketch, by reason, with where to look: never a silent drop."""
    lines: list[str] = []
    many = len(summary.sketches) > 1
    for s in summary.sketches:
        items = list(s.skipped)
        if s.nan_count:
            items.append(("NaN value", s.nan_count, ()))
        if s.inf_count:
            items.append(("infinite value", s.inf_count, ()))
        for reason, count, examples in items:
            where = f" (first at {_locations(examples)})" if examples else ""
            prefix = f"{_short(s.name)}: " if many else ""
            lines.append(f"  {prefix}{reason.replace('_', ' ')}: {count:,}{where}")
    for reason, count, examples in summary.unassigned:
        where = f" (first at {_locations(examples)})" if examples else ""
        lines.append(f"  in no sketch: {reason.replace('_', ' ')}: {count:,}{where}")
    if not lines:
        return []
    return ["", "skipped rows (not in the sketch):", *lines]


def _locations(examples: Sequence[str]) -> str:
    """'a.log:3', 'a.log:9', 'b.log:4' -> 'a.log:3, 9; b.log:4' (file named once)."""
    parts: list[tuple[str, list[str]]] = []
    for ex in examples:
        where, sep, line = ex.rpartition(":")
        if not sep or not line.isdigit():
            where, line = ex, ""
        if parts and parts[-1][0] == where and line:
            parts[-1][1].append(line)
        else:
            parts.append((where, [line] if line else []))
    return "; ".join(f"{w}:{', '.join(ls)}" if ls else w for w, ls in parts)


def _qlabel(q: float) -> str:
    return "min" if q == 0 else "max" if q == 1 else quantile_label(q)


def _notes(summary: SetSummary) -> list[str]:
    notes: list[str] = []
    for s in summary.sketches:
        tag = f"{_short(s.name)}: " if len(summary.sketches) > 1 else ""
        if s.negative_count:
            notes.append(f"{tag}{s.negative_count:,} negative values (kept in the sketch)")
        if s.partial:
            notes.append(f"{tag}PARTIAL: {s.partial}")
        if s.n == 0:
            notes.append(f"{tag}no usable values at all")
    if any(s.n for s in summary.sketches) and all(s.exact for s in summary.sketches if s.n):
        notes.append("every value is held exactly: these quantiles are exact, not estimated")
    binned = [s for s in summary.sketches if s.extreme_bounds is not None]
    if binned:
        how = sorted({s.interpolation for s in binned})
        notes.append(
            "binned (telemetry histograms): each value is an estimate read "
            f"{' or '.join(how)}ly inside its bucket, and [low, high] is the range the true quantile "
            "of the raw values is sure to lie in (numpy.quantile's definition); a single value is exact."
        )
    return ["", *notes] if notes else []
    return ["", *notes] if notes else []


MEAN = "mean"
"""``show -q mean``: the arithmetic mean (exact: the sketch keeps the sum) beside the quantiles."""


def quantile_lines(summary: SetSummary, columns: Sequence[float | str] | None = None) -> list[str]:
    """Only the asked-for quantiles (``show -q``), and the mean where asked: one row per sketch.

    ``columns`` orders them (quantiles as q, the mean as :data:`MEAN`); by default the
    summary's quantiles.
    """
    if not summary.sketches:
        return []
    cols = list(columns) if columns is not None else [q for q, _ in summary.sketches[0].quantiles]

    def cell(s: SketchSummary, col: float | str) -> str:
        if col == MEAN:
            return quantity(s.mean, s.unit)
        i = [q for q, _ in s.quantiles].index(float(col))
        return bounded(s.quantiles[i][1], _bounds_of(s)[i], s.unit)

    header = ["sketch", "n", *(MEAN if c == MEAN else _qlabel(float(c)) for c in cols)]
    rows = [[_short(s.name), f"{s.n:,}", *(cell(s, c) for c in cols)] for s in summary.sketches]
    return _table(header, rows)
