"""`ogive compare`: did B move from A, where, by how much, and is it more than noise."""

from __future__ import annotations

import argparse
import json
import math
import sys
from typing import TYPE_CHECKING, Any

from ..errors import OgiveError
from .plot import add_plot_option, print_plot

if TYPE_CHECKING:
    from ..fit.compare import Comparison, GroupComparison
    from ..fit.windows import WindowSeries
    from ..sketch import Sketch

DESCRIPTION = """\
Compare two distributions of one field: A (the baseline) and B.

A and B are saved sketches (run.ogive, run.ogive:GROUP) or raw sources to scan with
the reading options below. With one source and --split-at TIME, A is everything
before TIME and B the rest. With --by FIELD, each group present on both sides gets a
row, the groups whose p99 moved most surely first. With --window 10m, one source is
cut into consecutive time windows, each compared with the first.

Shown: the quantile ladder p50 ... p99.99 and max with distribution-free intervals
(order statistics, widened by the sketch's own error), the change and a verdict that
is called only when the intervals separate; the Kolmogorov-Smirnov and Wasserstein-1
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
    add_source_options(parser)


def run(args: argparse.Namespace) -> int:
    from ..fit.compare import compare_groups, compare_sketches
    from .common import load_one, load_set

    conf = float(args.confidence)
    if not 0.5 <= conf < 1:
        raise OgiveError(f"--confidence must be at least 0.5 and below 1, got {conf}.")
    if args.window:
        return _run_windows(args, conf)
    if args.by and args.b is not None:
        sa, sb = load_set([args.a], args), load_set([args.b], args)
        try:
            groups = compare_groups(sa, sb, confidence=conf)
        except ValueError as exc:
            raise OgiveError(str(exc)) from None
        _emit(args, groups.to_dict(), lambda: format_groups(groups))
        return 0
    if args.by and args.b is None:
        from ..sketch import SketchSet

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
        try:
            groups = compare_groups(halves[0], halves[1], labels=("before", "after"), confidence=conf)
        except ValueError as exc:
            raise OgiveError(str(exc)) from None
        _emit(args, groups.to_dict(), lambda: format_groups(groups))
        return 0
    if args.b is None:
        sset = load_set([args.a], args)
        names = sset.names()
        if set(names) >= {"before", "after"}:
            pair = ("before", "after")
        elif len(names) == 2:
            pair = (names[0], names[1])
        else:
            raise OgiveError(
                "compare needs two sides: give A and B, or one source with --split-at TIME, "
                f"or one sketch file holding exactly two sketches ({args.a} holds {len(names)})."
            )
        a, b = sset[pair[0]], sset[pair[1]]
        labels = pair
    else:
        _, a = load_one(args.a, args)
        _, b = load_one(args.b, args)
        labels = ("A", "B")
    try:
        comp = compare_sketches(a, b, labels=labels, confidence=conf)
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    sources = (args.a, args.b or f"{args.a} ({labels[1]})")
    _emit(args, comp.to_dict(), lambda: format_comparison(comp, (a, b), sources))
    if args.plot and not args.json:
        print_plot(args.plot, b, a, labels[1], labels[0], ascii_only=args.ascii)
    return 0


def _emit(args: argparse.Namespace, doc: dict[str, Any], text: Any) -> None:
    if args.json:
        json.dump(doc, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(text())


# ---------------------------------------------------------------- text
def num(x: float | None) -> str:
    """Four significant figures; 'unbounded' for a side the data cannot bound."""
    if x is None or not math.isfinite(x):
        return "unbounded" if x is not None and not math.isnan(x) else "-"
    if x != 0 and (abs(x) >= 1e6 or abs(x) < 1e-3):
        return f"{x:.3e}"
    return f"{x:.4g}"


def _with_unit(x: float, unit: str) -> str:
    return f"{num(x)} {unit}" if unit else num(x)


def _signed(x: float) -> str:
    s = num(x)
    return s if s.startswith("-") or s in ("unbounded", "-") else "+" + s


def _interval(lo: float, hi: float) -> str:
    return f"[{num(lo)}, {num(hi)}]"


def _table(rows: list[list[str]], right: set[int]) -> list[str]:
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    out = []
    for r in rows:
        cells = [
            c.rjust(w) if i in right else c.ljust(w) for i, (c, w) in enumerate(zip(r, widths, strict=True))
        ]
        out.append("  " + "  ".join(cells).rstrip())
    return out


def format_comparison(c: Comparison, sketches: tuple[Sketch, Sketch], sources: tuple[str, str]) -> str:
    a_lab, b_lab = c.labels
    u = c.unit
    lines = [
        f"{a_lab}: {sources[0]}  n={c.n[0]:,}  unit={u or '-'}",
        f"{b_lab}: {sources[1]}  n={c.n[1]:,}",
        "",
        f"Quantile ladder ({c.confidence:.0%} interval per quantile; a change is called only when "
        "the intervals separate)",
    ]
    rows = [["", a_lab, "interval", b_lab, "interval", "change", "relative", "verdict"]]
    for r in c.ladder:
        rows.append(
            [
                r.label,
                num(r.a_value),
                _interval(r.a.low, r.a.high) if r.a else "",
                num(r.b_value),
                _interval(r.b.low, r.b.high) if r.b else "",
                _signed(r.change),
                f"{r.relative_change:+.1%}" if math.isfinite(r.relative_change) else "-",
                r.verdict,
            ]
        )
    lines += _table(rows, {1, 3, 5, 6})
    ks, w = c.ks, c.wasserstein
    lines += [
        "",
        "Distances",
        f"  Kolmogorov-Smirnov D = {ks.distance:.4g} at {_with_unit(ks.at, u)}; "
        f"called above {ks.threshold:.4g} "
        f"(critical {ks.critical:.4g} + sketch error {ks.slack_at:.2g}); p = {ks.p_value:.3g}: "
        + ("differs" if ks.differs else "no clear difference"),
        f"  Wasserstein-1 = {_with_unit(w.distance, u)}"
        + (f" ({w.relative:.1%} of {a_lab}'s mean)" if math.isfinite(w.relative) else ""),
        "",
        f"Shift function {b_lab} - {a_lab} ({c.shift.confidence:.0%} simultaneous band)",
    ]
    sh = c.shift
    rows = [["", a_lab, b_lab, f"{b_lab} - {a_lab}", "band", ""]]
    for k, p in enumerate(sh.probs):
        from ..sketch import quantile_label

        rows.append(
            [
                quantile_label(float(p)),
                num(float(sh.a_values[k])),
                num(float(sh.b_values[k])),
                _signed(float(sh.delta[k])),
                _interval(float(sh.delta_low[k]), float(sh.delta_high[k])),
                sh.direction[k],
            ]
        )
    lines += _table(rows, {1, 2, 3})
    lines += ["", f"Tail budget (share of {b_lab} above {a_lab}'s cut; G test)"]
    for t in c.tail:
        lines.append(
            f"  above {a_lab} {t.label.split()[-1]} = {_with_unit(t.cut, u)}: {a_lab} {t.a_share:.3%}, "
            f"{b_lab} {t.b_share:.3%} (x{t.ratio:.2f}); G = {t.g:.3g}, p = {t.p_value:.3g}: {t.verdict}"
        )
    for note in c.notes:
        lines.append(f"note: {note}")
    lines += ["", f"Summary: {c.summary}", ""]
    return "\n".join(lines)


def format_groups(g: GroupComparison) -> str:
    a_lab, b_lab = g.labels
    lines = [
        f"Groups on both sides: {len(g.rows)} (largest credible p99 change first; "
        f"{g.confidence:.0%} intervals per quantile)"
    ]
    rows = [["group", f"n {a_lab}", f"n {b_lab}", f"p50 {a_lab}", f"p50 {b_lab}", "p50", f"p99 {a_lab}",
             f"p99 {b_lab}", "p99 change", "p99"]]  # fmt: skip
    for r in g.rows:
        rel = r.p99.relative_change
        rows.append(
            [
                r.group,
                f"{r.n[0]:,}",
                f"{r.n[1]:,}",
                num(r.p50.a_value),
                num(r.p50.b_value),
                r.p50.verdict,
                num(r.p99.a_value),
                num(r.p99.b_value),
                f"{rel:+.1%}" if math.isfinite(rel) else "-",
                r.p99.verdict,
            ]
        )
    if g.rows:
        lines += _table(rows, {1, 2, 3, 4, 6, 7, 8})
    if g.only_a:
        lines.append(f"only in {a_lab} ({len(g.only_a)}): {', '.join(g.only_a)}")
    if g.only_b:
        lines.append(f"only in {b_lab} ({len(g.only_b)}): {', '.join(g.only_b)}")
    if g.empty:
        lines.append(f"no values on one side ({len(g.empty)}): {', '.join(g.empty)}")
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------- windows
def _run_windows(args: argparse.Namespace, conf: float) -> int:
    from ..fit.windows import compare_windows, parse_window
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
    _emit(args, series.to_dict(), lambda: format_windows(series))
    return 0


def _is_saved(spec: str) -> bool:
    from ..store import sketch_ref

    return sketch_ref(spec) is not None


def _scan_windows(args: argparse.Namespace) -> Any:
    """Scan one source into a sketch per time window (the reader's --window cut)."""
    from .common import scan_sources

    return scan_sources([args.a], args).sketches


def format_windows(s: WindowSeries) -> str:
    lines = [
        f"Windows: {len(s.rows)} (each compared with the first, {s.baseline}; "
        f"{s.confidence:.0%} intervals per quantile)"
    ]
    rows = [["window", "n", "p50", "p99", "p50 vs first", "p99 vs first", ""]]
    for r in s.rows:
        rows.append(
            [
                r.name,
                f"{r.n:,}",
                num(r.p50.b_value),
                num(r.p99.b_value),
                r.p50.verdict if r.name != s.baseline else "(baseline)",
                r.p99.verdict if r.name != s.baseline else "",
                "<- differs" if r.flagged else "",
            ]
        )
    lines += _table(rows, {1, 2, 3})
    flagged = [r.name for r in s.rows if r.flagged]
    lines.append(
        f"{len(flagged)} window(s) differ credibly from the first at p50 or p99"
        + (f": {', '.join(flagged)}" if flagged else "")
        + "."
    )
    return "\n".join(lines) + "\n"
