"""`ogive timeline`: quantiles over time, and when the distribution changed, into what."""

from __future__ import annotations

import argparse
import json
import shutil
import sys
from typing import TYPE_CHECKING, Any

from ..errors import OgiveError

if TYPE_CHECKING:
    from ..fit.timeline import Timeline
    from ..read.options import ScanOptions
    from ..sketch import SketchSet

DESCRIPTION = """\
Cut one stream (one or more sources read as one) into time windows in a single pass,
keep a sketch per window beside the whole, and show: the chosen quantiles over time (a
text chart on a log value axis), a density strip (where each stretch of time puts its
values: two dark runs in one column are two modes, light cells reaching higher are a
longer tail), the change points found from the window sketches alone, each with what
moved (body, tail or both: the quantile ladder after against before) and the 'ogive
gate' command that checks it on the raw logs, and a table of the windows with the
quantiles' distribution-free intervals. A slow change (a rollout) is reported as a
span when the windows in between are mixes of before and after. --by FIELD adds one
line per group, the groups that changed most first. A saved timeline (-o) redraws
without the logs: ogive timeline saved.ogive."""

EPILOG = """\
What a change point means. The search (binary segmentation over a tail-weighted
two-sample distance between merged windows) calls a split of the windows a change only
when at most 5 % of random orders of the same windows produce as large a split (a
permutation test): on a steady timeline, the chance that any change is reported at
all is the --false-alarm rate (default 5 %). Deeper splits are tested at half the rate
per level. A daily cycle or a slow drift is a real movement of the distribution and
is reported as change points or spans; a change point says when, not why. Check
what matters to a release with the 'ogive gate' line printed under each change.

Memory: a window keeps a small sketch (about 4 KB), so a week of 1-minute windows
stays within the scan's memory budget; more window sketches than --max-windows
(window count times groups with --by) stop the scan with a message.

examples:
  ogive timeline demo_logs/checkout-day.csv --column latency_ms --time-field timestamp
  ogive timeline app.log.gz --pattern 'dur=(\\S+)' --time-field ts --window 1m -o day.ogive
  ogive timeline day.ogive --quantiles p50,p99,p99.9 --ascii
  ogive timeline access.log --format text --time-field time --by route --window 10m --json"""

WINDOW_COMPRESSION = 200.0
"""t-digest compression of each window's sketch (the whole keeps the scan's): about
100 centroids; with the exact tails 3.9 KiB a window (benchmarks/timeline_bench.py)."""
WINDOW_TAIL = 64
"""Exact values kept at each end of a window: p99 is exact up to 6,400 values a window,
p99.9 up to 64,000. A week of 1-minute windows then holds about 39 MB."""
MAX_WINDOWS = 12_000
"""Window sketches one scan may keep (a week of minutes is 10,080)."""
TABLE_AUTO = 48
"""``--table auto`` lists every window up to this many, else the windows beside changes."""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    from .common import add_source_options
    from .objectives import add_objective_option

    parser.add_argument(
        "sources",
        nargs="+",
        metavar="SOURCE",
        help="files to read ('-' for standard input), or one saved timeline",
    )
    parser.add_argument(
        "--window",
        default="5m",
        metavar="WIDTH",
        help="width of each time window: 30s, 5m, 1h, 1d (default 5m)",
    )
    parser.add_argument("-o", "--output", metavar="OUT.ogive", help="save the window sketches and the whole")
    parser.add_argument("--json", action="store_true", help="print the timeline as one JSON document")
    parser.add_argument(
        "--quantiles",
        "-q",
        default="p50,p90,p99",
        metavar="LIST",
        help="quantiles drawn over time (default p50,p90,p99)",
    )
    parser.add_argument(
        "--false-alarm",
        type=float,
        default=0.05,
        metavar="RATE",
        help="chance that a steady timeline shows any change, between 0.001 and 0.2 (default 0.05)",
    )
    parser.add_argument(
        "--table",
        choices=("auto", "all", "changes", "none"),
        default="auto",
        help=f"which windows the table lists (auto: all up to {TABLE_AUTO}, else those beside changes)",
    )
    parser.add_argument(
        "--ascii", action="store_true", help="plain ASCII pictures instead of braille and blocks"
    )
    parser.add_argument(
        "--width", type=int, default=None, help="columns (default: the terminal's, at most 120)"
    )
    parser.add_argument(
        "--max-windows",
        type=int,
        default=MAX_WINDOWS,
        metavar="N",
        help=f"most window sketches to keep, groups included (default {MAX_WINDOWS:,})",
    )
    add_objective_option(
        parser,
        "a service-level objective THRESHOLD@SHARE%%, e.g. 300ms@99.9%%: the error budget's burn "
        "per window (share over the threshold / allowed share, with its 95%% interval) and the "
        "budget spent so far, for the whole stream (not per --by group); repeat for more",
    )
    parser.add_argument(
        "--burn-mark",
        type=float,
        default=1.0,
        metavar="RATE",
        help="with --objective: mark windows whose burn rate (share over / allowed share) is above "
        "RATE (default 1: faster than the objective allows); ! when the window's interval is "
        "above it, ? when only the estimate is",
    )
    add_source_options(parser)


def run(args: argparse.Namespace) -> int:
    from ..fit.burn import budget_burn
    from ..fit.timeline import build_timeline, read_windows
    from ..render import color_allowed
    from ..render.burn import burn_lines
    from ..render.timeline_text import days_of, report_lines
    from ..store import save_sketches
    from .objectives import parse_objectives
    from .show import parse_quantiles

    objectives = parse_objectives(args.objective, args.unit)
    if not args.burn_mark > 0:
        raise OgiveError(f"--burn-mark must be above 0, got {args.burn_mark:g}.")
    if not 0.001 <= args.false_alarm <= 0.2:
        raise OgiveError(f"--false-alarm must lie between 0.001 and 0.2, got {args.false_alarm:g}.")
    asked = parse_quantiles(args.quantiles)
    qs = tuple(sorted({q for q in asked if isinstance(q, float)}))
    if len(qs) != len(set(asked)):
        raise OgiveError("--quantiles draws quantiles only (p50, 0.99, 99.9%), not the mean.")
    if len(qs) > 5:
        raise OgiveError("--quantiles draws at most five lines; choose five or fewer.")
    sset, base = _load(args)
    if args.output:
        save_sketches(args.output, sset)
    try:
        data = read_windows(sset)
        table = args.table if args.table != "auto" else ("all" if data.count <= TABLE_AUTO else "changes")
        tl = build_timeline(data, chart_qs=qs, alpha=args.false_alarm, table=table)
        main = next(iter(data.streams.values()))
        burns = [
            budget_burn(
                main.name,
                [(data.start(i), w) for i, w in enumerate(main.windows)],
                main.whole,
                o,
                mark_rate=args.burn_mark,
                width_us=data.width_us,
            )
            for o in objectives
        ]
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    if args.json:
        doc = tl.to_dict()
        if burns:
            doc["objectives"] = [b.to_dict() for b in burns]
        _add_gate_commands(doc, tl, base)
        doc["output"] = args.output
        json.dump(doc, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
        return 0
    width = args.width or min(shutil.get_terminal_size((100, 40)).columns, 120)
    colour = color_allowed(sys.stdout)
    lines = report_lines(tl, _title(args), base, width=width, ascii_only=args.ascii, colour=colour)
    starts = [r.start_us for r in tl.streams[0].rows] if args.table != "none" else []
    for b in burns:
        lines += ["", *burn_lines(b, width=width, starts=starts, days=days_of(tl), ascii_only=args.ascii)]
    sys.stdout.write("\n".join(lines) + "\n")
    if args.output:
        sys.stdout.write(f"saved {len(sset.names()):,} sketches to {args.output}\n")
    return 0


def _title(args: argparse.Namespace) -> str:
    shown = ", ".join(args.sources[:2]) + (
        f" and {len(args.sources) - 2} more" if len(args.sources) > 2 else ""
    )
    return shown


# ---------------------------------------------------------------- reading
def _load(args: argparse.Namespace) -> tuple[SketchSet, str | None]:
    """The window sketches (scanned, or a saved timeline) and the start of the gate command."""
    from ..store import load_ref, sketch_ref

    ref = sketch_ref(args.sources[0]) if len(args.sources) == 1 else None
    if ref is not None:
        sset = load_ref(ref)
        return sset, _saved_gate_base(sset)
    for src in args.sources:
        if sketch_ref(src) is not None:
            raise OgiveError(f"{src} is a saved sketch; give a saved timeline on its own.")
    if args.split_at:
        raise OgiveError(
            "--split-at cuts one moment; a timeline cuts windows (--window) and finds the moments."
        )
    if args.output and args.output in args.sources:
        raise OgiveError(f"-o {args.output} is also a source; choose another output name.")
    if args.output:
        from ..store import check_target

        check_target(args.output)
    return _scan(args), _gate_base(args)


def scan_options(base: ScanOptions, window: str, *, max_windows: int = MAX_WINDOWS) -> ScanOptions:
    """The options of a timeline scan: ``base`` (how to read the records) with windows of
    ``window`` kept beside the whole, at the timeline's compression, tail and cap."""
    import dataclasses

    return dataclasses.replace(
        base,
        window=window,
        timeline=True,
        window_compression=WINDOW_COMPRESSION,
        window_tail=WINDOW_TAIL,
        max_windows=max_windows,
    )


def reading_options(args: argparse.Namespace) -> ScanOptions:
    """How to read the records, from the flags, without ``--window`` (a plain window scan
    refuses ``--by``; the timeline's own allows it)."""
    from .common import options_from_args

    return options_from_args(argparse.Namespace(**{**vars(args), "window": None}))


def _scan(args: argparse.Namespace) -> SketchSet:
    from .common import scan_sources

    options = scan_options(reading_options(args), args.window, max_windows=args.max_windows)
    result = scan_sources(list(args.sources), args, options=options)
    if result.interrupted:
        print("ogive: the timeline shows what was read before Ctrl-C.", file=sys.stderr)
    return result.sketches


FLAGS = ("format", "field", "column", "pattern", "metric", "unit", "input_unit", "time_field", "time_format")


def _gate_base(args: argparse.Namespace) -> str:
    from ..render.timeline_text import quote_args

    words = list(args.sources)
    for name in FLAGS:
        value = getattr(args, name, None)
        if value is not None:
            words += [f"--{name.replace('_', '-')}", str(value)]
    if args.header is not None:
        words.append("--header" if args.header else "--no-header")
    return quote_args(words)


def _saved_gate_base(sset: SketchSet) -> str | None:
    """The sources and value flag the saved timeline was made from; the time field is not
    kept in the file, so the command names it as FIELD for the user to fill in."""
    from ..render.timeline_text import quote_args

    whole = sset.sketches.get("all") or next(iter(sset.sketches.values()), None)
    if whole is None or not whole.provenance.sources:
        return None
    how, _, value = whole.provenance.field.partition(" ")
    words = list(whole.provenance.sources)
    if how in ("column", "field", "pattern") and value:
        words += [f"--{how}", value]
    if whole.unit:
        words += ["--unit", whole.unit]
    return quote_args(words) + " --time-field FIELD"


def _add_gate_commands(doc: dict[str, Any], tl: Timeline, base: str | None) -> None:
    from ..render.timeline_text import gate_command

    if base is None:
        return
    for c, out in zip(tl.streams[0].changes, doc["streams"][0]["changes"], strict=True):
        if c.kind != "shape":
            out["gate_command"] = gate_command(base, c)
