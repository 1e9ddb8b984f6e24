"""Junk in the input gives counted skips or one clear line, never a traceback."""

from __future__ import annotations

from pathlib import Path

import pytest

from ogive.cli import main
from ogive.read import ScanOptions, scan


def test_invalid_utf8_keeps_the_good_rows(tmp_path: Path) -> None:
    f = tmp_path / "u.csv"
    f.write_bytes(b"host,latency_ms\n\xff\xfe,2.5\nok,3.5\nok,\xc3(\n")
    res = scan([str(f)], ScanOptions(column="latency_ms"))
    s = res.sketches["all"]
    assert s.count == 2 and s.min == 2.5 and s.max == 3.5
    assert res.skipped["not_a_number"].count == 1  # the mangled value is counted, not dropped


def test_binary_junk_is_one_line(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    f = tmp_path / "junk.bin"
    f.write_bytes(bytes(range(256)) * 200)  # every byte value, NULs included
    code = main(["scan", str(f), "--column", "latency_ms", "--quiet"])
    err = capsys.readouterr().err
    assert code == 3
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1


def test_absurd_values_print_short(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    f = tmp_path / "v.csv"
    f.write_text("latency_ms\n1e308\n5\n")
    assert main(["scan", str(f), "--column", "latency_ms", "--quiet"]) == 0
    out = capsys.readouterr().out
    assert max(len(line) for line in out.splitlines()) < 140


@pytest.mark.parametrize("chunk", [40, None])
def test_timestamps_going_backwards_are_counted(tmp_path: Path, chunk: int | None) -> None:
    f = tmp_path / "back.csv"
    f.write_text(
        "ts,latency_ms\n"
        "2026-03-04T10:00:00Z,1\n"
        "2026-03-04T10:00:05Z,2\n"
        "2026-03-04T09:59:00Z,3\n"  # 65 s before the row above it
        "2026-03-04T10:00:06Z,4\n"
        "not a time,5\n"
        "2026-03-04T10:00:01Z,6\n"  # 5 s before the latest so far
    )
    res = scan([str(f)], ScanOptions(column="latency_ms", time_field="ts", chunk_bytes=chunk))
    s = res.sketches["all"]
    assert s.count == 5  # every row with a readable time still counts, out of order or not
    # The row whose time cannot be read is skipped and counted (not kept untimed).
    assert s.provenance.skipped["bad_timestamp"].examples == [f"{f}:6"]
    (note,) = [w for w in res.warnings if "earlier than a row before them" in w]
    assert note.startswith("2 rows") and f"{f}:4" in note and "65 s" in note
