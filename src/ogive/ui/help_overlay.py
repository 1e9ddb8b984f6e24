"""Overlays: every key (read from the bindings, so it cannot drift), and every message said."""

from __future__ import annotations

import time
from typing import ClassVar

from rich.table import Table
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static


class KeyHelp(ModalScreen[None]):
    """Every key of the workspace, grouped by where it works.

    | Key | Action |
    | :- | :- |
    | escape / ? | Close the overlay. |
    | up / down | Scroll. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "dismiss", "Close"),
        Binding("question_mark", "dismiss", "Close", show=False),
    ]

    def __init__(self, groups: list[tuple[str, list[tuple[str, str]]]]) -> None:
        super().__init__()
        self.groups = groups

    def compose(self) -> ComposeResult:
        table = Table(show_header=True, box=None, pad_edge=False, expand=True)
        table.add_column("key", no_wrap=True, max_width=12)
        table.add_column("does", ratio=1)
        for title, rows in self.groups:
            table.add_row("", f"[bold]— {title} —[/]")
            for key, text in rows:
                table.add_row(key, text)
        with VerticalScroll(id="help-box"):
            yield Static("Keys — escape or ? closes", id="help-title")
            yield Static(table, id="help-table")


class MessageLog(ModalScreen[None]):
    """Everything the status line has said, newest last, each message whole (wrapped, never cut).

    | Key | Action |
    | :- | :- |
    | escape / ! | Close the messages. |
    | up / down | Scroll. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "dismiss", "Close"),
        Binding("exclamation_mark", "dismiss", "Close", show=False),
    ]

    def __init__(self, messages: list[tuple[float, str]]) -> None:
        super().__init__()
        self.messages = messages

    def compose(self) -> ComposeResult:
        table = Table(show_header=False, box=None, pad_edge=False, expand=True)
        table.add_column("when", no_wrap=True, width=8)
        table.add_column("message", ratio=1, overflow="fold")
        for at, text in self.messages:
            table.add_row(time.strftime("%H:%M:%S", time.localtime(at)), Text(text))
        if not self.messages:
            table.add_row("", "nothing has been said yet.")
        with VerticalScroll(id="help-box"):
            yield Static("Messages — escape or ! closes", id="help-title")
            yield Static(table, id="help-table")

    def on_mount(self) -> None:
        self.query_one("#help-box", VerticalScroll).scroll_end(animate=False)
