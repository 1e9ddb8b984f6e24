"""Edge-case inputs from the hardening list, end to end through ``scan``: each gives
counts in the result (or one clear line), never a traceback.

Outside reference: expected counts are worked out by hand from the few rows written;
the CSV dialect facts (BOM, CRLF) are those of RFC 4180 and the Unicode BOM, from memory.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from ogive.cli import main
from ogive.read import ScanOptions, scan


def test_empty_file_and_header_only_give_an_empty_sketch(tmp_path: Path) -> None:
    empty = tmp_path / "empty.csv"
    empty.write_bytes(b"")
    header = tmp_path / "hdr.csv"
    header.write_text("id,latency_ms\n")
    for path in (empty, header):
        r = scan([str(path)], ScanOptions(column="latency_ms"))
        assert r.sketches["all"].count == 0 and r.rows_read == 0


def test_bom_crlf_and_a_last_line_without_newline(tmp_path: Path) -> None:
    path = tmp_path / "bom.csv"
    path.write_bytes(b"\xef\xbb\xbfid,latency_ms\r\n1,2.5\r\n2,3.5\r\n3,4")
    r = scan([str(path)], ScanOptions(column="latency_ms"))
    s = r.sketches["all"]
    assert s.count == 3 and s.min == 2.5 and s.max == 4.0
    assert r.lines_read == 4


def test_odd_values_are_counted_by_kind(tmp_path: Path) -> None:
    path = tmp_path / "odd.csv"
    path.write_text("id,latency_ms\n1,NaN\n2,inf\n3,-4\n4,1e308\n5,5\n6,12parsecs\n7,\n8\n")
    r = scan([str(path)], ScanOptions(column="latency_ms"))
    s = r.sketches["all"]
    assert s.count == 3  # -4, 1e308 and 5 are numbers; negative and huge are kept
    assert s.negative_count == 1 and s.max == 1e308
    assert s.nan_count == 1 and s.inf_count == 1
    assert r.skipped["unknown_unit"].examples == [f"{path}:7"]
    assert r.skipped["missing_field"].count == 2  # an empty value and a short row


def test_a_10_mb_line_is_read(tmp_path: Path) -> None:
    path = tmp_path / "big.ndjson"
    with open(path, "w") as fh:
        fh.write('{"t": 1.5}\n')
        fh.write(json.dumps({"t": 2.5, "blob": "x" * (10 << 20)}) + "\n")  # one 10 MB line
        fh.write('{"t": 3.5}\n')
    r = scan([str(path)], ScanOptions(field="t", chunk_bytes=1 << 20))
    s = r.sketches["all"]
    assert s.count == 3 and s.quantile(0.5) == 2.5


def test_huge_values_print_in_a_readable_width(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "huge.csv"
    path.write_text("latency_ms\n1e308\n1\n")
    assert main(["scan", str(path), "--column", "latency_ms", "--quiet"]) == 0
    out = capsys.readouterr().out
    assert max(len(line) for line in out.splitlines()) < 120
