"""The screen as plain text (no colour): what tests assert on and the README shows."""

from __future__ import annotations

import io

from rich.console import Console
from textual.app import App


def screen_text(app: App[object]) -> str:
    """Render the current screen (with any screens beneath a dialog) to plain text lines."""
    width, height = app.size
    console = Console(
        width=width,
        height=height,
        file=io.StringIO(),
        force_terminal=True,
        color_system=None,
        record=True,
        legacy_windows=False,
        safe_box=False,
    )
    update = app.screen._compositor.render_update(full=True, screen_stack=app._background_screens)
    console.print(update)
    return "\n".join(line.rstrip() for line in console.export_text().splitlines())
