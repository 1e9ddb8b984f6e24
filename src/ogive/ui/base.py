"""What every part of the workspace application shares: the model, the screen lookup, drawing, messages.

:class:`.app.OgiveApp` is put together from small mixins (:mod:`.analysis` runs the fit,
the comparison and the timeline; :mod:`.actions` answers the keys); this base holds what
they all read, so each module stays small enough to read in one sitting.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

from textual.app import App
from textual.screen import Screen
from textual.widgets import Static

from ..errors import printable
from ..read.options import ScanOptions
from .fit_panel import ModelRanking
from .ladder_panel import LadderPanel
from .plot_panel import PlotPanel
from .schedule import Scheduler
from .shelf import DistributionShelf
from .status_line import FeedStatus, headline
from .terminal import plain
from .timeline_panel import TimelinePanel
from .workspace import Workspace

MESSAGES_KEPT = 200
"""Messages the ``!`` view keeps (older ones go first)."""


INTERRUPT_WINDOW_S = 3.0
"""A second Ctrl-C within this many seconds of the first quits."""


class WorkspaceBase(App[int]):
    """The model and the drawing every mixin of the workspace relies on."""

    ws: Workspace
    options: ScanOptions
    save_dir: Path
    schedule: Scheduler
    clock: Callable[[], float]
    families: list[str] | None
    pane: str
    _dirty: bool
    messages: list[tuple[float, str]]
    """Everything the status line has said, with the time it was said (the ``!`` view lists them)."""
    _interrupted_at: float | None = None

    @property
    def interrupt_pending(self) -> bool:
        """A ctrl+c was pressed within the last :data:`INTERRUPT_WINDOW_S`: another one quits."""
        at = self._interrupted_at
        return at is not None and time.monotonic() - at <= INTERRUPT_WINDOW_S

    @property
    def workspace_screen(self) -> Screen[Any]:
        """The workspace screen: widgets are looked up there even while a dialog is on top."""
        return self.screen_stack[0] if self.screen_stack else self.screen

    @property
    def _gone(self) -> bool:
        """True once the workspace screen is gone (quitting): late worker results are dropped."""
        if not self.screen_stack:
            return True  # shutting down: a timer's last tick finds no screen at all
        screen = self.workspace_screen
        return not screen.is_attached or not screen.query(FeedStatus)

    def open(self, source: str, options: ScanOptions, *, follow: bool = False) -> str:
        """Open a source (the app does it); returns why it could not be opened, or ''."""
        raise NotImplementedError

    def _refresh_if_dirty(self) -> None:
        if self._gone:
            return
        self.workspace_screen.query_one(FeedStatus).show_jobs(self.ws.jobs)
        if self._dirty:
            self._dirty = False
            self.refresh_all()

    def refresh_all(self) -> None:
        """Redraw every pane from the workspace; a pane that cannot draw says so and the rest go on."""
        if self._gone:
            return
        ws, screen = self.ws, self.workspace_screen
        head = screen.query_one("#headline", Static)
        ref = ws.reference
        subject, label = (printable(n) if n else None for n in (ws.subject, ref.label if ref else None))
        text = headline(subject, label, max(head.size.width, 40))
        head.update(plain(text, ws.ascii_only))
        fitting = self.schedule.fit.busy
        steps: list[tuple[str, Callable[[], None]]] = [
            ("the Distributions list", lambda: screen.query_one(DistributionShelf).show(ws)),
            ("the picture", lambda: screen.query_one(PlotPanel).show(ws)),
            ("the Models pane", lambda: screen.query_one(ModelRanking).show(ws, fitting=fitting)),
            ("the ladder", lambda: screen.query_one(LadderPanel).show(ws)),
            ("the Timeline pane", lambda: screen.query_one(TimelinePanel).show(ws)),
        ]
        for what, step in steps:
            try:
                step()
            except Exception as exc:  # one pane's failure must not take the workspace down
                self.say(f"{what} could not be drawn: {type(exc).__name__}: {exc}")
        screen.query_one(FeedStatus).show_jobs(ws.jobs)

    def say(self, text: str) -> None:
        """One line in the status line (kept, with the others, for the ``!`` view).

        While a first ctrl+c waits for its second, every line says so: a message arriving
        just after (a scan ending, the reference chosen) must not hide that the next
        ctrl+c quits."""
        text = printable(text)
        if self.interrupt_pending and "ctrl+c" not in text:
            text = f"ctrl+c again quits; {text}"
        if not self.messages or self.messages[-1][1] != text:  # a pane failing at each refresh: once
            self.messages.append((time.time(), text))
            del self.messages[:-MESSAGES_KEPT]
        if not self._gone:
            self.workspace_screen.query_one(FeedStatus).message = text

    def set_aside(self, text: str) -> None:
        """The picture or axes just chosen, beside the status (it never hides a scan's progress)."""
        if not self._gone:
            self.workspace_screen.query_one(FeedStatus).aside = text
