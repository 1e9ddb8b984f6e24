"""Scanning telemetry that is already aggregated: OTLP JSON metrics and OpenMetrics text.

``scan()`` hands a source here when its first bytes are OTLP metric documents
(``resourceMetrics``) or an OpenMetrics/Prometheus exposition with histograms, or when
``--format otlp-metrics``/``openmetrics`` says so. The file is read once, line by line
in bounded pieces (``sources.Opened``: plain or compressed, or standard input);
``otlp_metrics``/``openmetrics`` turn lines into histogram points, ``series`` turns
points into windows (deltas of cumulative series, resets) and windows into named
binned distributions. Every line read is counted; every point that gives no counts is
counted by reason with its first places, as the log reader does for rows.
"""

from __future__ import annotations

import os
import sys
import time
from collections.abc import Callable, Sequence

from ..errors import OgiveError
from ..sketch import SketchSet, SkipTally
from ..sketch.sketch import EXAMPLES_KEPT
from . import openmetrics, otlp_metrics, sources, urls
from .options import ScanOptions, ScanProgress, ScanResult
from .series import REASON_TEXT as SERIES_TEXT
from .series import Collector, SeriesBook, floor_of
from .skips import REASON_TEXT as ROW_TEXT
from .skips import TOO_LONG

FORMATS = ("otlp-metrics", "openmetrics")
PIECE = 4 << 20
"""Bytes read at a time; a line may be longer (up to ``max_line_bytes``)."""
HEAD = 1 << 16
PROGRESS_INTERVAL_S = 0.2
REASON_TEXT = {**ROW_TEXT, **otlp_metrics.REASON_TEXT, **openmetrics.REASON_TEXT, **SERIES_TEXT}


def detect(names: Sequence[str], options: ScanOptions) -> str | None:
    """``otlp-metrics`` or ``openmetrics`` when the first source is one (or --format says so)."""
    if options.format in FORMATS:
        return options.format
    if options.format or not names:
        return None
    head = _head(names[0])
    lines = [ln for ln in head.decode("utf-8", "replace").splitlines() if ln.strip()][:50]
    if lines and lines[0].lstrip().startswith("{") and otlp_metrics.looks_like("\n".join(lines[:5])):
        return "otlp-metrics"
    if openmetrics.looks_like(lines):
        return "openmetrics"
    return None


def _head(name: str) -> bytes:
    """The first decompressed bytes of a file, or what standard input has buffered (a peek)."""
    if name == "-":
        peek = getattr(sys.stdin.buffer, "peek", None)
        return bytes(peek(HEAD)[:HEAD]) if peek is not None else b""
    if not os.path.isfile(name) and not urls.is_url(name):
        # A FIFO or a device: reading a head here would take those bytes from the scan
        # (it opens the source again) and may wait for a writer forever. Metrics read
        # from such a source need --format.
        return b""
    try:
        src = sources.Opened(name)
    except OgiveError:
        return b""
    try:
        return src.read(HEAD)
    except OgiveError:
        return b""
    finally:
        src.close()


class Run:
    """One metrics scan: lines in, points counted, windows collected."""

    def __init__(self, options: ScanOptions, fmt: str, names: list[str]) -> None:
        self.options, self.fmt = options, fmt
        self.names = names
        self.book = SeriesBook()
        self.collect = Collector(options)
        self.skipped: dict[str, SkipTally] = {}
        self.lines = 0
        self.rows = 0
        self.values = 0
        self.other_types = 0
        self.other_names = 0
        self.metric_names: set[str] = set()
        self.exposition = openmetrics.Exposition(options.metric, floor_of)

    def skip(self, reason: str, where: str) -> None:
        if self.options.strict:
            raise OgiveError(
                f"{where}: {REASON_TEXT.get(reason, reason)} ({reason}); stopped because of --strict."
            )
        tally = self.skipped.setdefault(reason, SkipTally())
        tally.add(1, [where] if len(tally.examples) < EXAMPLES_KEPT else [])

    def points(self, pts: list[otlp_metrics.Point], display: str) -> None:
        for p in sorted(pts, key=lambda q: q.time_ns):
            self.rows += 1
            where = f"{display}:{p.line}"
            w = self.book.window(p, where)
            if isinstance(w, str):
                self.skip(w, where)
            elif self.collect.add(w):
                self.values += round(w.part.count)
            else:
                self.skip("bad_timestamp", where)

    def line(self, text: str, number: int, display: str) -> None:
        if self.fmt == "openmetrics":
            if text.strip() == "# EOF":
                self.end_scrape(display)
            else:
                self.exposition.line(text, number)
            return
        got = otlp_metrics.parse_line(text, number, self.options.metric, floor_of)
        self.other_types += got.other_types
        self.other_names += got.other_names
        self.metric_names |= got.names or set()
        for reason in got.skipped:
            self.rows += 1
            self.skip(reason, f"{display}:{number}")
        self.points(got.points, display)

    def end_scrape(self, display: str) -> None:
        pts, skipped = self.exposition.end_scrape()
        for reason, number in skipped:
            self.rows += 1
            self.skip(reason, f"{display}:{number}")
        self.points(pts, display)

    def progress(self, pos: int, total: int | None, elapsed: float, display: str) -> ScanProgress:
        live = SketchSet({f"{m}/{n}": b for (m, n), b in self.collect.out.items()})
        return ScanProgress(pos, total, self.rows, self.values, elapsed, display, live)

    def result(self, bytes_read: int, elapsed: float, partial: str | None, error: str | None) -> ScanResult:
        names = self.metric_names | self.exposition.names
        if self.options.metric is not None and not self.collect.out and self.options.metric not in names:
            have = ", ".join(sorted(names)[:12]) or "none"
            raise OgiveError(f"no histogram metric named {self.options.metric!r}; the input has: {have}.")
        desc = "OpenMetrics text" if self.fmt == "openmetrics" else "OTLP JSON metrics"
        sset = self.collect.finish(
            ["<stdin>" if n == "-" else n for n in self.names], desc, self.lines, self.skipped
        )
        for b in sset.sketches.values():
            b.provenance.partial = partial
        return ScanResult(
            sketches=sset,
            bytes_read=bytes_read,
            elapsed_s=elapsed,
            warnings=self.warnings(names),
            partial=partial,
            lines_read=self.lines,
            rows_read=self.rows,
            skipped=self.skipped,
            format=self.fmt,
            error=error,
        )

    def warnings(self, names: set[str]) -> list[str]:
        out = self.collect.warnings(self.book)
        if self.options.metric is None and len(names) > 1:
            out.append(
                f"the input holds {len(names)} histogram metrics ({', '.join(sorted(names)[:8])}): each is a "
                "distribution of its own; --metric NAME reads one."
            )
        if self.other_names:
            out.append(
                f"{self.other_names:,} histogram point(s) of other metrics than {self.options.metric!r}."
            )
        if self.other_types:
            out.append(
                f"{self.other_types:,} point(s) of gauges, sums or summaries were not read (no distribution)."
            )
        if self.exposition.out_of_order:
            out.append(
                f"{self.exposition.out_of_order:,} histogram(s) listed their buckets out of le order "
                "(the specification asks for increasing le); they were put in order."
            )
        if any(
            isinstance(p, otlp_metrics.ExplicitPart) and p.floor == 0.0
            for b in self.collect.out.values()
            for p in b.parts
        ):
            out.append(
                "durations and sizes are never negative: each explicit histogram's first bucket, "
                "(-inf, first bound], is read as [0, first bound]."
            )
        return out


def scan_metrics(
    names: Sequence[str],
    options: ScanOptions,
    fmt: str,
    *,
    progress: Callable[[ScanProgress], None] | None = None,
    cancel: Callable[[], bool] | None = None,
) -> ScanResult:
    """Read every source once into binned distributions (see the module text)."""
    run = Run(options, fmt, list(names))
    start = time.monotonic()
    sizes = [None if n == "-" else _size(n) for n in names]
    total = sum(s for s in sizes if s) if all(s is not None for s in sizes) else None
    done = 0
    partial: str | None = None
    error: str | None = None
    last = 0.0
    for name in names:
        src = sources.Opened(name)
        number = 0
        try:
            carry = b""
            dropping = False
            while True:
                try:
                    data = src.read(PIECE)
                except sources.CorruptSource as exc:
                    if not options.keep_partial:
                        raise
                    error, partial = str(exc), f"the input is damaged: {exc}"
                    data = b""
                if not data:
                    break
                pieces = (carry + data).split(b"\n")
                carry = pieces.pop()
                for raw in pieces:
                    number += 1
                    if dropping:
                        dropping = False
                        continue
                    run.lines += 1
                    run.line(raw.decode("utf-8", "replace").rstrip("\r"), number, src.display)
                if len(carry) > options.max_line_bytes:
                    number += 1
                    run.lines += 1
                    run.rows += 1
                    run.skip(TOO_LONG, f"{src.display}:{number}")
                    carry, dropping = b"", True
                now = time.monotonic()
                if progress is not None and now - last >= PROGRESS_INTERVAL_S:
                    last = now
                    progress(run.progress(done + src.raw_pos, total, now - start, src.display))
                if cancel is not None and cancel():
                    partial = f"stopped on request in {src.display} after line {number}"
                    break
                if error:
                    break
            if carry.strip() and not dropping and partial is None:
                number += 1
                run.lines += 1
                run.line(carry.decode("utf-8", "replace").rstrip("\r"), number, src.display)
            if fmt == "openmetrics":
                run.end_scrape(src.display)  # one file is one scrape at least
        finally:
            src.close()
        done += src.size or 0
        if partial:
            break
    return run.result(done, time.monotonic() - start, partial, error)


def _size(name: str) -> int | None:
    import os

    try:
        return os.path.getsize(name) if os.path.isfile(name) else None
    except OSError:
        return None
