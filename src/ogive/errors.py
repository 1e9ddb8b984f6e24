"""The one exception type the user sees as a single line (``ogive: error: ...``)."""

from __future__ import annotations

import re


class OgiveError(Exception):
    """A problem with the user's input or environment, worded as a full sentence.

    ``cli.main`` prints it as one line and exits with ``EXIT_ERROR``; anything else
    reaching the top is a bug in ogive and is reported as one.
    """


EXIT_OK = 0
EXIT_GATE_FAIL = 1
"""``gate``: a limit is credibly exceeded."""
EXIT_UNDECIDED = 2
"""``gate``: the data cannot decide a limit."""
EXIT_ERROR = 3
"""Bad input, a missing file, a usage mistake: ogive could not do what was asked."""
EXIT_INTERRUPTED = 130


# ---------------------------------------------------------------- text safe to print
UNSAFE = re.compile("[\x00-\x1f\x7f-\x9f\u200e\u200f\u202a-\u202e\u2066-\u2069\ud800-\udfff]")
"""Characters a terminal acts on instead of showing: C0 and C1 controls (ESC starts the
sequences that move the cursor, recolour, retitle the window or rewrite the clipboard),
DEL, the bidirectional overrides that reorder what follows, and lone surrogates (bytes
that were not UTF-8, which cannot even be encoded for output)."""
_NAMED = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def _escape(match: re.Match[str]) -> str:
    ch = match.group()
    if ch in _NAMED:
        return _NAMED[ch]
    code = ord(ch)
    if 0xDC80 <= code <= 0xDCFF:  # a byte kept by surrogateescape: show the byte
        return f"\\x{code - 0xDC00:02x}"
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def printable(text: str) -> str:
    """``text`` with every character a terminal would act on written as an escape (``\\x1b``).

    Source names, group keys, provenance and excerpts of the input come from files the
    user may not control; printed raw, an escape sequence in a log line could clear the
    screen, fake a table row or retitle the terminal. Every table, the live line, the
    workspace and every error message print such text through this function.
    """
    return UNSAFE.sub(_escape, text) if UNSAFE.search(text) else text


def excerpt(text: str | bytes, limit: int = 40) -> str:
    """A short, escaped quote of the input for an error message: at most ``limit``
    characters of it, marked with an ellipsis when cut, never raw bytes or controls."""
    if isinstance(text, bytes):
        text = text[: limit * 4].decode("utf-8", "surrogateescape")
    cut = len(text) > limit
    return printable(text[:limit]) + ("…" if cut else "")
