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


@pytest.mark.parametrize("chunk", [64, 1 << 20])
def test_bad_utf8_left_to_the_csv_parser_is_still_counted_where_it_is(tmp_path: Path, chunk: int) -> None:
    """CSV chunks go to polars unchecked, and only those it refuses as not UTF-8 are
    cleaned: the lines with bad bytes (in any column, read or not) are still counted at
    their line numbers. Reference: Python's UTF-8 codec, line by line."""
    rows = [b"host,latency_ms"]
    for i in range(1, 200):
        host = b"h\xff" if i % 37 == 0 else b"caf\xc3\xa9" if i % 5 == 0 else b"h%d" % i
        rows.append(host + b",%d" % i)
    f = tmp_path / "mixed.csv"
    f.write_bytes(b"\n".join(rows) + b"\n")
    res = scan([str(f)], ScanOptions(column="latency_ms", chunk_bytes=chunk))
    bad = []
    for n, line in enumerate(rows, 1):
        try:
            line.decode("utf-8")
        except UnicodeDecodeError:
            bad.append(n)
    assert res.sketches["all"].count == 199  # every value read: the bad bytes are in the host
    (note,) = [w for w in res.warnings if "not UTF-8" in w]
    assert note.startswith(f"{len(bad)} lines held bytes that are not UTF-8")
    assert f"{f}:{bad[0]}" in note
    clean = tmp_path / "clean.csv"  # valid UTF-8 beyond ASCII is no finding at all
    clean.write_bytes(b"host,latency_ms\n" + b"".join(b"caf\xc3\xa9,%d\n" % i for i in range(50)))
    assert not [w for w in scan([str(clean)], ScanOptions(column="latency_ms")).warnings if "UTF-8" in w]


def test_bad_utf8_in_a_text_log_is_counted_where_it_is(tmp_path: Path) -> None:
    """Line formats go to polars' line splitter unchecked too; the lines it refuses are
    cleaned and counted. Reference: Python's UTF-8 codec, line by line."""
    rows = [(b"GET /caf\xc3\xa9" if i % 3 else b"GET /x\xe9") + b" rt=%dms" % i for i in range(1, 120)]
    f = tmp_path / "app.log"
    f.write_bytes(b"\n".join(rows) + b"\n")
    res = scan([str(f)], ScanOptions(pattern=r"rt=(\d+)ms", chunk_bytes=256))
    bad = [n for n, line in enumerate(rows, 1) if "\ufffd" in line.decode("utf-8", "replace")]
    assert res.sketches["all"].count == 119
    (note,) = [w for w in res.warnings if "not UTF-8" in w]
    assert note.startswith(f"{len(bad)} lines held bytes that are not UTF-8") and f"{f}:{bad[0]}" in note


@pytest.mark.parametrize("chunk", [48, None])
def test_blank_lines_in_csv_are_blank_lines_not_a_group(tmp_path: Path, chunk: int | None) -> None:
    """A blank line in a CSV is counted as ``blank_line`` in no sketch, as in every other
    format; it used to make a ``host=(missing)`` group with a "missing field". A row of
    empty fields (``,``) is still a record with a missing field. Reference: the lines
    Python's ``str.splitlines`` finds empty (a CRLF line end included)."""
    text = "host,latency_ms\r\na,1\r\n\r\nb,2\n\n,\na,3\n\n"
    f = tmp_path / "b.csv"
    f.write_bytes(text.encode())
    lines = text.splitlines()
    blank = [n for n, line in enumerate(lines, 1) if line == ""]
    res = scan([str(f)], ScanOptions(column="latency_ms", by="host", chunk_bytes=chunk))
    assert sorted(res.sketches.sketches) == ["host=(missing)", "host=a", "host=b"]  # the "," row
    assert res.skipped["blank_line"].count == len(blank) == 3
    assert res.skipped["blank_line"].examples == [f"{f}:{n}" for n in blank]
    assert res.sketches["host=(missing)"].provenance.skipped["missing_field"].count == 1
    plain = scan([str(f)], ScanOptions(column="latency_ms", chunk_bytes=chunk))
    all_ = plain.sketches["all"]
    assert all_.count == 3 and all_.provenance.skipped["blank_line"].count == 3
