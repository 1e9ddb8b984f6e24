"""Distances between two sketches' distributions: Kolmogorov–Smirnov and Wasserstein-1.

Both are computed from the sketches alone; the KS distance comes with the range the
raw-data distance is sure to lie in (from ``count_bounds``: a sketch's centroids, a
binned distribution's buckets).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..sketch import Distribution

FloatArray = NDArray[np.float64]


def num_or_none(x: float) -> float | None:
    """JSON has no NaN or infinity: such a number (an unbounded side) is written as null."""
    return float(x) if np.isfinite(x) else None


def pair_or_none(pair: tuple[float, float] | None) -> list[float | None] | None:
    """A (low, high) pair for JSON, each side through :func:`num_or_none`."""
    return None if pair is None else [num_or_none(pair[0]), num_or_none(pair[1])]


def support(s: Distribution) -> FloatArray:
    """Every x where the distribution's CDF estimate can bend (digest knots and exact
    buffers; bucket edges)."""
    return s.cdf_knots()


@dataclass(frozen=True)
class KSResult:
    """Two-sample Kolmogorov–Smirnov distance between the sketches' CDFs.

    Method: N. Smirnov (1948), "Table for estimating the goodness of fit of empirical
    distributions", *Ann. Math. Statist.* 19, 279–281: under no difference,
    sqrt(nm/(n+m))·D has the Kolmogorov limit distribution. A sketch bounds the count
    of values below any x (``Sketch.count_bounds``), so the distance the raw data would
    give lies in [``distance_low``, ``distance_high``] for sure; the difference is called
    only when ``distance_low`` passes the critical value. The p-value is a number only
    when both sketches hold every value; otherwise what is known is the interval
    [``p_low``, ``p_high``] it lies in (from the two ends of the distance), and
    ``p_value`` is NaN: a bound printed as a p-value averaged 0.998 under no change.
    """

    distance: float
    """The sketches' own estimate (their interpolated CDFs)."""
    distance_low: float
    distance_high: float
    at: float
    """The value where the estimated CDFs are furthest apart."""
    critical: float
    """Asymptotic critical value at 1 - confidence."""
    p_value: float
    """Asymptotic p-value when both sketches are exact; NaN otherwise (see p_low/p_high)."""
    p_low: float
    p_high: float
    differs: bool
    confidence: float
    exact: bool

    @property
    def slack(self) -> float:
        """How far the raw-data distance may lie from the estimate, either way."""
        return max(self.distance_high - self.distance, self.distance - self.distance_low)

    @property
    def slack_at(self) -> float:
        """How far below the estimate the raw-data distance may lie."""
        return self.distance - self.distance_low

    @property
    def threshold(self) -> float:
        """What ``distance`` must exceed to be called a difference."""
        return self.critical + self.slack_at

    def to_dict(self) -> dict[str, Any]:
        return {
            "distance": self.distance,
            "distance_low": self.distance_low,
            "distance_high": self.distance_high,
            "at": num_or_none(self.at),
            "critical": self.critical,
            "p_value": num_or_none(self.p_value),
            "p_low": self.p_low,
            "p_high": self.p_high,
            "differs": self.differs,
            "confidence": self.confidence,
            "exact": self.exact,
            "method": "two-sample Kolmogorov-Smirnov (Smirnov asymptotic); distance bounded by the "
            "sketches' count bounds",
        }


def _breakpoints(s: Distribution) -> FloatArray:
    """Every x where the CDF estimate or its count bounds can step."""
    return s.bound_steps()


def ks_distance(a: Distribution, b: Distribution, *, confidence: float = 0.95) -> KSResult:
    from scipy import stats

    x = np.unique(np.concatenate((support(a), support(b))))
    if x.size == 0:
        raise ValueError("both sketches are empty; there is nothing to compare.")
    n, m = a.count, b.count
    gap = np.abs(a.cdf(x) - b.cdf(x))
    i = int(np.argmax(gap))
    d = float(gap[i])
    # Bounds on the raw-data distance: at each breakpoint the two counts lie in their
    # sketches' bounds; the true sup is at least the smallest gap they allow anywhere,
    # and at most the largest (the bounds are flat between breakpoints).
    xb = np.unique(np.concatenate((_breakpoints(a), _breakpoints(b))))
    a_lo, a_hi = (v / n for v in a.count_bounds(xb))
    b_lo, b_hi = (v / m for v in b.count_bounds(xb))
    d_lo = float(max(np.max(np.maximum(a_lo - b_hi, b_lo - a_hi)), 0.0))
    d_hi = float(np.max(np.maximum(a_hi - b_lo, b_hi - a_lo)))
    d_lo, d_hi = min(d_lo, d), max(d_hi, d)
    scale = np.sqrt(n * m / (n + m))
    crit = float(stats.kstwobign.isf(1.0 - confidence) / scale)
    exact = a.exact and b.exact
    p_low = float(min(stats.kstwobign.sf(d_hi * scale), 1.0))
    p_high = float(min(stats.kstwobign.sf(d_lo * scale), 1.0))
    return KSResult(
        distance=d,
        distance_low=d_lo,
        distance_high=d_hi,
        at=float(x[i]),
        critical=crit,
        p_value=float(min(stats.kstwobign.sf(d * scale), 1.0)) if exact else float("nan"),
        p_low=p_low,
        p_high=p_high,
        differs=d_lo > crit,
        confidence=confidence,
        exact=exact,
    )


@dataclass(frozen=True)
class WassersteinResult:
    """Wasserstein-1 (earth mover's) distance: the mean absolute gap between quantile functions.

    W1 = ∫₀¹ |Q_A(p) − Q_B(p)| dp = ∫ |F_A(x) − F_B(x)| dx (S. S. Vallender, "Calculation
    of the Wasserstein distance between probability distributions on the line", *Theory
    Probab. Appl.* 18, 1974). In the value's unit: "on average a request moved this far".
    """

    distance: float
    unit: str
    relative: float
    """W1 divided by |A's mean|: a unit-free size of the move; NaN when that mean is near
    zero (see ``relative_note``), where the ratio would say nothing."""
    relative_note: str = ""
    """Why no relative size is given, or empty."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "distance": self.distance,
            "unit": self.unit,
            "relative": num_or_none(self.relative),
            "relative_note": self.relative_note,
        }


def wasserstein(a: Distribution, b: Distribution) -> WassersteinResult:
    x = np.unique(np.concatenate((support(a), support(b))))
    if x.size < 2:
        return WassersteinResult(0.0, a.unit, 0.0)
    # The CDFs are steps (exact buffers) or linear pieces (digest) between these points;
    # the midpoint rule is exact for both (bar a sign change inside one linear piece).
    mid = (x[:-1] + x[1:]) / 2.0
    w1 = float(np.sum(np.abs(a.cdf(mid) - b.cdf(mid)) * np.diff(x)))
    note = _mean_far_from_zero(a)
    return WassersteinResult(w1, a.unit, w1 / abs(a.mean) if not note else float("nan"), note)


def _mean_far_from_zero(a: Distribution) -> str:
    """Empty when |A's mean| is a fair yardstick for a move; else why it is not.

    It is when A's values all lie on one side of zero (latencies, sizes), or when the
    mean is at least as far from zero as A's p10-p90 spread; otherwise a small mean
    would turn any move into a huge percentage.
    """
    mean = a.mean
    if math.isnan(mean):
        return "A's mean is not known (its histograms gave no sum)"
    if not math.isfinite(mean) or mean == 0:
        return "A's mean is 0"
    if a.min >= 0 or a.max <= 0:
        return ""
    p10, p90 = a.quantile(np.array([0.1, 0.9]))
    if abs(mean) >= p90 - p10:
        return ""
    return "A's mean is near zero against its spread (values on both sides of zero)"
