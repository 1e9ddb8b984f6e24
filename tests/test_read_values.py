"""Value, duration and timestamp parsing (read/values.py, read/times.py)."""

from __future__ import annotations

import datetime as dt

import numpy as np
import polars as pl
import pytest

from ogive.errors import OgiveError
from ogive.read import times, values

# Expected values worked out by hand from the unit definitions (1 m = 60 s, 1 h = 3600 s).
DURATIONS_MS = [
    ("12", 12.0),
    ("0.25", 0.25),
    ("1e3", 1000.0),
    ("250ms", 250.0),
    ("1.5s", 1500.0),
    ("1.5 s", 1500.0),
    ("800us", 0.8),
    ("800µs", 0.8),  # micro sign
    ("800μs", 0.8),  # Greek mu
    ("2500000ns", 2.5),
    ("2m", 120_000.0),
    ("1h", 3_600_000.0),
    ("1m30.5s", 90_500.0),
    ("2h5m", 7_500_000.0),
    ("1h2m3s", 3_723_000.0),
    ("2s500ms", 2500.0),
    ("3ms250us", 3.25),
    ("-5ms", -5.0),
]


def test_duration_table() -> None:
    col = pl.Series([t for t, _ in DURATIONS_MS])
    pv = values.parse_values(col, input_unit=None, target_unit="ms")
    assert pv.ok.all(), [t for (t, _), ok in zip(DURATIONS_MS, pv.ok, strict=True) if not ok]
    np.testing.assert_allclose(pv.values, [v for _, v in DURATIONS_MS], rtol=1e-12)


def test_conversion_to_seconds_and_input_unit() -> None:
    col = pl.Series(["250", "2s", "1500us"])
    # Bare numbers said to be milliseconds; sketch kept in seconds.
    pv = values.parse_values(col, input_unit="ms", target_unit="s")
    np.testing.assert_allclose(pv.values, [0.25, 2.0, 0.0015], rtol=1e-12)


def test_bad_values_by_reason() -> None:
    col = pl.Series(["1", None, "", "abc", "5parsecs", "nan", "inf", "12ms"])
    pv = values.parse_values(col, input_unit=None, target_unit="ms")
    assert list(np.flatnonzero(pv.reasons[values.MISSING_FIELD])) == [1, 2]
    assert list(np.flatnonzero(pv.reasons[values.NOT_A_NUMBER])) == [3]
    assert list(np.flatnonzero(pv.reasons[values.UNKNOWN_UNIT])) == [4]
    # NaN and inf are passed on as values: the Sketch counts them, not the reader.
    assert pv.ok[5] and np.isnan(pv.values[5]) and pv.ok[6] and np.isinf(pv.values[6])
    assert pv.values[7] == 12.0


def test_durations_into_a_non_time_unit_are_counted() -> None:
    pv = values.parse_values(pl.Series(["100", "3s"]), input_unit=None, target_unit="bytes")
    assert pv.values[0] == 100.0
    assert list(np.flatnonzero(pv.reasons[values.UNIT_MISMATCH])) == [1]


def _us(*args: int, tz: dt.tzinfo = dt.UTC) -> float:
    return dt.datetime(*args, tzinfo=tz).timestamp() * 1e6  # type: ignore[arg-type,misc]


@pytest.mark.parametrize(
    ("texts", "form", "expected"),
    [
        (
            ["2026-03-04T10:00:00Z", "2026-03-04 10:00:00.5+02:00"],
            "iso",
            [_us(2026, 3, 4, 10), _us(2026, 3, 4, 8) + 5e5],
        ),
        (["2026-03-04T10:00:00"], "iso", [_us(2026, 3, 4, 10)]),
        (["1772618400"], "epoch_s", [1772618400e6]),
        (["1772618400123"], "epoch_ms", [1772618400123e3]),
        (["1772618400123456"], "epoch_us", [1772618400123456.0]),
        (
            ["[10/Oct/2026:13:55:36 +0000]", "10/Oct/2026:15:55:36 +0200"],
            "clf",
            [_us(2026, 10, 10, 13, 55, 36)] * 2,
        ),
    ],
)
def test_timestamp_forms(texts: list[str], form: str, expected: list[float]) -> None:
    col = pl.Series(texts)
    assert times.detect_format(col) == form
    np.testing.assert_allclose(times.parse_times(col, form), expected, rtol=0, atol=1.0)


def test_bad_timestamps_are_nan_and_bad_moment_raises() -> None:
    out = times.parse_times(pl.Series(["2026-03-04T10:00:00Z", "yesterday", None]), "iso")
    assert np.isfinite(out[0]) and np.isnan(out[1:]).all()
    with pytest.raises(OgiveError, match="cannot read the moment"):
        times.parse_moment("after lunch")
    assert times.iso(times.parse_moment("2026-03-04T10:00:00Z")) == "2026-03-04T10:00:00Z"
