"""Time units: one table for the reader, the gate's limits and the plot axes."""

from __future__ import annotations

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
