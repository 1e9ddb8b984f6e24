"""`ogive show`: the summary of a saved sketch, and any quantiles asked for.

No source is read again: the sketch carries its counts, its skipped-row report and its
provenance, so ``show`` prints exactly what ``scan`` printed when it was made.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import re
import sys

from ..errors import OgiveError

DESCRIPTION = """\
Print the summary of a saved sketch (the same table 'ogive scan' printed), or with -q
just the quantiles you ask for. SKETCH.ogive:GROUP picks one sketch of a set (a group of
--by, or 'before'/'after' of --split-at)."""

EPILOG = """\
quantiles may be written as fractions, percentiles or percents; 'mean' adds the mean
(exact: the sketch keeps the sum of the values):
  -q 0.5,0.999        -q p50,p99.9        -q 50%,99.9%        -q p99.99,max,mean

examples:
  ogive show before.ogive
  ogive show day.ogive:after -q p50,p95,p99.9
  ogive show hosts.ogive --json
  ogive show day.ogive --objective 250ms@99% --objective 1s@99.9%

--objective THRESHOLD@SHARE% reads a service-level objective on each sketch: the share
of values over the threshold with its 95% interval (Clopper-Pearson, widened to the
counts the sketch is sure of), the error budget spent (that share / the share allowed)
and met, missed or cannot tell. It describes the period the sketch covers only."""

_P_RE = re.compile(r"^p(\d+(?:\.\d*)?)$")
_PCT_RE = re.compile(r"^(\d+(?:\.\d*)?)\s*%$")


def parse_quantile(text: str) -> float:
    """'0.999', 'p99.9', '99.9%', 'median', 'min', 'max' -> q in [0, 1] (``mean`` is not a quantile).

    A bare number above 1 is refused rather than guessed: '99.9' might mean p99.9, but
    '1' would then be ambiguous between the maximum and p1.
    """
    t = text.strip().lower()
    named = {"min": 0.0, "max": 1.0, "median": 0.5}
    if t in named:
        return named[t]
    m = _P_RE.match(t) or _PCT_RE.match(t)
    if m:
        q = float(m.group(1)) / 100
    else:
        try:
            q = float(t)
        except ValueError:
            raise OgiveError(
                f"cannot read the quantile {text!r}; write it as 0.999, p99.9 or 99.9%."
            ) from None
        if q > 1:
            raise OgiveError(
                f"the quantile {text!r} is above 1; write 0.999, p99.9 or 99.9% for the 99.9th percentile."
            )
    if not (0 <= q <= 1) or math.isnan(q):
        raise OgiveError(f"the quantile {text!r} lies outside 0..1 (p0..p100).")
    return q


def parse_quantiles(text: str) -> list[float | str]:
    """The columns ``-q`` asks for, in order: quantiles as q, and ``mean`` as itself."""
    from ..render.summary import MEAN

    parts = [p for p in re.split(r"[,\s]+", text.strip()) if p]
    if not parts:
        raise OgiveError("-q needs at least one quantile, e.g. -q 0.5,0.999 or -q p50,p99.9.")
    return [MEAN if p.strip().lower() == MEAN else parse_quantile(p) for p in parts]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "sketch", metavar="SKETCH.ogive[:GROUP]", help="a saved sketch file ('-' reads stdin)"
    )
    parser.add_argument("-q", "--quantiles", metavar="Q,...", help="print these quantiles only")
    parser.add_argument("--json", action="store_true", help="print one JSON document on stdout")
    from .objectives import add_objective_option

    add_objective_option(parser)


def run(args: argparse.Namespace) -> int:
    from ..render.summary import LADDER, MEAN, quantile_lines, summarise, summary_lines
    from ..store import SketchRef, load_ref, sketch_ref, split_group
    from .objectives import objective_text, parse_objectives, set_objectives

    objectives = parse_objectives(args.objective)

    columns = parse_quantiles(args.quantiles) if args.quantiles else list(LADDER)
    qs = [float(c) for c in columns if c != MEAN]
    path, group = split_group(args.sketch)
    ref = SketchRef(path, group) if path == "-" else sketch_ref(args.sketch)
    if ref is None:
        if os.path.isfile(path):
            raise OgiveError(f"{path} is not a saved sketch; to summarise a log, use 'ogive scan {path}'.")
        ref = SketchRef(path, group)  # loading says the file is missing, in one line
    sset = load_ref(ref)
    summary = summarise(sset, qs=qs)
    slo = set_objectives(sset, objectives)
    if args.json:
        doc = summary.to_dict()
        if objectives:
            doc["objectives"] = slo.to_dict()
        json.dump(doc, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
        return 0
    lines = quantile_lines(summary, columns) if args.quantiles else summary_lines(summary)
    lines += objective_text(slo)
    for line in lines:
        print(line)
    return 0
