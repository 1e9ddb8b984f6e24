"""Frames to batches: values as float64 in the sketch unit, times in epoch microseconds,
group keys, and a reason for every row that gave no value.

What later frames are read against (the sketch unit, the unit of bare numbers, the
time form) is decided once, from the first frame with rows (:meth:`Decoder.ready`);
after that :meth:`Decoder.prepare` runs in the parser threads (polars and numpy only).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import polars as pl
from numpy.typing import NDArray

from . import records, times, values
from .options import ScanOptions
from .skips import BAD_TIMESTAMP, NO_MATCH

_NAME_UNITS = {
    "ns": "ns",
    "us": "us",
    "µs": "us",
    "ms": "ms",
    "millis": "ms",
    "s": "s",
    "sec": "s",
    "secs": "s",
}
_NAME_UNIT = re.compile(r"[a-z0-9][_\-](ns|us|µs|ms|millis|s|sec|secs)$", re.IGNORECASE)


@dataclass
class Batch:
    """One frame's rows, ready to route: values, which rows are good, why the rest are not."""

    rows: int
    values: NDArray[np.float64]
    ok: NDArray[np.bool_]
    reasons: dict[str, NDArray[np.bool_]]
    tus: NDArray[np.float64] | None
    """Each row's time in epoch microseconds (NaN: unreadable), when a time field is read."""
    groups: pl.Series | None
    suffixed: int
    unsuffixed: int
    bad_time_kept: int
    time_format: str | None
    display: str
    lines: int = 0
    """Lines the rows span (``rows`` unless quoted CSV fields hold newlines)."""
    line_of: NDArray[np.int64] | None = None
    """Each row's first line, from ``first_line``, when records span several lines."""
    first_line: int = 0
    """Line number of the first row, given when the batch is committed in source order."""

    def line(self, row: int) -> int:
        """The line (as an editor numbers it) where row ``row`` starts."""
        return self.first_line + (row if self.line_of is None else int(self.line_of[row]))

    def where(self, row: int) -> str:
        return f"{self.display}:{self.line(row)}"


class Decoder:
    """The decisions later frames are read against, and the counts they feed."""

    def __init__(self, options: ScanOptions, *, by_time: bool) -> None:
        self.options = options
        self.by_time = by_time
        """Rows without a readable time belong to no sketch (split or windows)."""
        self.unit: str | None = None
        self.input_unit = options.input_unit
        """Unit of bare numbers: the option, else one read from the value's name."""
        self.time_format = options.time_format
        self._pattern = False
        """Free text: a line the regex does not match is ``no_match``, not a missing field."""
        self.suffixed = 0
        self.unsuffixed = 0
        self.bad_time_kept = 0

    def ready(self, df: pl.DataFrame, layout: records.Layout) -> str | None:
        """Decide, from the first frame with rows, what later frames are read against.

        Returns a warning to show when the unit of bare numbers came from the value's name.
        """
        note = None
        self._pattern = layout.format == "text"
        if self.unit is None and df.height:
            note = self._name_unit(layout.description)
            self.unit = self._decide_unit(df.get_column("v"))
        if self.time_format is None and "t" in df.columns:
            self.time_format = times.detect_format(df.get_column("t"))
        return note

    def _name_unit(self, description: str) -> str | None:
        if self.options.input_unit is not None:
            return None
        # A name such as latency_ms or timing.total_s says what bare numbers are
        # (common practice in telemetry exports); told in a warning, overridable.
        name = description.split(" ", 1)[-1].rsplit(".", 1)[-1]
        found = _NAME_UNIT.search(name)
        if not found:
            return None
        self.input_unit = values.canonical_unit(_NAME_UNITS[found.group(1).lower()])
        return (
            f"numbers without a suffix are taken to be in {self.input_unit}, from the name "
            f"{name!r} (say otherwise with --input-unit)."
        )

    def _decide_unit(self, col: pl.Series) -> str:
        o = self.options
        if o.unit is not None:
            return values.canonical_unit(o.unit)
        if self.input_unit is not None and values.is_time_unit(self.input_unit):
            return "ms"
        if values.has_suffix(col.head(2000)):
            return "ms"
        return self.input_unit or ""

    def final_unit(self) -> str:
        """The sketch unit, also when no row was read (from the options alone)."""
        if self.unit is None:
            o = self.options
            self.unit = values.canonical_unit(o.unit) if o.unit else (o.input_unit or "")
        return self.unit

    def prepare(self, df: pl.DataFrame, display: str) -> Batch:
        """The thread-safe half of a chunk: values, reasons, times (polars and numpy only)."""
        n = df.height
        pv = values.parse_values(df.get_column("v"), input_unit=self.input_unit, target_unit=self.unit or "")
        reasons = dict(pv.reasons)
        if self._pattern and values.MISSING_FIELD in reasons:
            reasons[NO_MATCH] = reasons.pop(values.MISSING_FIELD)
        ok = pv.ok
        tus: NDArray[np.float64] | None = None
        bad_time_kept = 0
        fmt = self.time_format
        if "t" in df.columns:
            tcol = df.get_column("t")
            fmt = fmt or times.detect_format(tcol)
            tus = times.parse_times(tcol, fmt) if fmt is not None else np.full(n, np.nan)
            bad_t = ~np.isfinite(tus)
            if self.by_time:
                bt = bad_t & ok
                if bt.any():
                    reasons[BAD_TIMESTAMP] = bt
                    ok = ok & ~bad_t
            else:
                bad_time_kept = int((bad_t & ok).sum())
        g = df.get_column("g").cast(pl.String) if "g" in df.columns else None
        return Batch(
            n, pv.values, ok, reasons, tus, g, pv.suffixed, pv.unsuffixed, bad_time_kept, fmt, display, n
        )

    def settle(self, batch: Batch) -> None:
        """Count a committed batch (in source order): unit suffixes, untimed rows, time form."""
        self.suffixed += batch.suffixed
        self.unsuffixed += batch.unsuffixed
        self.bad_time_kept += batch.bad_time_kept
        if self.time_format is None:
            self.time_format = batch.time_format

    def mixed_units_warning(self) -> str | None:
        if self.suffixed and self.unsuffixed and self.input_unit is None and values.is_time_unit(self.unit):
            return (
                f"{self.unsuffixed} values had no unit suffix while {self.suffixed} did; "
                f"the bare numbers were taken to be in {self.unit} (say otherwise with --input-unit)."
            )
        return None

    def untimed_warning(self) -> str | None:
        if not self.bad_time_kept:
            return None
        return (
            f"{self.bad_time_kept} rows had a missing or unreadable timestamp; their values were kept "
            "but they do not count towards the time range."
        )
