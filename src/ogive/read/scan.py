"""``scan``: sources in, named sketches out, one pass, bounded memory.

The loop: the feeder (:mod:`.feed`) cuts each source into whole-record pieces in a
reader thread (which reads and decompresses the next piece meanwhile; zlib, zstd and
polars release the GIL); parser threads turn pieces into batches of float64 values in
the sketch unit (:mod:`.decode`); this thread commits the batches strictly in source
order (:class:`Pipeline`): numbers their lines, routes rows to their sketch (``all``,
``FIELD=VALUE``, ``before``/``after``, windows; :mod:`.route`), adds them as one numpy
batch per sketch (:mod:`.build`) and counts bad rows by reason (:mod:`.skips`).
Nothing per row runs in Python except for bad-row examples.
"""

from __future__ import annotations

import os
import time
from collections import deque
from collections.abc import Callable, Generator, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np
import polars as pl

from ..errors import OgiveError
from ..outputs import repeated
from ..sketch import SketchSet, SkipTally
from . import direct, encoding, heap, metrics, sources, urls
from .build import Builder, TimeOrder
from .decode import Batch, Decoder
from .feed import FIXED_TEXT, Feed, prefetch
from .options import ScanOptions, ScanProgress, ScanResult
from .route import Router
from .skips import TOO_LONG, Skips, places

PROGRESS_INTERVAL_S = 0.2
PARSE_WORKERS = 4
"""Parser threads: the most chunks parsed at once (the format's ``parse_ahead`` decides
how many are; memory in flight is about that + 3 chunks)."""


def scan(
    sources_: Sequence[str],
    options: ScanOptions,
    *,
    progress: Callable[[ScanProgress], None] | None = None,
    cancel: Callable[[], bool] | None = None,
    run: Pipeline | None = None,
    open_source: Callable[[str], sources.Opened] | None = None,
) -> ScanResult:
    """Read every source once, as one stream, into the sketches the options ask for.

    Raises OgiveError for unusable input (unreadable file, corrupt compression, a
    ``strict`` scan meeting a bad row); everything else that is wrong with single rows
    is counted by reason in the sketches' provenance and in the result. The options
    were checked when they were built (:class:`ScanOptions`). Globs are expanded
    (:func:`urls.expand`).

    ``run`` and ``open_source`` let ``ogive.cluster`` scan one part of a bigger scan: a
    pipeline holding the decisions made from the whole scan's head, and the part's
    bytes opened as a source.
    """
    if not sources_:
        raise OgiveError("no source given; name a file, or '-' for standard input.")
    if open_source is None:  # a part of a cluster scan comes with its own opener and decisions
        sources_ = urls.expand(list(sources_))
        twice = repeated(list(sources_))
        if twice is not None:
            same = "is listed twice" if twice[0] == twice[1] else f"is the same file as {twice[0]}"
            shown = "standard input ('-')" if twice[1] == "-" else twice[1]
            raise OgiveError(f"{shown} {same}; its values would be counted twice. Name each source once.")
        fmt = metrics.detect(sources_, options)
        if fmt is not None:  # histograms already aggregated: read into binned distributions
            return metrics.scan_metrics(sources_, options, fmt, progress=progress, cancel=cancel)
    run = run if run is not None else Pipeline(list(sources_), options)
    opener = open_source or sources.Opened
    start = time.monotonic()
    sizes = [_file_size(name) for name in sources_]
    total = sum(s for s in sizes if s is not None) if all(s is not None for s in sizes) else None
    done_bytes = 0
    last_report = 0.0
    partial: str | None = None
    cut: str | None = None
    error: str | None = None
    # Workers parse the next chunks (polars and numpy release the GIL; an eager
    # str.extract is single-threaded, so two chunks at once use both cores) while this
    # thread adds the oldest parsed chunk to the sketches; commits stay strictly in order.
    pool = ThreadPoolExecutor(max_workers=PARSE_WORKERS, thread_name_prefix="ogive-parse")
    pending: deque[Job] = deque()

    def drain(keep: int) -> None:
        while len(pending) > keep:
            run.commit(pending.popleft())

    try:
        for name in sources_:
            src = opener(name)
            src.cancel = cancel
            run.start_source(src.display, at_start=src.at_start)
            jobs = run.jobs(src, pool)
            try:
                try:
                    for job in jobs:
                        pending.append(job)
                        ahead = min(PARSE_WORKERS, run.feed.parse_ahead()) if job.future is not None else 0
                        drain(ahead)  # a job done here (no future) is committed now
                        now = time.monotonic()
                        if (
                            progress is not None
                            and job.pos is not None
                            and (cancel is not None or now - last_report >= PROGRESS_INTERVAL_S)
                        ):
                            last_report = now
                            progress(run.progress(done_bytes + job.pos, total, now - start, src.display))
                        if cancel is not None and cancel():
                            break
                except sources.Cancelled:
                    pass  # the records read before the request are whole: kept below
                except sources.CorruptSource as exc:
                    if not options.keep_partial:
                        raise
                    drain(0)  # the chunks before the damage are good: keep them
                    error, partial = str(exc), f"the input is damaged: {exc}"
                drain(0)
                if cancel is not None and cancel() and not partial:
                    partial = f"stopped on request in {src.display} after line {run.lines.next - 1}"
            finally:
                jobs.close()
                change = src.changed()
                if change is not None:
                    run.warnings.append(change)
                    if src.truncated and not partial:
                        cut = change  # the sketch covers less than the file held: partial
                src.close()
            done_bytes += src.size or 0
            if partial:
                break
    finally:
        for job in pending:
            if job.future is not None:
                job.future.cancel()
        pool.shutdown(wait=True)
    return run.finish(time.monotonic() - start, partial=partial or cut, error=error)


def _file_size(name: str) -> int | None:
    if name == "-":
        return None
    try:
        return os.path.getsize(name) if os.path.isfile(name) else None
    except OSError:
        return None


@dataclass
class Job:
    """One piece of a source on its way to the sketches, committed in source order."""

    display: str
    too_long: int = 0
    """Lines skipped just before this piece for being too long."""
    header: int = 0
    """Header lines taken off the front of the piece (a ``sep=`` line and the header)."""
    pos: int | None = None
    """How far into the source (bytes) this piece reaches, for progress; None: unknown."""
    future: Future[Batch] | None = None
    done: Batch | None = None

    def result(self) -> Batch | None:
        return self.future.result() if self.future is not None else self.done


class Lines:
    """Line numbers, advanced in commit order: the one place lines are counted."""

    def __init__(self) -> None:
        self.total = 0
        self.next = 1
        """Number of the next line of the current source."""

    def start_source(self) -> None:
        self.next = 1

    def take(self, n: int) -> int:
        """Count ``n`` lines; returns the number of the first."""
        first = self.next
        self.next += n
        self.total += n
        return first


class Pipeline:
    """The feeder tied to the builders: one stream of sources, piece by piece, into sketches.

    :func:`scan` drives it over whole sources; :func:`ogive.read.follow.follow` over a
    growing file. Both commit :class:`Job`s in source order through :meth:`commit`.
    """

    def __init__(self, names: list[str], options: ScanOptions) -> None:
        heap.keep_chunks()  # chunk buffers reused, not page-faulted in afresh (see .heap)
        self.options = options
        self.router = Router(options)
        self.feed = Feed(options)
        self.decoder = Decoder(options, by_time=self.router.by_time)
        self.skips = Skips(strict=options.strict)
        self.builder = Builder(options, ["<stdin>" if n == "-" else n for n in names], self.skips)
        self.order = TimeOrder()
        self.lines = Lines()
        self.rows = 0
        self.bytes_seen = 0
        self.warnings: list[str] = []
        """Things to tell the user, in the order they arose (more are added at the end)."""
        self.fixed: dict[str, SkipTally] = {}
        """Lines whose bytes were made readable (bad UTF-8, NUL bytes), by what was done."""

    @property
    def description(self) -> str:
        """How the value is found (``column latency_ms``), once the layout is known."""
        return self.feed.layout.description if self.feed.layout is not None else ""

    def start_source(self, name: str = "", *, at_start: bool = True) -> None:
        self.feed.start_source(name, at_start=at_start)
        self.lines.start_source()

    # ----------------------------------------------------------------- pieces to batches
    def jobs(self, src: sources.Opened, pool: ThreadPoolExecutor) -> Generator[Job]:
        """Every piece of ``src`` as a job: parsed by ``pool``, or here when it decides the
        unit and time form, or by polars itself for Parquet and ``lazy_files``."""
        o = self.options
        if src.is_parquet or o.format == "parquet":
            display = f"{src.display} row"
            for df in direct.parquet_frames(src, o, self.feed, self.decoder):
                yield Job(display, done=self.prepare_here(df, display))
            return
        if (
            o.lazy_files
            and src.compression is None
            and src.size is not None
            and not encoding.transcoded(o.encoding)
        ):
            lazy = direct.LazyFile.open(src, self.feed)
            if lazy is not None:
                if lazy.header:
                    yield Job(src.display, header=lazy.header)
                seen = 0
                for df, pos in lazy.frames():
                    self.bytes_seen += pos - seen
                    seen = pos
                    yield Job(src.display, pos=pos, done=self.prepare_here(df, src.display))
                self.bytes_seen += (src.size or 0) - seen
                return
        consumed = 0
        for piece in prefetch(self.feed.pieces(src), cancel=src.cancel):
            job = Job(src.display, piece.too_long, piece.header)
            if piece.data:
                if self.decoder.unit is None:  # the first rows decide the unit and time form
                    job.done = self.parse(piece.data, src.display, here=True)
                else:
                    job.future = pool.submit(self.parse, piece.data, src.display, quoted=piece.quoted)
            self.bytes_seen += piece.nbytes
            consumed += piece.nbytes
            # Compressed: the file offset (what the size measures); plain: bytes consumed
            # (the reader thread's offset runs ahead).
            job.pos = src.raw_pos if src.size and src.compression else consumed
            yield job

    def parse(self, data: bytes, display: str, *, here: bool = False, quoted: bool = True) -> Batch:
        """A piece's batch; thread-safe unless ``here`` (this thread decides the unit).
        ``quoted=False``: the piece is known to hold no double quote."""
        frame = self.feed.parse(data, quoted=quoted)
        batch = self.prepare_here(frame.df, display) if here else self.decoder.prepare(frame.df, display)
        batch.lines, batch.line_of, batch.fixed = frame.lines, frame.line_of, frame.fixed
        return batch

    def prepare_here(self, df: pl.DataFrame, display: str) -> Batch:
        """Decide the unit and time form if this is the first frame, then prepare it."""
        assert self.feed.layout is not None
        self.warnings += self.decoder.ready(df, self.feed.layout)
        self.builder.unit = self.decoder.unit or ""
        self.builder.field = self.feed.layout.description
        return self.decoder.prepare(df, display)

    # ----------------------------------------------------------------- in order
    def commit(self, job: Job) -> None:
        """The ordered half: number the lines, then route, add and count the rows."""
        if job.too_long:
            first = self.lines.take(job.too_long)
            self.unassigned(TOO_LONG, job.display, range(first, first + job.too_long))
        if job.header:
            self.lines.take(job.header)
        batch = job.result()
        if batch is None:
            return
        batch.first_line = self.lines.take(batch.lines)
        for what, count, at in batch.fixed:
            where = [f"{job.display}:{batch.first_line + i}" for i in at]
            self.fixed.setdefault(what, SkipTally()).add(count, where)
        if batch.rows == 0:
            return
        self.rows += batch.rows
        self.decoder.settle(batch)
        self.order.watch(batch)
        self.skips.check(batch)
        names = self.router.route(batch.rows, batch.groups, batch.tus)
        if self.router.window_us is not None and batch.tus is not None:
            # Rows without a readable time fall in no window: counted in the result only.
            timeless = np.flatnonzero(~np.isfinite(batch.tus))
            for reason, count, examples in self.skips.found(batch, timeless):
                self.skips.count(reason, count, examples)
        if isinstance(names, str):
            self.builder.add(names, batch, None)
            self.builder.end_batch()
            return
        loose = batch.loose
        if loose is not None and loose.any() and self.router.window_us is None:
            # Lines that are no record at all (not JSON, not a line of the format, blank)
            # have no group and no time: they join no sketch, and are counted in the
            # set's own tally instead of making up a group of their own.
            for reason, count, examples in self.skips.found(batch, np.flatnonzero(loose)):
                self.skips.count(reason, count, examples)
            names = [(name, idx[~loose[idx]]) for name, idx in names]
        for name, idx in names:
            if idx.size:
                # Distinct rows: as many as the batch has means all of them, which the
                # builder reads without gathering (a chunk wholly before or after --split-at).
                self.builder.add(name, batch, None if idx.size == batch.rows else idx)
        for name, rows in self.router.also():
            self.builder.add(name, batch, rows, tally=False)
        self.builder.end_batch()
        for name in self.router.dropped():
            self.builder.drop(name)

    def unassigned(self, reason: str, display: str, lines: range) -> None:
        """Lines no sketch can own: counted in the result, and in ``all`` when that one
        sketch stands for the whole scan."""
        examples = self.skips.unassigned(reason, display, lines)
        if not self.options.by and not self.router.by_time and self.decoder.unit is not None:
            prov = self.builder.sketch("all").provenance
            prov.skip(reason, len(lines), examples)
            prov.rows_read += len(lines)  # a row of the sketch's, skipped: n + skipped == rows read

    # ----------------------------------------------------------------- reports
    @property
    def values(self) -> int:
        return self.builder.values

    def sset(self) -> SketchSet:
        return self.builder.sset()

    def progress(self, pos: int, total: int | None, elapsed: float, source: str) -> ScanProgress:
        return ScanProgress(pos, total, self.rows, self.values, elapsed, source, self.sset())

    def finish(self, elapsed: float, *, partial: str | None = None, error: str | None = None) -> ScanResult:
        """The result: the sketches, every count, and the warnings in a fixed order."""
        self.builder.unit = self.decoder.final_unit()
        self.builder.field = self.description
        sset = self.builder.finish(
            lines=self.lines.total, partial=partial, halves=self.router.split_us is not None
        )
        warnings = [*self.feed.notes, *self.warnings]
        for what, tally in self.fixed.items():
            warnings.append(f"{tally.count:,} lines {FIXED_TEXT[what]} (first at {places(tally.examples)}).")
        for note in (
            self.router.missing_warning(),
            self.router.overflow_warning(),
            self.decoder.mixed_units_warning(),
            self.order.warning(),
            self.feed.quote_warning(),
        ):
            if note is not None:
                warnings.append(note)
        warnings += self.decoder.time_notes()
        return ScanResult(
            sketches=sset,
            bytes_read=self.bytes_seen,
            elapsed_s=elapsed,
            warnings=warnings,
            partial=partial,
            lines_read=self.lines.total,
            rows_read=self.rows,
            skipped=self.skips.skipped,
            format=self.feed.layout.format if self.feed.layout else "",
            error=error,
        )
