"""Objectives (``--objective 300ms@99.9%``) as text: one sentence per check, one table per report.

``scan``, ``show``, ``compare``, ``timeline`` and the workspace all print objective
checks through these functions, so a check reads the same everywhere. Formatting
only: every number is a field of :class:`ogive.fit.objective.ObjectiveCheck`.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from ..numbers import percent, quantity, span
from .tables import Table, table, text_lines

if TYPE_CHECKING:
    from ..fit.objective import ObjectiveCheck, ObjectiveReport, ShareOver


def share_text(s: ShareOver) -> str:
    """``0.21%``, or ``0.8% to 2.1%`` when the sketch knows the count over only as a range
    it cannot narrow (a threshold inside a telemetry bucket); ``–`` with no values."""
    if s.n == 0:
        return percent(None)
    if math.isnan(s.estimate):
        lo, hi = s.observed
        return f"{percent(lo)} to {percent(hi)}"
    return percent(s.estimate)


def interval_text(low: float, high: float) -> str:
    return f"[{percent(low)}, {percent(high)}]"


def budget_text(c: ObjectiveCheck) -> str:
    """The budget spent: ``210%``, or a range where the share is one."""
    if c.share.n == 0:
        return percent(None)
    if math.isnan(c.budget):
        lo, hi = c.observed_budget
        return f"{percent(lo)} to {percent(hi)}"
    return percent(c.budget)


def bucket_note(c: ObjectiveCheck) -> str:
    """Why a binned share is a range: the bucket the threshold falls in (empty otherwise)."""
    s = c.share
    if s.bucket is None:
        return ""
    where = quantity(s.threshold, s.unit)
    bucket = span(s.bucket[0], s.bucket[1], s.unit)
    return f"{where} lies inside the bucket {bucket}: the share over it is a range"


def objective_sentence(c: ObjectiveCheck) -> str:
    """``0.21% over 300 ms [0.18%, 0.24%], budget 210% spent: missed``."""
    s = c.share
    if s.n == 0:
        return f"no values: {c.status}"
    over = quantity(s.threshold, s.unit)
    return (
        f"{share_text(s)} over {over} {interval_text(s.low, s.high)}, "
        f"budget {budget_text(c)} spent: {c.status}"
    )


def objective_cell(c: ObjectiveCheck | None) -> str:
    """A narrow cell (the workspace's Distributions list): ``0.655% met``; ``–`` without a reading."""
    if c is None or c.share.n == 0:
        return percent(None)
    return f"{share_text(c.share)} {c.status}"


def objective_table(checks: tuple[ObjectiveCheck, ...], *, narrow: bool = False) -> Table:
    """One row per (sketch, objective): share over and budget spent, each with its interval;
    compliance. ``narrow`` (the workspace's ladder pane at 80 columns): without n and the
    budget's interval."""
    header = ("sketch", "objective", "n", "over", "interval", "budget spent", "interval", "compliance")
    rows = []
    for c in checks:
        lo, hi = c.budget_range
        rows.append(
            (
                c.name,
                c.objective.text,
                f"{c.share.n:,}",
                share_text(c.share),
                interval_text(c.share.low, c.share.high) if c.share.n else percent(None),
                budget_text(c),
                interval_text(lo, hi) if c.share.n else percent(None),
                c.status,
            )
        )
    keep = (0, 1, 3, 4, 5, 7) if narrow else tuple(range(len(header)))
    right = [i for i, k in enumerate(keep) if k in (2, 3, 5)]
    return table([header[k] for k in keep], [[r[k] for k in keep] for r in rows], right)


def objective_lines(report: ObjectiveReport) -> list[str]:
    """The block ``--objective`` adds to a command's text output."""
    if not report.checks:
        return []
    level = percent(report.confidence, digits=4, compact=True)
    out = [
        f"objectives: share of values over the threshold, {level} interval (Clopper-Pearson, "
        "widened by the sketch's own error)",
        *text_lines(objective_table(report.checks), indent=2),
    ]
    notes = [f"  {c.name}: {bucket_note(c)}" for c in report.checks if bucket_note(c)]
    out.extend(notes)
    out += [
        "  budget spent = share over / allowed share (100% is the whole budget)",
        "  met: the whole interval is within the allowed share; missed: all of it is above it; "
        "about this sketch's period only",
    ]
    return out
