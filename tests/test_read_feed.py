"""The seams of the reader: one feeder for scan and follow, options checked when built,
one parser for spans of time. References: the file's own bytes and lines (counted
here with plain Python), numpy.quantile on the values written."""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ogive.errors import OgiveError
from ogive.fit.windows import parse_window
from ogive.read import ScanOptions, scan
from ogive.read.feed import Feed
from ogive.read.follow import follow
from ogive.read.sources import Opened

MAX_LINE = 4096


def _awkward_csv(path: Path) -> tuple[list[float], int, int]:
    """A CSV with a header, records whose quoted field spans lines, one line too long
    to hold and one bad value. Returns the good values, the too-long line's number
    and the number of lines."""
    rng = np.random.default_rng(11)
    lines = ["id,note,ms"]
    good: list[float] = []
    long_at = 0
    for i in range(1500):
        v = float(np.round(rng.lognormal(2.0, 0.6), 3))
        if i == 700:
            lines.append(f'{i},"{"x" * (2 * MAX_LINE)}",{v}')
            long_at = len(lines)
            continue
        if i == 900:
            lines.append(f"{i},plain,n/a")
            continue
        note = f'"first line\nsecond line {i}"' if i % 40 == 0 else f"n{i}"
        lines.extend(f"{i},{note},{v}".split("\n"))
        good.append(v)
    path.write_text("\n".join(lines) + "\n")
    return good, long_at, len(lines)


def _pieces_by_scan(path: Path, options: ScanOptions) -> list[tuple[bytes, int, bool]]:
    feed = Feed(options)
    feed.start_source()
    src = Opened(str(path))
    try:
        return [(p.data, p.too_long, p.header) for p in feed.pieces(src)]
    finally:
        src.close()


def _pieces_by_pushing(path: Path, options: ScanOptions, sizes: list[int]) -> list[tuple[bytes, int, bool]]:
    """What a follow sees: the same bytes, arriving in reads of arbitrary sizes."""
    feed = Feed(options)
    feed.start_source()
    out = []
    with open(path, "rb") as fh:
        i = 0
        while data := fh.read(sizes[i % len(sizes)]):
            i += 1
            piece = feed.push(data)
            if piece is not None:
                out.append((piece.data, piece.too_long, piece.header))
    last = feed.end()
    if last is not None:
        out.append((last.data, last.too_long, last.header))
    return out


@settings(max_examples=15, deadline=None)
@given(st.lists(st.integers(1, 3000), min_size=1, max_size=5))
def test_the_feeder_gives_the_same_records_however_the_bytes_arrive(
    tmp_path_factory: pytest.TempPathFactory, sizes: list[int]
) -> None:
    path = Path(tmp_path_factory.mktemp("feed")) / "a.csv"
    _awkward_csv(path)
    options = ScanOptions(column="ms", chunk_bytes=1024, max_line_bytes=MAX_LINE)
    by_scan = _pieces_by_scan(path, options)
    by_push = _pieces_by_pushing(path, options, sizes)
    raw = path.read_bytes()
    body = raw.partition(b"\n")[2]
    long_line = next(ln for ln in raw.split(b"\n") if len(ln) > MAX_LINE) + b"\n"
    for pieces in (by_scan, by_push):
        # Every byte once, except the header (taken off once) and the too-long line.
        assert b"".join(p[0] for p in pieces) == body.replace(long_line, b"")
        assert [p[2] for p in pieces].count(True) == 1 and pieces[0][2]
        assert sum(p[1] for p in pieces) == 1
        # Whole records only: no piece ends inside a quoted field.
        assert all(p[0].count(b'"') % 2 == 0 for p in pieces)


def test_follow_of_a_finished_file_equals_its_scan(tmp_path: Path) -> None:
    path = tmp_path / "a.csv"
    good, long_at, n_lines = _awkward_csv(path)
    options = ScanOptions(column="ms", chunk_bytes=2048, max_line_bytes=MAX_LINE)
    scanned = scan([str(path)], options)
    start = time.monotonic()
    followed, rotations = follow(
        str(path), options, cancel=lambda: time.monotonic() - start > 0.5, poll_s=0.02
    )
    assert rotations == 0
    for r in (scanned, followed):
        s = r.sketches["all"]
        assert r.lines_read == n_lines == path.read_bytes().count(b"\n")
        assert r.rows_read == len(good) + 1  # the bad value is a row; the long line is not
        assert s.count == len(good)
        assert r.skipped["too_long"].examples == [f"{path}:{long_at}"]
        assert r.skipped["not_a_number"].count == 1
        # Reference: numpy.quantile on the values written (1498 values: the sketch is exact).
        np.testing.assert_allclose(s.quantile([0.1, 0.5, 0.99]), np.quantile(good, [0.1, 0.5, 0.99]))
    assert followed.skipped["not_a_number"].examples == scanned.skipped["not_a_number"].examples


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"compression": 5}, "--compression must lie between 10 and"),
        ({"chunk_bytes": 0}, "chunk_bytes and max_groups must be at least 1"),
        ({"max_groups": 0}, "chunk_bytes and max_groups must be at least 1"),
        ({"window": "10m", "time_field": "ts", "by": "host"}, "cannot be combined"),
        ({"window": "ten minutes", "time_field": "ts"}, "window width 'ten minutes' is not a positive"),
        ({"window": "0m", "time_field": "ts"}, "is not a positive number"),
    ],
)
def test_options_are_refused_when_built_before_any_reading(kwargs: dict[str, object], message: str) -> None:
    with pytest.raises(OgiveError, match=message):
        ScanOptions(**kwargs)  # type: ignore[arg-type]


@pytest.mark.parametrize(
    "text", ["30s", "10m", " 1.5h ", "1d", "0.5 m", "10", "10x", "-5m", "1e3s", "", "0s"]
)
def test_window_width_is_read_alike_by_the_reader_and_the_window_comparison(text: str) -> None:
    try:
        seconds: float | None = parse_window(text)
    except ValueError:
        seconds = None
    try:
        width_us = ScanOptions(time_field="ts", window=text).window_us
    except OgiveError:
        width_us = None
    assert (None if seconds is None else seconds * 1e6) == width_us
