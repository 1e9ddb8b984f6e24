"""Scale functions of the t-digest.

A scale function ``k(q)`` maps a quantile to a "cluster index" space in which every
cluster may span at most one unit. Its slope decides where the digest spends its
centroids: a steep slope near ``q = 0`` and ``q = 1`` keeps the tails sharp.

Reference: T. Dunning and O. Ertl, "Computing extremely accurate quantiles using
t-digests" (2019), section 2.1 (``k_1``) and section 2.2 (``k_2``, ``k_3``), with the
size-dependent normaliser ``Z(n) = 4 log(n / delta) + 24`` for ``k_2``.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TypeAlias

import numpy as np
from numpy.typing import NDArray

FloatArray: TypeAlias = NDArray[np.float64]
ScaleFunction: TypeAlias = Callable[[FloatArray, float, float], FloatArray]


def _k1(q: FloatArray, compression: float, n: float) -> FloatArray:
    """Arcsine scale: centroid sizes proportional to sqrt(q(1-q)); sharp in the body."""
    return compression / (2.0 * np.pi) * np.arcsin(2.0 * q - 1.0)


def _k2(q: FloatArray, compression: float, n: float) -> FloatArray:
    """Logit scale: sizes proportional to q(1-q); sharpest in the tails."""
    z = 4.0 * np.log(max(n, compression) / compression) + 24.0
    qc = np.clip(q, 1e-300, 1.0 - 1e-16)
    return compression / z * np.log(qc / (1.0 - qc))


def _k3(q: FloatArray, compression: float, n: float) -> FloatArray:
    """Piecewise-log scale: like k2 in the tails, linear-ish in the middle."""
    z = 4.0 * np.log(max(n, compression) / compression) + 21.0
    qc = np.clip(q, 1e-300, 1.0 - 1e-16)
    low = np.log(2.0 * qc)
    high = -np.log(2.0 * (1.0 - qc))
    return compression / z * np.where(qc <= 0.5, low, high)


SCALES: dict[str, ScaleFunction] = {"k1": _k1, "k2": _k2, "k3": _k3}
"""Scale functions by the names the paper gives them."""


def _k1_inv(k: FloatArray, compression: float, n: float) -> FloatArray:
    return (np.sin(2.0 * np.pi * k / compression) + 1.0) / 2.0


def _k2_inv(k: FloatArray, compression: float, n: float) -> FloatArray:
    z = 4.0 * np.log(max(n, compression) / compression) + 24.0
    return 1.0 / (1.0 + np.exp(-k * z / compression))


def _k3_inv(k: FloatArray, compression: float, n: float) -> FloatArray:
    z = 4.0 * np.log(max(n, compression) / compression) + 21.0
    t = k * z / compression
    return np.where(t <= 0, np.exp(np.minimum(t, 0.0)) / 2.0, 1.0 - np.exp(-np.maximum(t, 0.0)) / 2.0)


INVERSES: dict[str, ScaleFunction] = {"k1": _k1_inv, "k2": _k2_inv, "k3": _k3_inv}
"""``q(k)`` for each scale function: where the cluster boundaries fall in rank space."""
