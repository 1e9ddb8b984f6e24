"""The picture: the subject against its reference, drawn as ``ogive plot`` draws it."""

from __future__ import annotations

from typing import Any

from textual.widgets import Static

from ..render import rich_text
from .picture import NoPicture, draw_picture
from .placeholder import notice
from .workspace import KIND_NAMES, Workspace


class PlotPanel(Static):
    """Redraws whenever the workspace changes or the pane is resized; drawing is the renderer's job."""

    def __init__(self, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.ws: Workspace | None = None
        self.lines: list[str] = []
        """What is on screen now (the export writes these)."""

    def show(self, ws: Workspace) -> None:
        self.ws = ws
        self.redraw()

    def on_resize(self) -> None:
        self.redraw()

    def on_show(self) -> None:
        self.redraw()  # what changed while the pane was hidden (a highlight in Models)

    def redraw(self) -> None:
        ws = self.ws
        if not self.is_mounted or ws is None:
            return
        name = KIND_NAMES[ws.kind]
        if ws.lineup == "one-axis":
            name = "models on one axis (detrended)"
        elif ws.lineup:
            name = f"{name}, models side by side"
        self.border_title = f"Picture: {name} ({ws.axes} axes)"
        width, height = self.content_size.width, self.content_size.height
        if width < 10 or height < 4:
            return
        self.lines = []
        subj = ws.subject_dist
        if subj is None:
            if ws.following:
                self.update(notice("Following…", "The picture appears when the file has values (s stops)."))
            elif ws.scanning:
                self.update(notice("Scanning…", "The picture appears as soon as the first values arrive."))
            else:
                self.update(notice("No subject yet", "Press o to open a log or a sketch, then 1 on its row."))
            return
        if ws.following and subj.sketch.count == 0:
            # A followed row with nothing yet, or a recent window that emptied while the log was quiet.
            self.update(
                notice(
                    f"{subj.name}: no values",
                    "Nothing has arrived within its span yet, or lately. New lines show within a "
                    "second; 1 on another row changes the subject.",
                )
            )
            return
        try:
            lines = draw_picture(ws, width=width, height=height)
        except NoPicture as exc:
            self.update(notice(f"{name} not available", str(exc)))
            return
        except ValueError as exc:  # the renderer's own full-sentence refusal (too small, no data)
            self.update(notice(f"{name} cannot be drawn here", str(exc)))
            return
        self.lines = list(lines)
        self.update(rich_text(lines))
