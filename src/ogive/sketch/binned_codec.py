"""A binned distribution in the ``.ogive`` file (format version 2; ``codec.py`` has the rest).

Entry::

    {"kind": "binned", "unit": "ms", "count": N, "parts": [PART, ...], "provenance": {...}}

PART, as the layout's spec writes it (``buckets.py``), with the exact extremes where the
export gave them (``null`` where it did not)::

    {"layout": "explicit", "bounds": [b0, ...], "counts": [c0, ..., cm], "floor": 0 | null,
     "min": x | null, "max": x | null, "sum": x | null}
    {"layout": "exponential", "scale": s, "factor": f, "zero_threshold": t, "zero_count": z,
     "positive": {"offset": i, "counts": [...]}, "negative": {"offset": j, "counts": [...]},
     "min": ..., "max": ..., "sum": ...}

Loading checks what the arithmetic relies on: finite, strictly increasing bounds and
one count more than bounds; non-negative whole counts that add up to ``count``; a
scale in the spec's range; min <= max, and no count in a bucket that lies wholly
outside [min, max]. Anything else is refused with the reason (``SketchFormatError``
from the caller).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .binned import KIND, Binned
from .buckets import EXPLICIT, EXPONENTIAL, ExplicitPart, ExponentialPart, Extremes, Part, inconsistency
from .fields import array_field, int_field, provenance_from_dict, provenance_to_dict

MIN_SCALE, MAX_SCALE = -10, 20
"""The scales the OpenTelemetry exponential histogram defines (base 2^1024 ... 2^(2^-20))."""


def _counts_list(a: np.ndarray) -> list[int | float]:
    return [int(v) if float(v).is_integer() and abs(v) < 2**53 else float(v) for v in a.tolist()]


def binned_to_dict(b: Binned) -> dict[str, Any]:
    parts = []
    for p in b.parts:
        d = p.to_dict()
        if isinstance(p, ExplicitPart):
            d["counts"] = _counts_list(p.counts)
        else:
            d["positive"]["counts"] = _counts_list(p.positive)
            d["negative"]["counts"] = _counts_list(p.negative)
        parts.append(d)
    return {
        "kind": KIND,
        "unit": b.unit,
        "count": b.count,
        "parts": parts,
        "provenance": provenance_to_dict(b.provenance),
    }


def _number(body: dict[str, Any], name: str, *, optional: bool = False) -> float:
    v = body.get(name)
    if v is None and optional:
        return math.nan
    if not isinstance(v, (int, float)) or isinstance(v, bool) or not math.isfinite(v):
        raise ValueError(f"'{name}' must be a finite number")
    return float(v)


def _extremes(body: dict[str, Any]) -> Extremes:
    ex = Extremes(
        _number(body, "min", optional=True),
        _number(body, "max", optional=True),
        _number(body, "sum", optional=True),
    )
    if ex.minimum > ex.maximum:
        raise ValueError("a part's 'min' is above its 'max'")
    return ex


def _counts(body: dict[str, Any], name: str) -> np.ndarray:
    c = array_field(body, name)
    if np.any(c < 0) or np.any(c != np.floor(c)):
        raise ValueError(f"'{name}' must hold non-negative whole counts")
    return c


def _explicit(body: dict[str, Any]) -> ExplicitPart:
    bounds, counts = array_field(body, "bounds"), _counts(body, "counts")
    if counts.size != bounds.size + 1:
        raise ValueError("an explicit part needs one count more than bounds")
    if np.any(np.diff(bounds) <= 0):
        raise ValueError("explicit bounds must be strictly increasing")
    floor = _number(body, "floor", optional=True)
    floor = -math.inf if math.isnan(floor) else floor
    if bounds.size and floor > bounds[0]:
        raise ValueError("an explicit part's 'floor' lies above its first bound")
    return ExplicitPart(bounds, counts, floor, _extremes(body))


def _side(body: dict[str, Any], name: str) -> tuple[int, np.ndarray]:
    side = body.get(name)
    if not isinstance(side, dict):
        raise ValueError(f"'{name}' must be an object with 'offset' and 'counts'")
    off = side.get("offset")
    if not isinstance(off, int) or isinstance(off, bool):
        raise ValueError(f"'{name}.offset' must be an integer")
    return off, _counts(side, "counts")


def _exponential(body: dict[str, Any]) -> ExponentialPart:
    scale = body.get("scale")
    if not isinstance(scale, int) or isinstance(scale, bool) or not MIN_SCALE <= scale <= MAX_SCALE:
        raise ValueError(f"'scale' must be an integer from {MIN_SCALE} to {MAX_SCALE}")
    factor, threshold = _number(body, "factor"), _number(body, "zero_threshold")
    zero = _number(body, "zero_count")
    if factor <= 0 or threshold < 0 or zero < 0 or not float(zero).is_integer():
        raise ValueError("'factor' must be positive, 'zero_threshold' and 'zero_count' not negative")
    p_off, pos = _side(body, "positive")
    n_off, neg = _side(body, "negative")
    return ExponentialPart(scale, p_off, pos, n_off, neg, zero, threshold, factor, _extremes(body))


def binned_from_dict(body: dict[str, Any]) -> Binned:
    parts_raw = body["parts"]
    if not isinstance(parts_raw, list):
        raise ValueError("'parts' must be an array")
    parts: list[Part] = []
    for p in parts_raw:
        if not isinstance(p, dict):
            raise ValueError("a part must be an object")
        layout = p.get("layout")
        if layout == EXPLICIT:
            part: Part = _explicit(p)
        elif layout == EXPONENTIAL:
            part = _exponential(p)
        else:
            raise ValueError(f"unknown bucket layout {layout!r}")
        why = inconsistency(part)
        if why:
            raise ValueError(why)
        parts.append(part)
    out = Binned(str(body["unit"]), parts)
    if out.count != int_field(body, "count"):
        raise ValueError("the parts' counts do not add up to 'count'")
    out.provenance = provenance_from_dict(body["provenance"])
    return out
