"""What a scan is asked to do, and what it reports back while and after it runs.

These types are the contract between the reader and its callers (the CLI's
sub-commands and the terminal UI's background workers); the reader knows nothing of
either.
"""

from __future__ import annotations

import codecs
import dataclasses
from dataclasses import dataclass, field
from typing import Any

from ..errors import OgiveError
from ..sketch import DEFAULT_COMPRESSION, DEFAULT_TAIL, SketchSet, SkipTally
from ..sketch.digest import MAX_COMPRESSION
from ..sketch.units import span_seconds

TIME_FORMS = ("iso", "epoch_s", "epoch_ms", "epoch_us", "epoch_ns", "clf", "rfc3164")
"""The time forms read by name (``times`` reads them; a strftime pattern names any other)."""

CSV_CHUNK = 8 << 20
CSV_PAIR_CHUNK = 5 << 20
LINE_CHUNK = 4 << 20
OTLP_CHUNK = 2 << 20
LEAN_MB = 250
"""The default scan's memory: peak RSS at most this, at any file size (no grant needed)."""
MIN_BUDGET_MB = 200
"""The least ``memory_budget_mb`` accepted: a scan of text lines holds ~170 MB before its
chunks count."""
FASTEST_CHUNK = {
    "csv-value": 8 << 20,
    "csv-pair": 8 << 20,
    "csv-columns": 8 << 20,
    "lines": 8 << 20,
    "lines-value": 8 << 20,
    "ndjson": 8 << 20,
    "otlp": 2 << 20,
}
"""The chunk size past which a grant buys no more speed, by kind of chunk. Measured on
300 MB files, 2 cores, best of 3 in one process: text lines 4/8/16 MB took 0.78/0.66/
0.71 s, NDJSON 1.97/1.69/1.70 s, a CSV read for value and ``--by`` group 0.91/0.74/0.76
s; a CSV value column alone 4/8/16/32 MB 0.49/0.43/0.63/0.66 s (bigger chunks delay the
first parse and leave the two cores idle at the ends). OTLP: 2 and 4 MB ran alike."""
PARSE_AHEAD = {
    "csv-value": 4,
    "csv-pair": 4,
    "csv-columns": 4,
    "lines": 2,
    "lines-value": 3,
    "ndjson": 4,
    "otlp": 2,
}
"""Chunks parsed at once, by kind of chunk (at most ``scan.PARSE_WORKERS``); about
ahead + 3 chunks are in memory. Measured on 2 cores at 1 GB, whole processes, median of
4: a CSV value column at 2/3/4 ahead 1.75/1.61/1.54 s (2.58/2.48/2.44 CPU-s) at
197/208/211 MB peak. Text lines gain as much (2.31 -> 1.88 s) but a pattern with a time
reached 238-245 MB at 4 ahead and 229 MB at 3 (208 MB at 2), too near the 250 MB
budget: lines and OTLP stay at 2. NDJSON at 2/4 ahead: 4.11/3.77 s (7.21/6.89 CPU-s) at
176/187 MB; with a group and a time 5.00/4.63 s at 191/204 MB. A CSV read for its value
and a group or time column (4 MB chunks), once the groups were coded in the parser
threads: ``--by host`` 2.64/2.52 s (best 2.31/2.07) at 178/189 MB, ``--time-field
--split-at`` 2.12/1.96 s at 192/209 MB. Text lines read for the value alone (no group,
no time) at 2/3 ahead: 2.99/2.63 s (4.44/4.01 CPU-s) at 203/220 MB, median of 3."""
GRANT_AHEAD = (("lines", "lines-value"), 4, 350)
"""(kinds, chunks ahead, least grant in MB): a memory grant that large lets text lines
parse 4 ahead too. Measured at 1 GB with ``--memory-budget 400`` (8 MB chunks), median
of 2, at 2/4 ahead: text 2.05/1.83 s (best 2.03/1.61) at 255/284 MB, text with a time
and ``--split-at`` 3.68/3.58 s at 274/303 MB."""
PEAK_MODEL = {
    "csv-value": (140.0, 8.5),
    "csv-pair": (160.0, 10.0),
    "csv-columns": (170.0, 10.0),
    "lines": (170.0, 7.5),
    "lines-value": (170.0, 7.5),
    "ndjson": (170.0, 7.5),
    "otlp": (100.0, 46.0),
}
"""Peak resident MB of a scan ~ base + slope x chunk MB, by kind of chunk: several chunks
are in flight, each parsed into a frame larger than its bytes (text lines become one
string each; OTLP documents nested lists). Fitted to whole-process peaks on 300 MB files
(``benchmarks/scan_bench.py``; file-backed pages of the input included): a CSV value
column at 6/8/50 MB chunks peaked at 174/185/331 MB, text lines at 3.75/4/31 MB at
194/193/391, a CSV read for value and group at 3.75/31 at 154/360, OTLP at 2/4 MB at
185/277. The CSV slopes were refitted with 4 chunks ahead (value alone, 8 MB: 211 MB at 1 GB;
with a group or time column, 4 MB: 209 MB). A CSV read for its value and one more column,
4 ahead, 1 GB (2026-12-03, max of 5-6 runs): 4/6/8 MB peaked at 187/210/234 MB with a
group (``host``), 199/219/239 (8 MB 3 ahead) with a time; 0.55 GB with a quoted 100-byte
user agent as the group, 180/203 at 4/6 MB. With a group and a time, 4/6 MB: 204/234."""


@dataclass(frozen=True)
class ScanOptions:
    """Everything a scan is asked to do, checked when built (OgiveError, one sentence).

    Checked here, once, for every caller (CLI, workspace, library): numeric ranges and
    the combinations that cannot work. What can only be judged against the data (a
    column name, a regex, a moment in time) is checked by the reader when it gets there.
    """

    format: str | None = None
    """'csv', 'tsv', 'ndjson', 'text', 'access', 'syslog', 'otlp', 'parquet', 'otlp-metrics',
    'openmetrics', or None to detect from the content (``sniff.detect``, ``metrics.detect``)."""
    field: str | None = None
    """NDJSON: path of the value (``timing.total_ms``, ``labels.k\\.dot``; see ``ndjson``);
    text, syslog, access logs: the KEY of ``KEY=VALUE`` pairs or a field of the format;
    OTLP: ``duration`` or an attribute. None: found from the records where they say."""
    column: str | None = None
    """CSV/TSV: column name, or 1-based index as digits."""
    pattern: str | None = None
    """Text lines: regex with one capture group or a named group ``value``."""
    header: bool | None = None
    """CSV/TSV: whether the first line is a header; None to detect."""
    unit: str | None = None
    """Unit the sketch is kept in (``ms``, ``s``, ``us``, ``ns``, or a plain label like ``bytes``)."""
    input_unit: str | None = None
    """Unit of numbers that carry no suffix."""
    by: str | None = None
    """Field/column whose distinct values each get a sketch (metrics: a point, resource or
    scope attribute, or an OpenMetrics label)."""
    metric: str | None = None
    """OTLP metrics and OpenMetrics: the histogram metric to read (None: each one found
    becomes a distribution of its own)."""
    max_groups: int = 1000
    time_field: str | None = None
    """Where each record's time is; None: the time the format carries, if any."""
    time_format: str | None = None
    """One of ``TIME_FORMS``, a strftime pattern (``%d.%m.%Y %H:%M:%S``), or None to detect
    (epoch numbers then read per value by their magnitude)."""
    split_at: str | None = None
    """A timestamp: values before it go to sketch 'before', the rest to 'after'."""
    window: str | None = None
    """Width of consecutive time windows (``30s``, ``10m``, ``1h``, ``1d``): each window gets a
    sketch named by its start in ISO 8601 UTC. None: no windows. Read once, into
    ``window_us``, by ``ogive.sketch.units.span_seconds`` (as ``fit.windows.parse_window`` does)."""
    timeline: bool = False
    """With ``window``: name each window ``[GROUP@]START/DURATION``
    (:mod:`ogive.sketch.timekeys`) and keep the whole beside the windows (``all``; with
    ``by`` also each group and the group's own windows), for ``ogive timeline``."""
    window_compression: float | None = None
    """Compression of the window sketches (None: ``compression``); the whole keeps ``compression``."""
    window_tail: int | None = None
    """Exact tail size of the window sketches (None: ``tail_size``)."""
    max_windows: int = 50_000
    """With ``timeline``: the most window sketches a scan may keep (memory stays bounded)."""
    strict: bool = False
    compression: float = DEFAULT_COMPRESSION
    tail_size: int = DEFAULT_TAIL
    chunk_bytes: int | None = None
    """Decompressed bytes per chunk; None picks by format (``chunk_size``)."""
    lazy_files: bool = False
    """Let polars' own streaming reader walk uncompressed files on disk instead of our
    chunked reader. Off by default: measured at 200-700 MB it was at best ~1.5x faster
    and at worst slower on a loaded machine, and its peak memory (~300 MB and growing
    with file size) breaks the flat 250 MB budget the chunked reader keeps (~155 MB)."""
    keep_partial: bool = False
    """On a corrupt or truncated compressed stream, return what was read before it (with
    ``ScanResult.error`` set and the sketches marked partial) instead of raising."""
    max_line_bytes: int = 64 << 20
    """A line longer than this (no newline within it) is skipped as ``too_long``."""
    encoding: str | None = None
    """The sources' text encoding (``--encoding``, a Python codec name such as ``cp1252``),
    decoded to UTF-8 as they are read. None: UTF-8, or UTF-16 where the bytes say so."""
    memory_budget_mb: int | None = None
    """Memory the user grants the scan (``--memory-budget``), in MB. None: the lean default
    (peak RSS <= ``LEAN_MB`` at any size), for a scan beside the service being looked at.
    A grant sizes the chunks to it, up to the size measured fastest (``FASTEST_CHUNK``):
    text lines, NDJSON and CSV read with a group or time column then read 8 MB chunks
    instead of 4 (~15 % faster, ~250 MB at peak); a smaller one shrinks them for a tight
    box. The sketches are the same whatever the chunk size."""
    window_us: float | None = dataclasses.field(default=None, init=False, repr=False, compare=False)
    """``window`` in microseconds, set when the options are built (``field`` is an option
    name in this class body, hence ``dataclasses.field``)."""

    def __post_init__(self) -> None:
        if self.encoding is not None:
            try:
                name = codecs.lookup(self.encoding).name
            except LookupError:
                raise OgiveError(
                    f"--encoding {self.encoding!r}: no such text encoding (cp1252, latin-1, utf-16, "
                    "shift_jis, ... any Python codec name)."
                ) from None
            object.__setattr__(self, "encoding", name)
        if not 10 <= self.compression <= MAX_COMPRESSION:
            raise OgiveError(
                f"--compression must lie between 10 and {MAX_COMPRESSION:g}, got {self.compression:g}."
            )
        if (self.chunk_bytes is not None and self.chunk_bytes < 1) or self.max_groups < 1:
            raise OgiveError("chunk_bytes and max_groups must be at least 1.")
        fmt = self.time_format
        if fmt is not None and fmt not in TIME_FORMS and "%" not in fmt:
            raise OgiveError(
                f"unknown time format {self.time_format!r}; use one of {', '.join(TIME_FORMS)}, "
                "or a strftime pattern such as '%d.%m.%Y %H:%M:%S'."
            )
        # Whether there is a time to split or window by is known once the records are:
        # access logs, syslog, OTLP and text lines that begin with one carry their own
        # (``records.plan`` refuses a layout without one).
        if self.window is not None:
            if self.split_at is not None or (self.by and not self.timeline):
                raise OgiveError("--window cannot be combined with --by or --split-at.")
            seconds = span_seconds(self.window)
            if seconds is None or seconds <= 0:
                raise OgiveError(
                    f"window width {self.window!r} is not a positive number with s, m, h or d, such as 10m."
                )
            object.__setattr__(self, "window_us", seconds * 1e6)  # frozen: set once, here
        elif self.timeline:
            raise OgiveError("a timeline needs --window, the width of each time window.")
        if self.window_compression is not None and not 10 <= self.window_compression <= MAX_COMPRESSION:
            raise OgiveError(
                f"the window compression must lie between 10 and {MAX_COMPRESSION:g}, "
                f"got {self.window_compression:g}."
            )
        if (self.window_tail is not None and self.window_tail < 1) or self.max_windows < 1:
            raise OgiveError("window_tail and max_windows must be at least 1.")
        if self.memory_budget_mb is not None and self.memory_budget_mb < MIN_BUDGET_MB:
            raise OgiveError(
                f"--memory-budget must be at least {MIN_BUDGET_MB} MB (a scan of text lines holds about "
                f"170 MB before its chunks), got {self.memory_budget_mb}."
            )

    def chunk_size(self, fmt: str | None, *, columns: int = 0) -> int:
        """Bytes per chunk for a source of format ``fmt`` (None: not known yet), by the
        lean defaults below, or sized to ``memory_budget_mb`` when one is given.

        Measured on 2 cores at 1 GB (``benchmarks/scan_bench.py``): a CSV read for its
        value column alone parses ~20% faster in 8 MB chunks than in 4 MB (polars'
        per-call cost is amortised), at 189 MB peak RSS. With group or time columns
        8 MB reached 234-260 MB (``--by host``), and text and NDJSON lines
        become one String each, about twice the working set per byte (8 MB: 236-253
        MB), over the 250 MB budget: those stay at 4 MB. OTLP documents decode into
        nested lists several times their size: 4 MB reached 277 MB at peak, 2 MB 185 MB
        at the same speed (``benchmarks/formats_bench.py``). A CSV read for its value and
        one more column (a group or a time) takes 5 MB. Measured 2026-12-03, 1 GB, median
        of 5-6 runs alternating, 4/6 MB, wall (CPU-s): ``--by host`` 3.42 s (5.22) / 3.10
        (4.81), ``--time-field --split-at`` 3.43 (5.49) / 3.00 (5.18), at most 219 MB; but
        at 8 GB, on one malloc arena (``cli``), the time scan peaked at 236-237 MB with
        6 MB and 219-223 with 5 MB, so 5 keeps a margin under the 250 MB budget. With both
        columns 6 MB reached 234 MB at 1 GB, so three stay at 4 MB.

        ``columns``: how many columns the layout reads (the value, a group, a time); 0
        when not known yet.
        """
        if self.chunk_bytes is not None:
            return self.chunk_bytes
        kind = _kind(fmt, columns)
        lean = {"csv-value": CSV_CHUNK, "csv-pair": CSV_PAIR_CHUNK, "otlp": OTLP_CHUNK}.get(kind, LINE_CHUNK)
        if self.memory_budget_mb is None:
            return lean
        base, slope = PEAK_MODEL[kind]
        # 10 % of the grant is kept back: the model is a fit, and the machine is not ours.
        fits = int((0.9 * self.memory_budget_mb - base) / slope * (1 << 20))
        return max(1 << 20, min(FASTEST_CHUNK[kind], fits))

    def parse_ahead(self, fmt: str | None, *, columns: int = 0) -> int:
        """Chunks parsed at once for a source of format ``fmt`` (``PARSE_AHEAD``, more
        with a large grant, ``GRANT_AHEAD``): more keeps both cores busy, each costs a
        chunk of memory."""
        kind = _kind(fmt, columns)
        granted, ahead, least = GRANT_AHEAD
        if kind in granted and self.memory_budget_mb is not None and self.memory_budget_mb >= least:
            return ahead
        return PARSE_AHEAD[kind]


def _kind(fmt: str | None, columns: int) -> str:
    """The kind of chunk, for its size and memory: OTLP documents, NDJSON lines, a CSV
    read for its value column alone, with one more column or with more, or lines
    (everything else), read for the value alone or with a group or time."""
    if fmt in ("otlp", "ndjson"):
        return fmt
    if fmt in ("csv", "tsv"):
        return "csv-value" if columns == 1 else "csv-pair" if columns == 2 else "csv-columns"
    return "lines-value" if columns == 1 else "lines"


@dataclass(frozen=True)
class ScanProgress:
    """A snapshot sent to the progress callback after each chunk.

    At most ~5 per second, except when the scan also has a ``cancel`` callback: then
    after every chunk, so that a caller deciding to stop (a preview of the first KB)
    sees current figures.
    """

    bytes_read: int
    bytes_total: int | None
    """None when unknown (stdin, compressed input whose size is not known)."""
    rows: int
    values: int
    elapsed_s: float
    source: str
    sketches: SketchSet
    """The sketches as they are now; read them only from the callback's thread."""


@dataclass
class ScanResult:
    sketches: SketchSet
    bytes_read: int = 0
    elapsed_s: float = 0.0
    warnings: list[str] = field(default_factory=list)
    """Things the user must be told (group cap reached, time going backwards, ...)."""
    partial: str | None = None
    """Why the scan stopped early, or None when it read everything."""
    interrupted: bool = False
    """The user pressed Ctrl-C: the sketches hold what was read before it (partial)."""
    lines_read: int = 0
    rows_read: int = 0
    skipped: dict[str, SkipTally] = field(default_factory=dict)
    """Every skipped row of the scan by reason, including rows no sketch could own
    (a bad timestamp under ``split_at``, a line too long to parse)."""
    format: str = ""
    """The record format that was used (detected or given)."""
    error: str | None = None
    """With ``keep_partial``: the corrupt-input error that ended the scan early."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "sketches": {name: s.summary() for name, s in self.sketches.sketches.items()},
            "bytes_read": self.bytes_read,
            "elapsed_s": self.elapsed_s,
            "lines_read": self.lines_read,
            "rows_read": self.rows_read,
            "skipped": {r: {"count": t.count, "examples": list(t.examples)} for r, t in self.skipped.items()},
            "warnings": list(self.warnings),
            "partial": self.partial,
            "format": self.format,
            "error": self.error,
        }
