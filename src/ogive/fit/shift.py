"""The shift function: how far B sits from A at each decile and tail quantile.

Method: K. A. Doksum, "Empirical probability plots and statistical inference for
nonlinear models in the two-sample case", *Annals of Statistics* 2 (1974) 267–277,
defines the shift function Δ(x) = Q_B(F_A(x)) − x: the amount each part of A must move
to become B. R. R. Wilcox (*Introduction to Robust Estimation and Hypothesis Testing*,
chapter 5, the shift function and comparing deciles; chapter cited from memory)
evaluates it at the nine deciles with simultaneous intervals. Wilcox uses the
Harrell–Davis estimator and bootstrap standard errors; a
sketch has no resamples, so here each quantile gets the order-statistic interval of
:mod:`ogive.fit.ladder` and the interval for Δ is [low_B − high_A, high_B − low_A].

Simultaneity: every one of the 2k quantile intervals (k probabilities, two samples) is
taken at level 1 − (1 − confidence) / (2k) (Bonferroni). With probability at least
``confidence`` all of them cover at once, and then every Δ interval covers its true
shift at once — the band is safe to read as a whole, which is how a plot is read.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..sketch import Sketch, quantile_label
from .ladder import quantile_intervals

FloatArray = NDArray[np.float64]

SHIFT_QS: tuple[float, ...] = (0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 0.99, 0.999)


def _nums(a: FloatArray) -> list[float | None]:
    return [float(v) if np.isfinite(v) else None for v in a]


@dataclass(frozen=True)
class ShiftFunction:
    """B − A at each probability with simultaneous intervals (the shift plot's data)."""

    probs: FloatArray
    a_values: FloatArray
    b_values: FloatArray
    delta: FloatArray
    """B − A at each probability, in ``unit``."""
    delta_low: FloatArray
    """Simultaneous lower bounds; ``-inf`` where the data cannot bound them."""
    delta_high: FloatArray
    confidence: float
    """Joint level: all intervals cover together with at least this probability."""
    per_interval_confidence: float
    unit: str
    labels: tuple[str, str]

    @property
    def direction(self) -> list[str]:
        """Per probability: 'higher', 'lower' or 'no clear change' (B against A)."""
        return [
            "higher" if lo > 0 else "lower" if hi < 0 else "no clear change"
            for lo, hi in zip(self.delta_low, self.delta_high, strict=True)
        ]

    def to_dict(self) -> dict[str, Any]:
        return {
            "labels": list(self.labels),
            "unit": self.unit,
            "probs": self.probs.tolist(),
            "quantiles": [quantile_label(float(q)) for q in self.probs],
            "a": _nums(self.a_values),
            "b": _nums(self.b_values),
            "delta": _nums(self.delta),
            "delta_low": _nums(self.delta_low),
            "delta_high": _nums(self.delta_high),
            "direction": self.direction,
            "confidence": self.confidence,
            "per_interval_confidence": self.per_interval_confidence,
            "method": "Doksum shift function at deciles and tail quantiles; order-statistic "
            "intervals, Bonferroni-simultaneous",
        }


def shift_function(
    a: Sketch,
    b: Sketch,
    *,
    confidence: float = 0.95,
    probs: tuple[float, ...] = SHIFT_QS,
    labels: tuple[str, str] = ("A", "B"),
) -> ShiftFunction:
    k = len(probs)
    each = 1.0 - (1.0 - confidence) / (2 * k)
    ia = quantile_intervals(a, probs, each)
    ib = quantile_intervals(b, probs, each)
    av = np.array([x.estimate for x in ia])
    bv = np.array([y.estimate for y in ib])
    lo = np.array([y.low - x.high for x, y in zip(ia, ib, strict=True)])
    hi = np.array([y.high - x.low for x, y in zip(ia, ib, strict=True)])
    return ShiftFunction(
        probs=np.asarray(probs, dtype=np.float64),
        a_values=av,
        b_values=bv,
        delta=bv - av,
        # inf - inf is NaN: an end no data bound. (nan_to_num would also turn the
        # infinities into +-1.798e308, which then printed as numbers.)
        delta_low=np.where(np.isnan(lo), -np.inf, lo),
        delta_high=np.where(np.isnan(hi), np.inf, hi),
        confidence=confidence,
        per_interval_confidence=each,
        unit=a.unit,
        labels=labels,
    )
