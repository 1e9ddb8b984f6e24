"""An anchored twin of a ``--pattern`` regex: the same captures at about half the cost.

Why: polars runs a regex with capture groups in three passes over each line (a forward
DFA to find where the match ends, a reverse one to find where it starts, then a
one-pass engine for the groups). A regex anchored at the start of the line skips the
first two: on an access-log line pattern with a time and a value,
``\\[(?P<ts>[^\\]]+)\\] "[^"]*" \\d+ \\d+ rt=(?P<value>[0-9.]+)ms``, 39 ms a 4 MB chunk
against 21 ms anchored (``str.extract_groups``, one thread); a whole 1 GB scan with
``--time-field --split-at`` took 6.40 s and 10.25 CPU-s against 8.78 s and 14.13
(median of 3, alternating; seen with ``perf record``: the two searches had been 27 % of
the scan, the one-pass engine 23 %).

The twin: when the pattern must begin with one literal character ``c`` (not optional,
not one branch of a top-level ``|``), ``^[^c]*(?:PATTERN)`` matches a line exactly when
the pattern matches at the first ``c`` of the line, and then with the same groups: the
pattern can only start at a ``c``, so its leftmost match (the one the regex engine
reports) starts there. A line where the twin finds nothing may still hold a match that
starts at a later ``c``: :func:`ogive.read.text.extract_columns` runs the pattern itself
on those lines, so the columns are the pattern's own, line for line.

It is used only when it pays: when the twin matches the sample lines the pattern matches
(nearly all of them; each miss costs a second pass), and when the pattern holds no
``.`` with a repeat (``.*``, ``.+``), which keeps the engine off its one-pass path:
``"(?P<m>[A-Z]+) .* rt=...`` ran 61 ms a chunk, 74 ms anchored.
"""

from __future__ import annotations

import importlib
from collections.abc import Iterator
from typing import Any

import polars as pl

META = set(".^$*+?()[]{}|\\#")
"""Characters that are not a literal at the start of a pattern (``#``: a comment in
verbose mode; whitespace is excluded too, for the same reason)."""
REPEATS = set("*+?{")
"""A literal followed by one of these may be absent or repeated: no twin (Python's
parser, the second opinion, reads ``a+`` as a repeat too)."""
LEAST_AGREEMENT = 0.9
"""Share of the sample lines the pattern matches that the twin must match too."""


def first_literal(pattern: str) -> str | None:
    """The character every match of ``pattern`` begins with, when the pattern says so
    plainly (a literal or an escaped punctuation character, not repeated, and no
    top-level alternation); else None."""
    if not pattern:
        return None
    if pattern[0] == "\\":
        if len(pattern) < 2 or pattern[1].isalnum() or pattern[1].isspace():
            return None  # \d, \x41, \b ...: a class, a code or an assertion
        char, rest = pattern[1], pattern[2:]
    elif pattern[0] in META or pattern[0].isspace():
        return None
    else:
        char, rest = pattern[0], pattern[1:]
    if rest[:1] in REPEATS or _top_level_bar(pattern) or not _python_agrees(pattern, char):
        return None
    return char


def _python_agrees(pattern: str, char: str) -> bool:
    """A second opinion from Python's own regex parser: the pattern is a sequence whose
    first item is the literal ``char`` (a top-level ``|`` parses as one branch item, an
    optional or repeated first character as a repeat). Without that parser (another
    Python), no opinion: no twin."""
    try:
        parser: Any = importlib.import_module("re._parser")
        items = parser.parse(pattern).data
    except Exception:  # any failure (a change of that module included): no opinion, no twin
        return False
    return bool(items) and str(items[0][0]) == "LITERAL" and items[0][1] == ord(char)


def _outside_classes(pattern: str) -> Iterator[tuple[int, str, int]]:
    """(index, character, group depth) of every character outside escapes and classes:
    the one walk over the pattern's syntax that both checks below read."""
    depth = 0
    klass = 0
    i = 0
    n = len(pattern)
    while i < n:
        c = pattern[i]
        if c == "\\":
            i += 2
            continue
        if klass:
            if c == "[":
                klass += 1
            elif c == "]":
                klass -= 1
        elif c == "[":
            klass = 1
            # A ']' first in a class (after an optional '^') is a literal, not its end.
            j = i + 1 + (pattern[i + 1 : i + 2] == "^")
            if pattern[j : j + 1] == "]":
                i = j
        else:
            if c == "(":
                depth += 1
            elif c == ")":
                depth -= 1
            yield i, c, depth
        i += 1


def _top_level_bar(pattern: str) -> bool:
    """True when ``pattern`` has a ``|`` outside every group and class."""
    return any(c == "|" and depth == 0 for _, c, depth in _outside_classes(pattern))


def repeated_dot(pattern: str) -> bool:
    """True when an unescaped ``.`` outside a class is followed by ``*``, ``+`` or ``{``."""
    return any(
        c == "." and pattern[i + 1 : i + 2] in ("*", "+", "{") for i, c, _ in _outside_classes(pattern)
    )


def twin(pattern: str) -> str | None:
    """``^[^c]*(?:pattern)`` for the pattern's first literal ``c``; None when there is none."""
    char = first_literal(pattern)
    if char is None:
        return None
    return rf"^[^\x{{{ord(char):x}}}]*(?:{pattern})"


def anchored_twin(pattern: str, lines: list[str]) -> str | None:
    """The twin of ``pattern`` when it pays on ``lines`` (a sample of the source); else None."""
    fast = twin(pattern)
    if fast is None or repeated_dot(pattern) or not lines:
        return None
    sample = pl.Series(lines, dtype=pl.String).to_frame("line")
    try:
        hits = sample.select(
            pl.first().str.contains(pattern).alias("p"), pl.first().str.contains(fast).alias("f")
        )
    except pl.exceptions.PolarsError:
        return None  # the twin is not accepted (a pattern at the parser's limits): use the pattern
    matched = hits.get_column("p")
    either = int(matched.sum())
    both = int((matched & hits.get_column("f")).sum())
    return None if both < LEAST_AGREEMENT * either else fast
