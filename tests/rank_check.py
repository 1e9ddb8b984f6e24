"""The rank-error yardstick shared by the sketch tests."""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]


def rank_error(raw: FloatArray, v: FloatArray, qs: FloatArray) -> FloatArray:
    """How far (as a fraction of n) q(n-1) lies outside the rank interval of each v.

    The interval is [#(x < v) - 1, #(x <= v)] over the raw data, so an estimate that is
    one of several tied values is scored as right anywhere in that value's run.
    """
    xs = np.sort(raw)
    n = xs.size
    p = qs * (n - 1)
    left = np.searchsorted(xs, v, side="left")
    right = np.searchsorted(xs, v, side="right")
    return np.asarray(np.maximum(0.0, np.maximum(left - 1 - p, p - right)) / n, dtype=np.float64)
