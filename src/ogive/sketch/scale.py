"""Scale functions of the t-digest.

A scale function ``k(q)`` maps a quantile to a "cluster index" space in which every
cluster may span at most one unit. Its slope decides where the digest spends its
centroids: a steep slope near ``q = 0`` and ``q = 1`` keeps the tails sharp.

Reference: T. Dunning and O. Ertl, "Computing extremely accurate quantiles using
t-digests" (2019), section 2.1 (``k_1``) and section 2.2 (``k_2``, ``k_3``), with the
size-dependent normaliser ``Z(n) = 4 log(n / delta) + 24`` for ``k_2``.

``k1-ladder`` is our own: ``k_1`` plus a steep stretch around each quantile the ladder
reports (:data:`FOCUS_QS`), where a confidence interval for that quantile will be
read. Why: an order-statistic interval for the p-quantile spans about
``2 * 1.96 * sqrt(n p (1 - p))`` ranks, and a sketch can only bound an order statistic
to within the centroid that holds it. ``k_1`` makes that centroid
``2 pi sqrt(n) / delta`` times the interval's half-width - about 1.6 at 10^6 values and
5 at 10^7 for delta = 2000 - so intervals read through it are several times wider than
exact ones. The stretch caps centroids within ``FOCUS_REACH`` standard deviations
(``sqrt(n p (1 - p))`` ranks) of each such quantile at ``FOCUS_WEIGHT`` of one standard
deviation, and lets them grow back smoothly beyond; it costs about
``(2 FOCUS_REACH + 2 FOCUS_FADE) / FOCUS_WEIGHT`` centroids per quantile whatever n is.
The windows move with n, which a streaming digest allows: a centroid formed early is
already small for the larger n that comes later.
"""

from __future__ import annotations

import itertools
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


FOCUS_QS: tuple[float, ...] = (0.5, 0.75, 0.9, 0.95, 0.99, 0.999, 0.9999)
"""Quantiles that get fine centroids under ``k1-ladder`` (the comparison ladder's rows)."""
FOCUS_WEIGHT = 0.15
"""Largest centroid near a focus quantile, in standard deviations of its rank."""
FOCUS_REACH = 3.0
"""Half-width of the fine window, in the same standard deviations."""
FOCUS_FADE = 1.0
"""Beyond the window the allowed weight grows by a factor e per this many deviations."""
_FOCUS_P = np.array(FOCUS_QS)
_FOCUS_SD = np.sqrt(_FOCUS_P * (1.0 - _FOCUS_P))


def _k1_ladder(q: FloatArray, compression: float, n: float) -> FloatArray:
    """``k_1`` plus one smooth step per focus quantile (slope 1 / (weight * sd) inside).

    Input in a few ascending stretches (a digest's tie runs by rank, then a few more)
    is read stretch by stretch, each by binary search (:func:`_ladder`): on 8*10^4
    sorted points 6.2 -> 2.0 ms, the same numbers to the bit.
    """
    qa = np.asarray(q, dtype=np.float64)
    if qa.ndim == 1 and qa.size > 64:
        breaks = np.flatnonzero(~(qa[1:] >= qa[:-1])) + 1  # NaN breaks a stretch too
        if breaks.size <= 4:
            ends = [0, *breaks.tolist(), qa.size]
            pieces = [
                _ladder(qa[a:b], compression, n, ascending=b - a > 64) for a, b in itertools.pairwise(ends)
            ]
            return pieces[0] if len(pieces) == 1 else np.concatenate(pieces)
    return _ladder(qa, compression, n, ascending=False)


def _ladder(qa: FloatArray, compression: float, n: float, *, ascending: bool) -> FloatArray:
    out = _k1(qa, compression, n)
    # Far from a focus quantile its step is flat at +-(reach + fade) / weight; only the
    # few points near one (the windows are narrow in q) need the exact shape.
    full = (FOCUS_REACH + FOCUS_FADE) / FOCUS_WEIGHT
    if ascending:
        # Each focus quantile's place and window by binary search, not a pass over every
        # point per quantile (the seven passes were two thirds of the time).
        cuts = np.searchsorted(qa, _FOCUS_P, side="left")  # points below each focus quantile
        above = np.repeat(np.arange(_FOCUS_P.size + 1), np.diff(cuts, prepend=0, append=qa.size))
    else:
        above = np.searchsorted(_FOCUS_P, qa, side="right")
    out = out + (2.0 * above - _FOCUS_P.size) * full
    sd_q = _FOCUS_SD / np.sqrt(max(n, 1.0))
    flat = FOCUS_REACH + 40.0 * FOCUS_FADE  # exp(-40): the step is flat to double precision
    for p, sd in zip(_FOCUS_P, sd_q, strict=True):
        near: NDArray[np.intp] | NDArray[np.bool_]
        if ascending:
            # |q - p| < r holds on one unbroken stretch of sorted q (rounded subtraction
            # is monotone): found by search with a margin, then tested exactly.
            r = flat * sd
            lo, hi = np.searchsorted(qa, [p - 2.0 * r, p + 2.0 * r], side="left")
            near = lo + np.flatnonzero(np.abs(qa[lo:hi] - p) < r)
        else:
            near = np.abs(qa - p) < flat * sd
        if not near.any() if near.dtype == bool else not near.size:
            continue
        z = (qa[near] - p) / sd
        az = np.abs(z)
        reach = np.where(
            az <= FOCUS_REACH,
            az,
            FOCUS_REACH + FOCUS_FADE * -np.expm1(-(np.maximum(az, FOCUS_REACH) - FOCUS_REACH) / FOCUS_FADE),
        )
        saturated = np.where(qa[near] >= p, full, -full)
        out[near] += np.sign(z) * reach / FOCUS_WEIGHT - saturated
    return np.asarray(out, dtype=np.float64)


SCALES: dict[str, ScaleFunction] = {"k1": _k1, "k2": _k2, "k3": _k3, "k1-ladder": _k1_ladder}
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


def _k1_ladder_inv(k: FloatArray, compression: float, n: float) -> FloatArray:
    """Inverse of ``k1-ladder``, read off a table of k over a grid of q (no closed form).

    The grid takes ``k_1``'s own inverse at half-unit steps and 241 points across each
    focus window, where k is nearly linear in q, so the interpolated inverse places a
    cluster boundary within a few thousandths of a unit of k: cheaper than solving for
    ~10^3 boundaries on every flush, and the boundaries need not be exact, only the
    same for every caller.
    """
    ka = np.asarray(k, dtype=np.float64)
    steps = np.arange(-compression / 4.0, compression / 4.0 + 0.5, 0.5)
    sd_q = _FOCUS_SD / np.sqrt(max(n, 1.0))
    reach = FOCUS_REACH + 8.0 * FOCUS_FADE
    window = (_FOCUS_P[:, None] + sd_q[:, None] * np.linspace(-reach, reach, 241)).ravel()
    grid = np.unique(np.clip(np.concatenate((_k1_inv(steps, compression, n), window, [0.0, 1.0])), 0.0, 1.0))
    return np.asarray(np.interp(ka, _k1_ladder(grid, compression, n), grid), dtype=np.float64)


INVERSES: dict[str, ScaleFunction] = {
    "k1": _k1_inv,
    "k2": _k2_inv,
    "k3": _k3_inv,
    "k1-ladder": _k1_ladder_inv,
}
"""``q(k)`` for each scale function: where the cluster boundaries fall in rank space."""
