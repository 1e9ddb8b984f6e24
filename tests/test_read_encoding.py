"""Byte hygiene (read/encoding.py): bad UTF-8, NUL bytes, UTF-16, CR-only line ends.

Outside reference: Python's own codecs (``bytes.decode`` with ``errors="replace"``, the
``utf-16`` codec and its byte-order marks) give the expected text; the rule that each bad
sequence becomes one U+FFFD is the codec's, not ours.
"""

from __future__ import annotations

import io

import pytest

from ogive.read import encoding


def test_ascii_is_passed_on_untouched() -> None:
    data = b"a=1\nb=2\n"
    out = encoding.clean(data)
    assert out.data is data and out.bad_utf8 == 0 and out.nul == 0


def test_valid_utf8_is_untouched() -> None:
    data = "dur=800µs café\n".encode()
    assert encoding.clean(data).data == data


def test_bad_utf8_lines_are_counted_and_replaced_as_the_codec_does() -> None:
    data = b"ok\ncaf\xe9 x\nfine \xc3\xa9\nbad\xff\xfe\n\xc3(\n"
    out = encoding.clean(data)
    assert out.data == data.decode("utf-8", errors="replace").encode("utf-8")
    assert out.bad_utf8 == 3 and out.bad_utf8_at == [1, 3, 4]


def test_nul_bytes_are_removed_and_their_lines_counted() -> None:
    out = encoding.clean(b"a\x00b\nplain\n\x00\x00\x00\x00\nc\n")
    assert out.data == b"ab\nplain\n\nc\n"
    assert out.nul == 2 and out.nul_at == [0, 2]


def _read_all(raw: bytes, piece: int = 7) -> tuple[bytes, encoding.Transcoder]:
    r = encoding.Transcoder()
    src = io.BytesIO(raw)
    parts = []
    while chunk := src.read(piece):
        parts.append(r.push(chunk))
    parts.append(r.end())
    return b"".join(parts), r


@pytest.mark.parametrize("codec", ["utf-16", "utf-16-le", "utf-16-be"])
def test_utf16_is_decoded_with_or_without_a_byte_order_mark(codec: str) -> None:
    text = "2026-03-04T10:00:00Z dur=5ms café\n" * 300
    raw = ("\ufeff" + text).encode(codec) if codec != "utf-16" else text.encode(codec)
    out, r = _read_all(raw)
    assert out == text.encode("utf-8")
    assert r.note is not None and "UTF-16" in r.note


def test_cr_only_line_ends_become_newlines() -> None:
    out, r = _read_all(b"a=1\rb=2\rc=3\r")
    assert out == b"a=1\nb=2\nc=3\n" and r.note is not None and "CR" in r.note


@pytest.mark.parametrize("raw", [b"", b"x", b"plain\r\nlines\r\n", b"no newline at all"])
def test_ordinary_text_passes_through(raw: bytes) -> None:
    out, r = _read_all(raw)
    assert out == raw and r.note is None


def test_binary_is_told_from_text() -> None:
    assert encoding.is_binary(bytes(range(256)) * 16)
    assert not encoding.is_binary(b"dur=5ms\n" * 100 + b"\x00" * 3000)  # a crash's NUL run
    assert not encoding.is_binary("dur=5ms\n".encode("utf-16") * 100)
