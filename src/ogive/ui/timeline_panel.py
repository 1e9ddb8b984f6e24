"""The Timeline pane: the chosen quantiles over time and the change points, one of which
can be taken up for study (the windows after it become the subject, those before it the
reference, so the picture and the ladder show what changed)."""

from __future__ import annotations

from pathlib import Path
from typing import Any, ClassVar

from rich.console import Group, RenderableType
from rich.text import Text
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.widgets import Static

from ..render import rich_text
from ..render.frame import MIN_HEIGHT, MIN_WIDTH
from ..render.timeline import chart_figure
from ..render.timeline_text import change_summary
from .placeholder import notice
from .workspace import Workspace


class TimelinePanel(Static, can_focus=True):
    """The timeline of the first log opened with time windows (``--window``), or of a saved one.

    | Key | Action |
    | :- | :- |
    | up / down | Highlight the previous or next change point. |
    | enter | Study the highlighted change: after it the subject, before it the reference. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("up", "move(-1)", "Previous change", show=False),
        Binding("down", "move(1)", "Next change", show=False),
        Binding("enter", "study", "Study change"),
    ]

    class Chosen(Message):
        """The user took a change point up for study."""

        def __init__(self, index: int) -> None:
            super().__init__()
            self.index = index

    def __init__(self, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.ws: Workspace | None = None
        self.lines: list[str] = []
        """What is on screen now, as text."""

    def show(self, ws: Workspace) -> None:
        self.ws = ws
        self.redraw()

    def on_resize(self) -> None:
        self.redraw()

    def action_move(self, step: int) -> None:
        ws = self.ws
        if ws is None or ws.timeline is None or not ws.timeline.streams[0].changes:
            return
        count = len(ws.timeline.streams[0].changes)
        ws.timeline_pick = (ws.timeline_pick + step) % count
        self.redraw()

    def action_study(self) -> None:
        ws = self.ws
        if ws is not None and ws.timeline is not None and ws.timeline.streams[0].changes:
            self.post_message(self.Chosen(ws.timeline_pick))

    def redraw(self) -> None:
        ws = self.ws
        if not self.is_mounted or ws is None:
            return
        width, height = self.content_size.width, self.content_size.height
        if width < 10 or height < 2:
            return
        t = ws.timeline
        live = " (following)" if ws.timeline_live else ""
        name = Path(ws.timeline_source).name if ws.timeline_source else ""
        self.border_title = "Timeline" + (f": {name}{live}" if name else "")
        if t is None:
            self.lines = []
            if ws.timeline_note:
                self.update(notice("No timeline", ws.timeline_note))
            elif ws.timeline_source:
                self.update(notice("Making the timeline…", "quantiles per window and change points"))
            else:
                self.update(
                    notice(
                        "No timeline",
                        "Open a log with time windows (ogive view LOG --window 5m) or a saved "
                        "timeline (ogive timeline LOG -o day.ogive).",
                    )
                )
            return
        self.update(self._renderable(ws, width, height))

    def _renderable(self, ws: Workspace, width: int, height: int) -> RenderableType:
        """Every change point when there is room under a chart, else the highlighted one;
        the chart takes what is left (at least the renderer's smallest plot)."""
        t = ws.timeline
        assert t is not None
        changes = t.streams[0].changes
        room = height - MIN_HEIGHT
        listed = list(range(len(changes))) if len(changes) <= max(room, 1) else [ws.timeline_pick]
        parts: list[RenderableType] = []
        self.lines = []
        chart_h = height - max(len(listed), 1)
        if chart_h >= MIN_HEIGHT and width >= MIN_WIDTH:
            lines = chart_figure(
                t, t.streams[0], width=width, height=chart_h, ascii_only=ws.ascii_only
            ).lines()
            self.lines = list(lines)
            parts.append(rich_text(lines))
        if not changes:
            text = "No change point: no split of the windows stands out from random orders of them."
            parts.append(Text(text[:width]))
            self.lines.append(text)
        for k in listed:
            line = change_summary(t, k)
            if len(listed) < len(changes):
                line = f"{line}  [{k + 1}/{len(changes)}: up/down]"
            self.lines.append(line)
            mark = "> " if k == ws.timeline_pick else "  "
            parts.append(Text(mark + line, style="reverse" if k == ws.timeline_pick else "", no_wrap=True))
        return Group(*parts)
