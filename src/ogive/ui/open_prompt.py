"""The prompt to open another log or sketch: path completion, how to read it, and a preview."""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass
from typing import ClassVar

from rich.console import Group
from rich.text import Text
from textual import events, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.suggester import SuggestFromList
from textual.timer import Timer
from textual.widgets import Input, Label, Static

from ..errors import OgiveError
from ..read.options import ScanOptions
from . import preview
from .ask_path import OnceScreen
from .path_input import PathInput

FORMATS = ("auto", "csv", "tsv", "ndjson", "text", "access", "syslog", "w3c", "otlp", "parquet")
HINT = "enter: open · tab: complete/next · escape: cancel"


@dataclass(frozen=True)
class OpenRequest:
    path: str
    options: ScanOptions


class OpenPrompt(OnceScreen[OpenRequest | None]):
    """Open a file: type its path, say how to read it, check the preview, press enter.

    With ``attempt``, enter opens the file through it and the prompt stays open with the
    reason (and the path as typed) when the file cannot be opened; without it, the request
    is the prompt's answer.

    | Key | Action |
    | :- | :- |
    | enter | Open with these settings. |
    | tab | Complete the path; in other fields, next field. |
    | shift+tab | Previous field. |
    | escape | Cancel. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "Cancel")]

    FIELDS: ClassVar[list[list[tuple[str, str, str]]]] = [
        [("format", "format", "auto, csv, tsv, ndjson, text, access, syslog, w3c, otlp, parquet"),
         ("unit", "unit", "ms, s, us, ns, or a label")],
        [("field", "field", "NDJSON: dotted path (timing.total_ms); text: KEY of KEY=VALUE"),
         ("column", "column", "CSV/TSV: the value's column, by name or 1-based number")],
        [("pattern", "pattern", "text: a regular expression whose one group is the value")],
        [("by", "by", "a sketch for each distinct value of this column or field (host, route)"),
         ("time_field", "time", "the column or field holding each record's timestamp")],
        [("split_at", "split at", "a moment such as 2026-03-04T13:00:00Z: rows before it go to 'before', "
          "the rest to 'after'")],
    ]  # fmt: skip
    """Rows of (ScanOptions field, label, what it means) below the path."""

    def __init__(
        self,
        start: str = "",
        base: ScanOptions | None = None,
        *,
        attempt: Callable[[OpenRequest], str] | None = None,
    ) -> None:
        super().__init__()
        self.start = start
        self.base = base or ScanOptions()
        self.attempt = attempt
        """Opens a request; returns why it could not be opened ('' when it was)."""
        self._debounce: Timer | None = None

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog", id="open-dialog"):
            yield Static("Open a log or a .ogive sketch", classes="dialog-title")
            with Horizontal(classes="field-row"):
                yield Label("path", classes="field-label")
                yield PathInput(self.start, id="open-path")
            for row in self.FIELDS:
                with Horizontal(classes="field-row"):
                    for key, label, _hint in row:
                        yield Label(label, classes="field-label")
                        value = getattr(self.base, key) or ("auto" if key == "format" else "")
                        suggester = SuggestFromList(FORMATS) if key == "format" else None
                        yield Input(str(value), id=_id(key), suggester=suggester)
            yield Static("type a path to see a preview", id="open-preview")
            yield Static(HINT, id="open-hint", classes="dialog-hint")

    def on_mount(self) -> None:
        self.query_one("#open-path", PathInput).focus()
        self.schedule_preview()

    def options(self) -> ScanOptions:
        """The reading options as typed (ScanOptions may refuse them: ValueError or OgiveError)."""
        values: dict[str, str | None] = {}
        for key, _, _ in self._fields():
            text = self.query_one(f"#{_id(key)}", Input).value.strip()
            values[key] = None if not text or (key == "format" and text == "auto") else text
        return dataclasses.replace(self.base, **values)  # type: ignore[arg-type]

    def _fields(self) -> list[tuple[str, str, str]]:
        return [f for row in self.FIELDS for f in row]

    @property
    def path(self) -> str:
        return self.query_one("#open-path", PathInput).value.strip()

    def on_descendant_focus(self, event: events.DescendantFocus) -> None:
        """The focused field's meaning goes in the hint line (placeholders vanish without colour)."""
        hints = {_id(key): hint for key, _, hint in self._fields()}
        hints["open-path"] = "a log (any format, .gz/.zst) or a .ogive sketch; tab completes"
        text = hints.get(event.widget.id or "", "")
        self.query_one("#open-hint", Static).update(f"{text}\n{HINT}" if text else HINT)

    def on_input_changed(self, _event: Input.Changed) -> None:
        self.schedule_preview()

    def schedule_preview(self) -> None:
        if self._debounce is not None:
            self._debounce.stop()
        self._debounce = self.set_timer(0.3, self.start_preview)

    def start_preview(self) -> None:
        path = self.path
        if not path:
            self._say("type a path to see a preview")
            return
        options = self._checked_options()
        if options is not None:
            self._say(f"reading the start of {path} …")
            self.run_preview(path, options)

    def _checked_options(self) -> ScanOptions | None:
        """The options typed, or None after saying (in the dialog's words) why they cannot be."""
        try:
            return self.options()
        except (OgiveError, ValueError) as exc:
            self._say(preview.in_dialog_words(str(exc)))
            return None

    def _say(self, text: str) -> None:
        self.query_one("#open-preview", Static).update(text)

    @work(thread=True, exclusive=True, group="preview")
    def run_preview(self, path: str, options: ScanOptions) -> None:
        try:
            text = preview.describe(path, options)
        except OgiveError as exc:
            text = f"cannot preview: {exc}"
        self.app.call_from_thread(self._show_preview, path, text)

    def _show_preview(self, path: str, text: str) -> None:
        """The file's own lines are cropped to the dialog (a long log line would push the
        counts out of sight at 80×24); what ogive says wraps."""
        if path == self.path and self.is_mounted:
            parts = [
                Text(
                    line,
                    no_wrap=line.startswith("  "),
                    overflow="ellipsis" if line.startswith("  ") else "fold",
                )
                for line in text.splitlines()
            ]
            self.query_one("#open-preview", Static).update(Group(*parts))

    def on_input_submitted(self, _event: Input.Submitted) -> None:
        if self._answered:
            return  # the second enter of a burst: the file is already being opened
        if not self.path:
            self._say("a path is needed")
            return
        fmt = self.query_one(f"#{_id('format')}", Input).value.strip()
        if fmt and fmt not in FORMATS:
            self._say(f"format must be one of {', '.join(FORMATS)}")
            return
        options = self._checked_options()
        if options is None:
            return
        request = OpenRequest(self.path, options)
        if self.attempt is not None:
            failed = self.attempt(request)
            if failed:
                if self._debounce is not None:
                    self._debounce.stop()  # the preview must not cover the reason
                self._say(preview.in_dialog_words(failed))
                return
            self.answer(None)
            return
        self.answer(request)

    def action_cancel(self) -> None:
        self.answer(None)


def _id(key: str) -> str:
    return "open-" + key.replace("_", "-")
