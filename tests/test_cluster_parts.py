"""The pieces of a split scan that need no cluster: byte ranges widened to whole records,
the ordered merge of parts (groups capped as the single-process router caps them), and
the Parquet footer.

References: Python's ``csv`` module for RFC 4180 records (quoted newlines), polars for
Parquet row groups, and plain list arithmetic for "the first N distinct groups met".
"""

from __future__ import annotations

import csv
import io
import itertools

import numpy as np
import polars as pl
from hypothesis import given, settings
from hypothesis import strategies as st

from ogive.cluster.parquet import row_groups
from ogive.cluster.parts import WIDE, Part, Tally, cap_groups, merge
from ogive.cluster.ranges import BLOCK, RangeReader
from ogive.sketch import Sketch, SketchSet


def parts_of(data: bytes, cuts: list[int], *, csv_mode: bool) -> list[bytes]:
    """Read ``data`` as the client does: each range from where the one before stopped
    (after the first, a re-read from a known record start) up to its nominal end."""
    out = []
    stop = 0
    bounds = [0, *sorted(c for c in set(cuts) if 0 < c < len(data)), len(data)]
    for start, end in itertools.pairwise(bounds):
        guess = RangeReader(io.BytesIO(data), start, end, exact=False, csv=csv_mode, hold=1 << 30)
        reader = guess
        if guess.first != stop:  # inside a quoted field: read again from the known start
            reader = RangeReader(io.BytesIO(data), stop, end, exact=True, csv=csv_mode, hold=1 << 30)
        chunk = b""
        while piece := reader.read(97):
            chunk += piece
        assert reader.first == stop
        stop = reader.pos
        out.append(chunk)
    return out


lines = st.lists(
    st.tuples(st.text("ab,1 ", min_size=0, max_size=30), st.sampled_from(["\n", "\r\n"])),
    min_size=1,
    max_size=60,
)


@given(lines, st.lists(st.integers(0, 3000), max_size=12), st.booleans())
@settings(max_examples=200, deadline=None)
def test_line_ranges_meet_exactly(body, cuts, final_newline) -> None:  # type: ignore[no-untyped-def]
    data = "".join(a + b for a, b in body).encode()
    if not final_newline:
        data = data.rstrip(b"\r\n")
    got = parts_of(data, cuts, csv_mode=False)
    assert b"".join(got) == data
    filled = [p for p in got if p]
    assert all(p.endswith(b"\n") for p in filled[:-1])  # only the file's last line may lack one


fields = st.text(st.sampled_from('ab,"\n 7'), max_size=12)


@given(
    st.lists(st.lists(fields, min_size=1, max_size=4), min_size=1, max_size=40),
    st.lists(st.integers(0, 2000), max_size=10),
)
@settings(max_examples=200, deadline=None)
def test_csv_ranges_keep_quoted_newlines_whole(rows, cuts) -> None:  # type: ignore[no-untyped-def]
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    data = buf.getvalue().encode()
    got = parts_of(data, cuts, csv_mode=True)
    assert b"".join(got) == data
    # each part is whole records: parsed alone, the parts give the file's records
    records = [r for p in got for r in csv.reader(io.StringIO(p.decode()))]
    assert records == list(csv.reader(io.StringIO(data.decode())))


def test_a_line_longer_than_a_block_ends_where_it_ends() -> None:
    data = b"short\n" + b"x" * (3 * BLOCK) + b"\nlast\n"
    reader = RangeReader(io.BytesIO(data), 0, 10, exact=True, csv=False, hold=0)
    got = b""
    while piece := reader.read(1 << 20):
        got += piece
    assert got == data[: 6 + 3 * BLOCK + 1]


def test_unbalanced_quotes_are_reported_not_followed_to_the_end() -> None:
    data = b'a,"open\n' + b"1,2\n" * 50_000
    reader = RangeReader(io.BytesIO(data), 0, 4, exact=True, csv=True, hold=1000)
    while reader.read(4096):
        pass
    assert reader.unbalanced and reader.pos < 8 + 1000 + BLOCK


def part(groups: list[str], by: str = "host") -> Part:
    """A part holding one value per group in ``groups`` (in that order)."""
    sketches = SketchSet()
    for g in groups:
        s = sketches.sketches.setdefault(f"{by}={g}", Sketch("ms"))
        s.add([float(len(g))])
    order = list(dict.fromkeys(f"{by}={g}" for g in groups))
    return Part(sketches, Tally(groups=order, rows=len(groups)))


@given(
    st.lists(st.lists(st.sampled_from("abcdefghij"), max_size=6), min_size=1, max_size=12),
    st.integers(1, 6),
    st.integers(2, 4),
)
@settings(max_examples=200, deadline=None)
def test_groups_capped_in_any_tree_as_in_one_stream(pieces, cap, every) -> None:  # type: ignore[no-untyped-def]
    """Merging parts in a tree of any shape, then cutting the root to ``cap`` groups,
    gives the first ``cap`` groups met in the whole stream, each with its own rows,
    unless a merge met more than WIDE x ``cap`` groups by itself (then it says so)."""
    stream = [g for p in pieces for g in p]
    level = [part(p) for p in pieces]
    while len(level) > 1:
        level = [merge(level[i : i + every], by="host", max_groups=cap) for i in range(0, len(level), every)]
    top = level[0]
    assert Part.load(top.dump()).tally == top.tally  # the wire form keeps everything
    cap_groups(top, "host", cap)
    counts = {n: s.count for n, s in top.sketches.sketches.items()}
    assert sum(counts.values()) == len(stream)
    if top.tally.crowded:
        assert len(set(stream)) > WIDE * cap
        return
    first = list(dict.fromkeys(stream))[:cap]
    want = {f"host={g}": stream.count(g) for g in first}
    if len(set(stream)) > cap:
        want["host=(other)"] = len(stream) - sum(want.values())
    assert counts == want
    assert sorted(top.tally.overflow) == sorted(set(stream) - set(first))


def test_parquet_row_groups_from_the_footer() -> None:
    rng = np.random.default_rng(0)
    for rows, per in ((100_000, 10_000), (12_345, 5_000), (7, 100)):
        df = pl.DataFrame({"v": rng.random(rows), "s": [f"x{i}" for i in range(rows)]})
        buf = io.BytesIO()
        df.write_parquet(buf, row_group_size=per)
        groups = row_groups(buf, len(buf.getvalue()), "t.parquet")
        assert [g.rows for g in groups] == [min(per, rows - i) for i in range(0, rows, per)]
        assert all(g.nbytes > 0 for g in groups)
