"""The comparison ladder: quantiles of reference and subject, intervals, verdicts, tail budget."""

from __future__ import annotations

from typing import Any

from rich.console import Group, RenderableType
from rich.text import Text
from textual.widgets import Static

from ..errors import printable
from ..render.objectives import objective_table
from ..render.reports import comparison_notes
from ..render.tables import ladder_table, rich_table
from .columns import LADDER_DROP, fit_columns
from .placeholder import notice
from .workspace import Workspace


def comparison_renderable(ws: Workspace, width: int = 200) -> RenderableType:
    """The ladder (narrow, and without the columns that do not fit ``width``), then the
    distances, tail budget, summary and notes of ``ogive compare``."""
    c = ws.comparison
    assert c is not None
    ref, subj = c.labels
    head = f"S = {printable(subj)} against R = {printable(ref)}" + (f", in {c.unit}" if c.unit else "")
    ladder = fit_columns(ladder_table(c, narrow=True), width, LADDER_DROP, keep=("q", "S", "verdict"))
    parts: list[RenderableType] = [Text(head, style="bold"), rich_table(ladder)]
    rows = [ws.objective_checks(d.name) or [] for d in (ws.reference_dist, ws.subject_dist) if d]
    checks = tuple(x for row in rows for x in row if x is not None)
    if checks:
        parts.append(rich_table(objective_table(checks, narrow=True)))
    parts.extend(Text(line) for line in comparison_notes(c))
    return Group(*parts)


class LadderPanel(Static):
    """Shows the comparison the compare package made, or why there is none (sits in a scroller)."""

    def __init__(self, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.ws: Workspace | None = None

    def on_resize(self) -> None:
        if self.ws is not None:
            self.show(self.ws)  # the columns that fit depend on the width

    def show(self, ws: Workspace) -> None:
        self.ws = ws
        subj, ref = ws.subject_dist, ws.reference
        if subj is None or ref is None:
            self.update(
                notice("No comparison", "Pick a subject (1) and a reference sketch (2) in Distributions.")
            )
        elif ref.kind != "sketch":
            self.update(
                notice("No comparison", "The ladder compares two sketches; the reference is a model.")
            )
        elif ws.comparison is not None:
            self.update(comparison_renderable(ws, self.size.width or 200))
        elif ws.compare_note:
            self.update(notice("Comparison not available", ws.compare_note))
        else:
            self.update(notice("Comparing…", "waiting for both sketches to have values"))
