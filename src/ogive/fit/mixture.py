"""The two-component lognormal mixture: a fast path and a slow path (cache hit and miss).

No scipy distribution exists for it, so the frozen model is our own small class with
the methods callers use (cdf, sf, pdf, ppf, rvs), its quantile function inverting the
CDF by bisection.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy import special

from .family import LOG_2PI, NEG_INF, DataSummary, Family, FloatArray, positive_part


class LognormalMixture:
    """w * LN(median1, sigma1) + (1 - w) * LN(median2, sigma2), median1 < median2.

    A fast path and a slow path (cache hit / miss) give this shape; no scipy
    equivalent exists, so the quantile function inverts the CDF by bisection on the
    log scale (60 halvings: far below the sketch's own precision).
    """

    def __init__(self, w: float, m1: float, s1: float, m2: float, s2: float, loc: float = 0.0) -> None:
        self.w, self.m1, self.s1, self.m2, self.s2, self.loc = w, m1, s1, m2, s2, loc

    def cdf(self, x: Any) -> FloatArray:
        xa = np.asarray(x, dtype=np.float64) - self.loc
        xp = np.where(xa > 0, xa, 1.0)
        lx = np.log(xp)
        f = self.w * special.ndtr((lx - math.log(self.m1)) / self.s1)
        f = f + (1 - self.w) * special.ndtr((lx - math.log(self.m2)) / self.s2)
        return np.asarray(np.where(xa > 0, f, 0.0), dtype=np.float64)

    def sf(self, x: Any) -> FloatArray:
        xa = np.asarray(x, dtype=np.float64) - self.loc
        xp = np.where(xa > 0, xa, 1.0)
        lx = np.log(xp)
        f = self.w * special.ndtr(-(lx - math.log(self.m1)) / self.s1)
        f = f + (1 - self.w) * special.ndtr(-(lx - math.log(self.m2)) / self.s2)
        return np.asarray(np.where(xa > 0, f, 1.0), dtype=np.float64)

    def pdf(self, x: Any) -> FloatArray:
        xa = np.asarray(x, dtype=np.float64) - self.loc
        return np.asarray(np.exp(_mix_logpdf(xa, _mix_theta(self))), dtype=np.float64)

    def ppf(self, q: Any) -> FloatArray:
        qa = np.asarray(q, dtype=np.float64)
        lo_ = min(math.log(self.m1) - 40 * self.s1, math.log(self.m2) - 40 * self.s2)
        hi_ = max(math.log(self.m1) + 40 * self.s1, math.log(self.m2) + 40 * self.s2)
        lo, hi = np.full(qa.shape, lo_), np.full(qa.shape, hi_)
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            below = self.cdf(np.exp(mid) + self.loc) < qa
            lo, hi = np.where(below, mid, lo), np.where(below, hi, mid)
        out = np.exp(0.5 * (lo + hi)) + self.loc
        out = np.where(qa <= 0, self.loc, out)
        return np.asarray(np.where(qa >= 1, np.inf, out), dtype=np.float64)

    def rvs(self, size: int, random_state: np.random.Generator) -> FloatArray:
        first = random_state.random(size) < self.w
        z = random_state.standard_normal(size)
        lx = np.where(first, math.log(self.m1) + self.s1 * z, math.log(self.m2) + self.s2 * z)
        return np.asarray(np.exp(lx) + self.loc, dtype=np.float64)


def _mix_theta(m: LognormalMixture) -> FloatArray:
    lw = math.log(m.w / (1 - m.w))
    return np.array([lw, math.log(m.m1), math.log(m.s1), math.log(math.log(m.m2 / m.m1)), math.log(m.s2)])


def _mix_unpack(t: FloatArray) -> tuple[float, float, float, float, float]:
    w = 1.0 / (1.0 + math.exp(-t[0]))
    mu1 = float(t[1])
    mu2 = mu1 + math.exp(t[3])  # ordered components: the slow path has the larger median
    return w, mu1, math.exp(t[2]), mu2, math.exp(t[4])


def _mix_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    w, mu1, s1, mu2, s2 = _mix_unpack(t)
    xp, ok = positive_part(x)
    lx = np.log(xp)
    z1, z2 = (lx - mu1) / s1, (lx - mu2) / s2
    a = math.log(w) - 0.5 * z1 * z1 - math.log(s1)
    b = math.log1p(-w) - 0.5 * z2 * z2 - math.log(s2)
    return np.where(ok, np.logaddexp(a, b) - lx - 0.5 * LOG_2PI, NEG_INF)


def _mix_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    w, mu1, s1, mu2, s2 = _mix_unpack(t)
    xp, ok = positive_part(x)
    lx = np.log(xp)
    z1, z2 = (lx - mu1) / s1, (lx - mu2) / s2
    lc = np.logaddexp(math.log(w) + special.log_ndtr(z1), math.log1p(-w) + special.log_ndtr(z2))
    ls = np.logaddexp(math.log(w) + special.log_ndtr(-z1), math.log1p(-w) + special.log_ndtr(-z2))
    return np.where(ok, lc, NEG_INF), np.where(ok, ls, 0.0)


def _mix_natural(t: FloatArray) -> dict[str, float]:
    w, mu1, s1, mu2, s2 = _mix_unpack(t)
    return {
        "weight_fast": w,
        "median_fast": math.exp(mu1),
        "sigma_fast": s1,
        "weight_slow": 1 - w,
        "median_slow": math.exp(mu2),
        "sigma_slow": s2,
    }


def _mix_freeze(t: FloatArray) -> LognormalMixture:
    w, mu1, s1, mu2, s2 = _mix_unpack(t)
    return LognormalMixture(w, math.exp(mu1), s1, math.exp(mu2), s2)


def _mix_start(s: DataSummary) -> list[FloatArray]:
    # Fast path near a low quantile, slow path near a high one, for a few weights.
    out = []
    for w, pf, ps in ((0.5, 0.25, 0.75), (0.8, 0.4, 0.95), (0.95, 0.5, 0.99), (0.2, 0.1, 0.6)):
        m1, m2 = max(s.q(pf), 1e-300), max(s.q(ps), 1e-300)
        gap = max(math.log(m2 / m1), 0.05)
        out.append(
            np.array([math.log(w / (1 - w)), math.log(m1), math.log(0.3), math.log(gap), math.log(0.3)])
        )
    return out


MIXTURE = Family(
    "lognormal-mix", "2-lognormal mix", "custom",
    ("weight_fast", "median_fast", "sigma_fast", "median_slow", "sigma_slow"), True, False,
    _mix_logpdf, _mix_cdfs, _mix_natural, _mix_freeze, _mix_start,
)  # fmt: skip

MIN_SIGMA = 0.02
"""A component narrower than this (in log units: +-2 % around its median) is a spike: a
lognormal 0.0174 wide holding 0.2 % was measured fitting sketch noise on plain data."""
MIN_WEIGHT = 0.005
"""A component holding less than this share describes a handful of values, not a path."""


def degenerate(params: dict[str, float]) -> str | None:
    """Why a fitted mixture is degenerate (a sentence), or None when it is not.

    The two-component likelihood is unbounded: one component can shrink onto a single
    value (sigma -> 0) and gain without limit (the known degeneracy of normal mixtures,
    Kiefer & Wolfowitz 1956). Such a fit describes a spike of repeated values, not a
    fast or slow path, so it is refused rather than ranked.
    """
    for side in ("fast", "slow"):
        sigma, weight, median = params[f"sigma_{side}"], params[f"weight_{side}"], params[f"median_{side}"]
        if sigma < MIN_SIGMA:
            return (
                f"degenerate: the {side} component collapsed onto one value ({median:.6g}, sigma "
                f"{sigma:.2g}), a spike of {weight:.1%} of the values that no continuous component describes."
            )
        if weight < MIN_WEIGHT:
            return (
                f"degenerate: the {side} component holds {weight:.2%} of the values; the mixture "
                "reduces to one lognormal."
            )
    return None
