"""Field paths for JSON records: our syntax, read into keys and turned into JSONPath.

- dots separate keys: ``timing.total_ms``, ``http.response.status_code``;
- any other character is part of the key: ``@timestamp``, ``x y``, ``a-b``;
- a key that itself holds a dot, bracket or backslash is escaped with a backslash,
  ``labels.k\\.dot``, or written in brackets, ``labels["k.dot"]``;
- ``[N]`` takes element N (from 0) of an array: ``spans[0].ms``.

Plain dots between plain keys are remembered (``groupings``): structured loggers write
a dotted name nested (``{"event": {"duration": 5}}``) or flat (``{"event.duration": 5}``).
"""

from __future__ import annotations

import itertools
from typing import Any

from ..errors import OgiveError

Part = str | int
"""A key, or an array index."""


def parse_path(spec: str) -> list[tuple[Part, bool]]:
    """Keys and indices of a field path, each with whether a plain dot joined it to the
    one before (only such neighbours may be one flat key like ``"event.duration"``)."""
    out: list[tuple[Part, bool]] = []
    cur: list[str] = []
    i, n = 0, len(spec)
    plain_dot = False  # the next part follows an unescaped dot
    pending = False  # ``cur`` holds a started key (possibly empty after an escape)

    def bad(why: str) -> OgiveError:
        return OgiveError(
            f"the field path {spec!r} {why}; write it like timing.total_ms, labels.k\\.dot or "
            'labels["k.dot"].'
        )

    def close() -> None:
        nonlocal cur, pending, plain_dot
        if not cur and not pending:
            raise bad("has an empty part")
        # Only two plain keys either side of a plain dot may be read as one flat key.
        joins = plain_dot and bool(out) and not bracketed[-1]
        out.append(("".join(cur), joins))
        bracketed.append(False)
        cur, pending, plain_dot = [], False, False

    bracketed: list[bool] = []

    just_bracketed = False
    while i < n:
        c = spec[i]
        if c == "\\" and i + 1 < n:
            cur.append(spec[i + 1])
            pending = True
            i += 2
            continue
        if c == ".":
            if not just_bracketed:
                close()
            just_bracketed = False
            plain_dot = True
            i += 1
            continue
        if c == "[":
            if cur or pending:
                close()
            elif plain_dot:
                raise bad("has an empty part")
            end, part = _bracket(spec, i, bad)
            out.append((part, False))
            bracketed.append(True)
            plain_dot = False
            just_bracketed = True
            i = end
            continue
        if just_bracketed:
            raise bad("needs a dot after a bracket")
        cur.append(c)
        pending = True
        i += 1
    if cur or pending or not out or plain_dot:
        close()
    return out


def _bracket(spec: str, i: int, bad: Any) -> tuple[int, Part]:
    """Parse ``["key"]``, ``['key']`` or ``[N]`` at ``spec[i]``; (index after it, part)."""
    j = i + 1
    if j < len(spec) and spec[j] in "\"'":
        quote, j, key = spec[j], j + 1, []
        while j < len(spec) and spec[j] != quote:
            if spec[j] == "\\" and j + 1 < len(spec):
                j += 1
            key.append(spec[j])
            j += 1
        if j + 1 >= len(spec) or spec[j + 1] != "]":
            raise bad("has an unclosed bracket")
        return j + 2, "".join(key)
    close = spec.find("]", j)
    if close < 0 or not spec[j:close].isdigit():
        raise bad("has a bracket that holds neither a quoted key nor an index")
    return close + 1, int(spec[j:close])


def groupings(parts: list[tuple[Part, bool]]) -> list[list[Part]]:
    """Every way of reading plain-dotted neighbours as one flat key, nested first."""
    joinable = [i for i, (_, joins) in enumerate(parts) if joins][:4]  # at most 16 ways
    out: list[list[Part]] = []
    for joins in itertools.product((False, True), repeat=len(joinable)):
        merged: list[Part] = []
        for i, (p, _) in enumerate(parts):
            if i in joinable and joins[joinable.index(i)]:
                merged[-1] = f"{merged[-1]}.{p}"
            else:
                merged.append(p)
        out.append(merged)
    return out


def json_path(parts: list[Part]) -> str:
    """JSONPath in bracket form, which takes any key (``$.@t`` does not compile)."""

    def one(p: Part) -> str:
        if isinstance(p, int):
            return f"[{p}]"
        return "['" + p.replace("\\", "\\\\").replace("'", "\\'") + "']"

    return "$" + "".join(one(p) for p in parts)


def shown(parts: list[Part]) -> str:
    """A path written back in our syntax (dots in keys escaped)."""
    out = ""
    for p in parts:
        if isinstance(p, int):
            out += f"[{p}]"
        else:
            key = p.replace("\\", "\\\\").replace(".", "\\.").replace("[", "\\[")
            out += ("." if out else "") + key
    return out
