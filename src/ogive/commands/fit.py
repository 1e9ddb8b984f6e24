"""`ogive fit`: which probability model describes this field, judged from its sketch."""

from __future__ import annotations

import argparse
import json
import math
import sys
from typing import TYPE_CHECKING

from ..errors import OgiveError
from .plot import add_plot_option, print_plot

if TYPE_CHECKING:
    from ..fit.models import Candidate, FitReport

DESCRIPTION = """\
Fit candidate probability models to one distribution and rank them, best first.

The input is a saved sketch (run.ogive, run.ogive:GROUP) or raw sources to scan with
the reading options below. Fitting uses the sketch alone: grouped-data maximum
likelihood over bins taken from the sketch's CDF, plus its exact smallest and largest
values as single points, started from quantile-matching estimates.

Families (--families, comma-separated): normal, lognormal (median, sigma), gamma
(shape, scale), weibull (shape, scale), exponential (scale), loglogistic (shape,
median), invgauss (mean, shape), lomax (Pareto II: shape, scale), lognormal3 / gamma3 /
weibull3 (the same with a location floor below the minimum), lognormal-mix (fast and
slow path: weights, medians, sigmas) and gpd (generalised Pareto above the p95: a
tail-only model, listed apart and never ranked with whole-distribution models).

Ranking (--rank-by, default tail): "tail" is the largest relative quantile error of
the model against the sketch over p50, p90, p99 and p99.9, ties broken by the
Kolmogorov-Smirnov distance; it is what capacity plans and SLO budgets act on. The
alternatives are ks, ad (Anderson-Darling), cvm (Cramer-von Mises), aic and bic (from
the grouped likelihood). The key used is printed above the table.
"""

EPILOG = """\
Reading the table: with many values (more than 5000, or any sketch that is not exact)
every goodness-of-fit test rejects every model, so no p-values are given; the
distances and tail errors say how far off a model is, not whether it is "true". For a
small exact sample, the best three get parametric-bootstrap p-values. Families whose
support excludes the data (zeros or negatives for a positive family) are listed as not
applicable with the count; the shifted families fit such data with a location floor.

examples:
  ogive fit run.ogive
  ogive fit hosts.ogive:web-1 --families lognormal,gamma,lognormal-mix --json
  ogive fit access.log --format text --pattern ' (\\d+)ms$' --rank-by ad
"""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    from .common import add_source_options

    parser.add_argument(
        "source", metavar="SOURCE_OR_SKETCH", help="a sketch file[:GROUP] or a source to scan"
    )
    parser.add_argument(
        "--families",
        metavar="A,B,...",
        default=None,
        help="comma-separated families to fit (default: all; see above)",
    )
    parser.add_argument(
        "--rank-by",
        choices=("tail", "ks", "ad", "cvm", "aic", "bic"),
        default="tail",
        help="ranking statistic (default tail: largest relative quantile error p50..p99.9)",
    )
    parser.add_argument(
        "--bootstrap",
        metavar="B",
        type=int,
        default=99,
        help="bootstrap replicates for p-values of small exact samples (0 turns them off; default 99)",
    )
    parser.add_argument("--json", action="store_true", help="print the report as JSON")
    add_plot_option(parser, ("qq", "detrended", "pp", "cdf"))
    add_source_options(parser)


def run(args: argparse.Namespace) -> int:
    from ..fit.models import fit_sketch
    from .common import load_one

    name, sketch = load_one(args.source, args)
    families = [f for f in args.families.split(",") if f.strip()] if args.families else None
    if args.bootstrap < 0:
        raise OgiveError(f"--bootstrap must be 0 or more, got {args.bootstrap}.")
    try:
        report = fit_sketch(sketch, families, rank_by=args.rank_by, bootstrap=args.bootstrap)
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    if args.json:
        doc = {"source": args.source, "sketch": name, **report.to_dict()}
        json.dump(doc, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(format_report(report, f"{args.source} ({name})" if name else args.source))
        if args.plot and report.ranked:
            best = report.ranked[0]
            print_plot(args.plot, sketch, best, name or args.source, best.label, ascii_only=args.ascii)
    return 0


# ---------------------------------------------------------------- text
def num(x: float | None) -> str:
    if x is None or not math.isfinite(x):
        return "-" if x is None or math.isnan(x) else "inf"
    if x != 0 and (abs(x) >= 1e6 or abs(x) < 1e-3):
        return f"{x:.3e}"
    return f"{x:.4g}"


def pct(x: float | None) -> str:
    if x is None or not math.isfinite(x):
        return "-"
    return f"{x * 100:+.2f}%"


def abs_pct(x: float | None) -> str:
    return "-" if x is None or not math.isfinite(x) else f"{x * 100:.2f}%"


def _params(c: Candidate) -> str:
    return ", ".join(f"{k}={num(v)}" for k, v in c.params.items())


def _block(c: Candidate, report: FitReport, unit: str) -> list[str]:
    s = c.scores
    head = f"{c.rank:>2}. {c.label}  ({_params(c)})"
    stats = (
        f"    tail error {abs_pct(s.tail_error)}   KS {num(s.ks)}   AD {num(s.ad)}   CvM {num(s.cvm)}   "
        f"AIC {s.aic:.1f}   BIC {s.bic:.1f}"
    )
    lines = [head, stats]
    if s.p_values:
        pv = "   ".join(f"{k.upper()} p={v:.3f}" for k, v in s.p_values.items())
        lines.append(f"    bootstrap ({s.bootstrap} replicates): {pv}")
    qs = []
    for label, sv in report.sketch_quantiles.items():
        mv = c.quantiles.get(label)
        err = (mv - sv) / abs(sv) if mv is not None and sv and math.isfinite(mv) else None
        qs.append(f"{label} {num(mv)} ({pct(err)})")
    lines.append("    model" + unit + ": " + "  ".join(qs))
    lines.append(
        f"    support: {c.model.support}" + ("" if c.model.success else f"; optimiser: {c.model.message}")
    )
    return lines


def format_report(report: FitReport, source: str) -> str:
    unit = f" [{report.unit}]" if report.unit else ""
    out = [f"fit of {source}: n = {report.n}{unit}"]
    out.append(f"ranked by {report.rank_key} (best first)")
    out.append(
        "sketch" + unit + ": " + "  ".join(f"{k} {num(v)}" for k, v in report.sketch_quantiles.items())
    )
    out.append("")
    for c in report.models:
        out.extend(_block(c, report, unit))
    if report.tail_models:
        out.append("")
        out.append("tail-only (not ranked with the above; scored on values above the threshold):")
        for c in report.tail_models:
            out.extend(_block(c, report, unit))
    if report.not_fitted:
        out.append("")
        out.append("not fitted:")
        for nf in report.not_fitted:
            out.append(f"  {nf.label}: {nf.reason}")
    out.append("")
    out.extend(f"note: {n}" for n in report.notes)
    return "\n".join(out) + "\n"
