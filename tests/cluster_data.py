"""Shared by the cluster and URL tests: awkward files with their true contents, a
comparison of two scan results, and an HTTP server that honours Range requests.

Each generator writes a file and returns what it holds from the generator's own
bookkeeping (the good values, the places of every bad row), so the tests check the
scans against the data itself, not only against each other.
"""

from __future__ import annotations

import gzip
import itertools
import re
import threading
from collections.abc import Iterator
from dataclasses import dataclass, field
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path

import numpy as np
import polars as pl
import zstandard

from ogive.read import ScanResult


@dataclass
class Truth:
    """What a generated file holds: good values in file order, bad rows' places by reason."""

    values: list[float] = field(default_factory=list)
    places: dict[str, list[str]] = field(default_factory=dict)
    lines: int = 0

    def bad(self, reason: str, place: str) -> None:
        self.places.setdefault(reason, []).append(place)


def tricky_csv(path: Path, rows: int, seed: int) -> Truth:
    """CSV with CRLF line ends, no final newline, quoted fields holding newlines (some
    two lines long, some three), quoted commas and quotes, bad and missing values."""
    rng = np.random.default_rng(seed)
    truth = Truth()
    out = ["ts,host,note,latency_ms\r\n"]
    line = 2
    for i in range(rows):
        value = round(float(rng.lognormal(3, 1)), 3)
        text = f"{value}"
        if i % 97 == 5:
            text = "n/a"
            truth.bad("not_a_number", f"{path.name}:{line}")
        elif i % 131 == 7:
            text = ""
            truth.bad("missing_field", f"{path.name}:{line}")
        else:
            truth.values.append(value)
        note = "ok"
        newlines = 0
        if i % 13 == 3:
            note = '"two\r\nlines, with a comma"'
            newlines = 1
        elif i % 29 == 4:
            note = '"three\nlines ""quoted""\nhere"'
            newlines = 2
        stamp = f"2026-03-04T{10 + i // 3600 % 10:02d}:{i // 60 % 60:02d}:{i % 60:02d}Z"
        out.append(f"{stamp},h{i % 7},{note},{text}\r\n")
        line += 1 + newlines
    path.write_bytes("".join(out).rstrip("\r\n").encode())
    truth.lines = line - 1
    return truth


def text_log(rows: int, seed: int, name: str, first_line: int = 1) -> tuple[bytes, Truth]:
    """Free-text lines ``... dur=12.5ms``, with lines that hold no duration."""
    rng = np.random.default_rng(seed)
    truth = Truth()
    lines = []
    for i in range(rows):
        if i % 41 == 9:
            lines.append(f"worker {i} restarted\n")
            truth.bad("no_match", f"{name}:{first_line + i}")
            continue
        value = round(float(rng.exponential(20)), 2)
        truth.values.append(value)
        lines.append(
            f"2026-03-04T{10 + i // 3600:02d}:{i // 60 % 60:02d}:{i % 60:02d}Z req={i} dur={value}ms\n"
        )
    truth.lines = rows
    return "".join(lines).encode(), truth


def gzip_members(path: Path, rows: int, seed: int, members: int = 3) -> Truth:
    """One text log written as several gzip members (as ``cat a.gz b.gz`` makes)."""
    data, truth = text_log(rows, seed, path.name)
    cuts = np.linspace(0, len(data), members + 1).astype(int)
    pieces = [data[a:b] for a, b in itertools.pairwise(cuts)]
    # members may split a line: gzip joins them back into one stream
    path.write_bytes(b"".join(gzip.compress(p) for p in pieces))
    return truth


def zstd_log(path: Path, rows: int, seed: int) -> Truth:
    data, truth = text_log(rows, seed, path.name)
    path.write_bytes(zstandard.ZstdCompressor().compress(data))
    return truth


def parquet_file(path: Path, rows: int, seed: int, group_rows: int) -> Truth:
    rng = np.random.default_rng(seed)
    v = np.round(rng.gamma(2.0, 10.0, rows), 3)
    df = pl.DataFrame({"latency_ms": v, "host": [f"h{i % 5}" for i in range(rows)]})
    df.write_parquet(path, row_group_size=group_rows)
    return Truth(values=v.tolist(), lines=rows)


# ---------------------------------------------------------------------- comparing
def tallies(d: dict) -> dict[str, int]:  # type: ignore[type-arg]
    return {reason: t.count for reason, t in d.items()}


def assert_same(single: ScanResult, split: ScanResult, *, exact_sum: bool = False) -> None:
    """Everything a scan counts is identical; each sketch's exact parts too (min, max,
    the buffers of the smallest and largest values). The digests may differ (a merge
    of parts is not one stream): quantiles are checked against the data elsewhere."""
    assert split.partial is None and split.error is None, (split.partial, split.error)
    assert (split.lines_read, split.rows_read, split.bytes_read) == (
        single.lines_read,
        single.rows_read,
        single.bytes_read,
    )
    assert split.format == single.format
    assert tallies(split.skipped) == tallies(single.skipped)
    assert tallies(split.sketches.unassigned) == tallies(single.sketches.unassigned)
    assert split.sketches.names() == single.sketches.names()
    for name in single.sketches.names():
        a, b = single.sketches[name], split.sketches[name]
        assert (b.count, b.nan_count, b.inf_count, b.negative_count, b.zero_count) == (
            a.count,
            a.nan_count,
            a.inf_count,
            a.negative_count,
            a.zero_count,
        ), name
        assert b.unit == a.unit
        np.testing.assert_array_equal(b.low, a.low, err_msg=name)
        np.testing.assert_array_equal(b.high, a.high, err_msg=name)
        assert (b.min, b.max) == (a.min, a.max) or a.count == 0
        # The sum is added in another order: equal to a few ulps (1e-12 relative).
        assert b.total == a.total if exact_sum else abs(b.total - a.total) <= 1e-12 * max(1.0, abs(a.total))
        pa, pb = a.provenance, b.provenance
        assert (pb.sources, pb.field, pb.lines_read, pb.rows_read) == (
            pa.sources,
            pa.field,
            pa.lines_read,
            pa.rows_read,
        )
        assert tallies(pb.skipped) == tallies(pa.skipped), name
        assert (pb.time_first, pb.time_last) == (pa.time_first, pa.time_last)


def assert_places(result: ScanResult, truth: Truth) -> None:
    """Every place a scan names for a reason is a place where the data has that reason."""
    for reason, tally in result.skipped.items():
        want = set(truth.places.get(reason, []))
        got = {re.sub(r"^.*/", "", e) for e in tally.examples}
        assert got <= want, (reason, sorted(got - want)[:5])
        assert tally.count == len(truth.places[reason])


# ---------------------------------------------------------------------- HTTP
class _RangeHandler(BaseHTTPRequestHandler):
    """Serves files from ``root`` with ``Range: bytes=a-b`` answered by 206 (RFC 9110, 14)."""

    root = Path(".")
    ranges = 0

    def do_HEAD(self) -> None:
        self._serve(body=False)

    def do_GET(self) -> None:
        self._serve(body=True)

    def _serve(self, *, body: bool) -> None:
        path = self.root / self.path.lstrip("/")
        if not path.is_file():
            self.send_error(404)
            return
        data = path.read_bytes()
        wanted = re.fullmatch(r"bytes=(\d+)-(\d*)", self.headers.get("Range", ""))
        if wanted:
            start = int(wanted[1])
            end = min(int(wanted[2]) if wanted[2] else len(data) - 1, len(data) - 1)
            if start >= len(data):
                self.send_response(416)
                self.send_header("Content-Range", f"bytes */{len(data)}")
                self.send_header("Content-Length", "0")
                self.end_headers()
                return
            type(self).ranges += 1
            self.send_response(206)
            self.send_header("Content-Range", f"bytes {start}-{end}/{len(data)}")
            data = data[start : end + 1]
        else:
            self.send_response(200)
        self.send_header("Accept-Ranges", "bytes")
        self.send_header("Content-Length", str(len(data)))
        self.send_header("Content-Type", "application/octet-stream")
        self.end_headers()
        if body:
            self.wfile.write(data)

    def log_message(self, format: str, *args: object) -> None:
        pass


def http_server(root: Path) -> Iterator[tuple[str, type[_RangeHandler]]]:
    """(base URL, handler class with its ``ranges`` count), serving ``root`` on 127.0.0.1."""
    handler = type("Handler", (_RangeHandler,), {"root": root, "ranges": 0})
    server = ThreadingHTTPServer(("127.0.0.1", 0), handler)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_address[1]}", handler
    finally:
        server.shutdown()
        server.server_close()
