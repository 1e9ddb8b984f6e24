"""Frames to batches: values as float64 in the sketch unit, times in epoch microseconds,
group keys, and a reason for every row that gave no value.

What later frames are read against (the sketch unit, the unit of bare numbers, the
time form) is decided once, from the first frame with rows (:meth:`Decoder.ready`);
after that :meth:`Decoder.prepare` runs in the parser threads (polars and numpy only).
"""

from __future__ import annotations

import re
import time
from dataclasses import dataclass

import numpy as np
import polars as pl
from numpy.typing import NDArray

from . import records, times, values
from .layout import NOT_RECORDS
from .options import ScanOptions
from .route import KeyCoder, Keys
from .skips import BAD_TIMESTAMP

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
_NAME_UNIT = re.compile(r"[a-z0-9](?:[_\-]|\s*[(\[])(ns|us|µs|ms|millis|s|sec|secs)[)\]]?$", re.IGNORECASE)
"""A unit at the end of a field's name: ``latency_ms``, ``total-s``, ``Latency (ms)``."""


@dataclass
class Batch:
    """One frame's rows, ready to route: values, which rows are good, why the rest are not."""

    rows: int
    values: NDArray[np.float64]
    ok: NDArray[np.bool_]
    reasons: dict[str, NDArray[np.bool_]]
    tus: NDArray[np.float64] | None
    """Each row's time in epoch microseconds (NaN: unreadable), when a time field is read."""
    groups: Keys | None
    """The ``--by`` values, coded in the parser thread."""
    suffixed: int
    unsuffixed: int
    other_epoch: int
    """Epoch times read in another unit than the file's, by their own magnitude."""
    years: tuple[int, ...]
    """RFC 3164 times: the years assumed."""
    time_format: str | None
    display: str
    lines: int = 0
    """Lines the rows span (``rows`` unless quoted CSV fields hold newlines)."""
    line_of: NDArray[np.int64] | None = None
    """Each row's first line, from ``first_line``, when records span several lines."""
    first_line: int = 0
    """Line number of the first row, given when the batch is committed in source order."""
    fixed: tuple[tuple[str, int, list[int]], ...] = ()
    """Bytes made readable before parsing: (what, lines, first 0-based lines of the piece)."""
    loose: NDArray[np.bool_] | None = None
    """Rows that are no record at all (the format's own reasons: not JSON, blank, ...)."""

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
        self.by_magnitude = options.time_format is None
        """Epoch times are read each by its own magnitude unless --time-format fixed the unit."""
        self.now_us = time.time() * 1e6
        """The moment RFC 3164 years are assumed from: when the scan began."""
        self.suffixed = 0
        self.unsuffixed = 0
        self.other_epoch = 0
        self.years: set[int] = set()
        self.times_read = 0
        """Rows whose time was read; with ``times_bad``, tells a form nobody guessed."""
        self.times_bad = 0
        """Rows skipped as ``bad_timestamp``."""
        self._keys = KeyCoder()

    def ready(self, df: pl.DataFrame, layout: records.Layout) -> list[str]:
        """Decide, from the first frame with rows, what later frames are read against.

        Returns what the user must hear of the choices made (once): the value found
        without being named, the unit of bare numbers from the format or the name.
        """
        notes: list[str] = []
        if self.unit is None and df.height:
            notes += layout.notes
            if self.input_unit is None and layout.input_unit is not None:
                self.input_unit = layout.input_unit  # the format says it (ECS, OTLP: ns)
            else:
                note = self._name_unit(layout.description)
                if note is not None:
                    notes.append(note)
            self.unit = self._decide_unit(df.get_column("v"))
        if self.time_format is None and "t" in df.columns:
            self.time_format = layout.time_format or times.detect_format(df.get_column("t"))
            self.by_magnitude = layout.time_format is None
        return notes

    def _name_unit(self, description: str) -> str | None:
        if self.options.input_unit is not None or self.input_unit is not None:
            return None
        # A name such as latency_ms or timing.total_s says what bare numbers are
        # (common practice in telemetry exports); told in a warning, overridable.
        name = description.split(" ", 1)[-1].rsplit(".", 1)[-1]
        found = _NAME_UNIT.search(name)
        if not found:
            return None
        self.input_unit = values.canonical_unit(_NAME_UNITS[found.group(1).lower()])
        if self.options.unit is not None:
            return None  # the user chose the sketch unit: the reading of bare numbers is plain
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
        """The thread-safe half of a chunk: values, reasons, times (polars and numpy only).

        A row the record format already found unusable (column ``r``: not JSON, not a line
        of the format, blank) is skipped for that reason alone. A row whose time is
        missing or unreadable, when the scan reads times, is skipped as ``bad_timestamp``:
        it is counted, never silently kept outside the time range.
        """
        n = df.height
        pv = values.parse_values(df.get_column("v"), input_unit=self.input_unit, target_unit=self.unit or "")
        reasons = dict(pv.reasons)
        ok = pv.ok
        loose = None
        if "r" in df.columns:
            ok, reasons = _record_reasons(df.get_column("r"), ok, reasons)
            loose = df.get_column("r").is_in(NOT_RECORDS).fill_null(False).to_numpy()
        tus: NDArray[np.float64] | None = None
        other_epoch = 0
        years: tuple[int, ...] = ()
        fmt = self.time_format
        if "t" in df.columns:
            tcol = df.get_column("t")
            fmt = fmt or times.detect_format(tcol)
            if fmt is None:
                tus = np.full(n, np.nan)
            else:
                read = times.read_times(tcol, fmt, by_magnitude=self.by_magnitude, now_us=self.now_us)
                tus, other_epoch, years = read.us, read.other_unit, read.years
            bt = ~np.isfinite(tus) & ok
            if bt.any():
                reasons[BAD_TIMESTAMP] = bt
                ok = ok & ~bt
        g = self._keys.code(df.get_column("g")) if "g" in df.columns else None
        batch = Batch(
            n, pv.values, ok, reasons, tus, g, pv.suffixed, pv.unsuffixed, other_epoch, years, fmt, display, n
        )
        batch.loose = loose
        return batch

    def settle(self, batch: Batch) -> None:
        """Count a committed batch (in source order): unit suffixes, epoch units, time form."""
        self.suffixed += batch.suffixed
        self.unsuffixed += batch.unsuffixed
        self.other_epoch += batch.other_epoch
        self.years.update(batch.years)
        if batch.tus is not None:
            self.times_read += int(np.isfinite(batch.tus).sum())
            bad = batch.reasons.get(BAD_TIMESTAMP)
            self.times_bad += 0 if bad is None else int(bad.sum())
        if self.time_format is None:
            self.time_format = batch.time_format

    def mixed_units_warning(self) -> str | None:
        o = self.options
        if o.input_unit is not None or o.unit is not None:
            return None  # the user said what the numbers are
        if self.suffixed and self.unsuffixed and self.input_unit is None and values.is_time_unit(self.unit):
            return (
                f"{self.unsuffixed} values had no unit suffix while {self.suffixed} did; "
                f"the bare numbers were taken to be in {self.unit} (say otherwise with --input-unit)."
            )
        return None

    def time_notes(self) -> list[str]:
        """What reading the times assumed or found: RFC 3164 years, mixed epoch units."""
        out = []
        if self.times_bad and not self.times_read:
            given = self.options.time_format
            out.append(
                f"no time could be read with --time-format {given!r}; check the pattern against the field."
                if given is not None
                else "no time could be read: the field is not ISO 8601, epoch, Common Log Format or RFC "
                "3164; name its form with --time-format, a strftime pattern such as '%d.%m.%Y %H:%M:%S'."
            )
        if self.time_format == "rfc3164" and self.years:
            shown = ", ".join(str(y) for y in sorted(self.years))
            out.append(f"{times.RFC3164_YEAR_RULE}; here: {shown}.")
        if self.other_epoch:
            unit = (self.time_format or "").removeprefix("epoch_")
            out.append(
                f"{self.other_epoch:,} epoch times were not in {unit} like the rest; each was read in "
                "the unit its size says (s, ms, us or ns; --time-format fixes one unit for all)."
            )
        return out


def _record_reasons(
    r: pl.Series, ok: NDArray[np.bool_], reasons: dict[str, NDArray[np.bool_]]
) -> tuple[NDArray[np.bool_], dict[str, NDArray[np.bool_]]]:
    """The record format's own reasons win over what the value parser made of the row."""
    bad = r.is_not_null().to_numpy()
    if not bad.any():
        return ok, reasons
    out = {reason: mask & ~bad for reason, mask in reasons.items()}
    out = {reason: mask for reason, mask in out.items() if mask.any()}
    codes = r.filter(pl.Series(bad))
    idx = np.flatnonzero(bad)
    for reason in codes.unique(maintain_order=True).to_list():
        mask = np.zeros(bad.size, dtype=bool)
        mask[idx[(codes == reason).to_numpy()]] = True
        out[reason] = out[reason] | mask if reason in out else mask
    return ok & ~bad, out
