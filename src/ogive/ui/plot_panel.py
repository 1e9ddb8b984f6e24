"""The picture: the subject against its reference as a text plot drawn by ``ogive.render``."""

from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.reactive import reactive
from textual.widgets import Static

from . import picture
from .capabilities import Unavailable
from .placeholder import notice
from .state import Distribution, ReferenceChoice

KINDS: tuple[str, ...] = ("qq", "detrended", "pp", "cdf", "shift")
KIND_NAMES: dict[str, str] = {
    "qq": "Q-Q",
    "detrended": "detrended Q-Q",
    "pp": "P-P",
    "cdf": "CDF overlay",
    "shift": "shift function",
}


class PlotPanel(Static):
    """Redraws whenever its inputs change or it is resized; drawing is the renderer's job."""

    kind: reactive[str] = reactive("qq")
    """Which picture: one of :data:`KINDS`."""
    axes: reactive[str] = reactive("auto")
    """Value axes: 'auto' (the renderer picks log when every value is positive), 'log' or 'linear'."""

    def __init__(self, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.subject: Distribution | None = None
        self.reference: ReferenceChoice | None = None
        self.reference_dist: Distribution | None = None
        self.comparison: Any = None
        self.lines: list[str] = []
        """What is on screen now (the export writes these)."""
        self.waiting = False
        """True while a scan runs that has not delivered values yet."""
        self.following = False
        """True while a growing file is followed: values come when lines are appended."""

    @property
    def title(self) -> str:
        return f"Picture: {KIND_NAMES[self.kind]} ({self.axes} axes)"

    @property
    def log_axes(self) -> bool | None:
        """What the renderer is asked for: None lets it choose."""
        return {"auto": None, "log": True, "linear": False}[self.axes]

    def set_inputs(
        self,
        subject: Distribution | None,
        reference: ReferenceChoice | None,
        reference_dist: Distribution | None,
        comparison: Any,
    ) -> None:
        self.subject, self.reference, self.reference_dist = subject, reference, reference_dist
        self.comparison = comparison
        self.redraw()

    def watch_kind(self, _old: str, _new: str) -> None:
        self.redraw()

    def watch_axes(self, _old: str, _new: str) -> None:
        self.redraw()

    def on_resize(self) -> None:
        self.redraw()

    def redraw(self) -> None:
        if not self.is_mounted:
            return
        self.border_title = self.title
        width, height = self.content_size.width, self.content_size.height
        if width < 10 or height < 4:
            return
        if self.subject is None:
            self.lines = []
            if self.following:
                self.update(notice("Following…", "The picture appears when the file has values (s stops)."))
            elif self.waiting:
                self.update(notice("Scanning…", "The picture appears as soon as the first values arrive."))
            else:
                self.update(notice("No subject yet", "Press o to open a log or a sketch, then 1 on its row."))
            return
        if self.following and self.subject.sketch.count == 0:
            # A followed row with nothing yet, or a recent window that emptied while the log was quiet.
            self.lines = []
            self.update(
                notice(
                    f"{self.subject.name}: no values",
                    "Nothing has arrived within its span yet, or lately. New lines show within a "
                    "second; 1 on another row changes the subject.",
                )
            )
            return
        try:
            self.lines = picture.draw(
                self.kind,
                self.subject,
                self.reference,
                self.reference_dist,
                self.comparison,
                width=width,
                height=height,
                log_axes=self.log_axes,
            )
        except Unavailable as exc:
            self.lines = []
            self.update(notice(f"{KIND_NAMES[self.kind]} not available", str(exc)))
            return
        except ValueError as exc:  # the renderer's own full-sentence refusal (too small, no data)
            self.lines = []
            self.update(notice(f"{KIND_NAMES[self.kind]} cannot be drawn here", str(exc)))
            return
        try:
            from ..render import rich_text

            self.update(rich_text(self.lines))
        except ImportError:
            self.update(Text("\n".join(self.lines), no_wrap=True, overflow="crop"))
