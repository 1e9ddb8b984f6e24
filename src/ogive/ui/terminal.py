"""What the terminal can show and how it ends: Unicode or ASCII, colour or none, signals, escape timing.

Kept apart from the app so the rules can be read (and tested) as plain functions.

* **ASCII**: a terminal or locale without Unicode (``TERM=linux``/``vt100``/``vt220``/
  ``dumb``, or a locale whose character set is not UTF-8, such as ``LC_ALL=C``) gets
  the ASCII canvas and plain borders, as ``view --ascii`` asks for.
* **No colour**: with ``NO_COLOR`` set (https://no-color.org), no colour codes at all;
  textual's own answer turns colours into greys (still 256-colour codes), so the app
  swaps that filter for one that drops colour, and the highlight is reverse video.
* **Escape delay**: how long a lone Escape waits for the rest of a key's sequence.
  Textual waits 100 ms, so Escape followed by a key within 100 ms reads as Alt+key
  (the key lands in a field). A terminal writes a key's whole sequence at once, and SSH
  carries one write in one packet, so the bytes arrive together even on a slow link; 25 ms
  is enough and lets Escape-then-key typed quickly be two keys. ``ESCDELAY`` (ms, the
  ncurses variable) wins when set.
"""

from __future__ import annotations

import os
from collections.abc import Mapping

from rich.segment import Segment
from textual.color import Color
from textual.filter import LineFilter

from ..errors import UNSAFE

ESCAPE_DELAY_MS = 25
"""Our escape delay when ``ESCDELAY`` is not set (see the module text)."""
ASCII_TERMS = ("linux", "vt52", "vt100", "vt102", "vt220", "dumb", "ansi", "cons25")
"""Terminal types whose fonts lack braille and box-drawing arcs (the Linux console among them)."""
SIGNAL_STATUS = {"SIGINT": 130, "SIGTERM": 143, "SIGHUP": 129}
"""128 + the signal's number: the status a shell reports for a program a signal ended."""


def wants_ascii(env: Mapping[str, str] | None = None) -> bool:
    """True when the terminal type or the locale cannot be trusted with Unicode drawing."""
    env = os.environ if env is None else env
    term = env.get("TERM", "").lower()
    if term in ASCII_TERMS or term.startswith(("vt1", "vt2")):
        return True
    charset = _locale_charset(env)
    return charset is not None and charset.replace("-", "").replace("_", "").lower() not in ("utf8",)


def _locale_charset(env: Mapping[str, str]) -> str | None:
    """The character set the locale variables name (LC_ALL, then LC_CTYPE, then LANG; POSIX order).

    ``C`` and ``POSIX`` mean ASCII; a name without a ``.charset`` part leaves the question
    open (None), so an unusual setting does not take Unicode away from a capable terminal.
    """
    for var in ("LC_ALL", "LC_CTYPE", "LANG"):
        value = env.get(var, "")
        if not value:
            continue
        if value in ("C", "POSIX"):
            return "ascii"
        if "." in value:
            return value.split(".", 1)[1].split("@", 1)[0]
        return None
    return None


def no_color(env: Mapping[str, str] | None = None) -> bool:
    """``NO_COLOR`` present and not empty (the convention's own rule)."""
    env = os.environ if env is None else env
    return bool(env.get("NO_COLOR"))


def set_escape_delay(env: Mapping[str, str] | None = None) -> float:
    """Set textual's escape delay to ours unless ``ESCDELAY`` is given; returns it in seconds."""
    from textual import constants

    env = os.environ if env is None else env
    if not env.get("ESCDELAY"):
        # A Final in textual, read by its key parser at each Escape: set through setattr.
        setattr(constants, "ESCAPE_DELAY", ESCAPE_DELAY_MS / 1000.0)  # noqa: B010
    return constants.ESCAPE_DELAY


ASCII_FOR = str.maketrans(
    {"·": "|", "…": "...", "—": "-", "→": "->", "←": "<-", "≤": "<=", "≥": ">=", "×": "x"}
)
"""The few non-ASCII signs the workspace's own text uses, and their ASCII stand-ins."""


def plain(text: str, ascii_only: bool) -> str:
    """``text`` with the workspace's own Unicode signs made ASCII when the terminal needs it."""
    return text.translate(ASCII_FOR) if ascii_only else text


class ControlFilter(LineFilter):
    """The last guard: no character a terminal acts on reaches it from any drawn text.

    Text the workspace draws goes through :func:`ogive.errors.printable` where it is made (so widths stay
    right); this filter removes any that came another way (a renderer's label), at the cost of
    a cell or two of alignment, never the terminal's state. "Acts on" is the one definition,
    :data:`ogive.errors.UNSAFE`: controls, bidirectional overrides and lone surrogates.
    """

    def apply(self, segments: list[Segment], background: Color) -> list[Segment]:
        return [
            Segment(UNSAFE.sub("", text), style, control)
            if control is None and UNSAFE.search(text)
            else Segment(text, style, control)
            for text, style, control in segments
        ]
