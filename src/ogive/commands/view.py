"""`ogive view`: the keyboard-driven workspace on sources or saved sketches."""

from __future__ import annotations

import argparse
from typing import TYPE_CHECKING

from .common import add_source_options
from .objectives import add_objective_option, parse_objectives

if TYPE_CHECKING:
    from ..read.options import ScanOptions

DESCRIPTION = """\
Open the workspace: every SOURCE (a log to scan in the background, or a saved .ogive
sketch, optionally .ogive:GROUP) becomes a row in the Distributions list. The last one
given is the subject and the first the reference, so `ogive view before.log after.log`
reads "after against before"; change either with the keys 1 and 2.

The screen calls the same functions as `ogive scan`, `fit` and `compare`, so numbers on
screen and their --json output agree. A verdict of "higher"/"lower" means the two
distribution-free intervals do not overlap at that quantile; "no clear change" means
the data cannot tell, not that nothing changed.
"""

EPILOG = """\
keys: o open · 1/2 subject/reference · g f c t panes · v/V picture · l lin/log ·
      w write .ogive · e export report · x stop scans · s stop following ·
      ! messages · ? all keys · q quit · ctrl+c stops scans, twice quits

exit status: 0 after q, 130 after ctrl+c twice (or SIGINT), 129/143 after SIGHUP/SIGTERM,
non-zero when the workspace itself failed.

following a live log (the lines already there are read first, then what is appended):
  ogive view --follow /var/log/app.log --pattern 'dur=(\\S+)' --recent 5m

when did it change (the Timeline pane, t; enter on a change point studies it):
  ogive view app.log.gz --pattern 'dur=(\\S+)' --window 5m
"""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "sources", nargs="*", metavar="SOURCE_OR_SKETCH", help="logs to scan or .ogive sketches"
    )
    parser.add_argument(
        "--subject", metavar="NAME", default=None, help="distribution to study (by its row name)"
    )
    parser.add_argument("--reference", metavar="NAME", default=None, help="distribution to hold it against")
    parser.add_argument(
        "--families",
        metavar="LIST",
        default=None,
        help="comma-separated families to fit to the subject (default: all, as 'ogive fit')",
    )
    parser.add_argument(
        "--follow",
        action="store_true",
        help="keep reading the one log given as it grows (surviving rotation); s stops following",
    )
    parser.add_argument(
        "--window",
        metavar="WIDTH",
        default=None,
        help="keep a sketch per time window (30s, 5m, 1h) of each log beside its whole: the Timeline "
        "pane (t) shows the quantiles over time and the change points, as 'ogive timeline' does",
    )
    parser.add_argument(
        "--recent",
        metavar="DURATION",
        default=None,
        help="with --follow: also show a sketch of only the last DURATION (30s, 5m, 1h) as its own row",
    )
    add_objective_option(parser)
    parser.add_argument(
        "--ascii",
        action="store_true",
        help="plain ASCII pictures and borders (chosen by itself under TERM=linux/vt100 or a non-UTF-8 "
        "locale such as LC_ALL=C)",
    )
    add_source_options(parser)


def run(args: argparse.Namespace) -> int:
    import os

    from ..errors import OgiveError
    from ..read.urls import has_glob, is_url
    from ..store import sketch_ref, split_group
    from ..ui import OgiveApp

    followed = [s for s in args.sources if sketch_ref(s) is None] if args.follow else []
    if args.follow and (len(followed) != 1 or followed[0] == "-"):
        raise OgiveError(
            "--follow reads one growing log; name exactly one log file (not '-'), "
            "beside any saved .ogive sketches."
        )
    if args.recent is not None:
        if not args.follow:
            raise OgiveError("--recent keeps the last minutes of a followed log; use it with --follow.")
        from ..read.follow import recent_window

        recent_window(args.recent, _options(args))  # a bad width fails here, in one line
    if args.follow and args.cluster:
        raise OgiveError("--follow reads a growing file on this machine; it does not run on a cluster.")
    for spec in args.sources:
        if spec in followed or is_url(spec) or has_glob(spec):
            continue  # following waits for a file that does not exist yet; URLs and globs: the scan says
        if spec != "-" and not os.path.exists(spec) and not os.path.exists(split_group(spec)[0]):
            raise OgiveError(f"cannot open {spec}: no such file.")
    families = [f.strip() for f in args.families.split(",") if f.strip()] if args.families else None
    if families is not None:
        from ..fit.families import resolve

        try:
            families = resolve(families)
        except ValueError as exc:
            raise OgiveError(str(exc)) from None
    objectives = parse_objectives(args.objective)
    options = _options(args)
    app = OgiveApp(
        args.sources,
        options,
        subject=args.subject,
        reference=args.reference,
        families=families,
        follow=args.follow,
        recent=args.recent,
        cluster=args.cluster,
        ascii_only=True if args.ascii else None,
    )
    app.ws.objectives = objectives
    return app.run_for_status()


def _options(args: argparse.Namespace) -> ScanOptions:
    """The flags' reading options; with --window, those of a timeline (windows beside the whole)."""
    from .common import options_from_args
    from .timeline import reading_options, scan_options

    if args.window is None:
        return options_from_args(args)
    return scan_options(reading_options(args), args.window)
