"""Numbers and durations from text, vectorised in polars, converted to one unit.

Two paths keep the common case fast: a plain cast to Float64 handles ordinary numbers
(``12``, ``0.25``, ``1e3``, ``nan``); only the rows that cast leaves empty go through
the regular expressions for a unit suffix (``250ms``, ``1.5 s``, ``800µs``) or a
compound duration (``1m30.5s``, ``2h5m``). No Python code runs per row.

NaN and infinities are passed on as values: the Sketch counts them (``nan_count``,
``inf_count``) in one place, so they are not also counted here as skipped rows.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import polars as pl
from numpy.typing import NDArray

from ..sketch.units import SECONDS_PER_UNIT

TIME_UNITS = SECONDS_PER_UNIT
"""Seconds per unit for every suffix we accept."""

CANONICAL = {"µs": "us", "μs": "us", "sec": "s", "min": "m"}

# A number and one suffix, with optional space: "250ms", "1.5 s", "-3us".
_SINGLE = r"^([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-zµμ]+)$"
# Compound durations, largest unit first, no spaces: "1h2m3.5s", "1m30s", "2s500ms".
_NUM = r"(\d+(?:\.\d*)?|\.\d+)"
_COMPOUND = (
    rf"^{_NUM}h(?:{_NUM}m)?(?:{_NUM}s)?(?:{_NUM}ms)?$"
    rf"|^{_NUM}m{_NUM}s(?:{_NUM}ms)?$"
    rf"|^{_NUM}s{_NUM}ms(?:{_NUM}(?:us|µs|μs))?$"
    rf"|^{_NUM}ms{_NUM}(?:us|µs|μs)$"
)
_COMPOUND_SECONDS = (3600.0, 60.0, 1.0, 1e-3, 60.0, 1.0, 1e-3, 1.0, 1e-3, 1e-6, 1e-3, 1e-6)
"""Seconds per capture group of ``_COMPOUND``, in group order."""
_FIG = r"(\d+(?:[.,]\d+)?)"
_ISO_DURATION = rf"^P(?:{_FIG}D)?(?:T(?:{_FIG}H)?(?:{_FIG}M)?(?:{_FIG}S)?)?$"
"""ISO 8601 durations as Java's ``Duration.toString()`` and .NET's ``XmlConvert`` write
them: ``PT0.123S``, ``PT2M3.5S``, ``P1DT2H`` (days, hours, minutes, seconds; a point or
a comma before the fraction). Years, months and weeks have no fixed length: not read
(``P5M`` is five months, counted as not a number)."""
_CLOCK = r"^(?:(\d+)[.:])?(\d{1,2}):([0-5]\d):([0-5]\d(?:\.\d+)?)$"
"""A duration on a clock face, as .NET's ``TimeSpan`` writes it: ``00:00:01.5``,
``1.02:00:00`` (days first). Read only where the value was named or chosen: a time of
day looks the same, so the sniffer never takes such a column for the value by itself."""
_GROUPED_SECONDS = (
    (_COMPOUND, _COMPOUND_SECONDS),
    (_ISO_DURATION, (86400.0, 3600.0, 60.0, 1.0)),
    (_CLOCK, (86400.0, 3600.0, 60.0, 1.0)),
)
"""Duration forms read group by group: (regex, seconds per group), tried in this order."""

MISSING_FIELD = "missing_field"
NOT_A_NUMBER = "not_a_number"
UNKNOWN_UNIT = "unknown_unit"
UNIT_MISMATCH = "unit_mismatch"


def canonical_unit(unit: str) -> str:
    return CANONICAL.get(unit, unit)


def is_time_unit(unit: str | None) -> bool:
    return unit is not None and unit in TIME_UNITS


@dataclass
class ParsedValues:
    """Values of one batch in the target unit; rows that gave none carry a reason."""

    values: NDArray[np.float64]
    """One per row; NaN where the row gave no value (see ``reasons``)."""
    ok: NDArray[np.bool_]
    """True where ``values`` holds the row's value (NaN/inf from the data included)."""
    reasons: dict[str, NDArray[np.bool_]]
    """Per skip reason, a row mask (only reasons that occurred)."""
    suffixed: int
    """How many rows carried a time suffix (tells whether the field is a duration)."""
    unsuffixed: int
    """How many rows were plain numbers."""


_SINGLE_RE = re.compile(_SINGLE)
_COMPOUND_RE = re.compile(_COMPOUND)
_ISO_DURATION_RE = re.compile(_ISO_DURATION)


def looks_numeric(text: str) -> bool:
    """Whether one field reads as a number or a duration (``12``, ``0.25``, ``250ms``,
    ``1m30s``): the per-field test the sniffers use on a few sample rows."""
    t = text.strip().strip('"').strip()
    try:
        float(t)
    except ValueError:
        m = _SINGLE_RE.match(t)
        return (
            bool(m and canonical_unit(m[2]) in TIME_UNITS)
            or bool(_COMPOUND_RE.match(t))
            or (bool(_ISO_DURATION_RE.match(t)) and len(t) > 2)
        )
    return t.lower().lstrip("+-") not in ("nan", "inf", "infinity")


def has_suffix(sample: pl.Series) -> bool:
    """Whether any value of a sample carries a time suffix (decides the default unit)."""
    s = sample.cast(pl.String).drop_nulls().str.strip_chars()
    plain = s.cast(pl.Float64, strict=False).is_not_null()
    rest = s.filter(~plain)
    if rest.is_empty():
        return False
    single = rest.str.extract(_SINGLE, 2).is_in(list(TIME_UNITS))
    spelled = rest.str.contains(_ISO_DURATION) & (rest.str.len_chars() > 2) | rest.str.contains(_CLOCK)
    return bool(single.any()) or bool(rest.str.contains(_COMPOUND).any()) or bool(spelled.any())


def parse_values(
    col: pl.Series,
    *,
    input_unit: str | None,
    target_unit: str,
) -> ParsedValues:
    """Parse a String (or numeric) column into float64 in ``target_unit``.

    Unsuffixed numbers are in ``input_unit`` (when None they are taken to be in the
    target unit already). With a non-time target (``bytes``, ``""``) no conversion
    happens and a time suffix is counted as ``unit_mismatch``.
    """
    n = col.len()
    time_target = is_time_unit(target_unit)
    plain_factor = 1.0
    if input_unit is not None and time_target and is_time_unit(input_unit):
        plain_factor = TIME_UNITS[input_unit] / TIME_UNITS[target_unit]

    if col.dtype.is_numeric():
        vals = col if col.dtype == pl.Float64 else col.cast(pl.Float64)
        if vals.null_count() == 0:
            # Straight to numpy: every polars call costs a query plan, which matters
            # at ~100 batches per gigabyte.
            out = vals.to_numpy()
            out = out * plain_factor if plain_factor != 1.0 else out.astype(np.float64, copy=False)
            return ParsedValues(out, np.ones(n, dtype=bool), {}, 0, n)
        missing = vals.is_null().to_numpy()
        out = vals.fill_null(np.nan).to_numpy().astype(np.float64, copy=True)
        if plain_factor != 1.0:
            out *= plain_factor
        return ParsedValues(out, ~missing, {MISSING_FIELD: missing}, 0, int(n - missing.sum()))

    fast = col.cast(pl.Float64, strict=False)
    if fast.null_count() == 0:
        out = fast.to_numpy().astype(np.float64, copy=plain_factor != 1.0)
        if plain_factor != 1.0:
            out *= plain_factor
        return ParsedValues(out, np.ones(n, dtype=bool), {}, 0, n)
    return _slow(col, fast, plain_factor, time_target, target_unit)


def _slow(
    col: pl.Series, fast: pl.Series, plain_factor: float, time_target: bool, target_unit: str
) -> ParsedValues:
    n = col.len()
    stripped = col.str.strip_chars()
    plain = fast.fill_null(stripped.cast(pl.Float64, strict=False))
    out = (plain * plain_factor).fill_null(np.nan).to_numpy().astype(np.float64, copy=True)
    ok = plain.is_not_null().to_numpy().copy()
    unsuffixed = int(ok.sum())
    missing = (col.is_null() | (stripped.str.len_bytes() == 0)).to_numpy()
    todo = ~ok & ~missing
    reasons: dict[str, NDArray[np.bool_]] = {}
    suffixed = 0
    if todo.any():
        idx = np.flatnonzero(todo)
        rest = stripped.gather(idx)
        # The usual log writes one suffix throughout (``12.5ms``): strip it and cast, and
        # leave only the other rows to the regular expressions (measured 5x faster).
        secs, dur_ok, unknown = _one_suffix(rest)
        others = np.flatnonzero(~dur_ok)
        if others.size:
            o_secs, o_ok, o_unknown = _any_suffix(rest.gather(others))
            secs[others], dur_ok[others], unknown[others] = o_secs, o_ok, o_unknown
        suffixed = int(dur_ok.sum())
        if time_target:
            out[idx[dur_ok]] = secs[dur_ok] / TIME_UNITS[target_unit]
            ok[idx[dur_ok]] = True
        elif dur_ok.any():
            reasons[UNIT_MISMATCH] = _mask(n, idx[dur_ok])
        if unknown.any():
            reasons[UNKNOWN_UNIT] = _mask(n, idx[unknown])
        nan_rows = ~dur_ok & ~unknown
        if nan_rows.any():
            reasons[NOT_A_NUMBER] = _mask(n, idx[nan_rows])
    if missing.any():
        reasons[MISSING_FIELD] = missing
    return ParsedValues(out, ok, reasons, suffixed, unsuffixed)


Durations = tuple[NDArray[np.float64], NDArray[np.bool_], NDArray[np.bool_]]
"""(seconds, read as a duration, a number with a suffix we do not know) per row."""


def _one_suffix(rest: pl.Series) -> Durations:
    """Rows written as a number and the first row's time suffix, read without a regex."""
    n = rest.len()
    secs, hit, unknown = np.full(n, np.nan), np.zeros(n, dtype=bool), np.zeros(n, dtype=bool)
    first = rest.head(1).to_list()
    m = _SINGLE_RE.match(first[0]) if first and first[0] else None
    unit = m[2] if m else None
    if unit is None or unit not in TIME_UNITS:
        return secs, hit, unknown
    number = rest.str.strip_suffix(unit).str.strip_chars().cast(pl.Float64, strict=False)
    hit = number.is_not_null().to_numpy().copy()
    secs = (number * TIME_UNITS[unit]).fill_null(np.nan).to_numpy().astype(np.float64, copy=True)
    return secs, hit, unknown


def _any_suffix(rest: pl.Series) -> Durations:
    """Rows with any suffix we know, or a duration in a form read group by group
    (``1m30.5s``, ``PT0.5S``, ``00:00:01.5``), by regex."""
    number = rest.str.extract(_SINGLE, 1).cast(pl.Float64, strict=False)
    unit = rest.str.extract(_SINGLE, 2)
    factor = unit.replace_strict(TIME_UNITS, default=None, return_dtype=pl.Float64)
    single_ok = (number.is_not_null() & factor.is_not_null()).to_numpy()
    unknown = (number.is_not_null() & factor.is_null()).to_numpy()
    secs = (number * factor).fill_null(np.nan).to_numpy().astype(np.float64, copy=True)
    # Compound (``1m30.5s``), ISO 8601 and clock-face forms for what the single-suffix
    # form did not take, the first form that reads a row winning.
    ok = single_ok.copy()
    for pattern, seconds in _GROUPED_SECONDS:
        g_secs, g_ok = _grouped(rest, pattern, seconds)
        g_ok &= ~ok
        secs[g_ok] = g_secs[g_ok]
        ok |= g_ok
    return secs, ok, unknown & ~ok


def _grouped(
    rest: pl.Series, pattern: str, seconds: tuple[float, ...]
) -> tuple[NDArray[np.float64], NDArray[np.bool_]]:
    """Seconds of the rows written in ``pattern``'s form (compound, ISO 8601 or clock-face
    duration), whose groups count ``seconds`` each; and which rows those are."""
    groups = rest.str.extract_groups(pattern)
    total = np.zeros(rest.len())
    found = np.zeros(rest.len(), dtype=bool)
    for i, field in enumerate(groups.struct.fields):
        text = groups.struct.field(field).str.replace(",", ".", literal=True)
        part = text.cast(pl.Float64, strict=False)
        present = part.is_not_null().to_numpy()
        found |= present
        total += np.where(present, part.fill_null(0.0).to_numpy(), 0.0) * seconds[i]
    return total, found


def _mask(n: int, idx: NDArray[np.intp]) -> NDArray[np.bool_]:
    m = np.zeros(n, dtype=bool)
    m[idx] = True
    return m
