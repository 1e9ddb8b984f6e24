"""`ogive scan`: read sources once, print the summary, and keep the sketch for later.

The sketch file is the point: every later question (``show``, ``fit``, ``compare``,
``gate``) is answered from it, and ``-o -`` lets a remote host send it back over SSH
while the table goes to stderr, so nothing but the sketch lands in the redirect.
"""

from __future__ import annotations

import argparse
import json
import sys
from typing import Any

from ..errors import EXIT_INTERRUPTED, OgiveError, printable
from ..outputs import check_target, repeated
from .common import add_source_options
from .objectives import add_objective_option

DESCRIPTION = """\
Read one or more sources once, in bounded memory, into a quantile sketch of one numeric
field, and print its summary: count, rows skipped by reason, min, p50, p90, p99, p99.9,
p99.99 and max. Several sources are one stream (rotated logs: app.log app.log.1
app.log.2.gz). Compression (gzip, zstd, bz2, xz) is recognised from the bytes, '-' reads
standard input. Rows that cannot be used are counted by reason, with the first few
locations, and listed under the table: nothing is dropped silently."""

EPILOG = """\
examples:
  ogive scan demo_logs/checkout-before.log --pattern 'dur=(\\S+)' -o before.ogive
  ogive scan demo_logs/checkout-day.csv --column latency_ms --by host
  ogive scan demo_logs/checkout-day.csv --column latency_ms \\
      --time-field timestamp --split-at 2026-03-04T13:00:00Z -o day.ogive
  ogive scan demo_logs/checkout-after.ndjson.gz --field timing.total_ms --json
  ogive scan demo_logs/checkout-day.csv --column latency_ms --unit ms --objective 250ms@99%
  ssh web-1 ogive scan /var/log/app.log --pattern 'dur=(\\S+)' -o - > web-1.ogive
  ogive scan 's3://logs/2026-03-04/*.log.gz' --pattern 'dur=(\\S+)' \\
      --cluster tcp://10.0.0.5:8786 -o day.ogive

With -o - the sketch goes to standard output and the summary to standard error.
The quantiles come from a t-digest with the 512 smallest and largest values kept
exactly: min, max and the extreme tail are exact; the middle is estimated."""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("sources", nargs="+", metavar="SOURCE", help="files to read ('-' for standard input)")
    parser.add_argument(
        "-o",
        "--output",
        metavar="OUT.ogive",
        help="save the sketch set here (written atomically); '-' sends it to standard output",
    )
    parser.add_argument(
        "--json", action="store_true", help="print one JSON document on stdout instead of the table"
    )
    parser.add_argument(
        "--follow",
        action="store_true",
        help="keep reading one growing file (surviving rotation), with a live line on stderr; "
        "Ctrl-C ends it, then the summary is printed and -o written",
    )
    parser.add_argument(
        "--recent",
        metavar="DURATION",
        default=None,
        help="with --follow: also keep a sketch of only the last DURATION (30s, 5m, 1h), shown live "
        "beside the all-time one and saved as the sketch recent-DURATION",
    )
    add_objective_option(parser)
    add_source_options(parser)


def run(args: argparse.Namespace) -> int:
    """The scan with the first Ctrl-C or SIGTERM held from the first byte read to the last
    byte written: a signal while the sketches are finished or the file is written keeps
    the result too (exit 130). Following a file, Ctrl-C is its normal end."""
    from .common import first_ctrl_c_stops

    with first_ctrl_c_stops(quiet=bool(args.follow)) as stopped:
        code = _run(args)
    return EXIT_INTERRUPTED if stopped.is_set() and not args.follow else code


def _run(args: argparse.Namespace) -> int:
    from ..render.summary import summarise, summary_lines
    from ..store import save_sketches, sketch_ref
    from .common import scan_sources
    from .objectives import objective_text, parse_objectives, set_objectives

    objectives = parse_objectives(args.objective, args.unit)
    to_stdout = args.output == "-"
    if to_stdout and args.json:
        raise OgiveError(
            "-o - and --json both want standard output; save the sketch to a file or drop --json."
        )
    if to_stdout and sys.stdout.isatty():
        raise OgiveError(
            "-o - would write the sketch file onto the terminal; redirect it (> host.ogive) or name a file."
        )
    if args.output and args.output != "-" and args.output in args.sources:
        raise OgiveError(f"-o {args.output} is also a source; choose another output name.")

    for src in args.sources:
        if sketch_ref(src) is not None:
            raise OgiveError(f"{src} is a saved sketch, not a log; look at it with 'ogive show {src}'.")
    if args.output:
        # Fail before a long scan, not after it: a device, FIFO, socket or folder is refused.
        check_target(args.output)
        clash = repeated([args.output, *args.sources]) if not to_stdout else None
        if clash is not None and clash[0] == args.output:
            raise OgiveError(f"-o {args.output} is the source {clash[1]}; choose another output name.")

    if args.follow and args.cluster:
        raise OgiveError("--follow reads a growing file on this machine; it does not run on a cluster.")
    if args.recent is not None and not args.follow:
        raise OgiveError("--recent keeps the last minutes of a followed log; use it with --follow.")
    result = _follow(args) if args.follow else scan_sources(list(args.sources), args, keep_partial=True)
    warnings = list(result.warnings)
    if result.partial and result.error is None:  # a damaged input gets its own error line
        warnings.append(f"the scan stopped early: {result.partial}")
    # Without --quiet the warnings were already printed on stderr as they came; the table
    # repeats them only when they would otherwise be lost. JSON always carries them.
    summary = summarise(
        result.sketches, warnings if (args.json or args.quiet) else warnings[len(result.warnings) :]
    )
    if args.output:
        save_sketches(args.output, result.sketches)
    try:
        slo = set_objectives(result.sketches, objectives)
    except OgiveError:
        # The values' unit came from the data and the threshold does not fit it: the summary
        # (and -o) of a long scan is not lost for that; the error follows it.
        if not args.json:
            print("\n".join(summary_lines(summary)), file=sys.stderr if to_stdout else sys.stdout)
        raise
    if args.json:
        doc = summary.to_dict()
        if objectives:
            doc["objectives"] = slo.to_dict()
        doc["bytes_read"] = result.bytes_read
        doc["elapsed_s"] = round(result.elapsed_s, 6)
        doc["output"] = args.output
        doc["error"] = result.error
        json.dump(doc, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
        _damaged(result, args.output)
        return EXIT_INTERRUPTED if result.interrupted else 0
    out = sys.stderr if to_stdout else sys.stdout
    lines = summary_lines(summary) + objective_text(slo)
    if args.output and not to_stdout:
        lines += [
            "",
            f"saved {len(summary.sketches)} sketch{'es' if len(summary.sketches) != 1 else ''} "
            f"to {args.output}",
        ]
    for line in lines:
        print(line, file=out)
    _damaged(result, args.output)
    # The partial sketch is saved; the status still tells a script the scan did not finish.
    return EXIT_INTERRUPTED if result.interrupted else 0


def _damaged(result: Any, output: str | None) -> None:
    """A damaged compressed stream is still an error (exit 3), after what came before the
    damage was shown and, with -o, saved and marked partial."""
    if result.error is None:
        return
    kept = sum(s.count for s in result.sketches.sketches.values())
    if output:
        where = "written out" if output == "-" else f"saved to {output}"
        raise OgiveError(f"{result.error} The {kept:,} values before it were {where}, marked partial.")
    raise OgiveError(f"{result.error} Nothing was saved (no -o); the {kept:,} values before it are shown.")


def _follow(args: argparse.Namespace) -> Any:
    """Follow one file until Ctrl-C; ending this way is the normal end, not a partial scan."""
    from ..numbers import quantity
    from ..read.follow import follow
    from .common import first_ctrl_c_stops, options_from_args

    if len(args.sources) != 1 or args.sources[0] == "-":
        raise OgiveError("--follow reads one growing file; name exactly one file (not '-').")
    options = options_from_args(args)
    recent = None
    if args.recent is not None:
        from ..read.follow import recent_window

        recent = recent_window(args.recent, options)
    tty = sys.stderr.isatty()

    def quantiles(label: str, s: Any) -> str:
        q50, q99, q999 = s.quantile([0.5, 0.99, 0.999])
        return (
            f"{label}p50 {quantity(q50, s.unit)} p99 {quantity(q99, s.unit)} p99.9 {quantity(q999, s.unit)}"
        )

    def live(p: Any) -> None:
        if args.quiet:
            return
        parts = [f"following {p.source}: {p.values:,} values"]
        window = p.sketches.sketches.get(recent.name) if recent is not None else None
        others = [(n, s) for n, s in p.sketches.sketches.items() if recent is None or n != recent.name]
        for name, s in others[: 2 if recent is not None else 3]:
            if s.count:
                label = ("all-time " if recent is not None else "") if name == "all" else f"{name} "
                parts.append(quantiles(label, s))
        if window is not None and recent is not None:
            label = f"last {args.recent.strip()} "
            parts.append(quantiles(label, window) if window.count else f"{label}no values yet")
        text = printable(" | ".join(parts))  # the file's name and group keys may hold ESC
        print(f"\r{text[:200]}\033[K" if tty else text, end="" if tty else "\n", file=sys.stderr, flush=True)

    with first_ctrl_c_stops(quiet=True) as stopped:
        result, rotations = follow(
            args.sources[0], options, cancel=stopped.is_set, on_update=live, recent=recent
        )
    if tty and not args.quiet:
        print("\r\033[K", end="", file=sys.stderr)
    if rotations:
        note = f"the file was rotated or truncated {rotations} time(s) while followed."
        result.warnings.append(note)
        if not args.quiet:
            print(f"ogive: warning: {note}", file=sys.stderr)
    return result
