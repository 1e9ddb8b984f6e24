"""Whole text reports of ``ogive compare`` and ``ogive fit``, built from :mod:`.tables`.

The sentences under the tables (distances, tail budget, notes) are shared with the
workspace's ladder pane, which shows :func:`comparison_notes` under its own table, so
the screen and the CLI say the same things in the same words and numbers.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from ..numbers import number, percent, quantity
from .tables import (
    group_gate_table,
    groups_table,
    ladder_table,
    params_text,
    shift_table,
    text_lines,
    windows_table,
)

if TYPE_CHECKING:
    from ..fit.compare import Comparison, GroupComparison
    from ..fit.gate import GateResult, LimitCheck, ShareCheck
    from ..fit.group_gate import GroupGate
    from ..fit.models import Candidate, FitReport
    from ..fit.windows import WindowSeries


# ---------------------------------------------------------------- comparison
def distance_lines(c: Comparison) -> list[str]:
    """The two distances, each with what it was held against.

    A p-value is written only when both sketches hold every value; otherwise the
    interval it is known to lie in (a single number there would be a bound).
    """
    a_lab = c.labels[0]
    ks, w = c.ks, c.wasserstein
    called = "differs" if ks.differs else "no clear difference"
    w_rel = f" ({percent(w.relative)} of {a_lab}'s mean)" if math.isfinite(w.relative) else ""
    if ks.exact:
        d_text, p_text = number(ks.distance), f"p = {number(ks.p_value, 3)}"
    else:
        raw = f"{number(ks.distance_low)} to {number(ks.distance_high)}"
        d_text = f"{number(ks.distance)} (raw values: {raw})"
        p_text = f"p between {number(ks.p_low, 3)} and {number(ks.p_high, 3)}"
    return [
        f"Kolmogorov-Smirnov D = {d_text} at {quantity(ks.at, c.unit)}; critical {number(ks.critical)}; "
        f"{p_text}: {called}",
        f"Wasserstein-1 = {quantity(w.distance, c.unit, digits=4)}{w_rel}",
    ]


def tail_lines(c: Comparison) -> list[str]:
    """The share of B above A's p99 and p99.9, with the G test where it applies."""
    a_lab, b_lab = c.labels
    out = []
    for t in c.tail:
        cut = t.label.split()[-1]
        test = (
            "too few values for the G test (under 5 expected in a cell)"
            if t.verdict == "too few values"
            else f"G = {number(t.g, 3)}, p = {number(t.p_value, 3)}: {t.verdict}"
        )
        out.append(
            f"above {a_lab}'s {cut} = {quantity(t.cut, c.unit, digits=4)}: {a_lab} {percent(t.a_share)}, "
            f"{b_lab} {percent(t.b_share)} (×{number(t.ratio, 3)}); {test}"
        )
    return out


def comparison_notes(c: Comparison) -> list[str]:
    """What the workspace shows under its ladder: distances, tail budget, summary, notes."""
    return [
        *distance_lines(c),
        *(f"tail budget {line}" for line in tail_lines(c)),
        f"Summary: {c.summary}",
        *(f"note: {n}" for n in c.notes),
    ]


def comparison_text(c: Comparison, sources: tuple[str, str]) -> str:
    """Everything ``ogive compare A B`` prints for one pair."""
    a_lab, b_lab = c.labels
    lines = [
        f"{a_lab}: {sources[0]}  n={c.n[0]:,}  unit={c.unit or '-'}",
        f"{b_lab}: {sources[1]}  n={c.n[1]:,}",
        "",
        f"Quantile ladder ({c.confidence:.0%} interval per quantile; a change is called only when "
        "the intervals separate)",
        *text_lines(ladder_table(c), indent=2),
        "",
        "Distances",
        *("  " + line for line in distance_lines(c)),
        "",
        f"Shift function {b_lab} - {a_lab} ({c.shift.confidence:.0%} simultaneous band)",
        *text_lines(shift_table(c.shift), indent=2),
        "",
        f"Tail budget (share of {b_lab} above {a_lab}'s cut; G test)",
        *("  " + line for line in tail_lines(c)),
        *(f"note: {n}" for n in c.notes),
        "",
        f"Summary: {c.summary}",
        "",
    ]
    return "\n".join(lines)


def groups_text(g: GroupComparison) -> str:
    a_lab, b_lab = g.labels
    lines = [
        f"Groups on both sides: {len(g.rows)} (largest credible p99 change first; "
        f"{g.confidence:.0%} intervals per quantile)"
    ]
    if g.rows:
        lines += text_lines(groups_table(g), indent=2)
    if g.only_a:
        lines.append(f"only in {a_lab} ({len(g.only_a)}): {', '.join(g.only_a)}")
    if g.only_b:
        lines.append(f"only in {b_lab} ({len(g.only_b)}): {', '.join(g.only_b)}")
    if g.empty:
        lines.append(f"no values on one side ({len(g.empty)}): {', '.join(g.empty)}")
    return "\n".join(lines) + "\n"


def windows_text(s: WindowSeries) -> str:
    lines = [
        f"Windows: {len(s.rows)} (each compared with the first, {s.baseline}; "
        f"{s.confidence:.0%} intervals per quantile)",
        *text_lines(windows_table(s), indent=2),
    ]
    flagged = [r.name for r in s.rows if r.flagged]
    lines.append(
        f"{len(flagged)} window(s) differ credibly from the first at p50 or p99"
        + (f": {', '.join(flagged)}" if flagged else "")
        + "."
    )
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------- fit
def _block(c: Candidate, report: FitReport, unit: str) -> list[str]:
    s = c.scores
    lines = [
        f"{c.rank:>2}. {c.label}  ({params_text(c)})",
        f"    tail error {percent(s.tail_error)}   KS {number(s.ks)}   AD {number(s.ad)}   "
        f"CvM {number(s.cvm)}   AIC {s.aic:.1f}   BIC {s.bic:.1f}",
    ]
    if s.p_values:
        pv = "   ".join(f"{k.upper()} p={v:.3f}" for k, v in s.p_values.items())
        lines.append(f"    bootstrap ({s.bootstrap} replicates): {pv}")
    qs = []
    for label, sv in report.sketch_quantiles.items():
        mv = c.quantiles.get(label)
        err = (mv - sv) / abs(sv) if mv is not None and sv and math.isfinite(mv) else None
        qs.append(f"{label} {number(mv)} ({percent(err, signed=True)})")
    lines.append("    model" + unit + ": " + "  ".join(qs))
    lines.append(
        f"    support: {c.model.support}" + ("" if c.model.success else f"; optimiser: {c.model.message}")
    )
    if c.model.boundary:
        lines.append(f"    {c.model.boundary}; ranked after the ordinary fits")
    return lines


def fit_text(report: FitReport, source: str) -> str:
    """Everything ``ogive fit`` prints: the ranking with each model's scores and quantiles."""
    unit = f" [{report.unit}]" if report.unit else ""
    out = [
        f"fit of {source}: n = {report.n:,}{unit}",
        f"ranked by {report.rank_key}" + (" (chosen by auto)" if report.rank_reason else "") + ", best first",
        "sketch" + unit + ": " + "  ".join(f"{k} {number(v)}" for k, v in report.sketch_quantiles.items()),
        "",
    ]
    for c in report.models:
        out.extend(_block(c, report, unit))
    if report.tail_models:
        out += ["", "tail-only (not ranked with the above; scored on values above the threshold):"]
        for c in report.tail_models:
            out.extend(_block(c, report, unit))
    if report.not_fitted:
        out += ["", "not fitted:", *(f"  {nf.label}: {nf.reason}" for nf in report.not_fitted)]
    out.append("")
    out.extend(f"note: {n}" for n in report.notes)
    return "\n".join(out) + "\n"


# ---------------------------------------------------------------- gate
def _sides(
    names: tuple[str, str], sources: tuple[str, str], n: tuple[int, int] | None, unit: str
) -> list[str]:
    """Which name is the baseline A and which the candidate B (the verdicts speak of A and B)."""
    counts = ("", "") if n is None else (f" (n={n[0]:,})", f" (n={n[1]:,})")
    where = [f"{name}: {src}" if name != src else name for name, src in zip(names, sources, strict=True)]
    return [
        f"A = {where[0]}{counts[0]}",
        f"B = {where[1]}{counts[1]}" + (f"   unit {unit}" if unit else ""),
    ]


STATUS_WORD = {
    "exceeded": "EXCEEDED",
    "holds": "HOLDS",
    "unclear": "UNCLEAR",
    "too few values": "TOO FEW",
    "buckets too coarse": "COARSE",
}
"""How each limit's status is written at the start of its line."""


def _check_lines(c: LimitCheck | ShareCheck, *, pad: bool = True) -> list[str]:
    """A limit's line (its word padded to line the limits up, or not), and its note."""
    word = STATUS_WORD.get(c.status, c.status.upper())
    head = f"{word:9s}" if pad else word
    return [f"{head} {c.limit.text}: {c.reason}"] + ([f"          note: {c.note}."] if c.note else [])


def gate_text(r: GateResult, names: tuple[str, str], sources: tuple[str, str], meaning: str) -> str:
    """Everything ``ogive gate A B`` prints: each limit's state and why, then the outcome."""
    n = (r.checks[0].a.n, r.checks[0].b.n)
    each = percent(r.per_interval_confidence, digits=4)
    lines = [
        *_sides(names, sources, n, r.unit),
        f"joint confidence {r.confidence:.0%} (each interval at {each})",
        *(line for c in r.checks for line in _check_lines(c)),
        f"gate: {r.outcome} (exit {r.exit_code})",
        meaning,
    ]
    return "\n".join(lines) + "\n"


def group_gate_text(g: GroupGate, sources: tuple[str, str], by: str, meaning: str) -> str:
    """``ogive gate --by FIELD``: a row per group, the reasons of those that did not pass, the outcome."""
    unit = g.groups[0][1].unit
    lines = [
        *_sides(g.labels, sources, None, unit),
        f"gate per {by} group: {len(g.groups)} with values on both sides; joint confidence "
        f"{g.confidence:.0%} over every group and limit "
        f"(each group's gate at {percent(g.per_group_confidence, digits=4)})",
        *text_lines(group_gate_table(g), indent=2),
    ]
    for name, r in g.groups:
        for c in r.checks:
            if c.status != "holds":
                lines.extend(f"{name}: {line}" for line in _check_lines(c, pad=False))
    for what, groups in (
        (f"only in {g.labels[0]}", g.only_a),
        (f"only in {g.labels[1]}", g.only_b),
        ("no values on one side", g.empty),
    ):
        if groups:
            lines.append(f"not gated, {what} ({len(groups)}): {', '.join(groups)}")
    lines += [f"gate: {g.outcome} (exit {g.exit_code}), the worst of the groups", meaning]
    return "\n".join(lines) + "\n"
