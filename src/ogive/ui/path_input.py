"""A path field that completes from the file system (right arrow or tab accepts)."""

from __future__ import annotations

import os
from pathlib import Path
from typing import ClassVar

from textual.binding import Binding, BindingType
from textual.suggester import Suggester
from textual.widgets import Input


def complete_path(value: str) -> str | None:
    """The longest unambiguous completion of ``value`` among the entries of its folder.

    Folders get a trailing ``/`` when they are the only match, so the next completion
    continues inside them. Returns None when nothing matches or nothing would be added.
    """
    if not value:
        return None
    expanded = os.path.expanduser(value)
    folder, _, stem = expanded.rpartition(os.sep)
    base = Path(folder or ("/" if expanded.startswith(os.sep) else "."))
    try:
        names = sorted(e.name for e in os.scandir(base) if e.name.startswith(stem))
    except OSError:
        return None
    if not stem.startswith("."):
        names = [n for n in names if not n.startswith(".")]
    if not names:
        return None
    common = os.path.commonprefix(names)  # noqa: RUF071 -- a prefix of names, not of paths
    extra = common[len(stem) :]
    if len(names) == 1 and (base / names[0]).is_dir():
        extra += os.sep
    return value + extra if extra else None


class PathSuggester(Suggester):
    def __init__(self) -> None:
        super().__init__(use_cache=False, case_sensitive=True)

    async def get_suggestion(self, value: str) -> str | None:
        return complete_path(value)


class PathInput(Input):
    """An input with file-system completion.

    | Key | Action |
    | :- | :- |
    | tab / right | Accept the completion shown in grey. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("tab", "complete", "Complete path", show=False, priority=True),
    ]

    def __init__(self, value: str = "", **kwargs: object) -> None:
        super().__init__(value=value, suggester=PathSuggester(), **kwargs)  # type: ignore[arg-type]

    def action_complete(self) -> None:
        done = complete_path(self.value)
        if done is not None:
            self.value = done
            self.cursor_position = len(done)
        else:
            self.screen.focus_next()
