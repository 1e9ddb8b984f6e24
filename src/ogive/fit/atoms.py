"""A positive family with a point mass at zero: the model of a field that is often exactly 0.

A timer that reads 0 for a share of requests (served from a cache, short-circuited)
has an atom at zero that no continuous family on x > 0 can hold. The model is
G(x) = w + (1 - w) F(x) for x >= 0 (Lambert 1992, "Zero-inflated Poisson regression",
*Technometrics* 34, the same construction for counts; Aitchison 1955 for a lognormal
with zeros): its likelihood factorises, so w is fitted as the share of zeros and F on
the positive values alone.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .family import FloatArray


class WithZeros:
    """``share`` at exactly 0, the rest distributed as ``base`` (a frozen distribution)."""

    def __init__(self, base: Any, share: float) -> None:
        self.base = base
        self.share = float(share)

    def cdf(self, x: Any) -> FloatArray:
        xa = np.asarray(x, dtype=np.float64)
        inner = self.share + (1.0 - self.share) * np.asarray(self.base.cdf(xa), dtype=np.float64)
        return np.asarray(np.where(xa < 0, 0.0, inner), dtype=np.float64)

    def sf(self, x: Any) -> FloatArray:
        xa = np.asarray(x, dtype=np.float64)
        inner = (1.0 - self.share) * np.asarray(self.base.sf(xa), dtype=np.float64)
        return np.asarray(np.where(xa < 0, 1.0, inner), dtype=np.float64)

    def logcdf(self, x: Any) -> FloatArray:
        with np.errstate(divide="ignore"):
            return np.asarray(np.log(self.cdf(x)), dtype=np.float64)

    def logsf(self, x: Any) -> FloatArray:
        with np.errstate(divide="ignore"):
            return np.asarray(np.log(self.sf(x)), dtype=np.float64)

    def ppf(self, q: Any) -> FloatArray:
        qa = np.asarray(q, dtype=np.float64)
        inner = np.clip((qa - self.share) / (1.0 - self.share), 0.0, 1.0)
        out = np.asarray(self.base.ppf(inner), dtype=np.float64)
        return np.asarray(np.where(qa <= self.share, 0.0, out), dtype=np.float64)

    def rvs(self, size: int, random_state: np.random.Generator) -> FloatArray:
        x = np.asarray(self.base.rvs(size=size, random_state=random_state), dtype=np.float64)
        return np.asarray(np.where(random_state.random(size) < self.share, 0.0, x), dtype=np.float64)
