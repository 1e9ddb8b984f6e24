"""The chunk feeder: whole-record pieces of a stream of sources, parsed into frames.

One feeder serves a scan (sources read once, one after another) and a follow (one
growing file polled for new bytes): both push the bytes they read into
:meth:`Feed.push` and get the same pieces back. The record layout is decided once,
from the first piece of the first source with any bytes (the sniffed head), and with
it the chunk size and the cutting rule that every later read uses. A header line is
taken off each source's first piece here; lines are numbered by the caller, in
commit order, from the counts a piece and its frame carry.
"""

from __future__ import annotations

import codecs
import contextlib
import queue
import threading
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import TypeVar

import numpy as np
import polars as pl
from numpy.typing import NDArray

from . import encoding, records, sources
from .options import ScanOptions

_T = TypeVar("_T")


@dataclass
class Piece:
    """Whole records of one source, ready to parse (``data`` may be empty)."""

    data: bytes
    nbytes: int
    """Bytes of the source this piece covers, header line included."""
    too_long: int = 0
    """Lines skipped just before this piece for being too long."""
    header: int = 0
    """Lines that came off the front of ``data``: the source's header line, and a
    spreadsheet's ``sep=;`` line before it (0: none)."""
    quoted: bool = True
    """``data`` may hold a double quote (False: known not to)."""


@dataclass
class Frame:
    """A parsed piece: columns ``v`` (and ``g``, ``t``, ``r``), and the lines its rows span."""

    df: pl.DataFrame
    lines: int
    """Lines the piece spans: its rows, plus newlines inside quoted CSV fields."""
    line_of: NDArray[np.int64] | None = None
    """Each row's first line (0-based within the piece) when records span several lines
    (quoted CSV newlines) or a line holds several records (OTLP spans)."""
    fixed: tuple[tuple[str, int, list[int]], ...] = ()
    """Bytes made readable before parsing: (what, lines, first 0-based lines)."""


BAD_UTF8 = "bad_utf8"
NUL_BYTES = "nul_bytes"
FIXED_TEXT = {
    BAD_UTF8: (
        "held bytes that are not UTF-8; each bad sequence was read as U+FFFD (a file in "
        "another encoding is read right with --encoding, cp1252 for most Windows exports)"
    ),
    NUL_BYTES: "held NUL bytes, which were removed before reading",
}


class Feed:
    """Pieces and frames of one stream of sources, with the layout decided once.

    Thread use: :meth:`push`/:meth:`pieces` run in one reader thread at a time;
    :meth:`parse` may run in several parser threads at once (it only reads the
    layout, and its two flags tolerate racing updates: each only ever goes one way).
    """

    def __init__(self, options: ScanOptions) -> None:
        self.options = options
        self.layout: records.Layout | None = None
        self.numeric = True
        """Try reading a CSV value column as Float64 until a chunk shows it is not plain numbers."""
        self.quote_chunks = 0
        """Chunks whose quotes did not balance, read with quotes as plain characters."""
        self._quote_lock = threading.Lock()
        self._cutter = sources.Cutter(options.max_line_bytes)
        self._header_pending = True
        self._recode = encoding.Transcoder(self.options.encoding)
        self._source = ""
        self.notes: list[str] = []
        """What was done to whole sources (UTF-16 decoded, CR line ends), once each."""

    # ----------------------------------------------------------------- layout
    def plan(self, head: bytes) -> records.Layout:
        """The layout, decided from ``head`` (whole records) the first time only."""
        if self.layout is None:
            self.layout = records.plan(head, self.options)
        return self.layout

    def chunk_size(self) -> int:
        """Bytes per read: by format once the layout is known."""
        fmt, columns = self._kind()
        return self.options.chunk_size(fmt, columns=columns)

    def parse_ahead(self) -> int:
        """Chunks to parse at once, by format once the layout is known."""
        fmt, columns = self._kind()
        return self.options.parse_ahead(fmt, columns=columns)

    def _kind(self) -> tuple[str | None, int]:
        """(format, columns read) of the layout; (None, 0) before it is known."""
        layout = self.layout
        return (None, 0) if layout is None else (layout.format, len(layout.names))

    def cutting(self) -> str:
        """How to cut: CSV records may hold quoted newlines; before the layout, guess."""
        layout = self.layout
        if layout is None:
            return sources.GUESS if self.options.format in (None, "csv", "tsv") else sources.LINES
        return sources.CSV if layout.format in ("csv", "tsv") else sources.LINES

    def starts_with_header(self, data: bytes) -> int:
        """The number of header lines (the layout's ``header_line``, one line or a
        ``sep=`` line and one) that begin ``data``; 0 when it does not begin with them."""
        return self._header(data)[0]

    def _header(self, data: bytes) -> tuple[int, int]:
        """(header lines that begin ``data``, the offset where the records after them
        start); (0, 0) when ``data`` does not begin with the layout's header lines."""
        layout = self.layout
        if layout is None or not layout.header:
            return 0, 0
        want = layout.header_line.split(b"\n")
        end = -1
        for _ in want:  # not data.split(): that would copy the whole chunk
            nl = data.find(b"\n", end + 1)
            end = len(data) if nl < 0 else nl
        got = data[:end].split(b"\n")
        same = [g.rstrip(b"\r") for g in got] == [w.rstrip(b"\r") for w in want]
        return (len(want), end + 1) if same else (0, 0)

    # ----------------------------------------------------------------- pieces
    def start_source(self, name: str = "", *, at_start: bool = True) -> None:
        """A new source (or a followed file reopened): fresh cutting, header expected,
        its text encoding decided afresh from its first bytes. Not ``at_start`` (a byte
        range of a source, in a scan split into parts): no header, and UTF-8 as it is
        (a source in another encoding is never split)."""
        self._cutter = sources.Cutter(self.options.max_line_bytes)
        self._header_pending = at_start
        self._recode = encoding.Transcoder(self.options.encoding)
        if not at_start:
            self._recode.encoding = encoding.UTF8
        self._source = name

    def push(self, data: bytes) -> Piece | None:
        """The whole records that ``data`` (the next bytes read) completes, if any."""
        data = self._recoded(data, self._recode.push(data))
        chunk = self._cutter.push(data, self.chunk_size(), self.cutting()) if data else None
        return None if chunk is None else self._take(chunk)

    def end(self) -> Piece | None:
        """What is left at the end of the source: a last line without its newline."""
        tail = self._recoded(b"", self._recode.end())
        first = self._cutter.push(tail, self.chunk_size(), self.cutting()) if tail else None
        last = self._cutter.end()
        if first is not None and last is not None:  # both whole records: one piece
            both = first.quoted or last.quoted
            first = sources.Chunk(first.data + last.data, first.too_long + last.too_long, both)
        chunk = first or last
        return None if chunk is None else self._take(chunk)

    def _recoded(self, raw: bytes, out: bytes) -> bytes:
        """``out`` (the transcoder's answer to ``raw``), noting once what was done."""
        note = self._recode.note
        if note is not None and self._recode.encoding is not None:
            where = f"{self._source}: " if self._source else ""
            if f"{where}{note}" not in self.notes:
                self.notes.append(f"{where}{note}")
        return out

    def pieces(self, src: sources.Opened) -> Iterator[Piece]:
        """Every piece of ``src``, read to its end (call :meth:`start_source` first)."""
        while data := src.read_lines(self.chunk_size()):
            piece = self.push(data)
            if piece is not None:
                yield piece
        last = self.end()
        if last is not None:
            yield last

    def _take(self, chunk: sources.Chunk) -> Piece:
        data = chunk.data
        # Transcoded text (UTF-16) is not as long as the source: count the source's bytes.
        piece = Piece(data, round(len(data) * self._recode.ratio), chunk.too_long, quoted=chunk.quoted)
        if self._header_pending and data.startswith(codecs.BOM_UTF8):
            # A UTF-8 byte-order mark (Windows programs write one) is no text of the first
            # line: left there, it hid a first line's "#Fields:" or time stamp from the sniffer.
            data = piece.data = data[len(codecs.BOM_UTF8) :]
        if data:
            self.plan(data)
            if self._header_pending:
                self._header_pending = False
                lines, start = self._header(data)
                if lines:
                    piece.data, piece.header = data[start:], lines
        return piece

    # ----------------------------------------------------------------- frames
    def parse(self, data: bytes, *, quoted: bool = True) -> Frame:
        """One piece's records as a frame (thread-safe; see the class docstring).

        ``quoted=False`` says the piece is known to hold no double quote (its cutting
        looked), which spares a scan of its bytes. A layout that checks UTF-8 itself
        (CSV) gets the bytes as they are, unless they hold NUL bytes, and they are
        cleaned only when it finds bytes that are not UTF-8 (1 of 3 byte scans saved).
        """
        layout = self.layout
        assert layout is not None, "parse() before any piece decided the layout"
        parsed: tuple[pl.DataFrame, bool] | None = None
        if layout.validates_utf8 and b"\0" not in data:
            with contextlib.suppress(encoding.NotUtf8):
                parsed = layout.parse(
                    data, numeric=self.numeric, literal_quotes=self._literal_quotes, strict_utf8=True
                )
        clean = encoding.Cleaned(data)  # as it came, when the parser took it
        if parsed is None:
            clean = encoding.clean(data)
            data = clean.data
            parsed = layout.parse(data, numeric=self.numeric, literal_quotes=self._literal_quotes)
        df, held = parsed
        self.numeric = self.numeric and held
        line_of: NDArray[np.int64] | None
        if "line" in df.columns:  # several records on a line (OTLP spans), or lines without one
            line_of = df.get_column("line").to_numpy().astype(np.int64, copy=False)
            df = df.drop("line")
            lines = data.count(b"\n") + (0 if not data or data.endswith(b"\n") else 1)
        else:
            lines, line_of = lines_in(data, df.height, layout.format, quoted=quoted)
            if line_of is None:
                df = layout.with_blank_lines(df, data)
        fixed = tuple(
            (what, count, at)
            for what, count, at in (
                (BAD_UTF8, clean.bad_utf8, clean.bad_utf8_at),
                (NUL_BYTES, clean.nul, clean.nul_at),
            )
            if count
        )
        return Frame(df, lines, line_of, fixed)

    def _literal_quotes(self) -> None:
        with self._quote_lock:
            self.quote_chunks += 1

    def quote_warning(self) -> str | None:
        if not self.quote_chunks:
            return None
        return (
            f"{self.quote_chunks} chunk(s) had a double quote that opens a field and never closes "
            "(or one inside an unquoted field); there quotes were read as plain characters."
        )


def lines_in(
    data: bytes, rows: int, fmt: str, *, quoted: bool = True
) -> tuple[int, NDArray[np.int64] | None]:
    """The lines a chunk of ``rows`` records spans, and each record's first line when
    that differs from its row (quoted CSV fields holding newlines), so bad rows are
    reported where an editor shows them. Looked at only when the chunk has a quote
    (``quoted=False``: known to have none)."""
    if fmt not in ("csv", "tsv") or not quoted or b'"' not in data:  # else one record per line
        return rows, None
    lines = data.count(b"\n") + (0 if data.endswith(b"\n") else 1)
    if lines <= rows:
        return rows, None
    a = np.frombuffer(data, dtype=np.uint8)
    newlines = np.flatnonzero(a == 0x0A)
    quotes_before = np.searchsorted(np.flatnonzero(a == 0x22), newlines)  # no 8x cumsum buffer
    ends = np.flatnonzero((quotes_before & 1) == 0)  # line numbers (0-based) ending a record
    starts = np.concatenate(([0], ends + 1))[:rows]
    if starts.size == rows:
        return lines, starts.astype(np.int64)
    return rows, None


_POLL_S = 0.1
"""How often a cancellable wait for the reader looks at its cancel flag."""


def prefetch(it: Iterator[_T], depth: int = 1, cancel: Callable[[], bool] | None = None) -> Iterator[_T]:
    """Run ``it`` in a thread, ``depth`` items ahead, re-raising its errors here.

    The reader thread reads and decompresses the next chunk (zlib, zstd and polars
    release the GIL) while the caller works on this one. With ``cancel``, the wait for
    the next item ends within ``_POLL_S`` of it turning true, even while the reader is
    stuck in a read (an idle FIFO writer, a terminal): the reader is then left behind
    (a daemon thread), never waited for.
    """
    q: queue.Queue[tuple[str, object]] = queue.Queue(maxsize=depth)
    stop = threading.Event()

    def work() -> None:
        try:
            for item in it:
                while not stop.is_set():
                    try:
                        q.put(("item", item), timeout=0.1)
                        break
                    except queue.Full:
                        continue
                if stop.is_set():
                    return
            q.put(("end", None))
        except BaseException as exc:  # handed to the consumer, raised there
            q.put(("error", exc))

    thread = threading.Thread(target=work, name="ogive-reader", daemon=True)
    thread.start()
    try:
        while True:
            try:
                kind, payload = q.get(timeout=_POLL_S if cancel is not None else None)
            except queue.Empty:
                if cancel is not None and cancel():
                    return
                continue
            if kind == "item":
                yield payload  # type: ignore[misc]
            elif kind == "error":
                raise payload  # type: ignore[misc]
            else:
                return
    finally:
        stop.set()
        while thread.is_alive() and not (cancel is not None and cancel()):
            try:
                q.get_nowait()
            except queue.Empty:
                thread.join(0.05)
