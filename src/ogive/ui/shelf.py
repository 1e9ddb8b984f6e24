"""The list of loaded distributions, where the subject and the reference are picked."""

from __future__ import annotations

from typing import ClassVar

from rich.cells import cell_len
from rich.text import Text
from textual import events
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.widgets import DataTable

from ..errors import printable
from ..render.objectives import objective_cell
from ..render.tables import distribution_table, table
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
    | pageup / pagedown | Move by the rows in sight. |
    | home / end | First / last row. |
    | 1 | Make the highlighted distribution the subject. |
    | 2 | Make the highlighted distribution the reference. |
    | / | Filter the rows: type part of a name (enter keeps the filter, escape clears it). |
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("1", "pick('subject')", "Subject", show=True),
        Binding("2", "pick('reference')", "Ref", show=True),
        Binding("slash", "filter", "Filter", show=False),
        Binding("pagedown", "page(1)", "Page down", show=False),
        Binding("pageup", "page(-1)", "Page up", show=False),
        Binding("home", "first_last(0)", "First", show=False),
        Binding("end", "first_last(-1)", "Last", show=False),
    ]

    filter_text = ""
    """Rows whose name holds this (case-insensitive) are shown; '' shows all."""
    filtering = False
    """Keys go to the filter (typed after /) instead of the workspace."""
    _ws: Workspace | None = None

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
        self._ws = ws
        keep = self.highlighted_name
        ref = ws.reference_dist
        wanted = self.filter_text.lower()
        shown = [d for d in ws.dists.values() if wanted in d.name.lower()]
        self._title(len(shown), len(ws.dists))
        marked = [
            (
                ("S" if d.name == ws.subject else "R" if ref is not None and d.name == ref.name else "")
                + plain(STATE_MARKS.get(d.state, ""), ws.ascii_only),
                printable(d.name),
                d.sketch,
            )
            for d in shown
        ]
        t = distribution_table(marked, compact=True)
        if ws.objectives:  # one column per objective, read by the workspace (same words as the CLI)
            reads = [ws.objective_checks(d.name) or [None] * len(ws.objectives) for d in shown]
            rows = [(*r, *(objective_cell(c) for c in cs)) for r, cs in zip(t.rows, reads, strict=True)]
            extra = range(len(t.header), len(t.header) + len(ws.objectives))
            t = table((*t.header, *(o.text for o in ws.objectives)), rows, (*t.right, *extra))
        self._fit_height(len(marked))
        self.clear(columns=True)
        # Widths given, not left to the table: it sized auto columns when idle, and a
        # refill soon after (a scan's end, its fit) sometimes kept the header's width,
        # cutting 8k to 8 and 16.2 ms to 16. (seen under test, 1 run in 5).
        for i, title in enumerate(t.header):
            width = max([cell_len(title), *(cell_len(r[i]) for r in t.rows)])
            self.add_column(title, key=title or "role", width=width)
        for (_, name, _), cells in zip(marked, t.rows, strict=True):
            self.add_row(
                *(Text(c, justify="right") if i in t.right else c for i, c in enumerate(cells)), key=name
            )
        # Keep the highlight; at first, rest it on the subject (the last row of a long list
        # would otherwise be out of sight).
        names = [d.name for d in shown]
        row = keep if keep is not None and keep in names else ws.subject
        if row is not None and row in names:
            self.move_cursor(row=names.index(row))

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

    def _title(self, shown: int, total: int) -> None:
        if self.filtering or self.filter_text:
            typing = "_" if self.filtering else ""
            self.border_subtitle = f"/{self.filter_text}{typing}  {shown} of {total}"
        else:
            self.border_subtitle = f"{total} rows, / filters" if total > VISIBLE_ROWS["short"] else ""

    def action_filter(self) -> None:
        self.filtering = True
        self._redraw()

    def _redraw(self) -> None:
        if self._ws is not None:
            self.show(self._ws)

    def on_key(self, event: events.Key) -> None:
        """While filtering, printable keys edit the filter (they are not the workspace's keys)."""
        if not self.filtering:
            return
        if event.key == "escape":
            self.filtering, self.filter_text = False, ""
        elif event.key == "enter":
            self.filtering = False
        elif event.key == "backspace":
            self.filter_text = self.filter_text[:-1]
        elif event.is_printable and event.character:
            self.filter_text += event.character
        else:
            return  # arrows and page keys still move the highlight
        event.stop()
        event.prevent_default()
        self._redraw()

    def action_page(self, step: int) -> None:
        """By the rows in sight (the table's own page keys moved by its full virtual height)."""
        in_sight = max(self.scrollable_content_region.height - 1, 1)  # the header line
        target = min(max(self.cursor_row + step * in_sight, 0), max(self.row_count - 1, 0))
        self.move_cursor(row=target)

    def action_first_last(self, end: int) -> None:
        if self.row_count:
            self.move_cursor(row=0 if end == 0 else self.row_count - 1)

    def action_pick(self, role: str) -> None:
        name = self.highlighted_name
        if name is not None:
            self.post_message(self.Picked(name, role))
