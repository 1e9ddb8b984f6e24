"""GzipStream against the standard library's gzip module (the reference decoder here):
the same bytes for whole files, concatenated members and zero padding (RFC 1952, 2.2:
a gzip file is a series of members; padding as Python's gzip module accepts it), and
an error wherever gzip.decompress raises one."""

from __future__ import annotations

import gzip
import io
import random
import zlib

import pytest

from ogive.read.streams import GzipStream


def _read_all(data: bytes, n: int) -> bytes:
    stream = GzipStream(io.BytesIO(data))
    out = []
    while piece := stream.read(n):
        assert len(piece) <= n
        out.append(piece)
    return b"".join(out)


# 200 KB of text (115 KB compressed): many deflate blocks and far beyond zlib's 32 KB window,
# yet small enough for the one-byte reads, each of which hands zlib the unread input again.
_PAYLOAD = random.Random(7).randbytes(100_000).hex().encode()
_ONE = gzip.compress(_PAYLOAD)
_TWO = gzip.compress(b"second line\n")


@pytest.mark.parametrize("n", [1, 7, 4096, 1 << 20, 10 << 20])
@pytest.mark.parametrize(
    "data",
    [_ONE, _ONE + _TWO, _ONE + b"\0" * 100 + _TWO + b"\0" * 5, gzip.compress(b"")],
    ids=["one member", "two members", "zero padding", "empty member"],
)
def test_same_bytes_as_gzip_module(data: bytes, n: int) -> None:
    assert _read_all(data, n) == gzip.decompress(data)


@pytest.mark.parametrize(
    "bad",
    [_ONE[:-3], _ONE[: len(_ONE) // 2], _ONE[:-8] + b"\0\0\0\0" + _ONE[-4:], _ONE + b"garbage"],
    ids=["cut in trailer", "cut in the middle", "wrong CRC-32", "not gzip after a member"],
)
def test_errors_where_gzip_module_errors(bad: bytes) -> None:
    with pytest.raises((OSError, EOFError)):
        gzip.decompress(bad)
    with pytest.raises((EOFError, zlib.error)):
        _read_all(bad, 1 << 20)
