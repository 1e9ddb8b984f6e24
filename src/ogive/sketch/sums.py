"""Sums that cannot overflow: a float and a power-of-two exponent.

Values near the float64 limit (a damaged field reading 1.7e308) have a sum no float
holds, though their mean is an ordinary number. Such a sum is kept as
``total * 2 ** exponent`` with ``exponent`` 0 (every ordinary file) or a multiple of
``SUM_SHIFT``; scaling by a power of two is exact, so nothing is lost but the
overflow. The pair is a plain tuple so the digest and the sketch share one rule.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]

SUM_SHIFT = 64
"""A sum that overflows float64 is kept divided by 2**64 (more than any file needs)."""

Scaled = tuple[float, int]
ZERO: Scaled = (0.0, 0)


def add_scaled(a: Scaled, b: Scaled) -> Scaled:
    """``a + b``, rescaled by ``SUM_SHIFT`` when the plain sum would overflow."""
    e = max(a[1], b[1])
    total = math.ldexp(a[0], a[1] - e) + math.ldexp(b[0], b[1] - e)
    if not math.isfinite(total) and math.isfinite(a[0]) and math.isfinite(b[0]):
        e += SUM_SHIFT
        total = math.ldexp(a[0], a[1] - e) + math.ldexp(b[0], b[1] - e)
    return total, e


def block_sum(values: FloatArray) -> Scaled:
    """The sum of finite ``values``, scaled when its plain sum overflows."""
    with np.errstate(over="ignore"):
        total = float(values.sum())
    if math.isfinite(total):
        return total, 0
    return float(np.ldexp(values, -SUM_SHIFT).sum()), SUM_SHIFT


def scale_scaled(a: Scaled, factor: float) -> Scaled:
    """``a * factor`` (a change of unit), rescaled when the product would overflow."""
    scaled = a[0] * factor
    if math.isfinite(scaled) or not math.isfinite(a[0]):
        return scaled, a[1]
    return math.ldexp(a[0], -SUM_SHIFT) * factor, a[1] + SUM_SHIFT
