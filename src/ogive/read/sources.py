"""Opening sources and cutting their bytes into whole-line chunks.

Compression is recognised by magic bytes, never by file name (rotated logs are often
renamed, and stdin has no name). A chunk always ends at a newline; the unfinished line
is carried into the next read, and the carry grows when a single line is longer than
the chunk, up to ``max_line_bytes``; beyond that the line is reported as too long and
skipped, so a file without newlines cannot exhaust memory.
"""

from __future__ import annotations

import bz2
import gzip
import lzma
import os
import sys
import zlib
from collections.abc import Iterator
from dataclasses import dataclass
from typing import BinaryIO

from ..errors import OgiveError

MAGIC = {
    b"\x1f\x8b": "gzip",
    b"\x28\xb5\x2f\xfd": "zstd",
    b"BZh": "bz2",
    b"\xfd7zXZ\x00": "xz",
}
PARQUET_MAGIC = b"PAR1"


@dataclass
class Chunk:
    """Whole lines of one source, and where they start."""

    data: bytes
    first_line: int
    """1-based number of the chunk's first line in its source."""
    lines: int
    """Newline-terminated lines in ``data`` (plus one for a final unterminated line)."""
    too_long: list[int]
    """Line numbers dropped (before this chunk) for exceeding ``max_line_bytes``."""


class Opened:
    """A source opened for reading decompressed bytes; ``raw_pos`` tracks the file offset."""

    def __init__(self, name: str) -> None:
        self.name = name
        self.display = "<stdin>" if name == "-" else name
        try:
            self.raw: BinaryIO = sys.stdin.buffer if name == "-" else open(name, "rb")  # noqa: SIM115
        except OSError as exc:
            raise OgiveError(f"cannot open {name}: {exc.strerror or exc}.") from None
        self.size: int | None = None
        if name != "-":
            try:
                st = os.fstat(self.raw.fileno())
                if os.path.isfile(name):
                    self.size = st.st_size
            except OSError:
                pass
        self._head = self._peek()
        self.compression = next((kind for magic, kind in MAGIC.items() if self._head.startswith(magic)), None)
        self.stream = self._wrap()

    def _peek(self) -> bytes:
        peek = getattr(self.raw, "peek", None)
        if peek is not None:
            return bytes(peek(8)[:8])
        return b""

    def _wrap(self) -> BinaryIO:
        if self.compression == "gzip":
            return gzip.GzipFile(fileobj=self.raw, mode="rb")  # type: ignore[return-value]
        if self.compression == "bz2":
            return bz2.BZ2File(self.raw, "rb")  # type: ignore[return-value]
        if self.compression == "xz":
            return lzma.LZMAFile(self.raw, "rb")  # type: ignore[return-value]
        if self.compression == "zstd":
            return _ZstdStream(self.raw)  # type: ignore[return-value]
        return self.raw

    @property
    def is_parquet(self) -> bool:
        return self.compression is None and self._head.startswith(PARQUET_MAGIC)

    @property
    def raw_pos(self) -> int:
        try:
            return self.raw.tell()
        except (OSError, ValueError):
            return 0

    def read(self, n: int) -> bytes:
        try:
            return self.stream.read(n)
        except (OSError, EOFError, zlib.error, lzma.LZMAError) as exc:
            raise self._corrupt(exc) from None
        except Exception as exc:  # zstandard.ZstdError has no common base we can name here
            if type(exc).__name__ == "ZstdError":
                raise self._corrupt(exc) from None
            raise

    def _corrupt(self, exc: BaseException) -> OgiveError:
        kind = self.compression or "plain"
        return OgiveError(
            f"{self.display}: corrupt or truncated {kind} data near compressed byte offset "
            f"{self.raw_pos} ({exc})."
        )

    def close(self) -> None:
        if self.stream is not self.raw:
            self.stream.close()
        if self.name != "-":
            self.raw.close()


class _ZstdStream:
    """Zstandard frames one after another, with truncation detected.

    ``zstandard``'s stream reader ends quietly when the input stops inside a frame;
    a log cut off mid-copy must be reported, so frames are decoded here with a
    decompression object per frame and an unfinished frame at end of input raises.
    """

    def __init__(self, raw: BinaryIO) -> None:
        import zstandard

        self._zstd = zstandard
        self.raw = raw
        self._dobj = zstandard.ZstdDecompressor().decompressobj()
        self._fresh = True  # no input given to the current frame yet
        self._out = bytearray()

    def read(self, n: int) -> bytes:
        while len(self._out) < n:
            data = self.raw.read(1 << 20)
            if not data:
                if not self._fresh and not self._dobj.eof:
                    raise EOFError("compressed input ended inside a zstd frame")
                break
            self._feed(data)
        out = bytes(self._out[:n])
        del self._out[:n]
        return out

    def _feed(self, data: bytes) -> None:
        while data:
            self._fresh = False
            self._out += self._dobj.decompress(data)
            if not self._dobj.eof:
                return
            data = self._dobj.unused_data
            self._dobj = self._zstd.ZstdDecompressor().decompressobj()
            self._fresh = True

    def close(self) -> None:
        pass


def chunks(src: Opened, chunk_bytes: int, max_line_bytes: int) -> Iterator[Chunk]:
    """Whole-line chunks of about ``chunk_bytes`` decompressed bytes."""
    carry = b""
    line = 1
    too_long: list[int] = []
    skipping = False  # inside a too-long line, looking for its end
    while True:
        data = src.read(chunk_bytes)
        if not data:
            break
        if skipping:
            nl = data.find(b"\n")
            if nl < 0:
                continue
            data = data[nl + 1 :]
            skipping = False
            line += 1
        cut = data.rfind(b"\n")
        if cut < 0:
            carry += data
            if len(carry) > max_line_bytes:
                too_long.append(line)
                carry = b""
                skipping = True
            continue
        body = carry + data[: cut + 1] if carry else data[: cut + 1]
        carry = data[cut + 1 :]
        n = body.count(b"\n")
        yield Chunk(body, line, n, too_long)
        too_long = []
        line += n
    if carry and not skipping:
        yield Chunk(carry, line, 1, too_long)
    elif too_long:
        yield Chunk(b"", line, 0, too_long)
