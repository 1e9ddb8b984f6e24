"""`ogive compare`: did B move from A, where, by how much, and is it more than noise."""

from __future__ import annotations

import argparse
import json
import sys
from typing import TYPE_CHECKING, Any

from ..errors import OgiveError
from .plot import add_plot_option, print_plot

if TYPE_CHECKING:
    from ..sketch import SketchSet

DESCRIPTION = """\
Compare two distributions of one field: A (the baseline) and B.

A and B are saved sketches (run.ogive, run.ogive:GROUP) or raw sources to scan with
the reading options below. With one source and --split-at TIME, A is everything
before TIME and B the rest. With --by FIELD, each group present on both sides gets a
row, the groups whose p99 moved most surely first. With --window 10m, one source is
cut into consecutive time windows, each compared with the first.

Shown: the quantile ladder p50 ... p99.99 and max with distribution-free intervals
(order statistics, read through the sketch so that they contain the intervals the raw
values would give), the change and a verdict that is called only when the intervals
separate; the Kolmogorov-Smirnov and Wasserstein-1
distances; the shift function B - A across deciles and tail quantiles with a
simultaneous band; the share of B above A's p99 and p99.9 with a G test; and one
plain-language summary line.
"""

EPILOG = """\
Reading the verdicts: each interval covers its quantile with the stated confidence.
A row's "higher"/"lower" is wrong with probability at most 1 - confidence^2 (about
10% at 0.95) and, when nothing changed, is called far more rarely than that; across
many rows such chances add up. "too few values" means the data cannot bound that
quantile. Very large samples make tiny, harmless differences "credible": look at the
size of the change, not only at the verdict.

examples:
  ogive compare before.ogive after.ogive
  ogive compare app.log --split-at 2026-03-04T10:00:00Z --time-field ts --json
  ogive compare hosts.ogive:web-1 hosts.ogive:web-2
  ogive compare monday.log tuesday.log --field timing.total_ms --by route
"""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    from .common import add_source_options
    from .objectives import add_objective_option

    parser.add_argument("a", metavar="A", help="baseline: a sketch file[:GROUP] or a source")
    parser.add_argument(
        "b", metavar="B", nargs="?", default=None, help="the other side (omit with --split-at or --window)"
    )
    parser.add_argument(
        "--confidence",
        type=float,
        default=0.95,
        metavar="LEVEL",
        help="confidence of each interval, between 0 and 1 (default 0.95)",
    )
    parser.add_argument(
        "--window",
        metavar="WIDTH",
        default=None,
        help="cut one source into time windows of this width (30s, 10m, 1h, 1d) and compare each "
        "with the first; needs --time-field for sources without an obvious timestamp",
    )
    parser.add_argument("--json", action="store_true", help="print the comparison as JSON")
    add_plot_option(parser, ("shift", "qq", "detrended", "pp", "cdf"))
    add_objective_option(parser)
    add_source_options(parser)


def run(args: argparse.Namespace) -> int:
    from ..fit.compare import compare_groups, compare_sketches
    from ..render.reports import comparison_text, groups_text
    from .common import group_sides, two_sides
    from .objectives import objective_text, parse_objectives, read_objectives, with_objectives

    conf = float(args.confidence)
    if not 0.5 <= conf < 1:
        raise OgiveError(f"--confidence must be at least 0.5 and below 1, got {conf}.")
    objectives = parse_objectives(args.objective)
    if args.window:
        if objectives:
            raise OgiveError(
                "--objective with --window: use 'ogive timeline --objective', which reads each window."
            )
        return _run_windows(args, conf)
    if args.by:
        sides, labels = group_sides(args)
        try:
            groups = compare_groups(sides[0], sides[1], labels=labels, confidence=conf)
        except ValueError as exc:
            raise OgiveError(str(exc)) from None
        named = [(f"{lab}:{g}", s[g]) for lab, s in zip(labels, sides, strict=True) for g in s.names()]
        slo = read_objectives(named, objectives, conf)
        _emit(
            args,
            with_objectives(groups.to_dict(), slo),
            lambda: groups_text(groups) + "".join(f"{x}\n" for x in objective_text(slo)),
        )
        return 0
    (a, b), labels, sources = two_sides(args)
    try:
        comp = compare_sketches(a, b, labels=labels, confidence=conf)
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    slo = read_objectives([(labels[0], a), (labels[1], b)], objectives, conf)
    _emit(
        args,
        with_objectives(comp.to_dict(), slo),
        lambda: comparison_text(comp, sources) + "".join(f"{x}\n" for x in objective_text(slo)),
    )
    if args.plot and not args.json:
        print_plot(
            args.plot, b, a, labels[1], labels[0], ascii_only=args.ascii, size=(args.width, args.height)
        )
    return 0


def _emit(args: argparse.Namespace, doc: dict[str, Any], text: Any) -> None:
    if args.json:
        json.dump(doc, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(text())


# ---------------------------------------------------------------- windows
def _run_windows(args: argparse.Namespace, conf: float) -> int:
    from ..fit.windows import compare_windows, parse_window
    from ..render.reports import windows_text
    from .common import load_set

    if args.b is not None:
        raise OgiveError("--window cuts one source into time windows; give a single source, not A and B.")
    if args.by or args.split_at:
        raise OgiveError("--window cannot be combined with --by or --split-at.")
    try:
        parse_window(args.window)  # a bad width is refused before any reading
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    sset = load_set([args.a], args) if _is_saved(args.a) else _scan_windows(args)
    try:
        series = compare_windows(sset, confidence=conf)
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    _emit(args, series.to_dict(), lambda: windows_text(series))
    return 0


def _is_saved(spec: str) -> bool:
    from ..store import sketch_ref

    return sketch_ref(spec) is not None


def _scan_windows(args: argparse.Namespace) -> SketchSet:
    """Scan one source into a sketch per time window (the reader's --window cut)."""
    from .common import scan_sources

    return scan_sources([args.a], args).sketches
