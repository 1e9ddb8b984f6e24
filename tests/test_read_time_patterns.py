"""Times in a form ogive does not guess, named with ``--time-format`` as a strftime pattern.

Outside reference: Python's ``datetime.strptime`` with the same pattern (the C library's
conversion specifications, Python docs "strftime() and strptime() Format Codes"), and
numpy.quantile of the values written for the sketches.
"""

from __future__ import annotations

import datetime as dt
import subprocess
import sys
from pathlib import Path

import numpy as np
import polars as pl
import pytest

from ogive.errors import EXIT_ERROR, OgiveError
from ogive.read import ScanOptions, scan, times

Q = [0.0, 0.25, 0.5, 0.75, 1.0]


@pytest.mark.parametrize(
    ("pattern", "texts"),
    [
        ("%d.%m.%Y %H:%M:%S", ["04.03.2026 10:00:01", "29.02.2028 23:59:59", "01.01.1999 00:00:00"]),
        ("%m/%d/%Y %I:%M:%S %p", ["03/04/2026 01:02:03 PM", "12/31/2025 11:59:59 AM"]),
        ("%Y-%m-%d %H:%M:%S %z", ["2026-03-04 10:00:00 +0100", "2026-03-04 10:00:00 -0530"]),
        ("%d/%m/%Y", ["04/03/2026", "31/12/2025"]),
    ],
)
def test_a_pattern_reads_as_python_strptime_does(pattern: str, texts: list[str]) -> None:
    got = times.read_times(pl.Series(texts), pattern).us
    for text, us in zip(texts, got, strict=True):
        moment = dt.datetime.strptime(text, pattern)
        if moment.tzinfo is None:
            moment = moment.replace(tzinfo=dt.UTC)  # no offset in the pattern: UTC
        assert us == moment.timestamp() * 1e6, text


def test_what_a_pattern_does_not_read_is_unread() -> None:
    got = times.read_times(
        pl.Series(["31.02.2026 10:00:00", "2026-03-04T10:00:00Z", None, " "]), "%d.%m.%Y %H:%M:%S"
    )
    assert np.isnan(got.us).all()  # no other form is guessed for them


def test_a_german_log_split_at_a_moment(tmp_path: Path) -> None:
    rng = np.random.default_rng(6)
    before, after = np.round(rng.lognormal(3.0, 0.4, 300), 2), np.round(rng.lognormal(3.3, 0.4, 300), 2)
    start = dt.datetime(2026, 3, 4, 9, 0, tzinfo=dt.UTC)
    lines = ["Zeitpunkt;Dauer_ms"]
    for i, v in enumerate(np.concatenate([before, after])):
        lines.append(f"{(start + dt.timedelta(seconds=i)).strftime('%d.%m.%Y %H:%M:%S')};{v}")
    path = tmp_path / "log.csv"
    path.write_text("\n".join(lines) + "\n")
    split = (start + dt.timedelta(seconds=300)).strftime("%Y-%m-%dT%H:%M:%SZ")  # --split-at stays ISO
    result = scan(
        [str(path)],
        ScanOptions(time_field="Zeitpunkt", time_format="%d.%m.%Y %H:%M:%S", split_at=split),
    )
    assert result.skipped == {}
    for name, raw in (("before", before), ("after", after)):
        # Reference: numpy.quantile of the values written on each side of the moment.
        np.testing.assert_allclose(result.sketches[name].quantile(Q), np.quantile(raw, Q), rtol=1e-12)


def test_times_nobody_could_read_are_named_in_a_warning(tmp_path: Path) -> None:
    path = tmp_path / "log.csv"
    path.write_text("Zeitpunkt;Dauer_ms\n" + "".join(f"04.03.2026 10:00:{i:02d};{i}\n" for i in range(30)))
    guessed = scan([str(path)], ScanOptions(time_field="Zeitpunkt"))
    assert guessed.skipped["bad_timestamp"].count == 30
    assert any("--time-format, a strftime pattern" in w for w in guessed.warnings)
    wrong = scan([str(path)], ScanOptions(time_field="Zeitpunkt", time_format="%Y/%m/%d"))
    assert any("no time could be read with --time-format '%Y/%m/%d'" in w for w in wrong.warnings)
    right = scan([str(path)], ScanOptions(time_field="Zeitpunkt", time_format="%d.%m.%Y %H:%M:%S"))
    assert right.skipped == {} and not any("no time could be read" in w for w in right.warnings)


def test_a_form_that_is_neither_named_nor_a_pattern_is_refused_in_one_line(tmp_path: Path) -> None:
    with pytest.raises(OgiveError, match="strftime pattern"):
        ScanOptions(time_format="dd.mm.yyyy")
    path = tmp_path / "x.csv"
    path.write_text("t,v\n1,2\n")
    run = subprocess.run(
        [sys.executable, "-m", "ogive", "scan", str(path), "--time-format", "dd.mm.yyyy"],
        capture_output=True,
        text=True,
    )
    assert run.returncode == EXIT_ERROR  # usage mistakes keep 1 and 2 for the gate
    assert run.stderr.strip().splitlines()[-1].startswith("ogive scan: error: argument --time-format")
    assert "Traceback" not in run.stderr
