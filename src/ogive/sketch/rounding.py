"""The numbers a digest keeps, rounded to what its file holds, so memory and file agree.

Why round at all: 17 digits per number would take a third of the 64 KB a sketch may
use. Why round in memory and not only when writing: a scan prints its quantiles and
intervals from the sketch in memory, and ``show``/``compare`` later print them from the
file; rounding only on the way out made the two disagree in the fourth digit.

* A mixed centroid's mean keeps ``MEAN_DIGITS`` significant digits: an average the
  quantile function interpolates through, far below the sketch's own error.
* A centroid's smallest and largest value are bounds, not data, so they are moved
  *outwards* to the shortest decimal within ``RANGE_SLACK`` of the centroid's width:
  every bound stays true, and an interval read through them widens by a few per cent
  of one centroid at most.
* A centroid holding one repeated value, and the exact tails, keep every digit.

Rounding what was already rounded changes nothing (the range rounding is repeated to a
fixed point), so a loaded sketch writes back byte for byte.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]

MEAN_DIGITS = 12
"""Significant digits kept for the mean of a mixed centroid."""
RANGE_SLACK = 1.0 / 64
"""How far, as a share of a centroid's width, its kept min/max may lie outside it."""


def settle(
    means: FloatArray, lows: FloatArray, highs: FloatArray, pure: BoolArray
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """(means, lows, highs) as a digest keeps and a file holds them (see the module)."""
    lo, hi = lows, highs
    for _ in range(8):
        width = hi - lo
        lo2 = shortest(lo, width * RANGE_SLACK, down=True)
        hi2 = shortest(hi, width * RANGE_SLACK, down=False)
        if np.array_equal(lo2, lo) and np.array_equal(hi2, hi):
            break
        lo, hi = lo2, hi2
    m = means
    mixed = ~pure & np.isfinite(means) & (means != 0)
    if mixed.any():
        m = means.copy()
        mag = np.floor(np.log10(np.abs(means[mixed])))
        scale = 10.0 ** (MEAN_DIGITS - 1 - mag)
        with np.errstate(over="ignore", invalid="ignore"):
            rounded = np.round(means[mixed] * scale) / scale
        m[mixed] = np.where(np.isfinite(rounded), rounded, means[mixed])
        m = np.clip(m, lo, hi)
        m = _keep_order(m, means)
    return m, lo, hi


def shortest(x: FloatArray, tol: FloatArray, *, down: bool) -> FloatArray:
    """Per element, the decimal with the fewest significant digits at or below x
    (``down``) or at or above it, no further than ``tol`` away; x itself when none is."""
    out = x.copy()
    todo = (tol > 0) & np.isfinite(x) & (x != 0)
    if not todo.any():
        return out
    with np.errstate(all="ignore"):
        mag = np.floor(np.log10(np.abs(np.where(todo, x, 1.0))))
        for digits in range(1, 17):
            scale = 10.0 ** (digits - 1 - mag)
            # x * scale carries rounding error (1.005 * 1000 = 1004.999...): try the next
            # integer inwards too, and keep it when it is still on the right side of x.
            if down:
                k = np.floor(x * scale)
                cand = np.where((k + 1) / scale <= x, (k + 1) / scale, k / scale)
            else:
                k = np.ceil(x * scale)
                cand = np.where((k - 1) / scale >= x, (k - 1) / scale, k / scale)
            inside = (cand <= x) & (cand >= x - tol) if down else (cand >= x) & (cand <= x + tol)
            ok = todo & np.isfinite(cand) & inside
            out = np.where(ok, cand, out)
            todo &= ~ok
            if not todo.any():
                break
    return out


def _keep_order(rounded: FloatArray, exact: FloatArray) -> FloatArray:
    """Rounded means, with full precision wherever rounding would break their order."""
    out = rounded.copy()
    while True:
        bad = np.flatnonzero(np.diff(out) < 0)
        if bad.size == 0:
            return out
        idx = np.concatenate((bad, bad + 1))
        out[idx] = exact[idx]
