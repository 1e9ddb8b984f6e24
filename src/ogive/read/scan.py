"""``scan``: sources in, named sketches out, one pass, bounded memory.

The loop is: read a whole-line chunk (a background thread reads and decompresses the
next one meanwhile; zlib, zstd and polars release the GIL), parse it with polars into
value/group/time columns, turn values into float64 in the sketch unit, route rows to
their sketch (``all``, ``FIELD=VALUE``, ``before``/``after``) and add them as one numpy
batch per sketch. Nothing per row runs in Python except for bad-row examples.
"""

from __future__ import annotations

import os
import queue
import re
import threading
import time
from collections import deque
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass
from typing import TypeVar

import numpy as np
import polars as pl
from numpy.typing import NDArray

from ..errors import OgiveError
from ..sketch import Sketch, SketchSet, SkipTally
from ..sketch.sketch import EXAMPLES_KEPT
from . import records, sources, times, values
from .options import ScanOptions, ScanProgress, ScanResult
from .route import OTHER, Router

_T = TypeVar("_T")
_NAME_UNITS = {
    "ns": "ns",
    "us": "us",
    "µs": "us",
    "ms": "ms",
    "millis": "ms",
    "s": "s",
    "sec": "s",
    "secs": "s",
}
_NAME_UNIT = re.compile(r"[a-z0-9][_\-](ns|us|µs|ms|millis|s|sec|secs)$", re.IGNORECASE)
PROGRESS_INTERVAL_S = 0.2
BATCH_VALUES = 500_000
"""Values held (over all sketches) before they are added; 4 MB, whatever the groups."""
DIGEST_BUDGET = 4_000_000
"""Values buffered in all digests together before the fullest are compressed (32 MB)."""
PARSE_WORKERS = 2
"""Chunks parsed at once; memory in flight is about (workers + 3) chunks."""
BAD_TIMESTAMP = "bad_timestamp"
TOO_LONG = "too_long"
BAD_RECORD = "bad_record"

REASON_TEXT = {
    values.MISSING_FIELD: "the value is missing",
    values.NOT_A_NUMBER: "the value is not a number",
    values.UNKNOWN_UNIT: "the value has a unit suffix ogive does not know",
    values.UNIT_MISMATCH: "the value is a duration but the sketch unit is not a time unit",
    BAD_TIMESTAMP: "the timestamp is missing or unreadable",
    TOO_LONG: "the line is longer than the longest line ogive will hold",
    "no_match": "the --pattern regex does not match the line",
}


def scan(
    sources_: Sequence[str],
    options: ScanOptions,
    *,
    progress: Callable[[ScanProgress], None] | None = None,
    cancel: Callable[[], bool] | None = None,
) -> ScanResult:
    """Read every source once, as one stream, into the sketches the options ask for.

    Raises OgiveError for unusable input (unreadable file, corrupt compression, a
    ``strict`` scan meeting a bad row); everything else that is wrong with single rows
    is counted by reason in the sketches' provenance and in the result.
    """
    if not sources_:
        raise OgiveError("no source given; name a file, or '-' for standard input.")
    state = _State(list(sources_), options)
    start = time.monotonic()
    sizes = [_file_size(name) for name in sources_]
    total = sum(s for s in sizes if s is not None) if all(s is not None for s in sizes) else None
    done_bytes = 0
    last_report = 0.0
    # Workers parse the next chunks (polars and numpy release the GIL; an eager
    # str.extract is single-threaded, so two chunks at once use both cores) while this
    # thread adds the oldest parsed chunk to the sketches; commits stay strictly in order.
    pool = ThreadPoolExecutor(max_workers=PARSE_WORKERS, thread_name_prefix="ogive-parse")
    pending: deque[_Job] = deque()
    next_line = 1  # of the current source; advanced as parsed chunks are committed in order

    def commit(job: _Job) -> None:
        nonlocal next_line
        if job.too_long:
            numbers = list(range(next_line, next_line + job.too_long))
            state.unassigned(TOO_LONG, job.display, numbers)
            state.lines += job.too_long
            next_line += job.too_long
        if job.header:
            state.lines += 1
            next_line += 1
        prepared = job.result()
        if prepared is not None:
            prepared.first_line = next_line
            state.commit(prepared)
            next_line += max(prepared.lines, prepared.rows)

    def drain(keep: int) -> None:
        while len(pending) > keep:
            commit(pending.popleft())

    try:
        for name in sources_:
            src = sources.Opened(name)
            next_line = 1
            try:
                if src.is_parquet or options.format == "parquet":
                    state.scan_parquet(src)
                    done_bytes += src.size or 0
                    continue
                lazy = options.lazy_files and src.compression is None and src.size is not None
                if lazy and state.scan_plain_file(src, progress, cancel, start, done_bytes, total):
                    done_bytes += src.size or 0
                    if state.partial:
                        break
                    continue
                header_checked = False
                seen_at_start = state.bytes_seen
                pieces = sources.chunks(src, state.chunk_size, options.max_line_bytes, state.cutting)
                try:
                    for chunk in _prefetch(pieces):
                        data = chunk.data
                        job = _Job(src.display, chunk.too_long)
                        if state.layout is None and data:
                            state.start(records.plan(data, options))
                        layout = state.layout
                        if layout is not None and layout.header and not header_checked and data:
                            head, _, rest = data.partition(b"\n")
                            if head.rstrip(b"\r") == layout.header_line.rstrip(b"\r"):
                                data, job.header = rest, True
                        if data:
                            header_checked = True
                        if layout is not None and data:
                            if state.unit is None:
                                # The first chunk decides the unit and time form: parse it here.
                                df, state.numeric = layout.parse(
                                    data, numeric=state.numeric, literal_quotes=state.literal_quotes
                                )
                                state.ready(df)
                                job.done = state.prepare(df, src.display, 0)
                                _lines_in(job.done, data, layout.format)
                            else:
                                job.future = pool.submit(state.parse_and_prepare, data, src.display)
                        pending.append(job)
                        drain(PARSE_WORKERS)
                        state.bytes_seen += len(chunk.data)
                        now = time.monotonic()
                        if progress is not None and (
                            cancel is not None or now - last_report >= PROGRESS_INTERVAL_S
                        ):
                            last_report = now
                            # Compressed: the file offset (what the size measures); plain: bytes
                            # consumed (the reader thread's offset runs ahead).
                            plain_pos = state.bytes_seen - seen_at_start
                            pos = src.raw_pos if src.size and src.compression else plain_pos
                            snapshot = ScanProgress(
                                done_bytes + pos,
                                total,
                                state.rows,
                                state.values,
                                now - start,
                                src.display,
                                state.sset(),
                            )
                            progress(snapshot)
                        if cancel is not None and cancel():
                            drain(0)
                            state.partial = f"stopped on request in {src.display} after line {next_line - 1}"
                            break
                except sources.CorruptSource as exc:
                    if not options.keep_partial:
                        raise
                    drain(0)  # the chunks before the damage are good: keep them
                    state.error = str(exc)
                    state.partial = f"the input is damaged: {exc}"
                drain(0)
                done_bytes += src.size if src.size else 0
            finally:
                change = src.changed()
                if change is not None:
                    state.warnings.append(change)
                src.close()
            if state.partial:
                break
        drain(0)
    finally:
        for job in pending:
            if job.future is not None:
                job.future.cancel()
        pool.shutdown(wait=True)
    return state.finish(time.monotonic() - start)


def _lines_in(p: _Prepared, data: bytes, fmt: str) -> None:
    """Set the lines a chunk spans: more than its rows when quoted CSV fields hold
    newlines, and then each record's first line too, so bad rows are reported where an
    editor shows them. Looked at only when the chunk has a quote at all."""
    p.lines = p.rows
    if fmt not in ("csv", "tsv") or b'"' not in data:  # other formats: one record per line
        return
    lines = data.count(b"\n") + (0 if data.endswith(b"\n") else 1)
    if lines <= p.rows:
        return
    a = np.frombuffer(data, dtype=np.uint8)
    newlines = np.flatnonzero(a == 0x0A)
    quotes_before = np.searchsorted(np.flatnonzero(a == 0x22), newlines)  # no 8x cumsum buffer
    ends = np.flatnonzero((quotes_before & 1) == 0)  # line numbers (0-based) ending a record
    starts = np.concatenate(([0], ends + 1))[: p.rows]
    if starts.size == p.rows:
        p.lines, p.line_of = lines, starts.astype(np.int64)


def _file_size(name: str) -> int | None:
    if name == "-":
        return None
    try:
        return os.path.getsize(name) if os.path.isfile(name) else None
    except OSError:
        return None


def _prefetch(it: Iterator[_T], depth: int = 1) -> Iterator[_T]:
    """Run ``it`` in a thread, ``depth`` chunks ahead, re-raising its errors here."""
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
            kind, payload = q.get()
            if kind == "item":
                yield payload  # type: ignore[misc]
            elif kind == "error":
                raise payload  # type: ignore[misc]
            else:
                return
    finally:
        stop.set()
        while thread.is_alive():
            try:
                q.get_nowait()
            except queue.Empty:
                thread.join(0.05)


@dataclass
class _Job:
    """One chunk on its way to the sketches, committed in source order."""

    display: str
    too_long: int = 0
    """Lines skipped just before this chunk for being too long."""
    header: bool = False
    """The chunk's first line was the header and was taken off."""
    future: Future[_Prepared] | None = None
    done: _Prepared | None = None

    def result(self) -> _Prepared | None:
        return self.future.result() if self.future is not None else self.done


@dataclass
class _Prepared:
    rows: int
    values: NDArray[np.float64]
    ok: NDArray[np.bool_]
    reasons: dict[str, NDArray[np.bool_]]
    tus: NDArray[np.float64] | None
    groups: pl.Series | None
    suffixed: int
    unsuffixed: int
    bad_time_kept: int
    time_format: str | None
    display: str
    first_line: int
    lines: int = 0
    """Lines the chunk spans (set once parsed; ``rows`` plus newlines inside quoted fields)."""
    line_of: NDArray[np.int64] | None = None
    """Each record's first line, from ``first_line``, when records span several lines."""


class _State:
    """Sketches under construction and the scan's running counts."""

    def __init__(self, names: list[str], options: ScanOptions) -> None:
        self.options = options
        self.source_names = ["<stdin>" if n == "-" else n for n in names]
        self.layout: records.Layout | None = None
        self.sketches: dict[str, Sketch] = {}
        self.skipped: dict[str, SkipTally] = {}
        self.warnings: list[str] = []
        self.quote_chunks = 0
        self.error: str | None = None
        self._t_max = -np.inf
        self.back_count = 0
        self.back_most = 0.0
        """Microseconds: the largest step back in time seen."""
        self.back_first = ""
        self._line_of: NDArray[np.int64] | None = None
        """Chunks whose quotes did not balance, read with quotes as plain characters."""
        self._quote_lock = threading.Lock()
        self.lines = 0
        self.rows = 0
        self.values = 0
        self.bytes_seen = 0
        self.partial: str | None = None
        self.unit: str | None = None
        self.time_format = options.time_format
        self.router = Router(options)
        self.suffixed = 0
        self.unsuffixed = 0
        self.times: dict[str, list[float]] = {}
        self.bad_time_kept = 0
        self.description = ""
        self._held: dict[str, list[NDArray[np.float64]]] = {}
        self._held_n = 0
        self.input_unit = options.input_unit
        """Unit of bare numbers: the option, else one read from the value's name."""
        self.numeric = True
        """Try reading a CSV value column as Float64 until a chunk shows it is not plain numbers."""

    # ----------------------------------------------------------------- setup
    def chunk_size(self) -> int:
        """Bytes to read next: by format once the first chunk has decided it."""
        layout = self.layout
        if layout is None:
            return self.options.chunk_size(None)
        return self.options.chunk_size(layout.format, value_only=layout.names == ("v",))

    def cutting(self) -> str:
        """How the reader must cut chunks: CSV records may hold quoted newlines."""
        layout = self.layout
        if layout is None:
            return sources.GUESS if self.options.format in (None, "csv", "tsv") else sources.LINES
        return sources.CSV if layout.format in ("csv", "tsv") else sources.LINES

    def literal_quotes(self) -> None:
        """Called by the parser for a chunk whose quotes did not balance."""
        with self._quote_lock:
            self.quote_chunks += 1

    def start(self, layout: records.Layout) -> None:
        self.layout = layout
        self.description = layout.description

    def _decide_unit(self, col: pl.Series) -> str:
        o = self.options
        if o.input_unit is None:
            # A name such as latency_ms or timing.total_s says what bare numbers are
            # (common practice in telemetry exports); told in a warning, overridable.
            name = self.description.split(" ", 1)[-1].rsplit(".", 1)[-1]
            found = _NAME_UNIT.search(name)
            if found:
                self.input_unit = values.canonical_unit(_NAME_UNITS[found.group(1).lower()])
                self.warnings.append(
                    f"numbers without a suffix are taken to be in {self.input_unit}, from the name "
                    f"{name!r} (say otherwise with --input-unit)."
                )
        if o.unit is not None:
            return values.canonical_unit(o.unit)
        if self.input_unit is not None and values.is_time_unit(self.input_unit):
            return "ms"
        if values.has_suffix(col.head(2000)):
            return "ms"
        return self.input_unit or ""

    def sketch(self, name: str) -> Sketch:
        s = self.sketches.get(name)
        if s is None:
            o = self.options
            s = Sketch(self.unit or "", compression=o.compression, tail_size=o.tail_size)
            s.provenance.sources = list(self.source_names)
            s.provenance.field = self.description
            self.sketches[name] = s
        return s

    def sset(self) -> SketchSet:
        self.flush()
        return SketchSet(dict(self.sketches))

    def flush(self) -> None:
        """Add the held values: one batch per sketch of ~BATCH_VALUES costs less per value
        than one per chunk (fewer tail merges and digest compressions)."""
        for name, parts in self._held.items():
            self.sketches[name].add(parts[0] if len(parts) == 1 else np.concatenate(parts))
        self._held.clear()
        self._held_n = 0
        if len(self.sketches) > 1:
            # Each digest buffers up to ~10^6 values before it compresses them: alone that
            # is 8 MB, but over 24 hosts it was 88 MB, and over 1000 groups it could grow
            # to gigabytes. Compress the fullest buffers once all of them together pass
            # the budget; memory then no longer grows with the number of groups.
            held = [(s.digest.buffered, s) for s in self.sketches.values() if s.digest.buffered]
            total = sum(n for n, _ in held)
            if total > DIGEST_BUDGET:
                for n, sk in sorted(held, key=lambda t: -t[0]):
                    sk.digest.flush()
                    total -= n
                    if total <= DIGEST_BUDGET // 2:
                        break

    # ----------------------------------------------------------------- skips
    def _tally(self, reason: str, count: int, examples: list[str]) -> None:
        if count:
            self.skipped.setdefault(reason, SkipTally()).add(count, examples)

    def unassigned(self, reason: str, display: str, line_numbers: list[int]) -> None:
        """Rows no sketch can own: counted in the result (and in 'all' when that is the only sketch)."""
        examples = [f"{display}:{n}" for n in line_numbers[:EXAMPLES_KEPT]]
        if self.options.strict and line_numbers:
            self._strict(reason, examples[0])
        self._tally(reason, len(line_numbers), examples)
        if not self.options.by and self.options.split_at is None and self.unit is not None:
            self.sketch("all").provenance.skip(reason, len(line_numbers), examples)

    def _strict(self, reason: str, where: str) -> None:
        raise OgiveError(
            f"{where}: {REASON_TEXT.get(reason, reason)} ({reason}); stopped because of --strict."
        )

    # ----------------------------------------------------------------- rows
    def feed(self, df: pl.DataFrame, display: str, first_line: int) -> None:
        """Parse and add one frame in this thread (first chunk, Parquet batches)."""
        self.ready(df)
        self.commit(self.prepare(df, display, first_line))

    def parse_and_prepare(self, data: bytes, display: str) -> _Prepared:
        assert self.layout is not None
        df, held = self.layout.parse(data, numeric=self.numeric, literal_quotes=self.literal_quotes)
        self.numeric = self.numeric and held
        prepared = self.prepare(df, display, 0)
        _lines_in(prepared, data, self.layout.format)
        return prepared

    def ready(self, df: pl.DataFrame) -> None:
        """Decide, from the first frame, what later frames are parsed against."""
        if self.unit is None and df.height:
            self.unit = self._decide_unit(df.get_column("v"))
        if self.time_format is None and "t" in df.columns:
            self.time_format = times.detect_format(df.get_column("t"))

    def prepare(self, df: pl.DataFrame, display: str, first_line: int) -> _Prepared:
        """The thread-safe half of a chunk: values, reasons, times (polars and numpy only)."""
        n = df.height
        pv = values.parse_values(df.get_column("v"), input_unit=self.input_unit, target_unit=self.unit or "")
        reasons = dict(pv.reasons)
        if self.layout is not None and self.layout.format == "text" and values.MISSING_FIELD in reasons:
            reasons["no_match"] = reasons.pop(values.MISSING_FIELD)
        ok = pv.ok
        tus: NDArray[np.float64] | None = None
        bad_time_kept = 0
        fmt = self.time_format
        if "t" in df.columns:
            tcol = df.get_column("t")
            fmt = fmt or times.detect_format(tcol)
            tus = times.parse_times(tcol, fmt) if fmt is not None else np.full(n, np.nan)
            bad_t = ~np.isfinite(tus)
            if self.router.by_time:
                bt = bad_t & ok
                if bt.any():
                    reasons[BAD_TIMESTAMP] = bt
                    ok = ok & ~bad_t
            else:
                bad_time_kept = int((bad_t & ok).sum())
        g = df.get_column("g").cast(pl.String) if "g" in df.columns else None
        return _Prepared(
            n,
            pv.values,
            ok,
            reasons,
            tus,
            g,
            pv.suffixed,
            pv.unsuffixed,
            bad_time_kept,
            fmt,
            display,
            first_line,
        )

    def commit(self, p: _Prepared) -> None:
        """The ordered half: strict check, routing to sketches, adding, counting."""
        if p.rows == 0:
            return
        self.lines += max(p.lines, p.rows)
        self.rows += p.rows
        self.suffixed += p.suffixed
        self.unsuffixed += p.unsuffixed
        self.bad_time_kept += p.bad_time_kept
        if self.time_format is None:
            self.time_format = p.time_format
        self._line_of = p.line_of
        if p.tus is not None:
            self._watch_time_order(p)
        if self.options.strict and p.reasons:
            first = min((int(np.argmax(m)), r) for r, m in p.reasons.items())
            self._strict(first[1], f"{p.display}:{p.first_line + self._line(first[0])}")
        names = self.router.route(p.rows, p.groups, p.tus)
        if self.router.window_us is not None and p.tus is not None:
            # Rows without a readable time fall in no window: counted in the result only.
            timeless = np.flatnonzero(~np.isfinite(p.tus))
            for reason, count, examples in self._reasons_of(p.reasons, timeless, p.display, p.first_line):
                self._tally(reason, count, examples)
        if isinstance(names, str):
            self._add(names, p.values, p.ok, p.reasons, p.tus, p.display, p.first_line, None)
        else:
            for name, idx in names:
                self._add(name, p.values, p.ok, p.reasons, p.tus, p.display, p.first_line, idx)

    def _watch_time_order(self, p: _Prepared) -> None:
        """Count rows whose time is earlier than a row before them (clock steps, merged
        or shuffled logs): harmless to the sketches, which place rows by their own time,
        but a sign the file is not the time-ordered log the user may think it is."""
        assert p.tus is not None
        rows = np.flatnonzero(np.isfinite(p.tus))
        if not rows.size:
            return
        t = p.tus[rows]
        before = np.maximum.accumulate(np.concatenate(([self._t_max], t[:-1])))
        back = before - t
        late = np.flatnonzero(back > 0)
        if late.size:
            if not self.back_count:
                self.back_first = f"{p.display}:{p.first_line + self._line(int(rows[late[0]]))}"
            self.back_count += late.size
            self.back_most = max(self.back_most, float(back[late].max()))
        self._t_max = max(self._t_max, float(before[-1]), float(t[-1]))

    def _line(self, row: int) -> int:
        """Line offset of record ``row`` of the chunk being committed."""
        return row if self._line_of is None else int(self._line_of[row])

    def _reasons_of(
        self,
        reasons: dict[str, NDArray[np.bool_]], idx: NDArray[np.int64] | None, display: str, first_line: int
    ) -> list[tuple[str, int, list[str]]]:
        """(reason, count, first locations) for the rows ``idx`` of a chunk (all when None)."""
        out = []
        for reason, mask in reasons.items():
            m = mask if idx is None else mask[idx]
            count = int(m.sum())
            if count:
                where = np.flatnonzero(m)[:EXAMPLES_KEPT]
                lines = where if idx is None else idx[where]
                out.append((reason, count, [f"{display}:{first_line + self._line(int(i))}" for i in lines]))
        return out

    def _add(
        self,
        name: str,
        vals: NDArray[np.float64],
        ok: NDArray[np.bool_],
        reasons: dict[str, NDArray[np.bool_]],
        tus: NDArray[np.float64] | None,
        display: str,
        first_line: int,
        idx: NDArray[np.int64] | None,
    ) -> None:
        s = self.sketch(name)
        prov = s.provenance
        if idx is None:
            sel_ok = ok
            good = vals if ok.all() else vals[ok]
            rows = vals.size
        else:
            sel_ok = ok[idx]
            good = vals[idx][sel_ok]
            rows = idx.size
        prov.rows_read += rows
        if good.size:
            self._held.setdefault(name, []).append(good)
            self._held_n += good.size
            if self._held_n >= BATCH_VALUES:
                self.flush()
        self.values += good.size
        for reason, count, examples in self._reasons_of(reasons, idx, display, first_line):
            self._tally(reason, count, examples)
            if reason != BAD_TIMESTAMP:  # a row without a time belongs to neither half
                prov.skip(reason, count, examples)
        if tus is not None:
            t = tus if idx is None else tus[idx]
            t = t[np.isfinite(t) & sel_ok] if sel_ok.size else t[:0]
            if t.size:
                lo, hi = float(t.min()), float(t.max())
                span = self.times.setdefault(name, [lo, hi])
                span[0], span[1] = min(span[0], lo), max(span[1], hi)

    # ----------------------------------------------------------------- plain files
    def scan_plain_file(
        self,
        src: sources.Opened,
        progress: Callable[[ScanProgress], None] | None,
        cancel: Callable[[], bool] | None,
        start: float,
        done_bytes: int,
        total: int | None,
    ) -> bool:
        """Let polars' own streaming reader walk an uncompressed file (its fastest path).

        The layout still comes from our first chunk; rows arrive in order, so row ``i``
        is line ``first + i``. Returns False when the file must go the chunked way
        instead (the layout does not suit the lazy reader).
        """
        with open(src.name, "rb") as fh:  # a separate handle: ``src`` stays at offset 0
            head = fh.read(min(self.chunk_size(), 1 << 20))
        cut = head.rfind(b"\n")
        if cut < 0:
            return False  # one huge line, or empty: the chunked path handles both
        sample = head[: cut + 1]
        if self.layout is None:
            self.start(records.plan(sample, self.options))
        layout = self.layout
        assert layout is not None
        skip = 0
        if layout.header:
            top = sample.split(b"\n", 1)[0].rstrip(b"\r")
            skip = 1 if top == layout.header_line.rstrip(b"\r") else 0
        avg_line = max(1.0, len(sample) / max(1, sample.count(b"\n")))
        last_report = 0.0
        done_rows = 0
        numeric = self.numeric
        self.lines += skip
        while True:
            try:
                for batch in _prefetch(
                    records.lazy_batches(layout, src.name, skip + done_rows, numeric=numeric)
                ):
                    if batch.height == 0:
                        continue
                    self.ready(batch)
                    self.commit(self.prepare(batch, src.display, 1 + skip + done_rows))
                    done_rows += batch.height
                    now = time.monotonic()
                    if progress is not None and (
                        cancel is not None or now - last_report >= PROGRESS_INTERVAL_S
                    ):
                        last_report = now
                        pos = min(int((skip + done_rows) * avg_line), src.size or 0)
                        progress(
                            ScanProgress(
                                done_bytes + pos,
                                total,
                                self.rows,
                                self.values,
                                now - start,
                                src.display,
                                self.sset(),
                            )
                        )
                    if cancel is not None and cancel():
                        self.partial = f"stopped on request in {src.display} after line {skip + done_rows}"
                        break
                break
            except pl.exceptions.PolarsError as exc:
                if numeric:
                    numeric = False  # a value that is not a plain number: go on reading text
                    self.numeric = False
                    continue
                first = str(exc).splitlines()[0]
                raise OgiveError(f"{src.display}: cannot parse the records: {first}") from None
        self.bytes_seen += src.size or 0
        return True

    # ----------------------------------------------------------------- parquet
    def scan_parquet(self, src: sources.Opened) -> None:
        o = self.options
        if src.name == "-" or src.compression is not None:
            raise OgiveError(
                f"{src.display}: Parquet must be a plain file on disk (not stdin or compressed)."
            )
        want = o.column or o.field
        if not want:
            raise OgiveError(f"{src.display} is Parquet; name the value column with --column (or --field).")
        try:
            lf = pl.scan_parquet(src.name)
            schema = lf.collect_schema()
        except pl.exceptions.PolarsError as exc:
            raise OgiveError(f"{src.display}: cannot read Parquet: {str(exc).splitlines()[0]}") from None
        names = list(schema.names())

        def column(spec: str, out: str) -> pl.Expr:
            if spec.isdigit() and spec not in names:
                i = int(spec) - 1
                if not 0 <= i < len(names):
                    raise OgiveError(
                        f"{src.display} has {len(names)} columns; position {spec} is out of range."
                    )
                return pl.col(names[i]).alias(out)
            head, *rest = spec.split(".")
            if head not in names:
                raise OgiveError(f"{src.display} has no column {head!r} (it has: {', '.join(names[:20])}).")
            expr = pl.col(head)
            for part in rest:
                expr = expr.struct.field(part)
            return expr.alias(out)

        exprs = [column(want, "v")]
        if o.by:
            exprs.append(column(o.by, "g").cast(pl.String))
        if o.time_field:
            tcol = column(o.time_field, "t")
            exprs.append(tcol)
        if self.layout is None:
            self.start(records.Layout(format="parquet", description=f"column {want}"))
        line = 1
        try:
            for batch in lf.select(exprs).collect_batches(chunk_size=1 << 20):
                if "t" in batch.columns and batch.schema["t"] != pl.String:
                    t = batch.get_column("t")
                    if t.dtype.is_temporal():
                        batch = batch.with_columns(
                            pl.col("t").dt.replace_time_zone(None).dt.epoch("us").cast(pl.String)
                        )
                        self.time_format = self.time_format or "epoch_us"
                    else:
                        batch = batch.with_columns(pl.col("t").cast(pl.String))
                self.feed(batch, f"{src.display} row", line)
                line += batch.height
        except pl.exceptions.PolarsError as exc:
            raise OgiveError(f"{src.display}: cannot read Parquet: {str(exc).splitlines()[0]}") from None

    # ----------------------------------------------------------------- end
    def finish(self, elapsed: float) -> ScanResult:
        o = self.options
        self.flush()
        if self.unit is None:
            self.unit = values.canonical_unit(o.unit) if o.unit else (o.input_unit or "")
        if not self.sketches:
            if self.router.split_us is not None:
                for half in ("before", "after"):
                    self.sketch(half)
            elif not o.by:
                self.sketch("all")
        for name, s in self.sketches.items():
            s.provenance.lines_read = self.lines
            s.provenance.partial = self.partial
            span = self.times.get(name)
            if span:
                s.provenance.time_first, s.provenance.time_last = times.iso(span[0]), times.iso(span[1])
        overflow = self.router.overflow_warning()
        if overflow is not None:
            self.warnings.append(overflow)
        if self.suffixed and self.unsuffixed and self.input_unit is None and values.is_time_unit(self.unit):
            self.warnings.append(
                f"{self.unsuffixed} values had no unit suffix while {self.suffixed} did; "
                f"the bare numbers were taken to be in {self.unit} (say otherwise with --input-unit)."
            )
        if self.back_count:
            self.warnings.append(
                f"{self.back_count:,} rows had a timestamp earlier than a row before them (first at "
                f"{self.back_first}, at most {self.back_most / 1e6:g} s earlier); each row still counts "
                "by its own time."
            )
        if self.quote_chunks:
            self.warnings.append(
                f"{self.quote_chunks} chunk(s) had a double quote that opens a field and never closes "
                "(or one inside an unquoted field); there quotes were read as plain characters."
            )
        if self.bad_time_kept:
            self.warnings.append(
                f"{self.bad_time_kept} rows had a missing or unreadable timestamp; their values were kept "
                "but they do not count towards the time range."
            )
        unowned = {r: t for r, t in self.skipped.items() if r in (TOO_LONG, BAD_TIMESTAMP)}
        for reason, tally in unowned.items():
            if self.router.by_time or (o.by and reason == TOO_LONG):
                self.warnings.append(
                    f"{tally.count} lines could not be given to any sketch ({reason}), first at "
                    f"{', '.join(tally.examples)}."
                )
        ordered = sorted(self.sketches.items(), key=lambda kv: _sort_key(kv[0]))
        return ScanResult(
            sketches=SketchSet(dict(ordered)),
            bytes_read=self.bytes_seen,
            elapsed_s=elapsed,
            warnings=self.warnings,
            partial=self.partial,
            lines_read=self.lines,
            rows_read=self.rows,
            skipped=self.skipped,
            format=self.layout.format if self.layout else "",
            error=self.error,
        )


def _sort_key(name: str) -> tuple[int, int, str]:
    half = 0 if name.startswith("before") else (1 if name.startswith("after") else 0)
    other = 1 if name.endswith(f"={OTHER}") else 0
    return (half, other, name)
