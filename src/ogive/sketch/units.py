"""Time units: one table for the reader, the gate's limits and the plot axes, and the
conversion of a sketch between duration units (compare, gate, merge and plot meet
sketches kept in different ones)."""

from __future__ import annotations

import copy
import math
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .binned import Binned
    from .sketch import Sketch

import re

SECONDS_PER_UNIT: dict[str, float] = {
    "ns": 1e-9,
    "us": 1e-6,
    "µs": 1e-6,  # micro sign U+00B5
    "μs": 1e-6,  # Greek mu U+03BC
    "ms": 1e-3,
    "s": 1.0,
    "sec": 1.0,
    "m": 60.0,
    "min": 60.0,
    "h": 3600.0,
}
"""Seconds per unit for every time-unit spelling ogive accepts."""

SPAN_SECONDS: dict[str, float] = {"s": 1.0, "m": 60.0, "h": 3600.0, "d": 86400.0}
"""Seconds per suffix of a span of time given as text (a window width, a recent span)."""
_SPAN = re.compile(r"^\s*([0-9]+(?:\.[0-9]+)?)\s*(s|m|h|d)\s*$")


def span_seconds(text: str) -> float | None:
    """``'10m'`` -> 600.0: a span of time as text (a number, then s, m, h or d), in seconds.

    None when the text is not of that form; zero is returned as it is, so each caller
    says in its own words what it needs (a window width, a recent span). The one parser
    for such text: the reader's ``--window``/``--recent`` and the window comparison.
    """
    m = _SPAN.match(text)
    return None if m is None else float(m[1]) * SPAN_SECONDS[m[2]]


def duration_factor(from_unit: str, to_unit: str) -> float | None:
    """What a value in ``from_unit`` is multiplied by to be in ``to_unit``; None unless both are durations."""
    if from_unit == to_unit:
        return 1.0
    if from_unit in SECONDS_PER_UNIT and to_unit in SECONDS_PER_UNIT:
        return SECONDS_PER_UNIT[from_unit] / SECONDS_PER_UNIT[to_unit]
    return None


def in_unit(sketch: Sketch | Binned, unit: str) -> Sketch | Binned:
    """The sketch with every value expressed in ``unit`` (a duration unit, as the sketch's is).

    Multiplying by a positive factor keeps every value's rank, so the centroids keep
    their weights and their order, the exact tails stay exact and the rank-error bound
    (in positions) is unchanged: the result answers exactly as the source does, times
    the factor. Raises ValueError, in one sentence, when the units are not both
    durations (ms and bytes measure different things).
    """
    factor = duration_factor(sketch.unit, unit)
    if factor is None:
        raise ValueError(
            f"values in {sketch.unit or 'no unit'!r} cannot be expressed in {unit or 'no unit'!r}: "
            "only durations (ns, us, ms, s, m, h) convert into one another."
        )
    if factor == 1.0:
        return sketch
    from .binned import Binned

    if isinstance(sketch, Binned):  # edges, extremes and sum scale; counts do not move
        return sketch.scaled(factor, unit)
    biggest = max(abs(sketch.min), abs(sketch.max)) if sketch.count else 0.0
    if not math.isfinite(biggest * factor):
        raise ValueError(
            f"values up to {biggest:g} {sketch.unit} are too large to express in {unit} "
            "(they pass the largest number a float holds)."
        )
    out = copy.deepcopy(sketch)
    out.unit = unit
    out.scale_sum(factor)
    out.low, out.high = sketch.low * factor, sketch.high * factor
    out.digest.scale_values(factor)  # keeps each centroid's range, so the bounds carry over
    return out
