"""What must hold in every sketch, checked in one place.

The reference t-digest (Dunning's Java ``MergingDigest``) asserts after its merges
that the centroid weights add up to the total weight and that the means are sorted.
A sketch here holds more (exact tails, ranges, counts), so more must hold; a file
whose checksum is right but whose content breaks any of these (edited by a tool that
recomputed the checksum, or written by a buggy ogive) would otherwise answer with
quantiles that fall as q rises, or call values exact that are not. The loader
(``codec.py``) refuses such a file with the sentence raised here; the tests run the
same check after every merge.
"""

from __future__ import annotations

import math
from typing import Any, Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray


class Sketch(Protocol):
    """What the checks read of a sketch (``sketch.Sketch``; named here so that the two
    modules do not import each other)."""

    count: int
    nan_count: int
    inf_count: int
    negative_count: int
    zero_count: int
    tail_size: int
    @property
    def total(self) -> float: ...

    @property
    def sum_exponent(self) -> int: ...

    low: NDArray[np.float64]
    high: NDArray[np.float64]
    digest: Any

    @property
    def exact(self) -> bool: ...

    def quantile(self, q: ArrayLike) -> NDArray[np.float64]: ...


_GRID = np.linspace(0.0, 1.0, 201)
"""Quantiles at which the answer must not fall (every half percent, both ends included)."""


def check_sketch(s: Sketch) -> None:
    """Raise ValueError with one sentence naming the first inconsistency found."""
    counts = {
        "count": s.count,
        "nan_count": s.nan_count,
        "inf_count": s.inf_count,
        "negative_count": s.negative_count,
        "zero_count": s.zero_count,
    }
    for name, value in counts.items():
        if value < 0:
            raise ValueError(f"'{name}' is negative ({value})")
    if s.negative_count + s.zero_count > s.count:
        raise ValueError("more negative and zero values are counted than values in all")
    for name, arr in (("low", s.low), ("high", s.high)):
        if not np.isfinite(arr).all():
            raise ValueError(f"the exact tail '{name}' holds NaN or infinity")
        if np.any(np.diff(arr) < 0):
            raise ValueError(f"the exact tail '{name}' is not sorted")
        if arr.size > min(s.tail_size, s.count):
            raise ValueError(f"the exact tail '{name}' holds more values than the sketch keeps")
    means, weights, _ = s.digest.centroids()
    lows, highs = s.digest.ranges()
    for name, arr in (("mean", means), ("weight", weights), ("min", lows), ("max", highs)):
        if not np.isfinite(arr).all():
            raise ValueError(f"a centroid's '{name}' is NaN or infinite")
    if np.any(weights <= 0):
        raise ValueError("a centroid has a weight of zero or less")
    if np.any(np.diff(means) < 0):
        raise ValueError("the centroids are not sorted by mean")
    if np.any(lows > means) or np.any(highs < means):
        raise ValueError("a centroid's mean lies outside its own min and max")
    if not math.isclose(float(weights.sum()), s.count, rel_tol=1e-9, abs_tol=0.5):
        raise ValueError(f"the centroid weights add up to {weights.sum():g}, not to the count {s.count}")
    if s.count == 0:
        if s.low.size or s.high.size:
            raise ValueError("an empty sketch holds tail values")
        return
    if not s.low.size or not s.high.size:
        # An import from the tdigest package has no exact tails, nor has what it was merged into.
        if s.low.size or s.high.size:
            raise ValueError("one exact tail is empty and the other is not")
        _check_quantiles(s)
        return
    lo, hi = float(s.low[0]), float(s.high[-1])
    if s.high[0] < lo or s.low[-1] > hi:
        raise ValueError("the exact tails lie outside [min, max]: a low value above the max or the reverse")
    # Centroid ranges may reach a little past [min, max]: the file rounds them outwards
    # (``rounding.py``) and every reader clips them to it (``Sketch._layout``).
    if means.size and (means[0] < lo or means[-1] > hi):
        raise ValueError("centroid means lie outside [min, max] of the exact tails")
    if not s.exact and s.low[-1] > s.high[0]:
        raise ValueError("the low tail reaches above the high tail though they hold different values")
    # Every value below the low tail's last entry is in the low tail (that is what the tail
    # is), so centroids lying wholly below it can weigh no more than those entries.
    edge_lo, edge_hi = float(s.low[-1]), float(s.high[0])
    below = float(weights[highs < edge_lo].sum())
    if below > np.count_nonzero(s.low < edge_lo) + 0.5:
        raise ValueError(
            f"the centroids hold {below:g} values below the low tail's last value {edge_lo:g}, "
            f"which holds only {np.count_nonzero(s.low < edge_lo)} of them"
        )
    above = float(weights[lows > edge_hi].sum())
    if above > np.count_nonzero(s.high > edge_hi) + 0.5:
        raise ValueError(
            f"the centroids hold {above:g} values above the high tail's first value {edge_hi:g}, "
            f"which holds only {np.count_nonzero(s.high > edge_hi)} of them"
        )
    if (lo < 0) != (s.negative_count > 0):
        raise ValueError(f"'negative_count' is {s.negative_count} but the minimum is {lo:g}")
    if not math.isfinite(s.total):
        raise ValueError("the sum is not a finite number")
    try:  # the sum itself, not the ``mean`` property (which keeps rounding inside [min, max])
        mean = math.ldexp(s.total / s.count, s.sum_exponent)
    except OverflowError:
        mean = math.inf
    slack = 1e-9 * max(abs(lo), abs(hi)) + 1e-300
    if not lo - slack <= mean <= hi + slack:
        raise ValueError(f"the mean ({mean:g}) lies outside [min, max] ([{lo:g}, {hi:g}])")
    _check_quantiles(s)


def _check_quantiles(s: Sketch) -> None:
    q = s.quantile(_GRID)
    if not np.isfinite(q).all():
        raise ValueError("a quantile comes out NaN or infinite")
    falls = np.flatnonzero(np.diff(q) < 0)
    if falls.size:
        i = int(falls[0])
        raise ValueError(
            f"the quantiles fall as q rises (p{_GRID[i + 1] * 100:g} = {q[i + 1]:g} is below "
            f"p{_GRID[i] * 100:g} = {q[i]:g})"
        )
