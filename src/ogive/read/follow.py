"""Following a growing log: read what is appended, survive rotation, keep the sketch live.

The same parsing and accounting as :func:`ogive.read.scan` (one ``_State``), fed from a
file that is polled for new complete lines instead of read once. Rotation is noticed
the way log shippers commonly do it (common practice): the path now names another
inode (renamed and recreated: the old file is read to its end first, then the new one
from its start), or the file is shorter than what was read (truncated in place: read
again from the start).
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable
from typing import BinaryIO

from . import records
from .options import ScanOptions, ScanProgress, ScanResult
from .scan import TOO_LONG, _State


class _Follower:
    def __init__(self, path: str, options: ScanOptions) -> None:
        self.path = path
        self.options = options
        self.state = _State([path], options)
        self.fh: BinaryIO | None = None
        self.inode = -1
        self.carry = b""
        self.next_line = 1
        self.header_pending = True
        self.rotations = 0

    def open(self) -> bool:
        try:
            self.fh = open(self.path, "rb")  # noqa: SIM115 - kept open across polls
        except FileNotFoundError:
            return False
        self.inode = os.fstat(self.fh.fileno()).st_ino
        self.carry, self.next_line, self.header_pending = b"", 1, True
        return True

    def close(self) -> None:
        if self.fh is not None:
            self.fh.close()
            self.fh = None

    def read_new(self) -> bool:
        """Read what was appended; True when anything was."""
        assert self.fh is not None
        data = self.fh.read(self.state.chunk_size())
        if not data:
            return False
        self.state.bytes_seen += len(data)
        buf = self.carry + data
        cut = buf.rfind(b"\n")
        if cut < 0:
            self.carry = buf
            if len(buf) > self.options.max_line_bytes:
                self.state.unassigned(TOO_LONG, self.path, [self.next_line])
                self.state.lines += 1
                self.next_line += 1
                self.carry = b""
            return True
        self.carry = buf[cut + 1 :]
        self.feed(buf[: cut + 1])
        return True

    def feed(self, chunk: bytes) -> None:
        state = self.state
        if state.layout is None:
            state.start(records.plan(chunk, self.options))
        layout = state.layout
        assert layout is not None
        if self.header_pending and layout.header:
            head, _, rest = chunk.partition(b"\n")
            if head.rstrip(b"\r") == layout.header_line.rstrip(b"\r"):
                chunk = rest
                state.lines += 1
                self.next_line += 1
        self.header_pending = False
        if not chunk:
            return
        df, held = layout.parse(chunk, numeric=state.numeric)
        state.numeric = state.numeric and held
        state.feed(df, self.path, self.next_line)
        self.next_line += df.height

    def rotated(self) -> bool:
        """Reopen after a rename/recreate or a truncation; True when that happened."""
        assert self.fh is not None
        try:
            st = os.stat(self.path)
        except FileNotFoundError:
            return False  # between the rename and the new file: keep the old one for now
        if st.st_ino != self.inode:
            self.close()
            self.rotations += 1
            return self.open()
        if st.st_size < self.fh.tell():
            self.fh.seek(0)
            self.carry, self.next_line, self.header_pending = b"", 1, True
            self.rotations += 1
            return True
        return False


def follow(
    path: str,
    options: ScanOptions,
    *,
    cancel: Callable[[], bool],
    on_update: Callable[[ScanProgress], None] | None = None,
    poll_s: float = 0.25,
    update_s: float = 2.0,
) -> tuple[ScanResult, int]:
    """Follow ``path`` until ``cancel()`` is true; returns the result and the rotations seen.

    Waits for the file to appear if it does not exist yet. A last line still being
    written when following stops is read as it stands.
    """
    if path == "-":
        raise ValueError("follow needs a file path; standard input is read to its end by a plain scan.")
    f = _Follower(path, options)
    start = time.monotonic()
    last_update = start
    try:
        while not cancel():
            if f.fh is None and not f.open():
                time.sleep(poll_s)
                continue
            if f.read_new():
                continue
            if f.rotated():
                continue
            now = time.monotonic()
            if on_update is not None and now - last_update >= update_s:
                last_update = now
                f.state.flush()
                on_update(
                    ScanProgress(
                        f.state.bytes_seen,
                        None,
                        f.state.rows,
                        f.state.values,
                        now - start,
                        path,
                        f.state.sset(),
                    )
                )
            time.sleep(poll_s)
        if f.fh is not None:
            while f.read_new():
                pass
            if f.carry:
                f.feed(f.carry + b"\n")
    finally:
        f.close()
    return f.state.finish(time.monotonic() - start), f.rotations
