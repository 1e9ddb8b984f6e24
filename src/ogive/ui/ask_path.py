"""A small prompt for one path (where to save sketches, where to write a report)."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Static

from .path_input import PathInput


class AskPath(ModalScreen[str | None]):
    """Ask for a path; enter accepts, escape cancels.

    | Key | Action |
    | :- | :- |
    | enter | Accept the path. |
    | tab | Complete the path. |
    | escape | Cancel. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, title: str, default: str, hint: str = "") -> None:
        super().__init__()
        self.title_text = title
        self.default = default
        self.hint = hint

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(self.title_text, classes="dialog-title")
            yield PathInput(self.default, id="ask-path")
            yield Static(self.hint or "enter: accept · tab: complete · escape: cancel", classes="dialog-hint")

    def on_mount(self) -> None:
        self.query_one(PathInput).focus()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        value = event.value.strip()
        self.dismiss(value or None)

    def action_cancel(self) -> None:
        self.dismiss(None)
