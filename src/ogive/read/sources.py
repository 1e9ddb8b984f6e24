"""Opening sources and cutting their bytes into whole-line chunks.

A source is a local path, ``-`` (standard input), or a URL that fsspec opens
(:mod:`.urls`). Compression is recognised by magic bytes, never by file name (rotated
logs are often renamed, and stdin has no name). A chunk always ends at a newline; the unfinished line
is carried into the next read, and the carry grows when a single line is longer than
the chunk, up to ``max_line_bytes``; beyond that the line is reported as too long and
skipped, so a file without newlines cannot exhaust memory.
"""

from __future__ import annotations

import bz2
import io
import lzma
import os
import select
import sys
import threading
import zlib
from collections.abc import Callable
from dataclasses import dataclass
from typing import BinaryIO, cast

from ..errors import OgiveError
from .streams import GzipStream, ZstdStream
from .urls import is_url, open_url

MAGIC = {
    b"\x1f\x8b": "gzip",
    b"\x28\xb5\x2f\xfd": "zstd",
    b"BZh": "bz2",
    b"\xfd7zXZ\x00": "xz",
}
PARQUET_MAGIC = b"PAR1"


@dataclass
class Chunk:
    """Whole lines of one source (the last one may lack its newline at end of input)."""

    data: bytes
    too_long: int
    """Lines dropped just before this chunk's first line for exceeding ``max_line_bytes``."""
    quoted: bool = True
    """``data`` may hold a double quote; False when cutting found none (saves a look later)."""


_PIECE = 1 << 20
"""Decompressed bytes per read from a compressed stream (the most a damaged one loses)."""


_LOOK = 1 << 16
"""Bytes looked at before a plain-file read to end it on a newline."""


class Opened:
    """A source opened for reading decompressed bytes; ``raw_pos`` tracks the file offset.

    ``fileobj`` and ``at_start`` serve a part of a bigger scan (``ogive.cluster``): the
    bytes come from ``fileobj`` (a byte range of ``name``), and unless the range begins
    at the source's first byte there is no header to take off and no encoding to decide.
    """

    def __init__(self, name: str, *, fileobj: BinaryIO | None = None, at_start: bool = True) -> None:
        self.name = name
        self.display = "<stdin>" if name == "-" else name
        self.at_start = at_start
        self.cancel: Callable[[], bool] | None = None
        """Asked before every read: once true, reading raises :class:`Cancelled` (Ctrl-C must
        end a scan of ``/dev/zero``, a line with no end in sight, within a second). Not an
        end of input: that would hand the unfinished last line on as a record."""
        self.rows: tuple[int, int] | None = None
        """Parquet: read only these rows (offset, count), a row group of a bigger scan."""
        self.size: int | None = None
        self.truncated = False
        """Set by :meth:`changed`: the file shrank while it was read."""
        self._inode: int | None = None
        self._damage: CorruptSource | None = None
        self._remote = fileobj is None and is_url(name)
        if fileobj is not None:
            self.raw: BinaryIO = fileobj
        elif self._remote:
            self.raw, self.size = open_url(name)
        else:
            try:
                self.raw = sys.stdin.buffer if name == "-" else open(name, "rb")  # noqa: SIM115
            except OSError as exc:
                raise OgiveError(f"cannot open {name}: {exc.strerror or exc}.") from None
        if name != "-" and fileobj is None and self.size is None:
            try:
                st = os.fstat(self.raw.fileno())
                if os.path.isfile(name):
                    self.size = st.st_size
                    self._inode = st.st_ino
            except OSError:
                pass
        self._head = self._peek()
        self.compression = next((kind for magic, kind in MAGIC.items() if self._head.startswith(magic)), None)
        self._counted_raw = _Counted(self.raw)
        self._counted = cast(BinaryIO, self._counted_raw)
        self.stream = self._wrap()

    def _peek(self) -> bytes:
        peek = getattr(self.raw, "peek", None)
        if peek is not None:
            return bytes(peek(8)[:8])
        if self._remote:  # an fsspec file: read the magic, then go back
            if not self.raw.seekable():
                self.raw = io.BufferedReader(self.raw)  # type: ignore[arg-type,type-var]
                return bytes(self.raw.peek(8)[:8])
            head = self.raw.read(8)
            self.raw.seek(0)
            return head
        return b""

    def _wrap(self) -> BinaryIO:
        if self.compression == "gzip":
            return GzipStream(self._counted)  # type: ignore[return-value]
        if self.compression == "bz2":
            return bz2.BZ2File(self._counted, "rb")  # type: ignore[return-value]
        if self.compression == "xz":
            return lzma.LZMAFile(self._counted, "rb")  # type: ignore[return-value]
        if self.compression == "zstd":
            return ZstdStream(self._counted)  # type: ignore[return-value]
        return self.raw

    @property
    def is_parquet(self) -> bool:
        return self.compression is None and self._head.startswith(PARQUET_MAGIC)

    @property
    def raw_pos(self) -> int:
        """Compressed bytes consumed so far (counted: a pipe cannot tell its offset)."""
        if self.compression is None:
            try:
                return self.raw.tell()
            except (OSError, ValueError):
                return 0
        return self._counted_raw.count

    def read(self, n: int) -> bytes:
        """Up to ``n`` decompressed bytes; b"" at the end.

        Compressed data is decompressed in pieces of ``_PIECE`` bytes, so that damage
        part-way costs at most a piece: what came before it is returned first and the
        error is raised by the next call (a scan keeps the good part, marked partial).
        """
        if self._damage is not None:
            raise self._damage
        if self.cancel is not None and self.cancel():
            raise Cancelled(self.display)
        if self.stream is self.raw:
            if self.size is None and not self._remote and hasattr(self.raw, "read1"):
                return self._read_ready(n)
            return self._read_piece(n)
        pieces: list[bytes] = []
        got = 0
        while got < n:
            try:
                piece = self._read_piece(min(_PIECE, n - got))
            except CorruptSource as exc:
                if not pieces:
                    raise
                self._damage = exc
                break
            if not piece:
                break
            pieces.append(piece)
            got += len(piece)
        return pieces[0] if len(pieces) == 1 else b"".join(pieces)

    def read_lines(self, n: int) -> bytes:
        """About ``n`` bytes, ending just after a newline when that is cheap to arrange.

        For a plain file on disk, a look (``pread``, which leaves the offset alone) at
        the last 64 KB before ``n`` finds the last newline there, and exactly that much
        is read: the chunk then needs no cut, and no 8 MB copy of all but its tail
        (measured: 0.25-0.5 CPU-s less per GB, 7-15% faster on 2 cores). Otherwise,
        or with no newline in that window, it is an ordinary ``read``.
        """
        if self.stream is not self.raw or self.size is None or (self.cancel is not None and self.cancel()):
            return self.read(n)
        try:
            pos = self.raw.tell()
            look = min(n, _LOOK)
            window = os.pread(self.raw.fileno(), look, pos + n - look)
        except (OSError, ValueError):
            return self.read(n)
        nl = window.rfind(b"\n")
        if nl < 0 or len(window) < look:
            return self.read(n)  # a long line, or the end of the file: no gain to be had
        return self.read(n - look + nl + 1)

    def _read_ready(self, n: int) -> bytes:
        """Up to ``n`` bytes of a pipe, FIFO or terminal: what is there now, waiting only
        when nothing is. A plain ``read(n)`` waits for all ``n`` bytes, so lines written
        by an idle writer (``tail -f app.log | ogive scan -``) sat unread, and were lost
        to the sketch when Ctrl-C came."""
        parts: list[bytes] = []
        got = 0
        read1 = self.raw.read1  # type: ignore[attr-defined]
        while got < n:
            if got and not _ready(self.raw):
                break
            try:
                piece = read1(n - got)
            except (OSError, ValueError) as exc:
                raise self._corrupt(exc) from None
            if not piece:
                break
            parts.append(piece)
            got += len(piece)
        return parts[0] if len(parts) == 1 else b"".join(parts)

    def _read_piece(self, n: int) -> bytes:
        try:
            return self.stream.read(n)
        except (OSError, EOFError, zlib.error, lzma.LZMAError) as exc:
            raise self._corrupt(exc) from None
        except Exception as exc:  # zstandard.ZstdError has no common base we can name here
            if type(exc).__name__ == "ZstdError":
                raise self._corrupt(exc) from None
            raise

    def changed(self) -> str | None:
        """How the file behind the name changed since it was opened, or None.

        Reading went on through the open handle (POSIX keeps a deleted or replaced
        file's data readable), so the sketch is of the file as it was when opened; a
        truncation cut it short. Either way the user must hear of it.
        """
        if self.name == "-" or self._inode is None:
            return None
        try:
            st = os.stat(self.name)
        except FileNotFoundError:
            return f"{self.display} was deleted during the scan; what the open file still held was read."
        except OSError:
            return None
        if st.st_ino != self._inode:
            return (
                f"{self.display} was replaced during the scan; the sketch is of the file as it was "
                "when the scan opened it."
            )
        if self.size is not None and st.st_size < self.size:
            self.truncated = True
            return (
                f"{self.display} was truncated during the scan ({self.size:,} bytes at the start, "
                f"{st.st_size:,} now); the sketch covers only what was read."
            )
        return None

    def _corrupt(self, exc: BaseException) -> CorruptSource:
        kind = self.compression or "plain"
        return CorruptSource(
            f"{self.display}: corrupt or truncated {kind} data near compressed byte offset "
            f"{self.raw_pos} ({exc})."
        )

    def close(self) -> None:
        """Close the source; after a cancel, in a thread of its own: the reader thread may
        still be blocked in a read (an idle FIFO), and a buffered file's close waits for it."""
        if self.cancel is not None and self.cancel():
            threading.Thread(target=self._close_now, name="ogive-close", daemon=True).start()
        else:
            self._close_now()

    def _close_now(self) -> None:
        if self.stream is not self.raw:
            self.stream.close()
        if self.name != "-":
            self.raw.close()


def _ready(raw: BinaryIO) -> bool:
    """Whether a read of ``raw`` would return at once (bytes or end of input)."""
    try:
        return bool(select.select([raw.fileno()], [], [], 0)[0])
    except (OSError, ValueError):
        return True  # no descriptor to ask: read as a file is read


class Cancelled(Exception):
    """Reading stopped on request; every whole record read before it is good."""


class CorruptSource(OgiveError):
    """Compressed data that stops making sense part-way: what came before it is good."""


class _Counted:
    """A read-only file wrapper that counts the bytes handed out."""

    def __init__(self, raw: BinaryIO) -> None:
        self.raw = raw
        self.count = 0

    def read(self, n: int = -1) -> bytes:
        data = self.raw.read(n)
        self.count += len(data)
        return data

    def readable(self) -> bool:
        return True

    def close(self) -> None:
        pass


LINES, CSV, GUESS = "lines", "csv", "guess"
"""How chunks are cut: at any newline (text, NDJSON); only at a newline that ends a CSV
record (not inside a quoted field); or, format not known yet, preferably so."""


def record_end(data: bytes, open_quote: bool = False) -> int:
    """Index of the last newline in ``data`` that ends a CSV record, or -1.

    RFC 4180 (section 2, rules 5-7): a field in double quotes may hold newlines, and a
    quote inside it is written twice, so a newline lies outside every quoted field
    exactly when an even number of quotes precede it (``open_quote``: an odd number
    came before ``data``). One ``bytes.count`` per step back: linear in the bytes
    searched, and a chunk without quotes costs one scan.
    """
    cut = data.rfind(b"\n")
    if cut < 0:
        return -1
    quotes = data.count(b'"', 0, cut) + open_quote
    while quotes & 1:
        prev = data.rfind(b"\n", 0, cut)
        if prev < 0:
            return -1
        quotes -= data.count(b'"', prev, cut)
        cut = prev
    return cut


def hold_limit(chunk: int, max_line_bytes: int) -> int:
    """Bytes an unfinished quoted CSV record may take before its quotes are taken to be
    unbalanced (a stray ``"``) and the input is cut at a newline anyway."""
    return min(max_line_bytes, max(4 * chunk, 1 << 20))


def last_cut(
    data: bytes, mode: str, *, open_quote: bool = False, may_hold: bool = True, quoted: bool | None = None
) -> int:
    """Where to end a chunk: the index of its last record-ending newline, or -1 to wait
    for more bytes. In CSV mode a chunk whose every newline lies inside a quoted field is
    held (``may_hold``) until the field closes; otherwise it is cut at its last newline
    and the parser reads the quotes as it can. ``quoted``: whether ``data`` holds a
    quote, when the caller already looked (None: look here)."""
    cut = data.rfind(b"\n")
    has_quote = (b'"' in data) if quoted is None else quoted
    if cut >= 0 and mode != LINES and (open_quote or has_quote):
        record = record_end(data, open_quote)
        if record >= 0:
            return record
        if mode == CSV and may_hold:
            return -1
    return cut


class Cutter:
    """Cuts a source's bytes, pushed in as they are read, into whole-record chunks.

    One per source; the same for a file read once and for a growing file polled for
    new bytes. A CSV record whose quoted field spans newlines is held whole, up to
    :func:`hold_limit`; beyond that the quotes are taken to be unbalanced (a stray
    ``"``) and the chunk is cut at its last newline, leaving the parser to read the
    quotes as it can. A line longer than ``max_line_bytes`` is dropped up to its end
    and counted in the next chunk's ``too_long``, so no input can exhaust memory.

    Lines are not counted here: ``bytes.count`` holds the GIL for ~15 ms per 8 MB,
    while the parser's row count (one row per line) comes for free; the caller
    numbers lines from it.
    """

    def __init__(self, max_line_bytes: int) -> None:
        self.max_line_bytes = max_line_bytes
        self._parts: list[bytes] = []  # an unfinished record, possibly over several reads
        self._held = 0
        self._open_quote = False  # an odd number of quotes in ``_parts``
        self._too_long = 0
        self._skipping = False  # inside a too-long line, looking for its end

    def push(self, data: bytes, size: int, mode: str) -> Chunk | None:
        """The whole records ``data`` completes (None: wait for more bytes).

        ``size`` is the read size (it sets how long a quoted record may be held);
        ``mode`` how to cut: ``LINES``, ``CSV`` or ``GUESS``.
        """
        if self._skipping:
            nl = data.find(b"\n")
            if nl < 0:
                return None
            data = data[nl + 1 :]
            self._skipping = False
        may_hold = self._held + len(data) <= hold_limit(size, self.max_line_bytes)
        # One look for quotes serves the cut here and the parser's line count later.
        quoted = mode == LINES or b'"' in data
        cut = last_cut(data, mode, open_quote=self._open_quote, may_hold=may_hold, quoted=quoted)
        if cut < 0:
            self._parts.append(data)
            self._held += len(data)
            if mode != LINES:
                self._open_quote ^= bool(data.count(b'"') & 1)
            if self._held > self.max_line_bytes:
                self._too_long += 1
                self._parts, self._held, self._skipping, self._open_quote = [], 0, True, False
            return None
        parts = self._parts
        view = memoryview(data)
        body = (
            b"".join((*parts, view[: cut + 1]))
            if parts
            else bytes(view[: cut + 1])
            if cut + 1 < len(data)
            else data
        )
        tail = data[cut + 1 :]
        self._parts, self._held = ([tail], len(tail)) if tail else ([], 0)
        self._open_quote = mode != LINES and bool(tail.count(b'"') & 1)
        chunk = Chunk(body, self._too_long, quoted=quoted or bool(parts))
        self._too_long = 0
        return chunk

    def end(self) -> Chunk | None:
        """At the end of the input: the last record, even without its newline, or just the
        count of too-long lines still to report; None when nothing is left."""
        parts, too_long = self._parts, self._too_long
        self._parts, self._held, self._too_long = [], 0, 0
        if parts and not self._skipping:
            return Chunk(b"".join(parts), too_long)
        return Chunk(b"", too_long) if too_long else None
