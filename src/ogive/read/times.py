"""Timestamps to epoch microseconds (UTC), vectorised in polars.

Accepted forms: ISO 8601 (``2026-03-04T10:00:00Z``, a space instead of ``T``,
fractional seconds, ``+02:00`` offsets; no offset means UTC), epoch seconds,
milliseconds or microseconds (told apart by magnitude when not given), and the Common
Log Format's ``[10/Oct/2026:13:55:36 +0000]``. One form is chosen per scan from the
first readable value, so a column that mixes forms shows up as ``bad_timestamp``
rows rather than being silently reinterpreted.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import polars as pl
from numpy.typing import NDArray

from ..errors import OgiveError

FORMATS = ("iso", "epoch_s", "epoch_ms", "epoch_us", "clf")
_EPOCH_SCALE = {"epoch_s": 1e6, "epoch_ms": 1e3, "epoch_us": 1.0}
_CLF_RE = r"^\[?\s*(\d{1,2}/[A-Za-z]{3}/\d{4}:\d{2}:\d{2}:\d{2}\s*[-+]\d{4})\s*\]?$"
_ISO_RE = r"^\d{4}-\d{2}-\d{2}([T ]\d{2}:\d{2}(:\d{2}(\.\d+)?)?)?\s*(Z|[-+]\d{2}:?\d{2})?$"


def detect_format(sample: pl.Series) -> str | None:
    """The form of the first readable value of a sample, or None if none is readable."""
    s = sample.cast(pl.String).drop_nulls().str.strip_chars()
    s = s.filter(s.str.len_bytes() > 0)
    for text in s.head(50).to_list():
        try:
            x = float(text)
        except ValueError:
            pass
        else:
            if not np.isfinite(x):
                continue
            mag = abs(x)
            # Epoch seconds of 1973..5138 are < 1e11; ms up to 1e14; us beyond.
            if mag < 1e11:
                return "epoch_s"
            if mag < 1e14:
                return "epoch_ms"
            return "epoch_us"
        if pl.Series([text]).str.contains(_CLF_RE).item():
            return "clf"
        if pl.Series([text]).str.contains(_ISO_RE).item():
            return "iso"
    return None


def parse_times(col: pl.Series, fmt: str) -> NDArray[np.float64]:
    """Epoch microseconds per row; NaN where the value is missing or unreadable."""
    if fmt in _EPOCH_SCALE:
        num = (
            col.cast(pl.Float64, strict=False)
            if col.dtype.is_numeric()
            else col.str.strip_chars().cast(pl.Float64, strict=False)
        )
        return (num * _EPOCH_SCALE[fmt]).fill_null(np.nan).to_numpy().astype(np.float64, copy=True)
    s = col.cast(pl.String).str.strip_chars()
    if fmt == "clf":
        inner = s.str.extract(_CLF_RE, 1).str.replace(r"\s+", " ")
        t = inner.str.to_datetime("%d/%b/%Y:%H:%M:%S %z", strict=False, time_zone="UTC")
    elif fmt == "iso":
        norm = s.str.replace(r"Z$", "+00:00").str.replace(" ", "T", literal=True)
        norm = norm.str.replace(r"([-+]\d{2})(\d{2})$", "$1:$2")
        with_tz = norm.str.to_datetime("%Y-%m-%dT%H:%M:%S%.f%:z", strict=False, time_zone="UTC")
        naive = norm.str.to_datetime("%Y-%m-%dT%H:%M:%S%.f", strict=False).dt.replace_time_zone("UTC")
        date_only = norm.str.to_datetime("%Y-%m-%d", strict=False).dt.replace_time_zone("UTC")
        t = with_tz.fill_null(naive).fill_null(date_only)
    else:
        raise OgiveError(f"unknown time format {fmt!r}; use one of {', '.join(FORMATS)}.")
    us = t.dt.cast_time_unit("us").dt.epoch("us").cast(pl.Float64)
    return us.fill_null(np.nan).to_numpy().astype(np.float64, copy=True)


def parse_moment(text: str, fmt: str | None = None) -> float:
    """One user-given moment (``--split-at``) in epoch microseconds; OgiveError if unreadable."""
    series = pl.Series([text])
    form = fmt or detect_format(series)
    value = parse_times(series, form)[0] if form else float("nan")
    if not np.isfinite(value):
        raise OgiveError(
            f"cannot read the moment {text!r}; write it as ISO 8601 (2026-03-04T10:00:00Z), "
            "epoch seconds, or Common Log Format."
        )
    return float(value)


def iso(us: float) -> str:
    """Epoch microseconds as an ISO 8601 UTC string (for provenance)."""
    moment = dt.datetime(1970, 1, 1, tzinfo=dt.UTC) + dt.timedelta(microseconds=int(us))
    return moment.isoformat().replace("+00:00", "Z")


def window_starts(tus: NDArray[np.float64], width_us: float) -> NDArray[np.float64]:
    """Start of each timestamp's window; windows are aligned to the epoch (so 10m
    windows start at :00, :10, ...), which makes windows of different scans line up."""
    return np.asarray(np.floor(tus / width_us) * width_us, dtype=np.float64)
