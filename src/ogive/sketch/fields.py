"""Field readers and writers the ``.ogive`` codec shares between its kinds of entry.

Each reader checks one field's type and shape and raises KeyError, TypeError or
ValueError with the reason (the codec turns them into ``SketchFormatError``).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .provenance import Provenance, SkipTally


def provenance_to_dict(p: Provenance) -> dict[str, Any]:
    return {
        "sources": list(p.sources),
        "field": p.field,
        "lines_read": p.lines_read,
        "rows_read": p.rows_read,
        "skipped": tallies_to_dict(p.skipped),
        "time_first": p.time_first,
        "time_last": p.time_last,
        "partial": p.partial,
    }


def tallies_to_dict(tallies: dict[str, SkipTally]) -> dict[str, Any]:
    return {r: {"count": t.count, "examples": list(t.examples)} for r, t in tallies.items()}


def array_field(body: Any, name: str) -> np.ndarray:
    value = body[name]
    if not isinstance(value, list):
        raise ValueError(f"'{name}' must be an array of numbers")
    # One numpy pass instead of a Python isinstance per element (files hold ~10^4
    # numbers per sketch, sets hold hundreds of sketches): a list of JSON numbers
    # becomes an int or float array; strings, booleans, nulls or nesting do not.
    try:
        raw = np.array(value)
    except ValueError:
        raise ValueError(f"'{name}' must be a flat array of numbers") from None
    if raw.ndim != 1 or (raw.size and raw.dtype.kind not in "iuf"):
        raise ValueError(f"'{name}' must be an array of numbers")
    arr = raw.astype(np.float64)
    if not np.isfinite(arr).all():
        raise ValueError(f"'{name}' holds a non-finite number")
    return arr


def int_field(body: dict[str, Any], name: str) -> int:
    value = body[name]
    if not isinstance(value, int) or isinstance(value, bool) or value < 0:
        raise ValueError(f"'{name}' must be a non-negative integer")
    return value


def provenance_from_dict(p: Any) -> Provenance:
    """The provenance object of an entry (KeyError/TypeError/ValueError when malformed)."""
    if not isinstance(p, dict):
        raise ValueError("'provenance' must be an object")
    return Provenance(
        sources=[str(x) for x in p["sources"]],
        field=str(p["field"]),
        lines_read=int_field(p, "lines_read"),
        rows_read=int_field(p, "rows_read"),
        skipped={
            str(r): SkipTally(int_field(t, "count"), [str(x) for x in t["examples"]])
            for r, t in p["skipped"].items()
        },
        time_first=None if p["time_first"] is None else str(p["time_first"]),
        time_last=None if p["time_last"] is None else str(p["time_last"]),
        partial=None if p["partial"] is None else str(p["partial"]),
    )
