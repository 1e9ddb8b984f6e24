"""The regression gate group by group (``ogive gate --by FIELD``): every group must pass.

Each group present on both sides is checked with :func:`ogive.fit.gate.gate`. With G
groups each gate runs at confidence 1 − (1 − confidence)/G, so with at least the stated
confidence every interval of every group covers at once (Bonferroni over the groups, on
top of the gate's own correction over its limits); then every "exceeded", in any group,
holds together. The exit status is the worst of the groups: a failing group fails the
gate, an undecided one leaves it undecided.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ..sketch import SketchSet
from .gate import GateResult, Limit, ShareLimit, gate


@dataclass(frozen=True)
class GroupGate:
    labels: tuple[str, str]
    confidence: float
    """Joint level over every group and limit."""
    per_group_confidence: float
    groups: tuple[tuple[str, GateResult], ...]
    """(group, its gate) for groups with values on both sides, in A's order."""
    only_a: tuple[str, ...]
    only_b: tuple[str, ...]
    empty: tuple[str, ...] = ()
    """Groups on both sides with no values on one of them (not gated)."""

    @property
    def worst(self) -> GateResult:
        """The gate that decides: a failing group over an undecided one over a passing one."""
        order = {1: 2, 2: 1, 0: 0}  # exit status -> how bad
        return max((r for _, r in self.groups), key=lambda r: order[r.exit_code])

    @property
    def exit_code(self) -> int:
        """0 every group passes, 1 a group fails, 2 no group fails but one cannot be decided."""
        return self.worst.exit_code

    @property
    def outcome(self) -> str:
        return self.worst.outcome

    def to_dict(self) -> dict[str, Any]:
        return {
            "labels": list(self.labels),
            "confidence": self.confidence,
            "per_group_confidence": self.per_group_confidence,
            "outcome": self.outcome,
            "exit_code": self.exit_code,
            "groups": {g: r.to_dict() for g, r in self.groups},
            "only_a": list(self.only_a),
            "only_b": list(self.only_b),
            "empty": list(self.empty),
        }


def gate_groups(
    a: SketchSet,
    b: SketchSet,
    limits: list[Limit | ShareLimit],
    *,
    confidence: float = 0.95,
    prove: bool = False,
    labels: tuple[str, str] = ("A", "B"),
) -> GroupGate:
    """Gate every group found on both sides; see the module text for the joint confidence.

    Raises ValueError when no group has values on both sides (nothing was checked, so
    nothing may pass).
    """
    both = [g for g in a.names() if g in b.sketches]
    filled = [g for g in both if a[g].count and b[g].count]
    if not filled:
        raise ValueError(
            f"no group has values on both sides ({len(both)} in both, "
            f"{len(a.names())} in {labels[0]}, {len(b.names())} in {labels[1]}); nothing to check."
        )
    each = 1.0 - (1.0 - confidence) / len(filled)
    results = tuple(
        (
            g,
            gate(
                a[g],
                b[g],
                limits,
                confidence=each,
                prove=prove,
                labels=(f"{labels[0]}:{g}", f"{labels[1]}:{g}"),
            ),
        )
        for g in filled
    )
    return GroupGate(
        labels=labels,
        confidence=confidence,
        per_group_confidence=each,
        groups=results,
        only_a=tuple(g for g in a.names() if g not in b.sketches),
        only_b=tuple(g for g in b.names() if g not in a.sketches),
        empty=tuple(g for g in both if g not in filled),
    )
