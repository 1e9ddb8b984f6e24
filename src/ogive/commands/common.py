"""What every sub-command that takes a distribution shares: source flags, loading, scanning.

A distribution on the command line is either a saved sketch (``run.ogive`` or
``run.ogive:GROUP``) or raw sources to scan (``app.log app.log.1.gz``);
:func:`ogive.store.sketch_ref` decides which, from the file's bytes.

Only the standard library is imported at module level (``ogive --help`` stays fast);
polars and the reader come in when a scan actually runs.
"""

from __future__ import annotations

import argparse
import contextlib
import dataclasses
import gc
import signal
import sys
import threading
from collections.abc import Iterator
from typing import TYPE_CHECKING

from ..errors import OgiveError, printable
from .generate import parse_size

if TYPE_CHECKING:
    from ..read.options import ScanOptions, ScanResult
    from ..sketch import Binned, Sketch, SketchSet

FORMAT_CHOICES = (
    "csv", "tsv", "ndjson", "text", "access", "syslog", "w3c", "otlp", "parquet", "otlp-metrics",
    "openmetrics",
)  # fmt: skip
TIME_FORMAT_CHOICES = ("iso", "epoch_s", "epoch_ms", "epoch_us", "epoch_ns", "clf", "rfc3164")


def _time_format(text: str) -> str:
    if text in TIME_FORMAT_CHOICES or "%" in text:
        return text
    raise argparse.ArgumentTypeError(
        f"{text!r} is neither one of {', '.join(TIME_FORMAT_CHOICES)} nor a strftime pattern (%d.%m.%Y ...)"
    )


def add_source_options(parser: argparse.ArgumentParser) -> None:
    """The flags that say how to read raw sources; harmless when a sketch file is given."""
    g = parser.add_argument_group("reading sources (ignored for saved sketches)")
    g.add_argument(
        "--format",
        choices=FORMAT_CHOICES,
        default=None,
        help="how the records are laid out (access: Common Log Format and combined; syslog: RFC 3164 "
        "and 5424; w3c: W3C extended log, as IIS writes it; otlp: OTLP JSON traces; otlp-metrics: "
        "OTLP JSON metric histograms; openmetrics: OpenMetrics/Prometheus text histograms); by default "
        "it is worked out from the first bytes",
    )
    g.add_argument(
        "--encoding",
        metavar="NAME",
        default=None,
        help="the sources' text encoding, when not UTF-8: cp1252 (most Windows exports), latin-1, "
        "shift_jis, utf-16, ... (any Python codec name). Without it UTF-8 is read, UTF-16 where "
        "the bytes say so, and bytes that are not UTF-8 become U+FFFD, counted in a warning",
    )
    g.add_argument(
        "--metric",
        metavar="NAME",
        default=None,
        help="OTLP metrics and OpenMetrics: the histogram metric to read (by default each one found "
        "becomes a distribution of its own)",
    )
    g.add_argument(
        "--field",
        metavar="PATH",
        default=None,
        help="NDJSON: dotted path to the number, e.g. timing.total_ms (a dot inside a key: "
        'labels.k\\.dot or labels["k.dot"]); text and syslog: the KEY of KEY=VALUE pairs; '
        "access logs: latency, bytes, status (ingress-nginx: request_time, upstream_response_time, "
        "...); W3C logs: a field of #Fields: (time-taken by default); "
        "OTLP: duration or a span attribute",
    )
    g.add_argument(
        "--column",
        metavar="NAME|N",
        default=None,
        help="CSV/TSV: the column holding the number, by header name or 1-based position",
    )
    g.add_argument(
        "--pattern",
        metavar="REGEX",
        default=None,
        help="free text: a regular expression whose single group (or group named 'value') is the number",
    )
    hdr = g.add_mutually_exclusive_group()
    hdr.add_argument(
        "--header",
        dest="header",
        action="store_true",
        default=None,
        help="CSV/TSV: the first line names the columns (normally guessed)",
    )
    hdr.add_argument(
        "--no-header",
        dest="header",
        action="store_false",
        help="CSV/TSV: the first line is already data",
    )
    g.add_argument(
        "--unit",
        default=None,
        help="unit the sketch is kept in: ns, us, ms, s, m, h, or a label such as bytes "
        "(no conversion); durations default to ms",
    )
    g.add_argument(
        "--input-unit",
        metavar="UNIT",
        default=None,
        help="unit of numbers written without a suffix (e.g. s when the log says 0.25 for 250 ms)",
    )
    g.add_argument(
        "--by",
        metavar="FIELD",
        default=None,
        help="keep a separate sketch for each distinct value of this column/field (host, route, ...)",
    )
    g.add_argument(
        "--max-groups",
        metavar="N",
        type=_positive_int,
        default=1000,
        help="with --by: after N distinct values, further ones share the group FIELD=(other) (default 1000). "
        "Each group costs memory while scanning (measured: about 15 KB for a group of a few values, up to "
        "about 60 KB for one of many, plus at most 32 MB of values buffered across all groups) and "
        "about 1.3 KB to 60 KB in the saved file; 10^5 small groups took 1.6 GB and a 126 MB file",
    )
    g.add_argument(
        "--time-field",
        metavar="FIELD",
        default=None,
        help="column/field holding each record's timestamp (for --split-at and the time range); "
        "not needed where the format carries one (access logs, syslog, W3C logs, OTLP, NDJSON @timestamp "
        "or a time/ts field of moments, text lines that begin with a time stamp or carry a ts=/time= pair)",
    )
    g.add_argument(
        "--time-format",
        type=_time_format,
        metavar="FORM",
        default=None,
        help=f"how timestamps are written: {', '.join(TIME_FORMAT_CHOICES)}, or a strftime pattern "
        "such as '%%d.%%m.%%Y %%H:%%M:%%S' (UTC unless it reads %%z); by default guessed from the values",
    )
    g.add_argument(
        "--split-at",
        metavar="TIME",
        default=None,
        help="a moment (e.g. a deploy, 2026-03-04T10:00:00Z): records before it go to sketch "
        "'before', the rest to 'after'",
    )
    g.add_argument(
        "--strict",
        action="store_true",
        help="stop at the first unusable record, naming file:line, instead of counting it",
    )
    g.add_argument(
        "--compression",
        metavar="DELTA",
        type=float,
        default=None,
        help="t-digest compression: larger keeps more centroids, sharper quantiles, bigger files",
    )
    g.add_argument(
        "--memory-budget",
        metavar="MB",
        type=_positive_int,
        default=None,
        help="memory the scan may use, in MB (at least 200). Without it the scan stays lean "
        "(peak RSS at most 250 MB at any file size) to leave room for the service beside it; "
        "300 or more lets text, NDJSON and CSV read with --by or --time-field use larger "
        "chunks, and 350 or more lets text lines parse more chunks at once (10-20%% faster "
        "on 2 cores); the sketches are the same either way",
    )
    g.add_argument(
        "--quiet",
        action="store_true",
        help="no progress line and no warnings on stderr",
    )
    c = parser.add_argument_group("reading on a Dask cluster (pip install 'ogive[cluster]')")
    c.add_argument(
        "--cluster",
        metavar="ADDRESS",
        default=None,
        help="read the sources on a Dask cluster: a scheduler address (tcp://10.0.0.5:8786), or local[:N] "
        "for N worker processes on this machine; every worker must reach the sources by the same name "
        "(s3://, gs://, https:// URLs, or a shared file system). Same result as without it",
    )
    c.add_argument(
        "--part-size",
        metavar="SIZE",
        type=parse_size,
        default=None,
        help="with --cluster: bytes of a plain file one task reads (MB by default, or 16M, 1G; default 64M); "
        "a compressed file is one task",
    )


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected at least 1, got {value}")
    return value


def options_from_args(args: argparse.Namespace) -> ScanOptions:
    """ScanOptions from parsed flags; commands that lack some flags get the defaults."""
    from ..read.options import ScanOptions

    kwargs: dict[str, object] = {}
    for name in (
        "format",
        "field",
        "column",
        "pattern",
        "header",
        "unit",
        "input_unit",
        "by",
        "metric",
        "encoding",
        "max_groups",
        "time_field",
        "time_format",
        "split_at",
        "window",
        "strict",
        "compression",
    ):
        value = getattr(args, name, None)
        if value is not None:
            kwargs[name] = value
    budget = getattr(args, "memory_budget", None)
    if budget is not None:
        kwargs["memory_budget_mb"] = budget
    return ScanOptions(**kwargs)  # type: ignore[arg-type]


def load_set(specs: list[str], args: argparse.Namespace) -> SketchSet:
    """A saved sketch set (one file, optionally ``:GROUP``) or a fresh scan of the sources."""
    from ..store import load_ref, sketch_ref

    if not specs:
        raise OgiveError("no source given; name a file, '-' for standard input, or a saved .ogive sketch.")
    if len(specs) == 1:
        ref = sketch_ref(specs[0])
        if ref is not None:
            return load_ref(ref)
    for spec in specs:
        if sketch_ref(spec) is not None:
            raise OgiveError(
                f"{spec} is a saved sketch; give it on its own, or merge sketches first with 'ogive merge'."
            )
    return scan_sources(specs, args).sketches


def load_one(spec: str, args: argparse.Namespace) -> tuple[str, Sketch | Binned]:
    """One distribution: a sketch file[:GROUP] or a source; several groups need a choice."""
    from ..store import few

    sset = load_set([spec], args)
    names = sset.names()
    if len(names) == 1:
        return names[0], sset[names[0]]
    if not names:
        raise OgiveError(f"{spec} gave no sketch at all.")
    raise OgiveError(
        f"{spec} holds {len(names)} sketches; choose one as {spec}:GROUP for a saved file, "
        f"or drop --by/--split-at for a source (groups: {few(names)})."
    )


GENERIC_NAMES = ("all",)
"""Sketch names that say nothing about where the values came from (a scan without groups)."""


def side_names(specs: tuple[str, str], names: tuple[str, str]) -> tuple[str, str]:
    """What two distributions are called in tables, plot axes and JSON: their sketch names.

    A generic name (``all``) gives way to the file's name (``before.log`` -> ``before``);
    two sides that would read the same are told apart by their files (``web-1:all``
    and ``web-2:all``), and as a last resort by the text given on the command line.
    """
    from ..store import source_stem, split_group

    stems = tuple(source_stem(split_group(spec)[0]) for spec in specs)
    out = tuple(stem if name in GENERIC_NAMES else name for stem, name in zip(stems, names, strict=True))
    if out[0] == out[1]:
        out = tuple(f"{stem}:{name}" for stem, name in zip(stems, names, strict=True))
    if out[0] == out[1]:
        out = specs
    return printable(out[0]), printable(out[1])


def in_baseline_unit(
    b: Sketch | Binned, a: Sketch | Binned, names: tuple[str, str], *, quiet: bool = False
) -> Sketch | Binned:
    """B in A's unit: durations convert (s, ms, us, ns), anything else is refused in one sentence."""
    from ..sketch.units import duration_factor, in_unit

    if b.unit == a.unit:
        return b
    if duration_factor(b.unit, a.unit) is None:
        raise OgiveError(
            f"{names[0]} is in {a.unit or 'no unit'!r} and {names[1]} in {b.unit or 'no unit'!r}: "
            "they measure different things and do not compare."
        )
    if not quiet:
        note = f"{names[1]} ({b.unit}) is read in {a.unit}, the unit of {names[0]}"
        print(f"ogive: note: {note}.", file=sys.stderr)
    return in_unit(b, a.unit)


def two_sides(
    args: argparse.Namespace,
) -> tuple[tuple[Sketch | Binned, Sketch | Binned], tuple[str, str], tuple[str, str]]:
    """The baseline A and the other side B of ``compare``/``gate``, their names and where each came from.

    ``A B`` (each a sketch or sources), or one source split with ``--split-at`` (or one
    sketch file holding ``before`` and ``after``, or exactly two sketches).
    """
    if args.b is not None:
        name_a, a = load_one(args.a, args)
        name_b, b = load_one(args.b, args)
        names = side_names((args.a, args.b), (name_a, name_b))
        b = in_baseline_unit(b, a, names, quiet=bool(getattr(args, "quiet", False)) or args.json)
        return (a, b), names, (args.a, args.b)
    sset = load_set([args.a], args)
    held = sset.names()
    if set(held) >= {"before", "after"}:
        pair = ("before", "after")
    elif len(held) == 2:
        pair = (held[0], held[1])
    else:
        command = getattr(args, "command", None) or "compare"
        raise OgiveError(
            f"{command} needs two sides: give A and B, or one source with --split-at TIME, "
            f"or one sketch file holding exactly two sketches ({args.a} holds {len(held)})."
        )
    where = (f"{args.a} ({pair[0]})", f"{args.a} ({pair[1]})")
    quiet = bool(getattr(args, "quiet", False)) or args.json
    a = sset[pair[0]]
    return (a, in_baseline_unit(sset[pair[1]], a, pair, quiet=quiet)), pair, where


def group_sides(args: argparse.Namespace) -> tuple[tuple[SketchSet, SketchSet], tuple[str, str]]:
    """The groups of ``--by`` on each side: ``A B`` scanned or loaded (each group of B read in
    the unit of A's), or one source split at a time."""
    from ..sketch import SketchSet

    if args.b is not None:
        sa, sb = load_set([args.a], args), load_set([args.b], args)
        names = side_names((args.a, args.b), (GENERIC_NAMES[0], GENERIC_NAMES[0]))
        quiet = bool(getattr(args, "quiet", False)) or args.json
        unit_of = {g: s for g, s in sa.sketches.items()}
        converted = {
            g: in_baseline_unit(s, unit_of[g], (f"{names[0]}:{g}", f"{names[1]}:{g}"), quiet=quiet)
            if g in unit_of
            else s
            for g, s in sb.sketches.items()
        }
        return (sa, SketchSet(converted)), names
    sset = load_set([args.a], args)
    halves: tuple[SketchSet, SketchSet] = (SketchSet(), SketchSet())
    for name in sset.names():
        side, _, group = name.partition("/")
        if side in ("before", "after") and group:
            halves[side == "after"].sketches[group] = sset[name]
    if not halves[0].sketches and not halves[1].sketches:
        raise OgiveError(
            "--by with one source needs --split-at TIME (groups before and after it), or give A and B."
        )
    return halves, ("before", "after")


def scan_sources(
    sources: list[str],
    args: argparse.Namespace,
    *,
    keep_partial: bool = False,
    options: ScanOptions | None = None,
) -> ScanResult:
    """Scan with the progress line when stderr is a terminal; warnings go to stderr.

    ``keep_partial``: a damaged compressed stream ends the scan with what was read
    before the damage (``result.error`` says where) instead of raising. ``options``:
    the scan's options when a command adds its own to the flags' (``timeline``).
    """
    from ..read import scan
    from .progress import ProgressLine

    # The modules just imported (polars, numpy) are the bulk of the objects the cyclic
    # garbage collector would walk again and again during a scan (measured ~2.4% of a
    # 1 GB scan's CPU, 0.4% once frozen). A command scans once and exits (the workspace
    # does not come this way); frozen once per process, so a caller that runs many
    # commands in one process keeps collecting what it makes later.
    if not gc.get_freeze_count():
        gc.freeze()
    options = dataclasses.replace(options or options_from_args(args), keep_partial=keep_partial)
    quiet = bool(getattr(args, "quiet", False))
    line = ProgressLine(sys.stderr) if not quiet and sys.stderr.isatty() else None
    address = getattr(args, "cluster", None)
    if address is None and getattr(args, "part_size", None) is not None:
        raise OgiveError("--part-size sets the size of a task on a cluster; use it with --cluster.")
    with first_ctrl_c_stops() as stopped:
        try:
            if address is not None:
                from ..cluster import scan as cluster_scan

                result = cluster_scan(
                    sources,
                    options,
                    cluster=address,
                    part_bytes=args.part_size,
                    progress=line.update if line else None,
                    cancel=stopped.is_set,
                )
            else:
                result = scan(sources, options, progress=line.update if line else None, cancel=stopped.is_set)
        finally:
            if line is not None:
                line.clear()
    if stopped.is_set():
        result.interrupted = True
        if result.partial is not None:  # the request came while reading: what was read is kept
            result.partial = f"interrupted (Ctrl-C or SIGTERM): {result.partial}"
            for sketch in result.sketches.sketches.values():
                sketch.provenance.partial = result.partial  # the saved file says why it is partial
        # else: it came once every byte was read, while the sketches were finished: they
        # are whole, and are kept unflagged (the exit status still says 130).
    if not quiet:
        for warning in result.warnings:
            print(f"ogive: warning: {printable(warning)}", file=sys.stderr)
    return result


_ACTIVE: list[threading.Event] = []
"""The stop flag of the outermost ``first_ctrl_c_stops`` in force (inner ones share it)."""

STOP_SIGNALS = (signal.SIGINT, signal.SIGTERM)


@contextlib.contextmanager
def first_ctrl_c_stops(*, quiet: bool = False) -> Iterator[threading.Event]:
    """The first Ctrl-C (or SIGTERM) asks the scan to stop after the chunk in hand, so the
    sketch of what was read survives (and is saved, flagged partial); a second one
    abandons it (KeyboardInterrupt: nothing half-written is left behind).

    Nested uses share the outer flag, so a command can hold it from the first byte
    read to the last byte written: a signal while groups are flushed or the file is
    written is then the same request, not a KeyboardInterrupt that loses the result.
    """
    if _ACTIVE:
        yield _ACTIVE[-1]
        return
    stopped = threading.Event()
    if threading.current_thread() is not threading.main_thread():
        yield stopped  # signals reach only the main thread; a UI worker cancels its own way
        return

    def on_signal(signum: int, frame: object) -> None:
        if stopped.is_set():
            raise KeyboardInterrupt
        stopped.set()
        if not quiet:
            what = "interrupted" if signum == signal.SIGINT else "asked to stop (SIGTERM)"
            print(f"ogive: {what}; keeping what was read (Ctrl-C again to abandon it)", file=sys.stderr)

    previous = {sig: signal.signal(sig, on_signal) for sig in STOP_SIGNALS}
    _ACTIVE.append(stopped)
    try:
        yield stopped
    finally:
        _ACTIVE.pop()
        for sig, handler in previous.items():
            signal.signal(sig, handler)
