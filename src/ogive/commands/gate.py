"""`ogive gate`: quantile limits between a baseline and a candidate, as an exit status."""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Callable
from functools import partial
from typing import TYPE_CHECKING, Any

from ..errors import OgiveError

if TYPE_CHECKING:
    from ..fit.gate import GateResult
    from ..fit.group_gate import GroupGate

DESCRIPTION = """\
Check a candidate B against a baseline A on limits for named quantiles or for the
share of values over a threshold, for CI pipelines. A and B are saved sketches
(run.ogive, run.ogive:GROUP) or sources to scan; one source with --split-at TIME gates
what came after TIME against what came before. With --by FIELD every group on both
sides is gated and the worst group decides. Each --limit says how far B's quantile may
rise above A's:

  --limit p99=+5%      B's p99 at most 5% above A's p99
  --limit p50=+2ms     B's p50 at most 2 ms above A's (converted to the sketches' unit)
  --limit p99.9=0      B's p99.9 no higher than A's

or how large B's share of values over a threshold may be (a service-level objective):

  --limit 'over(300ms)<=0.1%'   at most 0.1% of B's values over 300 ms
  --limit 'over(300ms)=+20%'    B's share over 300 ms at most 20% above A's

Each limit ends as one of:
  EXCEEDED  B's lowest plausible value is above the most the limit allows at any
            plausible value of A's
  HOLDS     shown within: B's highest plausible value is within the least it allows
  UNCLEAR   the intervals reach both sides of the limit (no credible evidence either way)
  TOO FEW   too few values to bound that quantile
  COARSE    telemetry histograms: the bucket around the value, not the sample,
            leaves the limit open
A relative limit is a share of |A|, so it never tightens on a quantile below zero.

Exit status:
  0  no limit is credibly exceeded (HOLDS, and UNCLEAR without --prove)
  1  at least one limit is EXCEEDED
  2  the data cannot decide a limit: TOO FEW, COARSE, or UNCLEAR with --prove
  3  bad input or usage
"""

EPILOG = """\
What a pass means, and what it does not. A pass (exit 0) means that these samples
gave no credible evidence, at the stated confidence, that a listed limit is exceeded.
It is evidence for a release decision, not a guarantee: a small sample, a quantile
or threshold that is not listed, traffic that was not captured, or a change that only
shows under other load can all hide a regression. A share limit that holds says the
rate of slow values in the traffic sampled is within it, not that every later day,
or the rest of an objective's period, will be. Without --prove a pass also covers limits the
data could neither confirm nor rule out (each is printed as such). Defer to your
team's own release policy; this gate is one input to it.

Confidence: with L limits, each of the 2L quantile intervals is taken at
1 - (1 - confidence)/(2L), so every "exceeded" holds together with at least the stated
confidence (Bonferroni); share limits count among the L, and their intervals are
Clopper-Pearson (1934) intervals of the share over the threshold. With --by and G
groups each group's gate runs at 1 - (1 - confidence)/G, so the claims of all groups
hold together too. Intervals are distribution-free (order statistics), read through
each sketch so that they always contain the intervals the raw values would give.

examples:
  ogive gate base.ogive cand.ogive --limit p99=+5% --limit p50=+2ms
  ogive gate base.ogive cand.ogive --limit p99.9=+10% --prove --json
  ogive gate app.log --time-field ts --split-at 2026-03-04T13:00:00Z --limit p99=+10%
  ogive gate base.ogive cand.ogive --by route --limit p99=+10%
  ogive gate base.ogive cand.ogive --limit 'over(250ms)<=1%' --limit 'over(250ms)=+20%'
"""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    from .common import add_source_options

    parser.add_argument("a", metavar="BASELINE", help="A: a sketch file[:GROUP] or a source")
    parser.add_argument(
        "b",
        metavar="CANDIDATE",
        nargs="?",
        default=None,
        help="B: a sketch file[:GROUP] or a source (omit with --split-at, or for one file holding "
        "before and after)",
    )
    parser.add_argument(
        "--limit",
        action="append",
        default=[],
        metavar="LIMIT",
        help="a limit such as p99=+5%%, p50=+2ms, over(300ms)<=0.1%% or over(300ms)=+20%% (repeat for more)",
    )
    parser.add_argument(
        "--confidence",
        type=float,
        default=0.95,
        metavar="LEVEL",
        help="joint confidence of the verdicts, between 0.5 and 1 (default 0.95)",
    )
    parser.add_argument(
        "--prove",
        action="store_true",
        help="a limit holds only when the data show it is met; otherwise exit 2",
    )
    parser.add_argument("--json", action="store_true", help="print the checks as JSON")
    add_source_options(parser)


def run(args: argparse.Namespace) -> int:
    from ..fit.gate import MEANING, Limit, ShareLimit, gate, parse_limit
    from ..fit.group_gate import gate_groups
    from ..render.reports import gate_text, group_gate_text
    from .common import group_sides, two_sides

    if not args.limit:
        raise OgiveError("no limit given; add at least one, such as --limit p99=+5%.")
    conf = float(args.confidence)
    if not 0.5 <= conf < 1:
        raise OgiveError(f"--confidence must be at least 0.5 and below 1, got {conf}.")
    check: Callable[[list[Limit | ShareLimit]], GateResult | GroupGate]
    text: Callable[[Any], str]
    if args.by:
        (sa, sb), names = group_sides(args)
        sources = (args.a, args.b) if args.b is not None else (f"{args.a} (before)", f"{args.a} (after)")
        unit = next((s.unit for s in sa.sketches.values()), "")
        check = partial(gate_groups, sa, sb, confidence=conf, prove=args.prove, labels=names)
        text = partial(group_gate_text, sources=sources, by=args.by, meaning=MEANING)
    else:
        (a, b), names, sources = two_sides(args)
        unit = a.unit
        check = partial(gate, a, b, confidence=conf, prove=args.prove, labels=names)
        text = partial(gate_text, names=names, sources=sources, meaning=MEANING)
    try:
        result = check([parse_limit(t, unit) for t in args.limit])
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    if args.json:
        json.dump(result.to_dict(), sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(text(result))
    return result.exit_code
