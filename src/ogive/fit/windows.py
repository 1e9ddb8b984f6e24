"""Time windows: one source cut into consecutive windows, each compared with the first.

The cutting itself happens while reading (``ScanOptions.window``): the reader calls
:func:`window_names` on each chunk's timestamps and keeps one sketch per name, as it
does for ``--by``. Names are the window's start in ISO 8601 UTC, so sorting them sorts
time. This module only parses the width, names windows, and compares the series; it
does no I/O (numpy only, plus the ladder).

A window is flagged when its p50 or p99 interval separates from the first window's
(see :mod:`ogive.fit.compare` for what a separation means; with many windows some
separations are expected by chance, so the count of flagged windows is reported too).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..sketch import SketchSet
from ..sketch.units import span_seconds
from .ladder import LadderRow, ladder


def parse_window(text: str) -> float:
    """'10m' -> 600.0 seconds; s, m, h, d suffixes. Raises ValueError (a full sentence)."""
    width = span_seconds(text)
    if width is None:
        raise ValueError(f"window width {text!r} is not a number with s, m, h or d, such as 30s, 10m or 1h.")
    if width <= 0:
        raise ValueError(f"window width {text!r} must be more than zero.")
    return width


def window_names(epoch_seconds: NDArray[np.float64], width_s: float) -> NDArray[np.str_]:
    """Each timestamp's window, named by its start in ISO 8601 UTC (windows aligned to the epoch).

    Vectorised over the distinct windows only: a chunk of a log spans few of them.
    """
    t = np.asarray(epoch_seconds, dtype=np.float64)
    starts = np.floor(t / width_s) * width_s
    uniq, inverse = np.unique(starts, return_inverse=True)
    names = np.array([window_name(float(s)) for s in uniq], dtype=np.str_)
    return names[inverse] if names.size else np.empty(0, dtype=np.str_)


def window_name(start_epoch_s: float) -> str:
    dt = datetime.fromtimestamp(start_epoch_s, tz=UTC)
    fmt = "%Y-%m-%dT%H:%M:%SZ" if float(start_epoch_s).is_integer() else "%Y-%m-%dT%H:%M:%S.%fZ"
    return dt.strftime(fmt)


_NAME = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d+)?Z$")


def looks_like_windows(names: list[str]) -> bool:
    """True when every sketch name is a window start as :func:`window_name` writes it."""
    return bool(names) and all(_NAME.match(n) for n in names)


@dataclass(frozen=True)
class WindowRow:
    name: str
    n: int
    p50: LadderRow
    """The first window (as A) against this one (as B)."""
    p99: LadderRow
    flagged: bool

    def to_dict(self) -> dict[str, Any]:
        return {
            "window": self.name,
            "n": self.n,
            "p50": self.p50.to_dict(),
            "p99": self.p99.to_dict(),
            "flagged": self.flagged,
        }


@dataclass(frozen=True)
class WindowSeries:
    baseline: str
    confidence: float
    rows: tuple[WindowRow, ...]
    empty: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {
            "baseline": self.baseline,
            "confidence": self.confidence,
            "rows": [r.to_dict() for r in self.rows],
            "flagged": [r.name for r in self.rows if r.flagged],
            "empty": list(self.empty),
        }


def compare_windows(windows: SketchSet, *, confidence: float = 0.95) -> WindowSeries:
    """Each window's p50/p99 against the first non-empty window (sorted by name = time)."""
    names = sorted(windows.names())
    full = [n for n in names if windows[n].count > 0]
    if len(full) < 2:
        raise ValueError(
            f"time windows need at least two windows with values; found {len(full)}. "
            "Use a narrower --window or check the time field."
        )
    base = windows[full[0]]
    rows = []
    for name in full:
        s = windows[name]
        if s.unit != base.unit:
            raise ValueError(f"window {name!r} is in {s.unit!r} but the first is in {base.unit!r}.")
        r50, r99 = ladder(base, s, confidence, (0.5, 0.99))[:2]
        flagged = name != full[0] and (
            r50.verdict in ("higher", "lower") or r99.verdict in ("higher", "lower")
        )
        rows.append(WindowRow(name, s.count, r50, r99, flagged))
    return WindowSeries(full[0], confidence, tuple(rows), tuple(n for n in names if n not in full))
