"""The chunk reader: whole lines, every byte once, whatever the chunk size and line
lengths, plain or compressed (the reference is the file's own bytes)."""

from __future__ import annotations

import gzip
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ogive.read.sources import LINES, Cutter, Opened


def _cut(src: Opened, size: int) -> list[bytes]:
    """Read ``src`` to its end through a Cutter, as the feeder does."""
    cutter, out = Cutter(1 << 20), []
    while data := src.read_lines(size):
        chunk = cutter.push(data, size, LINES)
        if chunk is not None:
            out.append(chunk.data)
    last = cutter.end()
    return out + ([last.data] if last is not None else [])


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.integers(0, 300), min_size=0, max_size=80),
    st.integers(1, 700),
    st.booleans(),
    st.booleans(),
)
def test_chunks_are_whole_lines_and_every_byte_once(
    tmp_path_factory: pytest.TempPathFactory, lengths: list[int], size: int, final_newline: bool, gz: bool
) -> None:
    text = b"\n".join(bytes([97 + i % 26]) * n for i, n in enumerate(lengths))
    if final_newline and text:
        text += b"\n"
    path = Path(tmp_path_factory.mktemp("c")) / "f.bin"
    path.write_bytes(gzip.compress(text) if gz else text)
    src = Opened(str(path))
    try:
        got = _cut(src, size)
    finally:
        src.close()
    assert b"".join(got) == text
    assert all(c.endswith(b"\n") for c in got[:-1])
    assert all(c for c in got)  # no empty chunks
