"""The demo scenario generator: the files are what they claim, read by outside parsers.

Outside references: Python's own ``csv``, ``json`` and ``gzip`` modules read the files
(not ogive's reader), and ``numpy.quantile`` measures the raw latencies.
"""

from __future__ import annotations

import csv
import gzip
import io
import json
import re
from pathlib import Path

import numpy as np
import pytest

from ogive import demo, demo_metrics
from ogive.cli import main
from ogive.errors import OgiveError

ROWS = 3000


def _text(path: Path) -> str:
    raw = path.read_bytes()
    return (gzip.decompress(raw) if raw[:2] == b"\x1f\x8b" else raw).decode()


def test_same_seed_same_bytes_other_seed_other_bytes(tmp_path: Path) -> None:
    a = demo.write(str(tmp_path / "a.csv"), "csv", "day", rows=ROWS, seed=7)
    b = demo.write(str(tmp_path / "b.csv"), "csv", "day", rows=ROWS, seed=7)
    c = demo.write(str(tmp_path / "c.csv"), "csv", "day", rows=ROWS, seed=8)
    assert a.rows == b.rows == c.rows == ROWS
    assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()
    assert (tmp_path / "a.csv").read_bytes() != (tmp_path / "c.csv").read_bytes()


def test_csv_is_standard_csv_with_realistic_rows(tmp_path: Path) -> None:
    path = tmp_path / "d.csv"
    res = demo.write(str(path), "csv", "before", rows=ROWS, seed=1)
    text = path.read_text()
    rows = list(csv.DictReader(io.StringIO(text)))  # the standard library's CSV reader
    assert len(rows) == ROWS
    assert list(rows[0]) == demo.CSV_HEADER.split(",")
    # The brief for benchmark files: rows of about 90-120 bytes.
    width = (res.bytes_written - len(demo.CSV_HEADER) - 1) / ROWS
    assert 88 <= width <= 120, width
    times = [r["timestamp"] for r in rows]
    assert times == sorted(times)
    assert times[0] >= "2026-03-04T00:00:00" and times[-1] < "2026-03-04T13:00:00"
    assert {r["host"] for r in rows} == set(demo.HOSTS)
    assert {"200", "201", "304"} <= {r["status"] for r in rows}
    assert all(re.fullmatch(r"[0-9a-f]{24}", r["request_id"]) for r in rows)


def test_ndjson_nested_and_gzip(tmp_path: Path) -> None:
    path = tmp_path / "a.ndjson.gz"
    res = demo.write(str(path), "ndjson", "after", rows=500, seed=2)
    assert res.compressed and path.read_bytes()[:2] == b"\x1f\x8b"
    docs = [json.loads(line) for line in _text(path).splitlines()]  # the standard json module
    assert len(docs) == 500
    assert all(isinstance(d["timing"]["total_ms"], float) for d in docs)
    assert {d["http"]["route"] for d in docs} <= {r.path for r in demo.ROUTES}
    assert min(d["ts"] for d in docs) >= demo.RELEASE_ISO.replace("Z", "")


def test_text_log_duration_last_with_units(tmp_path: Path) -> None:
    path = tmp_path / "t.log"
    demo.write(str(path), "text", "day", rows=ROWS, seed=3)
    lines = path.read_text().splitlines()
    durs = [re.search(demo.TEXT_PATTERN + "$", ln) for ln in lines]
    assert all(durs)
    texts = [m.group(1) for m in durs if m]
    assert all(t.endswith("ms") or t.endswith("s") for t in texts)


def test_bad_rows_are_of_both_kinds_and_counted(tmp_path: Path) -> None:
    path = tmp_path / "bad.csv"
    demo.write(str(path), "csv", "day", rows=ROWS, seed=4, bad_rows=4)
    rows = list(csv.reader(io.StringIO(path.read_text())))[1:]
    short = [r for r in rows if len(r) < 8]
    not_num = [r for r in rows if len(r) == 8 and r[5] == "n/a"]
    assert len(short) == 2 and len(not_num) == 2
    assert len(rows) == ROWS


def test_release_makes_the_tail_heavier_but_not_the_median(tmp_path: Path) -> None:
    """The scenario's story, measured on the raw values with numpy.quantile."""
    path = tmp_path / "day.csv"
    demo.write(str(path), "csv", "day", rows=40_000, seed=5)
    rows = list(csv.DictReader(io.StringIO(path.read_text())))
    before = np.array([float(r["latency_ms"]) for r in rows if r["timestamp"] < "2026-03-04T13:00"])
    after = np.array([float(r["latency_ms"]) for r in rows if r["timestamp"] >= "2026-03-04T13:00"])
    qb = np.quantile(before, [0.5, 0.9, 0.99])
    qa = np.quantile(after, [0.5, 0.9, 0.99])
    assert qa[0] / qb[0] < 1.25  # the median barely moves
    assert qa[1] / qb[1] > 2.0  # p90 grows: more misses
    assert qa[2] / qb[2] > 1.5  # p99 grows: a heavier miss path
    assert before.max() > demo.TIMEOUT_MS  # gateway timeouts exist in both phases


def test_size_mode_lands_near_the_target(tmp_path: Path) -> None:
    path = tmp_path / "s.log"
    res = demo.write(str(path), "text", "day", size_bytes=2_000_000, seed=6, block_rows=5000)
    assert abs(path.stat().st_size - 2_000_000) / 2_000_000 < 0.01
    assert res.bytes_written == path.stat().st_size


def test_generate_command_and_demo_set_match_bundled_files(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    assert main(["generate", "--format", "ndjson", "--rows", "1k", "-o", str(tmp_path / "g.ndjson")]) == 0
    assert "1,000 rows" in capsys.readouterr().out
    assert main(["generate", "--demo-set", str(tmp_path / "set")]) == 0
    bundled = Path(__file__).resolve().parents[1] / "demo_logs"
    for f in demo.DEMO_SET:
        assert (tmp_path / "set" / f.name).read_bytes() == (bundled / f.name).read_bytes(), f.name
    for name in (demo_metrics.OTLP_NAME, *demo_metrics.PROM_NAMES):
        assert (tmp_path / "set" / name).read_bytes() == (bundled / name).read_bytes(), name


def test_generate_refuses_nonsense(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["generate", "--rows", "10"]) == 3
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "-o PATH" in err
    with pytest.raises(SystemExit) as exc:
        main(["generate", "--size", "lots", "-o", "x"])
    assert exc.value.code == 3
    with pytest.raises(OgiveError):
        demo.write("x", "xml", "day", rows=1)


def test_no_partial_file_after_a_failed_write(tmp_path: Path) -> None:
    with pytest.raises(OgiveError):
        demo.write(str(tmp_path / "x.csv"), "csv", "lunchtime", rows=10)
    assert list(tmp_path.iterdir()) == []
