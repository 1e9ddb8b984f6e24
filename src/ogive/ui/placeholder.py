"""The text a panel shows when what it draws cannot be had (yet): honest, never a guess."""

from __future__ import annotations

from rich.text import Text


def notice(title: str, reason: str) -> Text:
    """A two-part message: what is missing, and why."""
    text = Text()
    text.append(f"{title}\n", style="bold")
    text.append(reason)
    return text
