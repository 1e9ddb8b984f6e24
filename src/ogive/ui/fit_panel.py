"""The model ranking for the subject; ``2`` makes the highlighted model the reference."""

from __future__ import annotations

from typing import ClassVar

from rich.text import Text
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.widgets import DataTable

from ..errors import printable
from ..numbers import count
from ..render.tables import ranking_table
from .columns import MODELS_DROP, fit_columns
from .workspace import Workspace


class ModelRanking(DataTable[str | Text]):
    """Fitted families for the subject, best first, then tail-only models and families not fitted.

    | Key | Action |
    | :- | :- |
    | up / down | Move the highlight. |
    | 2 | Make the highlighted model the reference. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("2", "pick", "Ref model", show=True),
    ]

    class Picked(Message):
        def __init__(self, index: int) -> None:
            super().__init__()
            self.index = index

    def on_mount(self) -> None:
        self.cursor_type = "row"

    _shown: tuple[Workspace, bool] | None = None
    _width = 0

    def on_resize(self) -> None:
        if self._shown is not None and self.size.width != self._width:
            self.show(self._shown[0], fitting=self._shown[1])  # the columns that fit depend on the width

    def show(self, ws: Workspace, *, fitting: bool) -> None:
        """The ranking ``ogive fit`` prints (as a table), or why there is none yet."""
        self._shown, self._width = (ws, fitting), self.size.width
        self.clear(columns=True)
        if ws.fit is None:
            self.border_subtitle = "" if ws.fit_note else "fitting…" if fitting else "no subject"
            if ws.fit_note:
                self.add_column("no fit on screen")
                self.add_row(ws.fit_note)
            elif fitting:
                self.add_column("model ranking")
                self.add_row(f"fitting {ws.subject}… (every family; this takes a few seconds)")
            return
        chosen = ws.reference.name if ws.reference is not None and ws.reference.kind == "model" else None
        room = (self.size.width or 200) - 4  # the cells' outer padding and the scroll bar
        keep = ("#", "model", ws.fit.rank_key)
        t = fit_columns(ranking_table(ws.fit, chosen=chosen), room, MODELS_DROP, keep=keep)
        for i, title in enumerate(t.header):
            self.add_column(title, key=f"c{i}")
        for i, cells in enumerate(t.rows):
            self.add_row(
                *(Text(c, justify="right") if k in t.right else c for k, c in enumerate(cells)), key=str(i)
            )
        if ws.model_row is not None and 0 < ws.model_row < self.row_count:
            self.move_cursor(row=ws.model_row)  # a refresh keeps the highlight where it was
        subj = ws.subject_dist
        when = f" at n={count(ws.fit_n)}" if subj is not None and subj.state == "following" else ""
        self.border_subtitle = f"fitted to {printable(ws.subject or '')}{when}, ranked by {ws.fit.rank_key}"

    def action_pick(self) -> None:
        """Only the ranked models can be a reference (tail-only models describe the tail alone)."""
        if self.row_count:
            self.post_message(self.Picked(self.cursor_row))
