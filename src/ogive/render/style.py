"""Optional colour for the plots: a role -> style table applied over the spans.

Colour is never needed to tell series apart (glyphs and the legend do that); it is an
extra, off when ``NO_COLOR`` is set (https://no-color.org) or output is not a terminal.
"""

from __future__ import annotations

import os
from typing import IO, Any

from .frame import PlotLines

ROLE_STYLES: dict[str, str] = {
    "subject": "bold cyan",
    "second": "bold magenta",
    "reference": "yellow",
    "band": "dim yellow",
    "bucket": "green",
    "mark": "bold red",
    "label": "red",
    "axis": "dim",
    "title": "bold",
    "legend": "",
}
"""Rich style names per role (what the workspace uses)."""

_ANSI: dict[str, str] = {
    "subject": "1;36",
    "second": "1;35",
    "reference": "33",
    "band": "2;33",
    "bucket": "32",
    "mark": "1;31",
    "label": "31",
    "axis": "2",
    "title": "1",
}


def color_allowed(stream: IO[str] | None = None) -> bool:
    """True when colour may be used: NO_COLOR unset and the stream is a terminal."""
    if os.environ.get("NO_COLOR"):
        return False
    return bool(stream is not None and hasattr(stream, "isatty") and stream.isatty())


def ansi_lines(lines: PlotLines | list[str]) -> list[str]:
    """The lines with ANSI SGR colour codes over their spans (unchanged without spans)."""
    spans = getattr(lines, "spans", None)
    if spans is None:
        return list(lines)
    out = []
    for text, row in zip(lines, spans, strict=True):
        parts, pos = [], 0
        for start, end, role in row:
            code = _ANSI.get(role)
            if not code:
                continue
            parts.append(text[pos:start])
            parts.append(f"\x1b[{code}m{text[start:end]}\x1b[0m")
            pos = end
        parts.append(text[pos:])
        out.append("".join(parts))
    return out


def rich_text(lines: PlotLines | list[str], *, color: bool = True) -> Any:
    """A ``rich.text.Text`` of the lines, styled from the spans unless ``color`` is off or NO_COLOR set."""
    from rich.text import Text

    text = Text(no_wrap=True, overflow="crop")
    spans = getattr(lines, "spans", None)
    use = color and not os.environ.get("NO_COLOR") and spans is not None
    for i, line in enumerate(lines):
        if i:
            text.append("\n")
        offset = len(text)
        text.append(line)
        if use and spans is not None:
            for start, end, role in spans[i]:
                style = ROLE_STYLES.get(role)
                if style:
                    text.stylize(style, offset + start, offset + end)
    return text
