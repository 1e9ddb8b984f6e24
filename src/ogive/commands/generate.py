"""`ogive generate`: the invented demo scenario as logs of any size.

Seeded and deterministic, so a benchmark or a bug report can name the exact file it
used by its command line instead of shipping gigabytes.
"""

from __future__ import annotations

import argparse
import json
import re
import sys

from ..errors import OgiveError

DESCRIPTION = """\
Write the invented demo scenario as an access log: the 'checkout' service of a made-up
grocer, whose release v4.2.0 at 2026-03-04T13:00:00Z made cache misses more frequent and
the miss path slower. Latencies are a mixture of a fast cache-hit path and a slow
cache-miss path, with per-route and per-host differences, realistic status codes,
response sizes and request ids. The same seed always writes the same bytes.

Phases: 'before' (00:00 to 13:00 UTC), 'after' (13:00 to 24:00), 'day' (the whole
day, the release applied at 13:00: try 'ogive scan --split-at 2026-03-04T13:00:00Z') or
'rollout' (the whole day, the release reaching one host after another from 13:00 to
13:40: try 'ogive timeline FILE --time-field timestamp --column latency_ms')."""

EPILOG = """\
formats and where the latency is:
  text    time host "METHOD route" status bytes=N rid=ID cache=hit|miss|none dur=12.3ms
          (dur in s from one second up); scan it with --pattern 'dur=(\\S+)'
  csv     timestamp,host,method,route,status,latency_ms,bytes,request_id (with header)
  ndjson  {"ts":..,"host":..,"http":{"method","route","status","bytes"},
           "timing":{"total_ms":..,"cache":..},"request_id":..}; use --field timing.total_ms

examples:
  ogive generate --format csv --size 1G -o big.csv           # for benchmarks
  ogive generate --format text --phase after --rows 1e6 -o after.log.gz
  ogive generate --format ndjson --rows 1000 -o - | ogive scan - --field timing.total_ms
  ogive generate --demo-set demo_logs                         # the bundled demo files"""

_SIZE_RE = re.compile(r"^\s*(\d+(?:\.\d*)?|\.\d+)\s*([kKmMgGtT]?)[bB]?\s*$")
_SIZE_SCALE = {"": 1e6, "k": 1e3, "m": 1e6, "g": 1e9, "t": 1e12}


def parse_size(text: str) -> int:
    """'100' (MB), '1.5G', '500MB', '64k' -> bytes (decimal units, as disks are sold)."""
    m = _SIZE_RE.match(text)
    if not m:
        raise argparse.ArgumentTypeError(f"expected a size such as 100 (MB), 500M or 1.5G, got {text!r}")
    value = float(m.group(1)) * _SIZE_SCALE[m.group(2).lower()]
    if value < 1:
        raise argparse.ArgumentTypeError(f"the size must be at least one byte, got {text!r}")
    return int(value)


def parse_rows(text: str) -> int:
    """'20000', '1e6', '250k' -> a row count."""
    t = text.strip().lower().replace("_", "")
    scale = 1
    if t.endswith("k"):
        t, scale = t[:-1], 1000
    elif t.endswith("m"):
        t, scale = t[:-1], 1_000_000
    try:
        value = float(t) * scale
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected a row count such as 20000, 1e6 or 250k, got {text!r}"
        ) from None
    if value < 1 or value != int(value):
        raise argparse.ArgumentTypeError(f"expected a whole number of rows of at least 1, got {text!r}")
    return int(value)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--format", choices=("text", "csv", "ndjson"), default="text", help="default: text")
    parser.add_argument(
        "--phase",
        choices=("before", "after", "day", "rollout"),
        default="day",
        help="which part of the day to write (default: day, spanning the release; rollout: the "
        "whole day, the release reaching one host after another from 13:00 to 13:40)",
    )
    amount = parser.add_mutually_exclusive_group()
    amount.add_argument("--rows", type=parse_rows, metavar="N", help="number of records (default 100000)")
    amount.add_argument(
        "--size", type=parse_size, metavar="SIZE", help="uncompressed size: MB by default, or 500M, 1.5G, 64k"
    )
    parser.add_argument("-o", "--output", metavar="PATH", help="file to write ('-' for stdout); .gz gzips it")
    parser.add_argument("--gzip", action="store_true", default=None, help="gzip even when the name lacks .gz")
    parser.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    parser.add_argument(
        "--bad-rows",
        type=int,
        default=0,
        metavar="N",
        help="spoil N records on purpose (a value that is not a number, a record without it)",
    )
    parser.add_argument(
        "--demo-set",
        metavar="DIR",
        help="write the bundled demo files (fixed names, sizes and seeds) into DIR instead",
    )
    parser.add_argument("--json", action="store_true", help="report what was written as JSON on stdout")


def run(args: argparse.Namespace) -> int:
    from .. import demo
    from ..outputs import check_target

    metric_files: list[str] = []
    if args.demo_set:
        from .. import demo_metrics

        if args.output or args.rows or args.size:
            raise OgiveError("--demo-set writes fixed files; drop -o, --rows and --size, or drop --demo-set.")
        results = demo.write_demo_set(args.demo_set)
        metric_files = demo_metrics.write_metrics_set(args.demo_set)
    else:
        if not args.output:
            raise OgiveError("name the file to write with -o PATH ('-' for standard output).")
        if args.bad_rows < 0:
            raise OgiveError(f"--bad-rows must be zero or more, got {args.bad_rows}.")
        if args.output == "-" and args.json:
            raise OgiveError("-o - and --json both want standard output; write to a file or drop --json.")
        check_target(args.output)
        rows = args.rows if args.rows or args.size else 100_000
        results = [
            demo.write(
                args.output,
                args.format,
                args.phase,
                rows=rows,
                size_bytes=args.size,
                seed=args.seed,
                bad_rows=args.bad_rows,
                compress=args.gzip,
            )
        ]
    if args.json:
        doc = {"files": [r.to_dict() for r in results], "metrics": metric_files}
        json.dump(doc, sys.stdout, indent=2)
        sys.stdout.write("\n")
        return 0
    report = sys.stderr if args.output == "-" else sys.stdout
    for r in results:
        mb = r.bytes_written / 1e6
        rate = mb / r.elapsed_s if r.elapsed_s > 0 else 0.0
        gz = ", gzip" if r.compressed else ""
        bad = f", {r.bad_rows} spoilt on purpose" if r.bad_rows else ""
        print(
            f"wrote {r.path}: {r.format}{gz}, phase {r.phase} ({r.span_start} to {r.span_end}), "
            f"{r.rows:,} row{'' if r.rows == 1 else 's'}{bad}, "
            f"{mb:.1f} MB uncompressed in {r.elapsed_s:.1f} s ({rate:.0f} MB/s)",
            file=report,
        )
    for path in metric_files:
        print(f"wrote {path}: the same day as telemetry histograms (OTLP JSON or OpenMetrics)", file=report)
    return 0
