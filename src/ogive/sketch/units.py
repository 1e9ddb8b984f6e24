"""Time units: one table for the reader, the gate's limits and the plot axes."""

from __future__ import annotations

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
