"""Timestamps to epoch microseconds (UTC), vectorised in polars and numpy.

Accepted forms:

- ISO 8601 / RFC 3339 (``2026-03-04T10:00:00Z``, a space or ``t`` instead of ``T``,
  fractions after ``.`` or ``,`` to the nanosecond, ``+02:00``/``+0200``/``+02`` offsets,
  a date alone). No offset means UTC. A leap second (``23:59:60``, RFC 3339 section
  5.7) is read as the first instant of the next minute, as POSIX time does.
- Epoch seconds, milliseconds, microseconds or nanoseconds. When the form is detected
  (not given), each value is read by its own magnitude, so a file that mixes units
  still reads right; the values whose unit differs from the file's are counted.
- The Common Log Format's ``[10/Oct/2026:13:55:36 -0700]``.
- RFC 3164 (BSD syslog) ``Mar  4 13:00:01``: no year and no zone. Read as UTC, in the
  latest year that does not put the moment more than a day after the scan began.
- Any other form, named by the user as a strftime pattern (``%d.%m.%Y %H:%M:%S``, the
  C library's conversion specifications as polars' chrono-based parser reads them):
  UTC unless the pattern reads an offset (``%z``).

Dates are turned into days with the civil-from-days algorithm of H. Hinnant ("chrono-
Compatible Low-Level Date Algorithms", days_from_civil), in numpy, so that the checks
(month 1-12, day within its month, hour < 24, second <= 60) and the range (years 1 to
9999) are ours and explicit: a value outside them is NaN, which the scan counts as
``bad_timestamp`` — never an error.
"""

from __future__ import annotations

import datetime as dt
import re
import time as _time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import polars as pl
from numpy.typing import NDArray

from ..errors import OgiveError
from .options import TIME_FORMS

FORMATS = TIME_FORMS
EPOCH_US = {"epoch_s": 1e6, "epoch_ms": 1e3, "epoch_us": 1.0, "epoch_ns": 1e-3}
"""Microseconds per unit of each epoch form."""
_EPOCH_BOUNDS = (1e11, 1e14, 1e17, 1e20)
"""Magnitude limits of epoch s, ms, us, ns: seconds below 1e11 reach year 5138; a
larger number is taken to be in the next finer unit. Beyond 1e20 nothing is a time."""
_EPOCH_FORMS = ("epoch_s", "epoch_ms", "epoch_us", "epoch_ns")
MIN_US = -62_135_596_800e6
"""0001-01-01T00:00:00Z in epoch microseconds: the earliest moment read."""
MAX_US = 253_402_300_800e6
"""10000-01-01T00:00:00Z: every moment read lies before it."""
_MONTH_NAMES = ("jan", "feb", "mar", "apr", "may", "jun", "jul", "aug", "sep", "oct", "nov", "dec")
MONTHS = {m: i + 1 for i, m in enumerate(_MONTH_NAMES)}

_FRAC = r"(?:[.,](\d{1,9})\d*)?"
ISO_RE = (
    r"^(\d{4})-(\d{2})-(\d{2})"
    rf"(?:[Tt ](\d{{2}}):(\d{{2}})(?::(\d{{2}}){_FRAC})?)?"
    r"\s*(?:([Zz])|([-+])(\d{2})(?::?(\d{2}))?)?$"
)
"""Groups: year, month, day, hour, minute, second, fraction, Z, sign, offset h, offset m."""
CLF_RE = r"^\[?\s*(\d{1,2})/([A-Za-z]{3})/(\d{4}):(\d{2}):(\d{2}):(\d{2})\s*([-+])(\d{2})(\d{2})\s*\]?$"
RFC3164_RE = rf"^([A-Za-z]{{3}}) +(\d{{1,2}}) (\d{{2}}):(\d{{2}}):(\d{{2}}){_FRAC}$"
_TEXT_FORMS = (("iso", ISO_RE), ("clf", CLF_RE), ("rfc3164", RFC3164_RE))
ISO_LEADING = r"\d{4}-\d{2}-\d{2}[Tt ]\d{2}:\d{2}(?::\d{2}(?:[.,]\d+)?)?(?:[Zz]|[-+]\d{2}(?::?\d{2})?)?"
"""An ISO 8601 date and time at the start of a line (no anchors: patterns embed it)."""
EPOCH_LEADING = r"\d{10}(?:\.\d{1,9})?|\d{13}(?:\.\d+)?|\d{16}|\d{19}"
"""Epoch s (optionally fractional), ms, us or ns at the start of a line (years 2001-2286)."""
RFC3164_YEAR_RULE = (
    "RFC 3164 syslog time stamps carry no year and no zone: they are read as UTC, each in the "
    "latest year that does not put it more than a day after the scan began"
)


@dataclass(frozen=True)
class TimeColumn:
    """Moments of one batch, and what reading them showed."""

    us: NDArray[np.float64]
    """Epoch microseconds per row; NaN where missing, unreadable or out of range."""
    other_unit: int = 0
    """Epoch values read in another unit than the file's, by their own magnitude."""
    years: tuple[int, ...] = ()
    """RFC 3164: the years that were assumed."""


def _epoch_form(x: float) -> str | None:
    mag = abs(x)
    for form, bound in zip(_EPOCH_FORMS, _EPOCH_BOUNDS, strict=True):
        if mag < bound:
            return form
    return None


def detect_format(sample: pl.Series) -> str | None:
    """The form of a sample's values, or None if none is readable.

    The first readable value decides between text forms; for epoch numbers the unit
    most values of the sample have wins (a file of milliseconds with a stray seconds
    value is a file of milliseconds).
    """
    s = sample.cast(pl.String).drop_nulls().str.strip_chars()
    s = s.filter(s.str.len_bytes() > 0).head(50)
    if s.is_empty():
        return None
    nums = s.cast(pl.Float64, strict=False).to_list()
    epochs = [_epoch_form(x) if x is not None and np.isfinite(x) else None for x in nums]
    texts = {form: s.str.contains(pattern).to_list() for form, pattern in _TEXT_FORMS}
    for i, epoch in enumerate(epochs):
        if epoch is not None:
            found = [f for f in epochs if f is not None]
            return max(_EPOCH_FORMS, key=found.count)
        for form, hits in texts.items():
            if hits[i]:
                return form
    return None


TIME_KEYS = ("ts", "time", "timestamp", "@timestamp")
"""Names a record's time goes by in KEY=VALUE and JSON logs (logfmt and zap write ``ts``,
bunyan, logrus, pino and container runtimes ``time``)."""
LIKELY_US = (946_684_800e6, 4_102_444_800e6)
"""2000-01-01 to 2100-01-01: where the moments of a time key nobody named must fall."""


def time_key(found: Mapping[str, Sequence[object]], records: int, share: float) -> str | None:
    """The one key of ``found`` (the sampled values per key) named as in
    :data:`TIME_KEYS` whose values are there in at least ``share`` of the ``records``
    and are moments (:func:`holds_moments`); None when none is, or two are (the user
    then chooses)."""
    hits = [
        key
        for key, vals in found.items()
        if key.lower() in TIME_KEYS and vals and len(vals) >= share * records and holds_moments(vals, share)
    ]
    return hits[0] if len(hits) == 1 else None


def holds_moments(values: Sequence[object], share: float) -> bool:
    """Whether at least ``share`` of ``values`` read, in one form, as moments of this
    century. For choosing a time key nobody named: a ``time`` field may hold a duration
    (``12ms``) or a small count (``12``, which reads as a moment of 1970)."""
    sample = pl.Series([str(v) for v in values], dtype=pl.String)
    form = detect_format(sample)
    if form is None:
        return False
    us = parse_times(sample, form, by_magnitude=form in EPOCH_US)
    with np.errstate(invalid="ignore"):
        likely = (us >= LIKELY_US[0]) & (us < LIKELY_US[1])
    return float(likely.mean()) >= share


def read_times(
    col: pl.Series, fmt: str, *, by_magnitude: bool = False, now_us: float | None = None
) -> TimeColumn:
    """Epoch microseconds per row of ``col`` read as ``fmt``.

    ``by_magnitude``: epoch numbers are each read by their magnitude (the form was
    detected, so ``fmt`` is only the file's usual unit); otherwise all in ``fmt``.
    ``now_us``: the moment RFC 3164 years are assumed from (default: now).
    """
    if fmt in EPOCH_US:
        return _epoch(col, fmt, by_magnitude)
    s = col.cast(pl.String)
    if is_pattern(fmt):
        return TimeColumn(_with_fast_path(s.str.strip_chars(), fmt, _unread))
    if fmt == "iso":
        return TimeColumn(_iso(s))  # strips only what polars' parser could not read
    s = s.str.strip_chars()
    if fmt == "clf":
        return TimeColumn(_clf(s))
    if fmt == "rfc3164":
        return _rfc3164(s, now_us if now_us is not None else _time.time() * 1e6)
    raise OgiveError(
        f"unknown time format {fmt!r}; use one of {', '.join(FORMATS)}, or a strftime pattern "
        "such as '%d.%m.%Y %H:%M:%S'."
    )


def is_pattern(fmt: str) -> bool:
    """Whether a time format is the user's strftime pattern rather than a named form."""
    return "%" in fmt


def _unread(s: pl.Series) -> NDArray[np.float64]:
    """What a pattern did not read stays unread (NaN): no other form is guessed."""
    return np.full(len(s), np.nan)


def parse_times(col: pl.Series, fmt: str, *, by_magnitude: bool = False) -> NDArray[np.float64]:
    """Epoch microseconds per row; NaN where the value is missing or unreadable."""
    return read_times(col, fmt, by_magnitude=by_magnitude).us


# ----------------------------------------------------------------- kernels


def _epoch(col: pl.Series, fmt: str, by_magnitude: bool) -> TimeColumn:
    num = (
        col.cast(pl.Float64, strict=False)
        if col.dtype.is_numeric()
        else col.str.strip_chars().cast(pl.Float64, strict=False)
    )
    x = num.fill_null(np.nan).to_numpy().astype(np.float64, copy=True)
    other = 0
    if by_magnitude:
        mag = np.abs(x)
        idx = np.searchsorted(np.asarray(_EPOCH_BOUNDS), mag, side="right")
        scale = np.array([1e6, 1e3, 1.0, 1e-3, np.nan])[idx]
        scale[~np.isfinite(mag)] = np.nan
        other = int((np.isfinite(scale) & (idx != _EPOCH_FORMS.index(fmt))).sum())
        us = x * scale
    else:
        us = x * EPOCH_US[fmt]
    return TimeColumn(_in_range(us), other)


def _in_range(us: NDArray[np.float64]) -> NDArray[np.float64]:
    with np.errstate(invalid="ignore"):
        bad = ~((us >= MIN_US) & (us < MAX_US))
    if bad.any():
        us = us.copy()
        us[bad] = np.nan
    return us


def days_from_civil(y: NDArray[np.int64], m: NDArray[np.int64], d: NDArray[np.int64]) -> NDArray[np.int64]:
    """Days since 1970-01-01 of proleptic Gregorian dates (Hinnant, days_from_civil)."""
    y = y - (m <= 2)
    era = np.floor_divide(y, 400)
    yoe = y - era * 400
    doy = (153 * (m + np.where(m > 2, -3, 9)) + 2) // 5 + d - 1
    doe = yoe * 365 + yoe // 4 - yoe // 100 + doy
    return np.asarray(era * 146097 + doe - 719468, dtype=np.int64)


def _days_in_month(y: NDArray[np.int64], m: NDArray[np.int64]) -> NDArray[np.int64]:
    leap = ((y % 4 == 0) & (y % 100 != 0)) | (y % 400 == 0)
    table = np.array([0, 31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], dtype=np.int64)
    return np.asarray(table[np.clip(m, 0, 12)] + ((m == 2) & leap), dtype=np.int64)


def civil_us(
    y: NDArray[np.int64],
    mo: NDArray[np.int64],
    d: NDArray[np.int64],
    h: NDArray[np.int64],
    mi: NDArray[np.int64],
    s: NDArray[np.int64],
    frac_ns: NDArray[np.int64],
    offset_min: NDArray[np.int64],
    ok: NDArray[np.bool_],
) -> NDArray[np.float64]:
    """Epoch microseconds of civil date-times at a UTC offset; NaN where a field is out
    of range or ``ok`` is False. Second 60 (a leap second) is the next minute's start."""
    valid = (
        ok
        & (y >= 1)
        & (mo >= 1)
        & (mo <= 12)
        & (d >= 1)
        & (d <= _days_in_month(y, mo))
        & (h <= 23)
        & (mi <= 59)
        & (s <= 60)
        & (np.abs(offset_min) < 24 * 60)
    )
    days = days_from_civil(np.where(valid, y, 1970), np.where(valid, mo, 1), np.where(valid, d, 1))
    secs = days * 86400 + h * 3600 + mi * 60 + s - offset_min * 60
    us = secs.astype(np.float64) * 1e6 + frac_ns / 1e3
    us[~valid] = np.nan
    return _in_range(us)


def _ints(groups: pl.Series, field: str, default: int = 0) -> NDArray[np.int64]:
    part = groups.struct.field(field).cast(pl.Int64, strict=False)
    return part.fill_null(default).to_numpy().astype(np.int64, copy=False)


def _fraction_ns(groups: pl.Series, field: str) -> NDArray[np.int64]:
    frac = groups.struct.field(field).str.pad_end(9, "0").cast(pl.Int64, strict=False)
    return frac.fill_null(0).to_numpy().astype(np.int64, copy=False)


def _fields(s: pl.Series, pattern: str) -> tuple[pl.Series, NDArray[np.bool_]]:
    groups = s.str.extract_groups(pattern)
    names = groups.struct.fields
    matched = groups.struct.field(names[0]).is_not_null().to_numpy()
    return groups.struct.rename_fields([str(i + 1) for i in range(len(names))]), matched


def _iso(s: pl.Series) -> NDArray[np.float64]:
    """ISO 8601 times, read as they are by polars' parser in the form of the batch's
    first value, then in the general form (any fraction); only the values neither
    could read are stripped of spaces and read again (stripping every value first
    cost a third of the time column's reading)."""
    chronos = _iso_chronos(s)

    def attempt(x: pl.Series, i: int) -> NDArray[np.float64]:
        if i < len(chronos):
            return _with_fast_path(x, chronos[i], lambda r: attempt(r, i + 1))
        return _with_fast_path(x.str.strip_chars(), chronos[-1] if chronos else None, _iso_slow)

    return attempt(s, 0)


def _iso_chronos(s: pl.Series) -> list[str]:
    """Chrono formats for polars' own parser: the one that fits the batch's first value
    exactly, then the general one (``%.f``: a fraction or none); none when polars
    cannot read that value's form.

    Why two: a format with ``%.f`` read a 47k-row chunk of whole-second stamps in 3.6 ms,
    one without it in 2.7 (``%.f`` is the slowest item of polars' format parser).
    """
    head = s.head(64).drop_nulls()  # drop_nulls of the whole batch would copy it all
    first = [v.strip() for v in (head if head.len() else s.drop_nulls()).head(1).to_list()]
    if not first:
        return []
    m = re.match(ISO_RE, first[0])
    if m is None or m[6] is None or (len(first[0]) > 19 and first[0][19] == ","):
        return []  # no seconds, or a comma fraction: only our parser reads those
    sep = first[0][10]
    if sep not in "T ":
        return []
    zone = "Z" if m[8] == "Z" else ("%z" if m[9] else "")
    general = f"%Y-%m-%d{sep}%H:%M:%S%.f{zone}"
    return [general] if m[7] else [f"%Y-%m-%d{sep}%H:%M:%S{zone}", general]


def _with_fast_path(
    s: pl.Series, chrono: str | None, slow: Callable[[pl.Series], NDArray[np.float64]]
) -> NDArray[np.float64]:
    """Polars' own parser for the rows it reads in ``chrono`` (about twice as fast as
    ours), ours for the rest. Polars raises on some out-of-range years even when not
    strict, so any error there sends the whole batch our way."""
    if chrono is None:
        return slow(s)
    # One query for the parse; the values polars could not read are looked for only
    # when it left a gap (each eager Series step is a query of its own, and a boolean
    # mask's to_numpy unpacks bits: measured 2.3 -> 1.5 ms a 4 MB CSV chunk).
    try:
        out = s.to_frame().select(
            pl.first()
            # No time_zone: a stamp with an offset comes out in UTC anyway, one without
            # is read as UTC; naming the zone cost 0.8 of 3.6 ms a 47k-row chunk.
            .str.to_datetime(chrono, strict=False, time_unit="us")
            .dt.epoch("us")
            .cast(pl.Float64)
            .fill_null(np.nan)
        )
    except Exception:  # polars raises ComputeError and others for years it cannot hold
        return slow(s)
    us = out.to_series().to_numpy()
    rest = np.isnan(us)
    if rest.any():
        rest &= s.is_not_null().to_numpy()
    if rest.any():
        us = us.copy()  # to_numpy may hand out polars' own (read-only) buffer
        us[rest] = slow(s.filter(pl.Series(rest)))
    return _in_range(us)


def _iso_slow(s: pl.Series) -> NDArray[np.float64]:
    g, ok = _fields(s, ISO_RE)
    sign = np.where(g.struct.field("9").to_numpy() == "-", -1, 1)
    offset = sign * (_ints(g, "10") * 60 + _ints(g, "11"))
    return civil_us(
        _ints(g, "1"),
        _ints(g, "2"),
        _ints(g, "3"),
        _ints(g, "4"),
        _ints(g, "5"),
        _ints(g, "6"),
        _fraction_ns(g, "7"),
        offset,
        ok,
    )


def _month(g: pl.Series, field: str) -> NDArray[np.int64]:
    names = g.struct.field(field).str.to_lowercase()
    num = names.replace_strict(MONTHS, default=0, return_dtype=pl.Int64)
    return num.fill_null(0).to_numpy().astype(np.int64, copy=False)


def _clf(s: pl.Series) -> NDArray[np.float64]:
    bare = s.str.strip_chars("[] ")
    return _with_fast_path(bare, "%d/%b/%Y:%H:%M:%S %z", _clf_slow)


def _clf_slow(s: pl.Series) -> NDArray[np.float64]:
    g, ok = _fields(s, CLF_RE)
    sign = np.where(g.struct.field("7").to_numpy() == "-", -1, 1)
    offset = sign * (_ints(g, "8") * 60 + _ints(g, "9"))
    zero = np.zeros(len(s), dtype=np.int64)
    return civil_us(
        _ints(g, "3"), _month(g, "2"), _ints(g, "1"), _ints(g, "4"), _ints(g, "5"), _ints(g, "6"),
        zero, offset, ok,
    )  # fmt: skip


def _rfc3164(s: pl.Series, now_us: float) -> TimeColumn:
    this_year = dt.datetime.fromtimestamp(now_us / 1e6, tz=dt.UTC).year
    limit = now_us + 86_400e6
    # Fast path: polars reads the stamps in this year; what it cannot (Feb 29 of a common
    # year) or what lands after the limit (last December, read in January) goes our way.
    try:
        t = (f"{this_year} " + s).str.to_datetime("%Y %b %e %H:%M:%S%.f", strict=False, time_unit="us")
        us = t.dt.epoch("us").cast(pl.Float64).fill_null(np.nan).to_numpy().astype(np.float64, copy=True)
    except Exception:  # as in _with_fast_path: any trouble there, ours does it all
        us = np.full(len(s), np.nan)
    with np.errstate(invalid="ignore"):
        us[~(us <= limit)] = np.nan
    years: set[int] = {this_year} if np.isfinite(us).any() else set()
    rest = np.isnan(us) & s.is_not_null().to_numpy()
    if rest.any():
        slow, slow_years = _rfc3164_slow(s.filter(pl.Series(rest)), this_year, limit)
        us[rest] = slow
        years.update(slow_years)
    return TimeColumn(_in_range(us), 0, tuple(sorted(years)))


def _rfc3164_slow(s: pl.Series, this_year: int, limit: float) -> tuple[NDArray[np.float64], set[int]]:
    g, ok = _fields(s, RFC3164_RE)
    mo, d = _month(g, "1"), _ints(g, "2")
    h, mi, sec, frac = _ints(g, "3"), _ints(g, "4"), _ints(g, "5"), _fraction_ns(g, "6")
    zero = np.zeros(len(s), dtype=np.int64)
    us = np.full(len(s), np.nan)
    years: set[int] = set()
    # The latest year that is not in the future; Feb 29 may need to go back to a leap year.
    for back in range(5):
        todo = ok & np.isnan(us)
        if not todo.any():
            break
        year = np.full(len(s), this_year - back, dtype=np.int64)
        cand = civil_us(year, mo, d, h, mi, sec, frac, zero, todo)
        take = np.isfinite(cand) & (cand <= limit)
        us[take] = cand[take]
        if take.any():
            years.add(this_year - back)
    return us, years


# ----------------------------------------------------------------- single moments


def parse_moment(text: str, fmt: str | None = None) -> float:
    """One user-given moment (``--split-at``) in epoch microseconds; OgiveError if unreadable."""
    series = pl.Series([text])
    form = fmt or detect_format(series)
    value = read_times(series, form, by_magnitude=fmt is None).us[0] if form else float("nan")
    if not np.isfinite(value):
        raise OgiveError(
            f"cannot read the moment {text!r}; write it as ISO 8601 (2026-03-04T10:00:00Z), "
            "epoch seconds, or Common Log Format."
        )
    return float(value)


def iso(us: float) -> str:
    """Epoch microseconds as an ISO 8601 UTC string (for provenance)."""
    epoch = dt.datetime(1970, 1, 1, tzinfo=dt.UTC)
    try:
        moment = epoch + dt.timedelta(microseconds=int(us))
    except (OverflowError, ValueError):  # outside years 1-9999: the nearest moment a datetime holds
        moment = dt.datetime.max.replace(tzinfo=dt.UTC) if us > 0 else dt.datetime.min.replace(tzinfo=dt.UTC)
    return moment.isoformat().replace("+00:00", "Z")


def window_starts(tus: NDArray[np.float64], width_us: float) -> NDArray[np.float64]:
    """Start of each timestamp's window; windows are aligned to the epoch (so 10m
    windows start at :00, :10, ...), which makes windows of different scans line up."""
    return np.asarray(np.floor(tus / width_us) * width_us, dtype=np.float64)
