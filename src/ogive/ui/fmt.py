"""Short number formats for narrow panels (formatting only; no statistics)."""

from __future__ import annotations

import math


def num(value: float | int | None, digits: int = 4) -> str:
    """``1234.5678`` -> ``1235``, ``0.012345`` -> ``0.01235``: a few significant digits."""
    if value is None:
        return "—"
    v = float(value)
    if math.isnan(v):
        return "—"
    if math.isinf(v):
        return "∞" if v > 0 else "-∞"
    if v == 0:
        return "0"
    mag = abs(v)
    if mag >= 1e7 or mag < 1e-3:
        return f"{v:.{digits - 1}e}"
    decimals = max(digits - 1 - math.floor(math.log10(mag)), 0)
    return f"{v:.{decimals}f}"


def count(value: int | float | None) -> str:
    """``1234567`` -> ``1.23M``: counts in the shelf stay within six characters."""
    if value is None:
        return "—"
    v = float(value)
    for factor, suffix in ((1e9, "G"), (1e6, "M"), (1e3, "k")):
        if abs(v) >= factor:
            return f"{v / factor:.3g}{suffix}"
    return f"{int(v)}"


def size(nbytes: int | None) -> str:
    """Bytes in binary units (``1.5 GiB``)."""
    if nbytes is None:
        return "?"
    v = float(nbytes)
    for unit in ("B", "KiB", "MiB", "GiB", "TiB"):
        if v < 1024 or unit == "TiB":
            return f"{v:.0f} {unit}" if unit == "B" else f"{v:.1f} {unit}"
        v /= 1024
    return f"{v:.1f} TiB"


def duration(seconds: float | None) -> str:
    """``75`` -> ``1m15s``."""
    if seconds is None or math.isnan(seconds):
        return "?"
    s = round(seconds)
    if s < 60:
        return f"{s}s"
    if s < 3600:
        return f"{s // 60}m{s % 60:02d}s"
    return f"{s // 3600}h{(s % 3600) // 60:02d}m"
