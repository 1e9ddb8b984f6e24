"""Two distributions side by side, from their sketches alone: did B move from A, where, how much.

Pieces (each cites its method where it lives):

* the quantile ladder with order-statistic intervals (:mod:`ogive.fit.ladder`);
* the two-sample Kolmogorov–Smirnov distance and the Wasserstein-1 distance
  (:mod:`ogive.fit.distances`);
* the shift function (:mod:`ogive.fit.shift`);
* the tail budget: the share of B above A's p99 and p99.9, with a G test
  (:mod:`ogive.fit.budget`);
* the groups of ``--by``, one p50/p99 row each (here).

What a ladder verdict means. Each interval covers its true quantile with probability
at least ``confidence`` (per quantile, per sample). A row says ``higher`` only when B's
whole interval lies above A's. If both intervals cover their true quantiles — which
happens with probability at least ``confidence ** 2`` for independent samples (0.9025
at 0.95) — separated intervals imply the true quantiles differ in that direction. So a
single row's call is wrong with probability at most ``1 - confidence ** 2``; when
nothing changed the chance of a call is far smaller (two 95 % intervals of similar width
separate by chance about 0.6 % of the time, from the normal approximation). Over the
seven rows these chances add up (union bound), so read a lone marginal call with care;
the shift function's band is simultaneous by construction, and the gate
(:mod:`ogive.fit.gate`) sets its levels so that its claims hold jointly.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..sketch import Sketch, SketchSet
from .budget import TailBudget, tail_budget
from .distances import KSResult, WassersteinResult, ks_distance, wasserstein
from .ladder import LADDER_QS, LadderRow, ladder
from .shift import ShiftFunction, shift_function


# ---------------------------------------------------------------- the whole comparison
@dataclass(frozen=True)
class Comparison:
    labels: tuple[str, str]
    unit: str
    n: tuple[int, int]
    confidence: float
    ladder: tuple[LadderRow, ...]
    ks: KSResult
    wasserstein: WassersteinResult
    shift: ShiftFunction
    tail: tuple[TailBudget, ...]
    summary: str
    notes: tuple[str, ...] = ()

    def row(self, label: str) -> LadderRow:
        for r in self.ladder:
            if r.label == label:
                return r
        raise KeyError(label)

    def to_dict(self) -> dict[str, Any]:
        return {
            "labels": list(self.labels),
            "unit": self.unit,
            "n": list(self.n),
            "confidence": self.confidence,
            "verdict_confidence": self.confidence**2,
            "ladder": [r.to_dict() for r in self.ladder],
            "ks": self.ks.to_dict(),
            "wasserstein": self.wasserstein.to_dict(),
            "shift": self.shift.to_dict(),
            "tail": [t.to_dict() for t in self.tail],
            "summary": self.summary,
            "notes": list(self.notes),
        }


def _check_pair(a: Sketch, b: Sketch, labels: tuple[str, str]) -> None:
    for s, name in ((a, labels[0]), (b, labels[1])):
        if s.count == 0:
            raise ValueError(f"sketch {name!r} holds no values; there is nothing to compare.")
    if a.unit != b.unit:
        raise ValueError(
            f"{labels[0]!r} is in {a.unit or 'no unit'!r} and {labels[1]!r} in {b.unit or 'no unit'!r}; "
            "rescan one side with the same --unit so the values compare."
        )


def _summary(
    labels: tuple[str, str], rows: tuple[LadderRow, ...], ks: KSResult, tail: tuple[TailBudget, ...]
) -> str:
    a, b = labels
    up = [r.label for r in rows if r.verdict == "higher"]
    down = [r.label for r in rows if r.verdict == "lower"]
    parts: list[str] = []
    if up:
        parts.append(f"{b} is higher than {a} at {', '.join(up)}")
    if down:
        parts.append(f"{b} is lower than {a} at {', '.join(down)}")
    if not up and not down:
        few = [r.label for r in rows if r.verdict == "too few values"]
        text = f"no quantile of {b} differs credibly from {a}"
        if few:
            text += f" (too few values to tell at {', '.join(few)})"
        parts.append(text)
    parts.append(
        f"KS distance {ks.distance:.3g} "
        + ("beyond noise and sketch error" if ks.differs else "within noise and sketch error")
    )
    for t in tail[:1]:
        parts.append(f"{t.b_share:.2%} of {b} above {a}'s {t.label.split()[-1]} (expected {t.a_share:.2%})")
    return "; ".join(parts) + "."


def _ladder_vs_shift(rows: tuple[LadderRow, ...], shift: ShiftFunction) -> list[str]:
    """Why a ladder row and the shift function can disagree, where they do."""
    direction = dict(zip(np.round(shift.probs, 6).tolist(), shift.direction, strict=True))
    called = [r for r in rows if r.q is not None and r.verdict in ("higher", "lower")]
    split = [r.label for r in called if direction.get(round(r.q or 0.0, 6)) == "no clear change"]
    if not split:
        return []
    k = shift.probs.size
    return [
        f"{', '.join(split)}: the ladder calls a change and the shift function does not. Each ladder row is "
        f"its own {shift.confidence:.0%} comparison; the shift band holds for all {k} quantiles at once "
        f"(each interval at {shift.per_interval_confidence:.2%}), so it is wider: a change this close to "
        "the noise may be one of several rows that separate by chance."
    ]


def compare_sketches(
    a: Sketch,
    b: Sketch,
    *,
    labels: tuple[str, str] = ("A", "B"),
    confidence: float = 0.95,
) -> Comparison:
    """Everything ``ogive compare`` shows for one pair; B is read against A (the baseline).

    Raises ValueError (a full sentence) for empty sketches or different units.
    """
    _check_pair(a, b, labels)
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must lie strictly between 0 and 1, got {confidence!r}.")
    rows = tuple(ladder(a, b, confidence, LADDER_QS))
    ks = ks_distance(a, b, confidence=confidence)
    tail = tuple(tail_budget(a, b, q, confidence=confidence) for q in (0.99, 0.999))
    shift = shift_function(a, b, confidence=confidence, labels=labels)
    notes = list(_ladder_vs_shift(rows, shift))
    for s, name in ((a, labels[0]), (b, labels[1])):
        if s.provenance.partial:
            notes.append(f"{name} is partial: {s.provenance.partial}")
        if s.provenance.skipped_total:
            notes.append(f"{name} skipped {s.provenance.skipped_total} rows (see 'ogive show')")
    return Comparison(
        labels=labels,
        unit=a.unit,
        n=(a.count, b.count),
        confidence=confidence,
        ladder=rows,
        ks=ks,
        wasserstein=wasserstein(a, b),
        shift=shift,
        tail=tail,
        summary=_summary(labels, rows, ks, tail),
        notes=tuple(notes),
    )


# ---------------------------------------------------------------- groups (--by)
@dataclass(frozen=True)
class GroupRow:
    group: str
    n: tuple[int, int]
    p99: LadderRow
    p50: LadderRow
    credible_change: float
    """How far B's p99 interval clears A's, relative to A's p99 (0 when they overlap)."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "group": self.group,
            "n": list(self.n),
            "p50": self.p50.to_dict(),
            "p99": self.p99.to_dict(),
            "credible_change": self.credible_change,
        }


@dataclass(frozen=True)
class GroupComparison:
    labels: tuple[str, str]
    confidence: float
    rows: tuple[GroupRow, ...]
    """Groups present on both sides, largest credible p99 change first."""
    only_a: tuple[str, ...]
    only_b: tuple[str, ...]
    empty: tuple[str, ...] = ()
    """Groups present on both sides but with no values on one side."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "labels": list(self.labels),
            "confidence": self.confidence,
            "rows": [r.to_dict() for r in self.rows],
            "only_a": list(self.only_a),
            "only_b": list(self.only_b),
            "empty": list(self.empty),
        }


def _credible(row: LadderRow) -> float:
    a = row.a_value
    gap = row.change_low if row.change_low > 0 else row.change_high if row.change_high < 0 else 0.0
    if not np.isfinite(gap):
        return 0.0
    return gap / abs(a) if a else gap


def compare_groups(
    a: SketchSet,
    b: SketchSet,
    *,
    labels: tuple[str, str] = ("A", "B"),
    confidence: float = 0.95,
) -> GroupComparison:
    """One p50/p99 row per group found on both sides (the ``--by`` table).

    Sorted by the size of the credible p99 change (the gap between the intervals, as a
    share of A's p99), largest first, then by the point change, so the group that most
    surely got worse heads the list.
    """
    both = [g for g in a.names() if g in b.sketches]
    rows: list[GroupRow] = []
    empty: list[str] = []
    for g in both:
        sa, sb = a[g], b[g]
        if sa.count == 0 or sb.count == 0:
            empty.append(g)
            continue
        _check_pair(sa, sb, (f"{labels[0]}:{g}", f"{labels[1]}:{g}"))
        r50, r99 = ladder(sa, sb, confidence, (0.5, 0.99))[:2]
        rows.append(GroupRow(g, (sa.count, sb.count), r99, r50, _credible(r99)))
    rows.sort(
        key=lambda r: (
            -abs(r.credible_change),
            -abs(r.p99.relative_change) if np.isfinite(r.p99.relative_change) else 0.0,
        )
    )
    return GroupComparison(
        labels=labels,
        confidence=confidence,
        rows=tuple(rows),
        only_a=tuple(g for g in a.names() if g not in b.sketches),
        only_b=tuple(g for g in b.names() if g not in a.sketches),
        empty=tuple(empty),
    )
