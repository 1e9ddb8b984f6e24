"""A byte range of a plain file, widened to whole records: what one map task reads.

A file split at fixed offsets ``s_0 = 0 < s_1 < ... < s_K = size`` gives part ``k`` the
records that *begin* in ``[s_k, s_k+1)``: it starts at the first line start at or after
``s_k`` (just after the first newline at or after ``s_k - 1``) and reads on past
``s_k+1`` to the end of the record in hand. Parts then meet exactly, and no record is
read twice or lost, provided every line start is a record start.

That holds for line formats. A CSV field in double quotes may hold newlines (RFC 4180,
section 2, rules 6-7), and a line start inside such a field is no record start. The
reader counts the quotes it hands out (a newline ends a record when an even number of
quotes came before it since a known record start), so a part that began at a record
start ends at one: it reports where it began (``first``) and where it stopped
(``stop``), and the client checks that each part began where the one before it
stopped. A part that did not is read again from that point (``exact``). A quote that
never closes (more than ``hold`` bytes past the range's end without a record end) is
reported as ``unbalanced``: that file is then read whole, by one task, exactly as a
single-process scan reads it.
"""

from __future__ import annotations

from typing import BinaryIO

BLOCK = 1 << 16
"""Bytes read at a time past the range's end, looking for the end of the record in hand."""


def first_end(data: bytes, open_quote: bool, csv: bool) -> tuple[int, bool]:
    """The index of the first newline in ``data`` that ends a record (-1: none), and
    whether a quoted field is open after ``data`` (meaningful when none was found).

    ``open_quote``: an odd number of quotes came before ``data``. Outside CSV every
    newline ends a record.
    """
    pos = 0
    while True:
        nl = data.find(b"\n", pos)
        if nl < 0:
            if csv:
                open_quote ^= bool(data.count(b'"', pos) & 1)
            return -1, open_quote
        if csv:
            open_quote ^= bool(data.count(b'"', pos, nl) & 1)
        if not open_quote:
            return nl, False
        pos = nl + 1


class RangeReader:
    """A read-only file over ``[start, end)`` of ``raw``, widened to whole records.

    ``exact``: ``start`` is known to be a record start (a re-read from where the part
    before stopped); otherwise reading begins at the first line start at or after it.
    ``csv``: newlines inside quoted fields do not end records. ``hold``: bytes past
    ``end`` an unfinished quoted record may take before the quotes are taken to be
    unbalanced.
    """

    def __init__(self, raw: BinaryIO, start: int, end: int, *, exact: bool, csv: bool, hold: int) -> None:
        self.raw = raw
        self.end = end
        self.csv = csv
        self.hold = hold
        self.unbalanced = False
        """A quoted field did not close within ``hold`` bytes past the end: see the module notes."""
        self._open = False
        self._pending = b""
        raw.seek(start if exact or start == 0 else start - 1)
        self.first = start if exact or start == 0 else self._line_start(start - 1)
        """Where the part's first record begins."""
        self.pos = self.first
        """Where the bytes handed out so far end: after the last read, where the part stopped."""
        self._done = self.first >= end

    def _line_start(self, at: int) -> int:
        """Just after the first newline at or after ``at`` (the raw file is at ``at``)."""
        while True:
            block = self.raw.read(BLOCK)
            if not block:
                return at
            nl = block.find(b"\n")
            if nl >= 0:
                self._pending = block[nl + 1 :]
                return at + nl + 1
            at += len(block)

    def _take(self, n: int) -> bytes:
        if self._pending:
            data, self._pending = self._pending[:n], self._pending[n:]
            return data
        return self.raw.read(n)

    def read(self, n: int = -1) -> bytes:
        if self._done:
            return b""
        if n is None or n < 0:
            n = 1 << 20
        if self.pos < self.end:
            data = self._take(min(n, self.end - self.pos))
            if not data:
                self._done = True
                return b""
            self.pos += len(data)
            if self.csv:
                self._open ^= bool(data.count(b'"') & 1)
            if self.pos >= self.end and data.endswith(b"\n") and not self._open:
                self._done = True  # the range ends exactly at a record end
            return data
        data = self._take(min(n, BLOCK))
        if not data:
            self._done = True
            return b""
        cut, self._open = first_end(data, self._open, self.csv)
        if cut >= 0:
            data = data[: cut + 1]
            self._done = True
        self.pos += len(data)
        if not self._done and self.csv and self.pos - self.end > self.hold:
            self.unbalanced = self._done = True
        return data

    def readable(self) -> bool:
        return True

    def seekable(self) -> bool:
        return False

    def tell(self) -> int:
        return self.pos

    def close(self) -> None:
        self.raw.close()
