"""The list of loaded distributions, where the subject and the reference are picked."""

from __future__ import annotations

from typing import ClassVar

from rich.text import Text
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.widgets import DataTable

from ..render.tables import distribution_table
from .terminal import plain
from .workspace import Workspace

STATE_MARKS = {"scanning": "…", "following": "~", "partial": "!", "failed": "!"}
"""After the role letter: still scanning, followed as it grows, stopped early."""
VISIBLE_ROWS = {"short": 3, "tall": 9}
"""Rows shown before the list scrolls: at 80x24 three, so the picture below keeps the 12
lines a plot needs; from 36 lines up, nine."""


class DistributionShelf(DataTable[str | Text]):
    """Loaded distributions with n, p50, p99 and bad rows; ``1``/``2`` pick the roles.

    | Key | Action |
    | :- | :- |
    | up / down | Move the highlight. |
    | 1 | Make the highlighted distribution the subject. |
    | 2 | Make the highlighted distribution the reference. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("1", "pick('subject')", "Subject", show=True),
        Binding("2", "pick('reference')", "Ref", show=True),
    ]

    class Picked(Message):
        """The user gave a distribution a role."""

        def __init__(self, name: str, role: str) -> None:
            super().__init__()
            self.name = name
            self.role = role

    def on_mount(self) -> None:
        self.cursor_type = "row"
        self.zebra_stripes = False

    def show(self, ws: Workspace) -> None:
        """Redraw the rows from the sketches as they are now, keeping the highlight."""
        keep = self.highlighted_name
        ref = ws.reference_dist
        marked = [
            (
                ("S" if d.name == ws.subject else "R" if ref is not None and d.name == ref.name else "")
                + plain(STATE_MARKS.get(d.state, ""), ws.ascii_only),
                d.name,
                d.sketch,
            )
            for d in ws.dists.values()
        ]
        t = distribution_table(marked, compact=True)
        self._fit_height(len(marked))
        self.clear(columns=True)
        for title in t.header:
            self.add_column(title, key=title or "role")
        for (_, name, _), cells in zip(marked, t.rows, strict=True):
            self.add_row(
                *(Text(c, justify="right") if i in t.right else c for i, c in enumerate(cells)), key=name
            )
        # Keep the highlight; at first, rest it on the subject (the last row of a long list
        # would otherwise be out of sight).
        row = keep if keep is not None and keep in ws.dists else ws.subject
        if row is not None and row in ws.dists:
            self.move_cursor(row=list(ws.dists).index(row))

    def _fit_height(self, rows: int) -> None:
        """As tall as its rows (a fixed height wasted two lines at 80x24), up to a cap.

        Set here rather than with ``height: auto`` in CSS: an auto-sized table that is
        refilled twice a second kept the screen from redrawing while a scan streamed.
        """
        screen = self.screen
        if (screen.has_class("-wide") and screen.has_class("-tall")) or screen.has_class("-compact"):
            if self.styles.inline.has_rule("height"):
                self.styles.inline.clear_rule("height")  # the grid (wide) or the whole body (compact) decides
                self.refresh(layout=True)
            return
        cap = VISIBLE_ROWS["tall" if self.app.size.height >= 36 else "short"]
        height = min(max(rows, 1), cap) + 3  # header and the two border lines
        current = self.styles.inline.height if self.styles.inline.has_rule("height") else None
        if current is None or current.value != height:
            self.styles.height = height

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
