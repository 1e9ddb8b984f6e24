"""The list of loaded distributions, where the subject and the reference are picked."""

from __future__ import annotations

from typing import ClassVar

import numpy as np
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.widgets import DataTable

from . import fmt
from .state import Distribution


class DistributionShelf(DataTable[str]):
    """Loaded distributions with n, p50, p99 and bad rows; ``1``/``2`` pick the roles.

    | Key | Action |
    | :- | :- |
    | up / down | Move the highlight. |
    | 1 | Make the highlighted distribution the subject. |
    | 2 | Make the highlighted distribution the reference. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("1", "pick('subject')", "Subject", show=True),
        Binding("2", "pick('reference')", "Reference", show=True),
    ]

    class Picked(Message):
        """The user gave a distribution a role."""

        def __init__(self, name: str, role: str) -> None:
            super().__init__()
            self.name = name
            self.role = role

    COLUMNS = ("", "name", "n", "p50", "p99", "bad")

    def on_mount(self) -> None:
        self.cursor_type = "row"
        self.zebra_stripes = False
        for label in self.COLUMNS:
            self.add_column(label, key=label or "role")

    def show(self, items: list[Distribution], subject: str | None, reference: str | None) -> None:
        """Redraw the rows from the sketches as they are now, keeping the highlight."""
        keep = self.highlighted_name
        self.clear()
        for d in items:
            s = d.sketch
            if s.count:
                p50, p99 = (float(v) for v in s.quantile(np.array([0.5, 0.99])))
            else:
                p50 = p99 = float("nan")
            role = "S" if d.name == subject else "R" if d.name == reference else ""
            if d.state == "scanning":
                role += "…"
            elif d.state == "following":
                role += "~"  # still growing: a followed file
            elif d.state in ("partial", "failed"):
                role += "!"
            unit = f" {s.unit}" if s.unit and s.count else ""  # no "— ms" for an empty row
            self.add_row(
                role,
                d.name,
                fmt.count(s.count),
                fmt.num(p50) + unit,
                fmt.num(p99) + unit,
                fmt.count(s.provenance.skipped_total),
                key=d.name,
            )
        if keep is not None:
            names = [d.name for d in items]
            if keep in names:
                self.move_cursor(row=names.index(keep))

    @property
    def highlighted_name(self) -> str | None:
        if not self.row_count:
            return None
        try:
            key = self.coordinate_to_cell_key(self.cursor_coordinate).row_key
        except Exception:  # no rows or cursor outside after a clear
            return None
        return None if key.value is None else str(key.value)

    def action_pick(self, role: str) -> None:
        name = self.highlighted_name
        if name is not None:
            self.post_message(self.Picked(name, role))
