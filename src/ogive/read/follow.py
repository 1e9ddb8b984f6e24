"""Following a growing log: read what is appended, survive rotation, keep the sketch live.

The same feeder, parsing and accounting as :func:`ogive.read.scan` (one
:class:`~ogive.read.scan.Pipeline`), fed from a file that is polled for new bytes
instead of read once. Rotation is noticed
the way log shippers commonly do it (common practice): the path now names another
inode (renamed and recreated: the old file is read to its end first, then the new one
from its start), or the file is shorter than what was read (truncated in place: read
again from the start).

Beside the all-time sketches a follow can keep a :class:`RecentWindow`: the last few
minutes only, as a ring of time slices, so "what is it doing now" is answered without
the hours already seen drowning it out.
"""

from __future__ import annotations

import math
import os
import time
from collections.abc import Callable
from dataclasses import dataclass
from typing import BinaryIO

import numpy as np
from numpy.typing import NDArray

from ..errors import OgiveError
from ..sketch import DEFAULT_COMPRESSION, DEFAULT_TAIL, Sketch
from ..sketch.units import span_seconds
from . import times
from .decode import Batch
from .feed import Piece
from .options import ScanOptions, ScanProgress, ScanResult
from .scan import Job, Pipeline

DEFAULT_SLICES = 12
"""Slices per recent window: the window's edge moves in steps of 1/12 of its width
(25 s for 5m), and a merge of 12 small sketches on each refresh costs a few ms."""
MAX_SLICES = 60
"""The ring never holds more than this many slices, whatever is asked: memory is
bounded by the slice count, never by how long the follow runs."""


class RecentWindow:
    """A sketch of only the last ``span`` of a followed stream, as a ring of time slices.

    The span is cut into ``slices`` slices aligned to the epoch; each slice has its own
    small sketch, slices that fall out of the span are dropped whole, and the live ones
    are merged (t-digest merge, Dunning & Ertl 2019, section 3) when asked. The window
    therefore covers between ``span - span/slices`` and ``span``: its edge moves a slice
    at a time, not a value at a time (the same trade as any sliding-window sketch built
    from sub-window summaries). :meth:`covered` says exactly which span it holds.

    Two clocks, chosen by the caller:

    * arrival (``times_us`` not given to :meth:`add`): a value belongs to the slice of
      the moment it was read, by ``clock()`` (wall-clock seconds, injectable for tests).
      A quiet log's window empties as time passes, which is what "the last 5 minutes"
      means to someone watching it.
    * record time (``times_us`` given: ``--time-field``, or a format that carries its time):
      a value belongs to the slice of its own timestamp, and "now" is the newest timestamp
      seen. That keeps a log read with a delay, or written in another time zone without an
      offset (read as UTC), from looking empty, and it places the backlog already in the
      file by when it happened. Records older than the window when they arrive are counted in
      ``too_old``, not put in it; the window does not move while no records come.
    """

    def __init__(
        self,
        span_us: float,
        *,
        name: str = "recent",
        slices: int = DEFAULT_SLICES,
        unit: str = "",
        compression: float = DEFAULT_COMPRESSION,
        tail_size: int = DEFAULT_TAIL,
        clock: Callable[[], float] = time.time,
    ) -> None:
        if not span_us > 0 or not math.isfinite(span_us):
            raise ValueError(f"the recent span must be a positive number of microseconds, got {span_us!r}.")
        if not 1 <= slices <= MAX_SLICES:
            raise ValueError(f"slices must lie between 1 and {MAX_SLICES}, got {slices!r}.")
        self.name = name
        self.span_us = float(span_us)
        self.slices = int(slices)
        self.width_us = self.span_us / self.slices
        self.unit = unit
        self.compression = compression
        self.tail_size = tail_size
        self.clock = clock
        self._ring: dict[int, Sketch] = {}
        self._newest_k: int | None = None
        self._first_k: int | None = None
        """The first slice that ever got a value: a window younger than its span says so."""
        self.record_time = False
        """True once values came with their own times (then the clock is not used)."""
        self.too_old = 0
        """Values whose record time was already outside the window when they arrived."""
        self.untimed = 0
        """Values without a readable record time (kept all-time, not in the window)."""

    # ------------------------------------------------------------------ building
    def _now_us(self) -> float:
        return self.clock() * 1e6

    def _advance(self, k_now: int) -> None:
        """Move the window's end to slice ``k_now`` and drop the slices that left it."""
        if self._newest_k is not None and k_now <= self._newest_k:
            return
        previous = self._newest_k
        self._newest_k = k_now
        oldest = k_now - self.slices + 1
        for k in [k for k in self._ring if k < oldest]:
            del self._ring[k]
        if previous is not None and previous in self._ring:
            # The slice that stopped being current gets no more values: fold its buffer
            # into centroids so a closed slice holds ~compression centroids + tails.
            self._ring[previous].digest.flush()

    def _slice(self, k: int) -> Sketch:
        s = self._ring.get(k)
        if self._first_k is None or k < self._first_k:
            self._first_k = k
        if s is None:
            s = Sketch(self.unit, compression=self.compression, tail_size=self.tail_size)
            self._ring[k] = s
        return s

    def add(self, values: NDArray[np.float64], times_us: NDArray[np.float64] | None = None) -> None:
        """Put values in their slices: by arrival (now) or, given ``times_us``, by their own time."""
        if values.size == 0:
            return
        if times_us is None:
            k = math.floor(self._now_us() / self.width_us)
            self._advance(k)
            self._slice(k).add(values)
            return
        self.record_time = True
        timed = np.isfinite(times_us)
        self.untimed += int(values.size - np.count_nonzero(timed))
        vals, tus = values[timed], times_us[timed]
        if vals.size == 0:
            return
        ks = np.floor(tus / self.width_us).astype(np.int64)
        self._advance(int(ks.max()))
        assert self._newest_k is not None
        live = ks > self._newest_k - self.slices
        self.too_old += int(vals.size - np.count_nonzero(live))
        vals, ks = vals[live], ks[live]
        for k in np.unique(ks):
            self._slice(int(k)).add(vals[ks == k])

    # ------------------------------------------------------------------ queries
    def expire(self) -> None:
        """Arrival clock: drop what the passing of time pushed out, even with no new values."""
        if not self.record_time:
            self._advance(math.floor(self._now_us() / self.width_us))

    def __len__(self) -> int:
        """Slices held now (never more than ``slices``)."""
        return len(self._ring)

    def covered(self) -> tuple[float, float] | None:
        """(start, end) in epoch microseconds of what the window holds; None before any value.

        Start is the beginning of the oldest slice the window can hold, or of the first
        slice that ever got a value when following began more recently than one span ago;
        end is now on the arrival clock, or the end of the newest slice on record time.
        """
        self.expire()
        if self._newest_k is None or self._first_k is None:
            return None
        start = max(self._newest_k - self.slices + 1, self._first_k) * self.width_us
        end = (self._newest_k + 1) * self.width_us
        if not self.record_time:
            end = min(end, self._now_us())
        return start, end

    def sketch(self, source: str = "", field: str = "") -> Sketch:
        """The live slices merged into one new sketch, with the span it covers as its time range."""
        self.expire()
        out = Sketch(self.unit, compression=self.compression, tail_size=self.tail_size)
        for k in sorted(self._ring):
            out.merge(self._ring[k])
        prov = out.provenance
        prov.sources = [source] if source else []
        prov.field = field
        prov.rows_read = out.count
        span = self.covered()
        if span is not None:
            # Whole seconds outward: the span is a slice edge and "now", not a record's time.
            first, last = math.floor(span[0] / 1e6) * 1e6, math.ceil(span[1] / 1e6) * 1e6
            prov.time_first, prov.time_last = times.iso(first), times.iso(last)
        return out


def recent_name(text: str) -> str:
    """``--recent 5m`` -> ``recent-5m``: the sketch's name says the span it covers."""
    return "recent-" + "".join(text.split())


def recent_window(text: str, options: ScanOptions, *, clock: Callable[[], float] = time.time) -> RecentWindow:
    """The window ``--recent TEXT`` asks for, with the scan's compression and tail size.

    One line for a width that cannot be read (OgiveError), never a traceback.
    """
    seconds = span_seconds(text)
    if seconds is None or seconds <= 0:
        raise OgiveError(f"--recent {text!r} is not a positive number with s, m, h or d, such as 5m.")
    return RecentWindow(
        seconds * 1e6,
        name=recent_name(text),
        compression=options.compression,
        tail_size=options.tail_size,
        clock=clock,
    )


@dataclass(frozen=True)
class FollowProgress(ScanProgress):
    """A follow's snapshot: the scan's figures plus what only a follow has."""

    rotations: int = 0
    caught_up: bool = False
    """True once the text already in the file when following began has been read."""


class _Follower:
    def __init__(self, path: str, options: ScanOptions, recent: RecentWindow | None = None) -> None:
        self.path = path
        self.options = options
        self.run = Pipeline([path], options)
        self.recent = recent
        self.fh: BinaryIO | None = None
        self.inode = -1
        self.rotations = 0
        self.caught_up = False
        """Set when the first read finds nothing new: the backlog is behind us. On the
        arrival clock the backlog stays out of the recent window, since when its lines
        were written is unknown (all of it would otherwise look like this instant)."""

    def open(self) -> bool:
        try:
            self.fh = open(self.path, "rb")  # noqa: SIM115 - kept open across polls
        except FileNotFoundError:
            # Whatever the file holds once it appears was written after following began:
            # there is no backlog to keep out of the recent window.
            self.caught_up = True
            return False
        self.inode = os.fstat(self.fh.fileno()).st_ino
        self.run.start_source(self.path)
        return True

    def close(self) -> None:
        if self.fh is not None:
            self.fh.close()
            self.fh = None

    def read_new(self) -> bool:
        """Read what was appended; True when anything was."""
        assert self.fh is not None
        data = self.fh.read(self.run.feed.chunk_size())
        if not data:
            self.caught_up = True
            return False
        self.run.bytes_seen += len(data)
        # The same cutting as a scan: whole records only (a CSV record may hold quoted
        # newlines, or be half written); the rest waits for the next read.
        piece = self.run.feed.push(data)
        if piece is not None:
            self.take(piece)
        return True

    def take(self, piece: Piece) -> None:
        run = self.run
        batch = run.parse(piece.data, self.path, here=True) if piece.data else None
        run.commit(Job(self.path, piece.too_long, piece.header, done=batch))
        if batch is not None:
            self._to_recent(batch)

    def _to_recent(self, batch: Batch) -> None:
        recent, ok = self.recent, batch.ok
        if recent is None or not ok.any():
            return
        recent.unit = self.run.decoder.unit or ""
        if batch.tus is not None:  # records with their own times: --time-field, or the format's
            recent.add(batch.values[ok], batch.tus[ok])
        elif self.caught_up:
            recent.add(batch.values[ok])

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
            self.run.start_source(self.path)
            self.rotations += 1
            return True
        return False

    def progress(self, now: float, start: float) -> FollowProgress:
        run = self.run
        sset = run.sset()
        if self.recent is not None:
            sset.sketches[self.recent.name] = self.recent.sketch(self.path, run.description)
        return FollowProgress(
            run.bytes_seen,
            None,
            run.rows,
            run.values,
            now - start,
            self.path,
            sset,
            rotations=self.rotations,
            caught_up=self.caught_up,
        )


def follow(
    path: str,
    options: ScanOptions,
    *,
    cancel: Callable[[], bool],
    on_update: Callable[[FollowProgress], None] | None = None,
    poll_s: float = 0.25,
    update_s: float = 2.0,
    recent: RecentWindow | None = None,
) -> tuple[ScanResult, int]:
    """Follow ``path`` until ``cancel()`` is true; returns the result and the rotations seen.

    Waits for the file to appear if it does not exist yet. A last line still being
    written when following stops is read as it stands. With ``recent``, the result and
    every update also hold the recent window's sketch under ``recent.name``. Updates
    come every ``update_s`` while reading a backlog as well as while waiting.
    """
    if path == "-":
        raise ValueError("follow needs a file path; standard input is read to its end by a plain scan.")
    if options.window is not None:
        # One sketch per window would grow without end while following.
        raise OgiveError(
            "--window makes one sketch per window, without end while following; "
            "use --recent DURATION to keep the last minutes instead."
        )
    f = _Follower(path, options, recent)
    start = time.monotonic()
    last_update = start
    try:
        while not cancel():
            if f.fh is None and not f.open():
                time.sleep(poll_s)
                continue
            busy = f.read_new() or f.rotated()
            now = time.monotonic()
            if on_update is not None and now - last_update >= update_s:
                last_update = now
                on_update(f.progress(now, start))
            if not busy:
                time.sleep(poll_s)
        if f.fh is not None:
            while f.read_new():
                pass
            last = f.run.feed.end()  # a last line still being written, read as it stands
            if last is not None:
                f.take(last)
    finally:
        f.close()
    result = f.run.finish(time.monotonic() - start)
    if recent is not None:
        window = recent.sketch(path, f.run.description)
        window.provenance.lines_read = f.run.lines.total
        result.sketches.sketches[recent.name] = window
    return result, f.rotations
