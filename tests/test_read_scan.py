"""scan(): formats, compressions, stdin, several sources, long lines, bad rows, groups, splits.

Every quantile check compares against ``numpy.quantile`` on the raw generated values
(outside reference; numpy's default linear method, the definition the Sketch follows).
"""

from __future__ import annotations

import bz2
import datetime as dt
import gzip
import json
import lzma
import subprocess
import sys
from pathlib import Path

import numpy as np
import polars as pl
import pytest
import zstandard

from ogive.errors import OgiveError
from ogive.read import ScanOptions, ScanProgress, scan

N = 4000
QS = np.array([0.0, 0.1, 0.5, 0.9, 0.99, 1.0])
# Tolerance: at N=4000 the sketch keeps the 1024 lowest and highest values exactly and
# its t-digest (compression 1000) is exact or within a small fraction of a rank in the
# middle; the values are printed with 4 decimals, so allow 1e-3 relative.
RTOL = 1e-3


@pytest.fixture(scope="module")
def raw() -> np.ndarray:
    rng = np.random.default_rng(7)
    return np.round(rng.lognormal(3.0, 0.8, N), 4)


def _check(sketch_values: np.ndarray, raw_values: np.ndarray) -> None:
    # Reference: numpy.quantile on the raw values.
    np.testing.assert_allclose(sketch_values, np.quantile(raw_values, QS), rtol=RTOL)


def _csv_text(raw: np.ndarray, sep: str = ",", header: bool = True, crlf: bool = False) -> str:
    nl = "\r\n" if crlf else "\n"
    lines = [sep.join(("ts", "host", "latency_ms"))] if header else []
    for i, v in enumerate(raw):
        lines.append(sep.join((f"2026-03-04T10:{i * 60 // N:02d}:00Z", f"h{i % 3}", f"{v}")))
    return nl.join(lines) + nl


COMPRESSORS = {
    "plain": lambda b: b,
    "gzip": gzip.compress,
    "zstd": lambda b: zstandard.ZstdCompressor().compress(b),
    "bz2": bz2.compress,
    "xz": lzma.compress,
}


@pytest.mark.parametrize("kind", list(COMPRESSORS))
@pytest.mark.parametrize("lazy", [True, False])
def test_csv_every_compression(tmp_path: Path, raw: np.ndarray, kind: str, lazy: bool) -> None:
    path = tmp_path / "data.log"  # no telling suffix: detection is by magic bytes
    path.write_bytes(COMPRESSORS[kind](_csv_text(raw).encode()))
    r = scan([str(path)], ScanOptions(column="latency_ms", chunk_bytes=1 << 14, lazy_files=lazy))
    s = r.sketches["all"]
    assert r.format == "csv" and s.count == N and s.unit == "ms"  # from the name latency_ms
    _check(s.quantile(QS), raw)
    assert s.provenance.lines_read == N + 1 and s.provenance.rows_read == N
    assert s.provenance.sources == [str(path)]


@pytest.mark.parametrize("lazy", [True, False])
def test_tsv_crlf_no_header_by_position(tmp_path: Path, raw: np.ndarray, lazy: bool) -> None:
    path = tmp_path / "d.tsv"
    path.write_text(_csv_text(raw, sep="\t", header=False, crlf=True), newline="")
    r = scan([str(path)], ScanOptions(column="3", chunk_bytes=1 << 12, lazy_files=lazy))
    assert r.format == "tsv"
    _check(r.sketches["all"].quantile(QS), raw)


def test_header_detection_and_forcing(tmp_path: Path, raw: np.ndarray) -> None:
    path = tmp_path / "d.csv"
    path.write_text(_csv_text(raw))
    # Position 3 with the header detected: the header line is not a bad row.
    r = scan([str(path)], ScanOptions(column="3"))
    assert r.sketches["all"].count == N and not r.skipped
    # Forcing --no-header makes the header line a counted bad row at line 1.
    r = scan([str(path)], ScanOptions(column="3", header=False, lazy_files=False))
    assert r.skipped["not_a_number"].count == 1
    assert r.skipped["not_a_number"].examples == [f"{path}:1"]
    with pytest.raises(OgiveError, match="no column named 'lat'"):
        scan([str(path)], ScanOptions(column="lat"))


@pytest.mark.parametrize("lazy", [True, False])
def test_ndjson_dotted_path(tmp_path: Path, raw: np.ndarray, lazy: bool) -> None:
    path = tmp_path / "d.jsonl"
    with path.open("w") as fh:
        for i, v in enumerate(raw):
            fh.write(json.dumps({"id": i, "timing": {"total_ms": float(v), "db_ms": 1}}) + "\n")
        fh.write(json.dumps({"id": -1, "timing": {}}) + "\n")
    r = scan([str(path)], ScanOptions(field="timing.total_ms", chunk_bytes=1 << 13, lazy_files=lazy))
    assert r.format == "ndjson"
    s = r.sketches["all"]
    _check(s.quantile(QS), raw)
    assert s.provenance.skipped["missing_field"].examples == [f"{path}:{N + 1}"]


@pytest.mark.parametrize("lazy", [True, False])
def test_text_regex_named_group_with_durations(tmp_path: Path, raw: np.ndarray, lazy: bool) -> None:
    path = tmp_path / "access.log"
    with path.open("w") as fh:
        for i, v in enumerate(raw):
            # Alternate units: the same duration written in s or ms.
            value = f"{v / 1000:.7f}s" if i % 2 else f"{v}ms"
            fh.write(
                f'10.0.0.{i % 200} - - [04/Mar/2026:10:00:00 +0000] "GET /x HTTP/1.1" 200 12 '
                f"took={value} id={i}\n"
            )
        fh.write("garbage line without the field\n")
    pattern = r"took=(?P<value>\S+) id=(\d+)"
    r = scan([str(path)], ScanOptions(pattern=pattern, chunk_bytes=1 << 13, lazy_files=lazy))
    s = r.sketches["all"]
    # An access log with --pattern stays an access log (its [...] time is kept).
    assert r.format == "access" and s.unit == "ms"  # durations seen: ms by default
    _check(s.quantile(QS), raw)
    # The last line is not an access-log line at all: a bad record, not a regex miss.
    assert s.provenance.skipped["bad_record"].examples == [f"{path}:{N + 1}"]


def test_stdin(raw: np.ndarray) -> None:
    data = gzip.compress(_csv_text(raw).encode())
    code = (
        "import sys; from ogive.read import scan, ScanOptions; "
        "s = scan(['-'], ScanOptions(column='latency_ms', chunk_bytes=4096)).sketches['all']; "
        "print(s.count, repr(float(s.quantile(0.5))))"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], input=data, capture_output=True, check=True
    ).stdout.split()
    assert int(out[0]) == N
    np.testing.assert_allclose(float(out[1]), np.quantile(raw, 0.5), rtol=RTOL)


def test_several_sources_are_one_stream(tmp_path: Path, raw: np.ndarray) -> None:
    text = _csv_text(raw).splitlines(keepends=True)
    header, body = text[0], text[1:]
    a, b, c = tmp_path / "app.log", tmp_path / "app.log.1", tmp_path / "app.log.2.gz"
    a.write_text(header + "".join(body[:1000]))
    b.write_text(header + "".join(body[1000:2500]))
    c.write_bytes(gzip.compress((header + "".join(body[2500:])).encode()))
    r = scan([str(a), str(b), str(c)], ScanOptions(column="latency_ms", chunk_bytes=1 << 12))
    s = r.sketches["all"]
    assert s.count == N and not r.skipped
    _check(s.quantile(QS), raw)
    assert s.provenance.sources == [str(a), str(b), str(c)]


def test_line_longer_than_chunk(tmp_path: Path) -> None:
    path = tmp_path / "long.jsonl"
    pad = "x" * 50_000
    rows = [{"v": 1.0}, {"v": 2.0, "pad": pad}, {"v": 3.0}]
    path.write_text("".join(json.dumps(r) + "\n" for r in rows))
    r = scan([str(path)], ScanOptions(field="v", chunk_bytes=1024, lazy_files=False))
    assert r.sketches["all"].count == 3 and r.sketches["all"].max == 3.0
    # Beyond max_line_bytes the line is counted as too long, with its number.
    r = scan([str(path)], ScanOptions(field="v", chunk_bytes=1024, max_line_bytes=4096, lazy_files=False))
    assert r.sketches["all"].count == 2
    assert r.skipped["too_long"].examples == [f"{path}:2"]
    assert r.sketches["all"].provenance.skipped["too_long"].count == 1


def test_bad_rows_counted_with_lines_and_strict(tmp_path: Path) -> None:
    path = tmp_path / "bad.csv"
    path.write_text("name,ms\na,1\nb,x\nc,\nd,3\ne,7parsecs\nf,-2\n")
    for lazy in (True, False):
        r = scan([str(path)], ScanOptions(column="ms", lazy_files=lazy))
        s = r.sketches["all"]
        assert s.count == 3 and s.negative_count == 1  # negatives are kept, counted by the sketch
        skipped = {k: (t.count, t.examples) for k, t in s.provenance.skipped.items()}
        assert skipped == {
            "not_a_number": (1, [f"{path}:3"]),
            "missing_field": (1, [f"{path}:4"]),
            "unknown_unit": (1, [f"{path}:6"]),
        }
    with pytest.raises(OgiveError, match=rf"{path}:3: .*not_a_number.*--strict"):
        scan([str(path)], ScanOptions(column="ms", strict=True))


def test_by_with_group_cap(tmp_path: Path, raw: np.ndarray) -> None:
    path = tmp_path / "g.csv"
    hosts = [f"h{i % 5}" for i in range(N)]
    path.write_text("host,ms\n" + "".join(f"{h},{v}\n" for h, v in zip(hosts, raw, strict=True)))
    r = scan([str(path)], ScanOptions(column="ms", by="host", max_groups=3, chunk_bytes=1 << 12))
    assert r.sketches.names() == ["host=h0", "host=h1", "host=h2", "host=(other)"]
    for i in range(3):
        _check(r.sketches[f"host=h{i}"].quantile(QS), raw[i::5])
    other = np.concatenate([raw[3::5], raw[4::5]])
    _check(r.sketches["host=(other)"].quantile(QS), other)
    assert any("--max-groups" in w for w in r.warnings)


@pytest.mark.parametrize(
    ("form", "moment"),
    [
        ("iso", "2026-03-04T10:30:00Z"),
        ("epoch_s", "1772620200"),
        ("epoch_ms", "2026-03-04T10:30:00Z"),
        ("clf", "04/Mar/2026:10:30:00 +0000"),
    ],
)
def test_split_at_each_timestamp_form(tmp_path: Path, raw: np.ndarray, form: str, moment: str) -> None:
    base = 1772618400  # 2026-03-04T10:00:00Z
    secs = base + (np.arange(N) * 3600 // N)  # one hour spread over the rows

    def stamp(t: int) -> str:
        when = dt.datetime.fromtimestamp(t, dt.UTC)
        return {
            "iso": when.strftime("%Y-%m-%dT%H:%M:%SZ"),
            "epoch_s": str(t),
            "epoch_ms": str(t * 1000),
            "clf": when.strftime("[%d/%b/%Y:%H:%M:%S +0000]"),
        }[form]

    path = tmp_path / "t.csv"
    path.write_text(
        "when,host,ms\n"
        + "".join(f"{stamp(int(t))},h{i % 2},{v}\n" for i, (t, v) in enumerate(zip(secs, raw, strict=True)))
    )
    r = scan([str(path)], ScanOptions(column="ms", time_field="when", split_at=moment, chunk_bytes=1 << 13))
    split = base + 1800
    before, after = raw[secs < split], raw[secs >= split]
    assert r.sketches.names() == ["before", "after"]
    _check(r.sketches["before"].quantile(QS), before)
    _check(r.sketches["after"].quantile(QS), after)
    assert r.sketches["before"].provenance.time_first == "2026-03-04T10:00:00Z"
    assert r.sketches["after"].provenance.time_first == "2026-03-04T10:30:00Z"
    # Both together: before/FIELD=VALUE.
    r = scan([str(path)], ScanOptions(column="ms", by="host", time_field="when", split_at=moment))
    assert r.sketches.names() == ["before/host=h0", "before/host=h1", "after/host=h0", "after/host=h1"]


def test_split_at_bad_timestamps_are_reported(tmp_path: Path) -> None:
    path = tmp_path / "t.csv"
    path.write_text("when,ms\n2026-03-04T10:00:00Z,1\nsoon,2\n2026-03-04T11:00:00Z,3\n")
    r = scan([str(path)], ScanOptions(column="ms", time_field="when", split_at="2026-03-04T10:30:00Z"))
    assert r.sketches["before"].count == 1 and r.sketches["after"].count == 1
    assert r.skipped["bad_timestamp"].examples == [f"{path}:3"]
    # In neither half: the sketch set counts it as a row given to no sketch.
    assert r.sketches.unassigned["bad_timestamp"].examples == [f"{path}:3"]


def test_parquet(tmp_path: Path, raw: np.ndarray) -> None:
    path = tmp_path / "d.bin"
    pl.DataFrame({"host": [f"h{i % 2}" for i in range(N)], "lat": raw}).write_parquet(path)
    r = scan([str(path)], ScanOptions(column="lat", by="host"))
    assert r.format == "parquet"
    _check(r.sketches["host=h0"].quantile(QS), raw[0::2])


@pytest.mark.parametrize("kind", ["gzip", "zstd", "bz2", "xz"])
def test_truncated_compressed_input_names_offset(tmp_path: Path, raw: np.ndarray, kind: str) -> None:
    path = tmp_path / "cut.bin"
    blob = COMPRESSORS[kind](_csv_text(raw).encode())
    path.write_bytes(blob[: len(blob) // 2])
    message = rf"corrupt or truncated {kind} data near compressed byte offset \d+"
    with pytest.raises(OgiveError, match=message):
        scan([str(path)], ScanOptions(column="latency_ms", chunk_bytes=1 << 12))


def test_progress_and_cancel(tmp_path: Path, raw: np.ndarray) -> None:
    path = tmp_path / "d.gz"
    path.write_bytes(gzip.compress(_csv_text(raw).encode()))
    seen: list[ScanProgress] = []
    r = scan(
        [str(path)],
        ScanOptions(column="latency_ms", chunk_bytes=1 << 10),
        progress=seen.append,
        cancel=lambda: True,  # stop after the first chunk
    )
    assert r.partial is not None and r.sketches["all"].provenance.partial == r.partial
    assert r.sketches["all"].count < N


def test_free_text_without_pattern_is_a_clear_error(tmp_path: Path) -> None:
    path = tmp_path / "t.log"
    path.write_text("started the thing\nit took a while\n")
    with pytest.raises(OgiveError, match="--pattern"):
        scan([str(path)], ScanOptions())


@pytest.mark.parametrize("fmt", ["csv", "text", "ndjson"])
def test_blank_lines_keep_line_numbers(tmp_path: Path, fmt: str) -> None:
    body = {
        "csv": ["name,ms", "a,1", "", "b,x", "c,3"],
        "text": ["took=1ms", "took=2ms", "", "took=?ms", "took=3ms"],
        "ndjson": ['{"v": 1}', '{"v": 2}', "", '{"v": "x"}', '{"v": 3}'],
    }[fmt]
    path = tmp_path / "blank.txt"
    path.write_text("\n".join(body) + "\n")
    opts = {
        "csv": ScanOptions(column="ms"),
        "text": ScanOptions(pattern=r"took=(\S+)ms"),
        "ndjson": ScanOptions(field="v"),
    }
    r = scan([str(path)], opts[fmt])
    assert r.sketches["all"].count == (2 if fmt == "csv" else 3)
    where = [ex for t in r.skipped.values() for ex in t.examples]
    assert f"{path}:4" in where and f"{path}:3" in where  # the blank line and the bad value


def test_ragged_rows_do_not_narrow_the_chunk(tmp_path: Path) -> None:
    path = tmp_path / "ragged.csv"
    # Line 2 is short and starts the file's only chunk; the last line is cut off.
    path.write_text("a,b,ms\nx\ny,z,5\ny,z,6,extra\ny,z")
    r = scan([str(path)], ScanOptions(column="ms", lazy_files=False))
    s = r.sketches["all"]
    assert s.count == 2 and s.max == 6.0
    assert s.provenance.skipped["missing_field"].examples == [f"{path}:2", f"{path}:5"]


def test_unit_from_the_column_name(tmp_path: Path) -> None:
    path = tmp_path / "u.csv"
    path.write_text("host,latency_s\na,0.25\nb,1.5\n")
    r = scan([str(path)], ScanOptions(column="latency_s"))
    s = r.sketches["all"]
    assert s.unit == "ms" and s.max == 1500.0
    assert any("from the name 'latency_s'" in w for w in r.warnings)
    # An explicit --input-unit wins over the name.
    assert scan([str(path)], ScanOptions(column="latency_s", input_unit="ms")).sketches["all"].max == 1.5


def test_by_a_field_no_record_has_is_said_not_only_shown(tmp_path: Path) -> None:
    """Every row in ``host=(missing)`` gets a warning naming how free text gives a group;
    a file where some rows have the field gets none (their rows count in their groups)."""
    bare = tmp_path / "bare.log"
    bare.write_text("".join(f"ck-web-{i % 3} dur={i + 1}ms\n" for i in range(30)))
    result = scan([str(bare)], ScanOptions(by="host"))
    assert result.sketches.names() == ["host=(missing)"]
    assert any("no record had a host value" in w and "(?P<host>" in w for w in result.warnings)
    paired = tmp_path / "paired.log"
    paired.write_text("".join(f"host=ck-web-{i % 3} dur={i + 1}ms\n" for i in range(30)) + "dur=5ms\n")
    result = scan([str(paired)], ScanOptions(by="host"))
    assert "host=ck-web-0" in result.sketches.names()
    assert not any("no record had" in w for w in result.warnings)
