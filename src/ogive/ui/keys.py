"""The key overlay's tables, read from the key tables in the docstrings beside each ``BINDINGS``.

Every screen and widget documents its keys where it binds them (a ``| Key | Action |``
table in its docstring, as textual's own widgets do); the overlay shows those tables,
so it cannot drift from the bindings (a test checks that every binding is listed).
"""

from __future__ import annotations

from .ask_path import AskPath, Confirm
from .fit_panel import ModelRanking
from .help_overlay import MessageLog
from .open_prompt import OpenPrompt
from .path_input import PathInput
from .shelf import DistributionShelf
from .timeline_panel import TimelinePanel

KeyRows = list[tuple[str, str]]


def key_table(cls: type) -> KeyRows:
    """The (key, what it does) rows of the table in ``cls``'s docstring."""
    rows: KeyRows = []
    for line in (cls.__doc__ or "").splitlines():
        line = line.strip()
        if line.startswith("|") and not line.startswith(("| Key", "| :-")):
            cells = [c.strip() for c in line.strip("|").split("|")]
            if len(cells) >= 2:
                rows.append((cells[0], cells[1]))
    return rows


def key_groups(app_class: type) -> list[tuple[str, KeyRows]]:
    """Every key of the workspace, grouped by where it works (the app's own keys first)."""
    return [
        ("Everywhere", key_table(app_class)),
        ("Distributions", key_table(DistributionShelf)),
        ("Models", key_table(ModelRanking)),
        ("Timeline", key_table(TimelinePanel)),
        ("Open prompt", key_table(OpenPrompt)),
        ("Path fields", key_table(PathInput)),
        ("Write / export prompt", key_table(AskPath)),
        ("Replace? question", key_table(Confirm)),
        ("Messages (!)", key_table(MessageLog)),
    ]
