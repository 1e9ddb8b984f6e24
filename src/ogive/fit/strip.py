"""The density strip of a timeline: where each stretch of time puts its values.

For every column (a run of consecutive windows) and every value row (a band of a log
value axis), the share of the column's values in that cell, read from the window
sketches' CDFs (counts add over windows), then shaded by the column's highest-density
regions (numpy only; no I/O).
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..sketch import Binned
from ..sketch.distribution import Dist

FloatArray = NDArray[np.float64]

STRIP_BANDS: tuple[float, ...] = (0.5, 0.9, 0.99, 0.999)
"""Highest-density bands of the strip, densest first: a cell is in band k when the
densest cells of its column holding this share of the values include it."""


@dataclass(frozen=True)
class Strip:
    """Where each column's values lie: a level per (value row, column).

    Levels: 4 = among the densest cells holding half the column's values, 3 = 90 %,
    2 = 99 %, 1 = 99.9 %, 0 = outside (or empty). The cells of one column are its
    highest-density regions (R. J. Hyndman, "Computing and graphing highest density
    regions", *The American Statistician* 50 (1996) 120–126) over a log value axis, so
    two separate dark runs in one column are two modes, and a column whose light cells
    reach higher has a longer tail.
    """

    edges: FloatArray
    """Value edges of the rows, bottom to top (``rows + 1`` values, log-spaced)."""
    columns: tuple[tuple[int, int], ...]
    """The windows (start, stop) each column merges."""
    levels: NDArray[np.int8]
    """``rows`` × ``columns``; row 0 is the lowest values."""


STRIP_COLUMNS = 240
"""Columns the strip is computed at: more than a screen shows, so a view can pick."""


def strip_range(whole: Dist) -> tuple[float, float] | None:
    """The strip's value range: the whole's p0.1 to its maximum (p5 up when p0.1 is not
    positive: a log axis); None when there is nothing positive to show."""
    if not whole.count:
        return None
    lo, hi = float(whole.quantile(0.001)[()]), float(whole.max)
    if lo <= 0:
        lo = float(whole.quantile(0.05)[()])
    return (lo, hi) if 0 < lo < hi else None


def density_strip(
    windows: Sequence[Dist | None], *, rows: int, columns: int, low: float, high: float
) -> Strip:
    """The strip of one stream's windows on ``rows`` value rows between ``low`` and
    ``high`` (> 0), windows grouped into at most ``columns`` columns."""
    if not 0 < low < high:
        raise ValueError("the strip's value range must be positive and increasing.")
    edges = np.geomspace(low, high, rows + 1)
    count = len(windows)
    ncol = max(min(columns, count), 1)
    cuts = np.linspace(0, count, ncol + 1).round().astype(int)
    spans = tuple((int(a), int(b)) for a, b in itertools.pairwise(cuts))
    levels = np.zeros((rows, ncol), dtype=np.int8)
    for j, (a, b) in enumerate(spans):
        mass = np.zeros(rows)
        for s in windows[a:b]:
            if s is not None and s.count:
                mass += cell_mass(s, edges)
        levels[:, j] = _hdr_levels(mass)
    return Strip(edges, spans, levels)


def cell_mass(s: Dist, edges: FloatArray) -> FloatArray:
    """Values of ``s`` in each cell between ``edges``: each centroid's weight at its mean.

    Why not differences of the CDF: between two centroids far apart (the gap between a
    fast and a slow mode) the CDF is interpolated, which spreads a few values evenly
    over the gap, and a cell there would be shaded as if requests took that long. A
    centroid's values lie around its mean, so counting it there leaves a gap empty.
    Exact tail values are within the centroids already (the digest holds every value).
    A binned window (a telemetry histogram) has no centroids: its values are spread
    over each bucket as its own CDF interpolates them, which is all a bucket says.
    """
    if isinstance(s, Binned):
        return np.clip(np.diff(s.rank(edges)), 0.0, None)
    means, weights, _ = s.digest.centroids()
    cell = np.searchsorted(edges, means, side="right") - 1
    inside = (cell >= 0) & (cell < edges.size - 1)
    return np.bincount(cell[inside], weights=weights[inside], minlength=edges.size - 1).astype(np.float64)


def _hdr_levels(mass: FloatArray) -> NDArray[np.int8]:
    total = mass.sum()
    out = np.zeros(mass.size, dtype=np.int8)
    if total <= 0:
        return out
    order = np.argsort(-mass, kind="stable")
    before = (np.cumsum(mass[order]) - mass[order]) / total  # share held by denser cells
    # A cell is in the first band whose share the denser cells have not yet filled.
    lv = np.zeros(mass.size, dtype=np.int8)
    for k, band in reversed(list(enumerate(STRIP_BANDS))):
        lv[before < band] = np.int8(len(STRIP_BANDS) - k)
    lv[mass[order] <= 0] = 0
    out[order] = lv
    return out
