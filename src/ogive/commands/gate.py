"""`ogive gate`: quantile limits between a baseline and a candidate, as an exit status."""

from __future__ import annotations

import argparse
import json
import sys

from ..errors import OgiveError

DESCRIPTION = """\
Check a candidate B against a baseline A on limits for named quantiles, for CI
pipelines. Each --limit says how far B's quantile may rise above A's:

  --limit p99=+5%      B's p99 at most 5% above A's p99
  --limit p50=+2ms     B's p50 at most 2 ms above A's (converted to the sketches' unit)
  --limit p99.9=0      B's p99.9 no higher than A's

Exit status:
  0  every limit holds: the data give no credible evidence that any is exceeded
  1  at least one limit is credibly exceeded (B's lowest plausible value is above what
     the limit allows at A's highest plausible value)
  2  the data cannot decide a limit: too few values to bound that quantile (or, with
     --prove, the interval reaches both sides of the limit)
  3  bad input or usage
"""

EPILOG = """\
What a pass means, and what it does not. A pass (exit 0) means that these samples
gave no credible evidence, at the stated confidence, that a listed limit is exceeded.
It is evidence for a release decision, not a guarantee: a small sample, a quantile
that is not listed, traffic that was not captured, or a change that only shows under
other load can all hide a regression. Without --prove a pass also covers limits the
data could neither confirm nor rule out (each is printed as such). Defer to your
team's own release policy; this gate is one input to it.

Confidence: with L limits, each of the 2L quantile intervals is taken at
1 - (1 - confidence)/(2L), so every "exceeded" holds together with at least the stated
confidence (Bonferroni). Intervals are distribution-free (order statistics) and
widened by the sketches' own rank error.

examples:
  ogive gate base.ogive cand.ogive --limit p99=+5% --limit p50=+2ms
  ogive gate base.ogive cand.ogive --limit p99.9=+10% --prove --json
"""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    from .common import add_source_options

    parser.add_argument("a", metavar="BASELINE", help="A: a sketch file[:GROUP] or a source")
    parser.add_argument("b", metavar="CANDIDATE", help="B: a sketch file[:GROUP] or a source")
    parser.add_argument(
        "--limit",
        action="append",
        default=[],
        metavar="Q=CHANGE",
        help="a limit such as p99=+5%% or p50=+2ms (repeat for more)",
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
    from ..fit.gate import MEANING, gate, parse_limit
    from .common import load_one

    if not args.limit:
        raise OgiveError("no limit given; add at least one, such as --limit p99=+5%.")
    conf = float(args.confidence)
    if not 0.5 <= conf < 1:
        raise OgiveError(f"--confidence must be at least 0.5 and below 1, got {conf}.")
    _, a = load_one(args.a, args)
    _, b = load_one(args.b, args)
    try:
        limits = [parse_limit(t, a.unit) for t in args.limit]
        result = gate(a, b, limits, confidence=conf, prove=args.prove)
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    if args.json:
        json.dump(result.to_dict(), sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
        return result.exit_code
    out = [
        f"A: {args.a} (n={a.count:,})  B: {args.b} (n={b.count:,})  unit={a.unit or '-'}",
        f"joint confidence {conf:.0%} (each interval at {result.per_interval_confidence:.4%})",
    ]
    for c in result.checks:
        out.append(f"{c.status.upper():9s} {c.limit.text}: {c.reason}")
    out.append(f"gate: {result.outcome} (exit {result.exit_code})")
    out.append(MEANING)
    sys.stdout.write("\n".join(out) + "\n")
    return result.exit_code
