"""Durations spelled out as programs print them: ISO 8601 (``PT0.123S``) and clock faces
(``00:00:01.5``), read/values.py.

Outside references: the ISO 8601 duration designators (P, then days D, T, hours H,
minutes M, seconds S; from memory), with the values worked out by Python's
``datetime.timedelta``; Java's ``Duration.toString()`` documentation example
``PT8H6M12.345S`` (from memory); .NET's ``TimeSpan`` constant format ``[d.]hh:mm:ss[.fffffff]``
(from memory); numpy.quantile of the values written for the sketches.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import polars as pl
import pytest

from ogive.read import ScanOptions, scan
from ogive.read.values import NOT_A_NUMBER, looks_numeric, parse_values

Q = [0.0, 0.1, 0.5, 0.9, 1.0]


@pytest.mark.parametrize(
    ("text", "delta"),
    [
        ("PT0.123S", dt.timedelta(milliseconds=123)),
        ("PT8H6M12.345S", dt.timedelta(hours=8, minutes=6, seconds=12.345)),
        ("P1DT2H", dt.timedelta(days=1, hours=2)),
        ("PT2M", dt.timedelta(minutes=2)),
        ("PT1,5S", dt.timedelta(seconds=1.5)),  # ISO 8601 allows a comma before the fraction
        ("00:00:00.1234560", dt.timedelta(microseconds=123456)),  # .NET writes 7 digits
        ("00:02:03", dt.timedelta(minutes=2, seconds=3)),
        ("1.02:03:04.5", dt.timedelta(days=1, hours=2, minutes=3, seconds=4.5)),
    ],
)
def test_a_spelled_duration_reads_as_its_timedelta(text: str, delta: dt.timedelta) -> None:
    pv = parse_values(pl.Series([text]), input_unit=None, target_unit="ms")
    assert pv.ok[0] and pv.suffixed == 1
    assert pv.values[0] == pytest.approx(delta.total_seconds() * 1e3, rel=1e-12)


@pytest.mark.parametrize("text", ["P5M", "P1Y", "PT", "P", "10:00", "00:61:00", "00:00:75", "T1S"])
def test_forms_without_a_fixed_length_or_out_of_range_are_not_numbers(text: str) -> None:
    """Months and years have no fixed length (P5M is five months, not minutes)."""
    pv = parse_values(pl.Series([text]), input_unit=None, target_unit="ms")
    assert not pv.ok[0] and pv.reasons[NOT_A_NUMBER][0]


def test_the_sniffer_takes_iso_durations_but_never_a_clock_face_alone() -> None:
    assert looks_numeric("PT0.5S") and looks_numeric("P1DT2H")
    assert not looks_numeric("10:00:01")  # a time of day looks the same


def test_a_java_service_log_of_iso_durations(tmp_path: Path) -> None:
    rng = np.random.default_rng(21)
    secs = np.round(rng.lognormal(-1.0, 1.2, 900), 3)  # a few of them past a minute
    path = tmp_path / "calls.csv"
    path.write_text(
        "at,op,took\n" + "".join(f"10:00:{i % 60:02d},op{i % 3},{_iso(s)}\n" for i, s in enumerate(secs))
    )
    result = scan([str(path)], ScanOptions())
    s = result.sketches["all"]
    assert s.unit == "ms" and s.count == 900 and result.skipped == {}
    # Reference: numpy.quantile of the durations written, in ms (900 values: held exactly).
    np.testing.assert_allclose(s.quantile(Q), np.quantile(secs * 1e3, Q), rtol=1e-9)


def test_a_dotnet_log_of_clock_face_durations_named_by_column(tmp_path: Path) -> None:
    rng = np.random.default_rng(22)
    secs = np.round(rng.gamma(2.0, 0.4, 700), 4)
    path = tmp_path / "requests.csv"
    rows = [f"10:{i // 60 % 60:02d}:{i % 60:02d},{_clock(s)}\n" for i, s in enumerate(secs)]
    path.write_text("time_of_day,elapsed\n" + "".join(rows))
    result = scan([str(path)], ScanOptions(column="elapsed"))
    s = result.sketches["all"]
    assert s.unit == "ms" and s.count == 700 and result.skipped == {}
    # Reference: numpy.quantile of the durations written, in ms.
    np.testing.assert_allclose(s.quantile(Q), np.quantile(secs * 1e3, Q), rtol=1e-9)


def _iso(seconds: float) -> str:
    minutes, rest = divmod(round(seconds * 1000), 60_000)
    return f"PT{minutes}M{rest / 1000:g}S" if minutes else f"PT{rest / 1000:g}S"


def _clock(seconds: float) -> str:
    delta = dt.timedelta(seconds=seconds)
    hours, rest = divmod(delta.seconds, 3600)
    return f"{hours:02d}:{rest // 60:02d}:{rest % 60:02d}.{delta.microseconds:06d}0"
