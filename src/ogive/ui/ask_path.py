"""Small prompts: one path (where to save sketches, where to write a report), and a yes/no question.

Both answer once: keys that arrive together (two enters in one read over a laggy link,
a paste, a macro) reach the prompt after it has already answered, and are dropped
instead of closing the screen beneath it.
"""

from __future__ import annotations

from typing import ClassVar, TypeVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Static

from .path_input import PathInput

T = TypeVar("T")


class OnceScreen(ModalScreen[T]):
    """A modal screen whose answer is given at most once (later keys of a burst are ignored)."""

    _answered = False

    def answer(self, value: T) -> None:
        if self._answered or not self.is_current:
            return
        self._answered = True
        # Keys already on their way (typed right after escape or enter) must not land in this
        # prompt's field: with nothing focused they reach the workspace's own bindings.
        self.set_focus(None)
        self.dismiss(value)


class AskPath(OnceScreen[str | None]):
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
        self.answer(value or None)

    def action_cancel(self) -> None:
        self.answer(None)


class Confirm(OnceScreen[bool]):
    """A yes/no question (replace a file that exists?); anything but y is no.

    | Key | Action |
    | :- | :- |
    | y | Yes. |
    | n / escape | No. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("y", "choose(True)", "Yes"),
        Binding("n", "choose(False)", "No"),
        Binding("escape", "choose(False)", "No", show=False),
    ]

    def __init__(self, question: str) -> None:
        super().__init__()
        self.question = question

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(self.question, classes="dialog-title")
            yield Static("y: yes · n or escape: no", classes="dialog-hint")

    def action_choose(self, yes: bool) -> None:
        self.answer(yes)
