"""Candidate probability families, each as closed-form log-density, CDF and survival.

Why not call ``scipy.stats`` inside the likelihood: a scipy distribution method costs a
few hundred microseconds of argument checking per call, and a fit makes hundreds of
calls; the formulas below (checked against scipy in ``tests/test_fit_families.py``)
cost a few microseconds on the same arrays. scipy still supplies the frozen
distribution of the result, so quantiles, random draws and everything else a caller
does with a fitted model come from the reference library.

Every family works in an unconstrained parameter vector ``theta`` (logs of positive
parameters, a logit for a weight, a log distance below the minimum for a location
floor) so that an unconstrained optimiser cannot step outside the parameter space.
``natural(theta)`` gives the parameters in the units people talk in: a lognormal's
median and sigma, a gamma's shape and scale in the sketch unit, and so on.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray
from scipy import special, stats

FloatArray = NDArray[np.float64]
Fn = Callable[[FloatArray, FloatArray], FloatArray]

_LOG_2PI = math.log(2 * math.pi)
NEG_INF = -np.inf


@dataclass(frozen=True)
class DataSummary:
    """What the starting values need from the data: a few quantiles, the mean, the minimum."""

    probs: FloatArray
    quantiles: FloatArray
    mean: float
    minimum: float
    maximum: float

    def q(self, p: float) -> float:
        return float(np.interp(p, self.probs, self.quantiles))


@dataclass(frozen=True)
class Family:
    """One row of the registry: how to evaluate, start, name and freeze a family."""

    name: str
    title: str
    """Short label for tables and plots."""
    scipy_name: str
    """The scipy.stats distribution behind the frozen model, or 'custom'."""
    param_names: tuple[str, ...]
    positive: bool
    """Support is x > 0: not applicable when the data hold zeros or negatives."""
    shifted: bool
    """Has a location floor below the minimum (a third parameter)."""
    logpdf: Fn
    logcdf_pair: Callable[[FloatArray, FloatArray], tuple[FloatArray, FloatArray]]
    """(log CDF, log survival) at x for theta; both are needed for accurate bin masses."""
    natural: Callable[[FloatArray], dict[str, float]]
    freeze: Callable[..., Any]
    """theta (and, for shifted families, a location) -> frozen distribution."""
    start: Callable[[DataSummary], list[FloatArray]]
    """Crude starting points; quantile matching refines them before the likelihood."""

    @property
    def n_params(self) -> int:
        return len(self.param_names)


# ---------------------------------------------------------------- helpers
def _pos(x: FloatArray) -> tuple[FloatArray, NDArray[np.bool_]]:
    ok = x > 0
    return np.where(ok, x, 1.0), ok


def _log1mexp(a: FloatArray) -> FloatArray:
    """log(1 - exp(a)) for a <= 0, accurate at both ends (Mächler 2012)."""
    a = np.minimum(a, 0.0)
    with np.errstate(divide="ignore"):
        return np.where(a > -math.log(2), np.log(-np.expm1(a)), np.log1p(-np.exp(a)))


def _from_logsf(logsf: FloatArray, ok: NDArray[np.bool_]) -> tuple[FloatArray, FloatArray]:
    logcdf = _log1mexp(logsf)
    return np.where(ok, logcdf, NEG_INF), np.where(ok, logsf, 0.0)


def _shift_start(s: DataSummary) -> float:
    """log of the distance from a location floor to the minimum: a tenth of min-to-p5."""
    gap = max(s.q(0.05) - s.minimum, 1e-9 * max(abs(s.q(0.5)), 1.0))
    return math.log(gap * 0.5 + 1e-12)


def _loc(theta: FloatArray, s_min: float) -> float:
    return s_min - math.exp(float(theta[-1]))


# ---------------------------------------------------------------- normal
def _norm_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    mu, sig = t[0], math.exp(t[1])
    z = (x - mu) / sig
    return np.asarray(-0.5 * z * z - t[1] - 0.5 * _LOG_2PI)


def _norm_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    z = (x - t[0]) / math.exp(t[1])
    return special.log_ndtr(z), special.log_ndtr(-z)


def _norm_start(s: DataSummary) -> list[FloatArray]:
    sd = max((s.q(0.8413) - s.q(0.1587)) / 2, 1e-12 * max(abs(s.q(0.5)), 1.0))
    return [np.array([s.q(0.5), math.log(sd)])]


# ---------------------------------------------------------------- lognormal (median, sigma)
def _ln_z(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray, NDArray[np.bool_]]:
    xp, ok = _pos(x)
    lx = np.log(xp)
    return (lx - t[0]) / math.exp(t[1]), lx, ok


def _lognorm_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    z, lx, ok = _ln_z(x, t)
    return np.where(ok, -0.5 * z * z - t[1] - lx - 0.5 * _LOG_2PI, NEG_INF)


def _lognorm_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    z, _, ok = _ln_z(x, t)
    return np.where(ok, special.log_ndtr(z), NEG_INF), np.where(ok, special.log_ndtr(-z), 0.0)


def _lognorm_start(s: DataSummary) -> list[FloatArray]:
    lo, hi = max(s.q(0.1587), 1e-300), max(s.q(0.8413), 1e-300)
    med = max(s.q(0.5), 1e-300)
    sig = max((math.log(hi) - math.log(lo)) / 2, 1e-3)
    return [np.array([math.log(med), math.log(sig)])]


# ---------------------------------------------------------------- gamma (shape, scale)
def _gamma_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    a, lsc = math.exp(t[0]), t[1]
    xp, ok = _pos(x)
    lx = np.log(xp)
    v = (a - 1) * lx - xp / math.exp(lsc) - special.gammaln(a) - a * lsc
    return np.where(ok, v, NEG_INF)


def _gamma_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    a, sc = math.exp(t[0]), math.exp(t[1])
    xp, ok = _pos(x)
    y = xp / sc
    with np.errstate(divide="ignore"):
        lc = np.log(special.gammainc(a, y))
        ls = np.log(special.gammaincc(a, y))
    # Far in either tail one of the two underflows; rebuild it from the other.
    lc = np.where(np.isfinite(lc) | (ls == 0), lc, _log1mexp(ls))
    ls = np.where(np.isfinite(ls) | (lc == 0), ls, _log1mexp(lc))
    return np.where(ok, lc, NEG_INF), np.where(ok, ls, 0.0)


def _gamma_start(s: DataSummary) -> list[FloatArray]:
    # Shape from the spread of log quantiles (a lognormal-like guess), scale from the mean.
    lo, hi = max(s.q(0.1587), 1e-300), max(s.q(0.8413), 1e-300)
    sig = max((math.log(hi) - math.log(lo)) / 2, 1e-3)
    a = min(max(1.0 / (sig * sig), 0.05), 1e6)
    mean = max(s.mean, 1e-300)
    return [np.array([math.log(a), math.log(mean / a)])]


# ---------------------------------------------------------------- Weibull (shape, scale)
def _weib_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    c, lsc = math.exp(t[0]), t[1]
    xp, ok = _pos(x)
    ly = np.log(xp) - lsc
    return np.where(ok, t[0] - lsc + (c - 1) * ly - np.exp(c * ly), NEG_INF)


def _weib_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    c = math.exp(t[0])
    xp, ok = _pos(x)
    logsf = -np.exp(c * (np.log(xp) - t[1]))
    return _from_logsf(logsf, ok)


def _weib_start(s: DataSummary) -> list[FloatArray]:
    q25, q75 = max(s.q(0.25), 1e-300), max(s.q(0.75), 1e-300)
    span = max(math.log(q75) - math.log(q25), 1e-6)
    c = (math.log(math.log(4)) - math.log(math.log(4 / 3))) / span
    scale = max(s.q(0.5), 1e-300) / math.log(2) ** (1 / c)
    return [np.array([math.log(c), math.log(scale)])]


# ---------------------------------------------------------------- exponential (scale)
def _exp_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    return np.where(x >= 0, -x / math.exp(t[0]) - t[0], NEG_INF)


def _exp_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    ok = x >= 0
    return _from_logsf(-np.where(ok, x, 0.0) / math.exp(t[0]), ok)


def _exp_start(s: DataSummary) -> list[FloatArray]:
    return [np.array([math.log(max(s.mean, 1e-300))])]


# ---------------------------------------------------------------- log-logistic (shape, scale = median)
def _fisk_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    c = math.exp(t[0])
    xp, ok = _pos(x)
    ly = np.log(xp) - t[1]
    v = t[0] - t[1] + (c - 1) * ly - 2 * np.logaddexp(0.0, c * ly)
    return np.where(ok, v, NEG_INF)


def _fisk_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    c = math.exp(t[0])
    xp, ok = _pos(x)
    u = c * (np.log(xp) - t[1])
    return np.where(ok, -np.logaddexp(0.0, -u), NEG_INF), np.where(ok, -np.logaddexp(0.0, u), 0.0)


def _fisk_start(s: DataSummary) -> list[FloatArray]:
    q25, q75 = max(s.q(0.25), 1e-300), max(s.q(0.75), 1e-300)
    c = 2 * math.log(3) / max(math.log(q75) - math.log(q25), 1e-6)
    return [np.array([math.log(c), math.log(max(s.q(0.5), 1e-300))])]


# ---------------------------------------------------------------- inverse Gaussian (mean, shape lambda)
def _ig_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    m, lam = math.exp(t[0]), math.exp(t[1])
    xp, ok = _pos(x)
    v = 0.5 * (t[1] - _LOG_2PI - 3 * np.log(xp)) - lam * (xp - m) ** 2 / (2 * m * m * xp)
    return np.where(ok, v, NEG_INF)


def _ig_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    # F = Phi(a) + exp(2 lam / m) Phi(-b), S = Phi(-a) - exp(2 lam / m) Phi(-b),
    # with a = sqrt(lam/x) (x/m - 1), b = sqrt(lam/x) (x/m + 1) (Chhikara & Folks 1989).
    m, lam = math.exp(t[0]), math.exp(t[1])
    xp, ok = _pos(x)
    r = np.sqrt(lam / xp)
    a, b = r * (xp / m - 1), r * (xp / m + 1)
    second = 2 * lam / m + special.log_ndtr(-b)
    logcdf = np.logaddexp(special.log_ndtr(a), second)
    first = special.log_ndtr(-a)
    with np.errstate(invalid="ignore"):
        logsf = first + _log1mexp(np.minimum(second - first, 0.0))
    logsf = np.where(np.isfinite(logsf), logsf, _log1mexp(np.minimum(logcdf, 0.0)))
    return np.where(ok, np.minimum(logcdf, 0.0), NEG_INF), np.where(ok, logsf, 0.0)


def _ig_start(s: DataSummary) -> list[FloatArray]:
    # Variance from a lognormal reading of the quantiles; lambda = mean^3 / variance.
    lo, hi = max(s.q(0.1587), 1e-300), max(s.q(0.8413), 1e-300)
    sig = max((math.log(hi) - math.log(lo)) / 2, 1e-3)
    mean = max(s.mean, 1e-300)
    var = mean * mean * math.expm1(sig * sig)
    return [np.array([math.log(mean), math.log(mean**3 / var)])]


# ---------------------------------------------------------------- Lomax (Pareto II: shape, scale)
def _lomax_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    c = math.exp(t[0])
    ok = x >= 0
    v = t[0] - t[1] - (c + 1) * np.log1p(np.where(ok, x, 0.0) / math.exp(t[1]))
    return np.where(ok, v, NEG_INF)


def _lomax_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    c = math.exp(t[0])
    ok = x >= 0
    return _from_logsf(-c * np.log1p(np.where(ok, x, 0.0) / math.exp(t[1])), ok)


def _lomax_start(s: DataSummary) -> list[FloatArray]:
    med = max(s.q(0.5), 1e-300)
    out = []
    for c in (1.5, 4.0):
        out.append(np.array([math.log(c), math.log(med / (2 ** (1 / c) - 1))]))
    return out


# ---------------------------------------------------------------- shifted (three-parameter) variants
def _shifted(base: Family, name: str, title: str, minimum: float) -> Family:
    """The base family moved to a location floor ``loc = minimum - exp(theta[-1])``.

    The floor stays strictly below the smallest value seen: at ``loc == min`` the
    likelihood of some families (Weibull and gamma with shape < 1) is unbounded, the
    known degeneracy of three-parameter maximum likelihood (Smith 1985, "Maximum
    likelihood estimation in a class of nonregular cases"). ``minimum`` is the data's
    smallest value, so a family is bound to the data it is fitted to.
    """

    def loc_of(t: FloatArray) -> float:
        return _loc(t, minimum)

    def logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
        return base.logpdf(x - loc_of(t), t[:-1])

    def cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
        return base.logcdf_pair(x - loc_of(t), t[:-1])

    def natural(t: FloatArray) -> dict[str, float]:
        out = base.natural(t[:-1])
        out["location"] = loc_of(t)
        return out

    def freeze(t: FloatArray) -> Any:
        return base.freeze(t[:-1], loc_of(t))  # type: ignore[call-arg]

    def moved(s: DataSummary, lt: float) -> DataSummary:
        loc = _loc(np.array([lt]), s.minimum)
        return DataSummary(s.probs, s.quantiles - loc, s.mean - loc, s.minimum - loc, s.maximum - loc)

    def start(s: DataSummary) -> list[FloatArray]:
        near = _shift_start(s)
        # A second start with the floor far below lets the fit fall back to ~two parameters.
        far = math.log(max(s.q(0.5) - s.minimum, 1e-12) * 2 + max(s.minimum, 0.0))
        return [np.append(b, lt) for lt in (near, far) for b in base.start(moved(s, lt))]

    return Family(
        name=name,
        title=title,
        scipy_name=base.scipy_name,
        param_names=(*base.param_names, "location"),
        positive=False,
        shifted=True,
        logpdf=logpdf,
        logcdf_pair=cdfs,
        natural=natural,
        freeze=freeze,
        start=start,
    )


# ---------------------------------------------------------------- two-component lognormal mixture
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
    xp, ok = _pos(x)
    lx = np.log(xp)
    z1, z2 = (lx - mu1) / s1, (lx - mu2) / s2
    a = math.log(w) - 0.5 * z1 * z1 - math.log(s1)
    b = math.log1p(-w) - 0.5 * z2 * z2 - math.log(s2)
    return np.where(ok, np.logaddexp(a, b) - lx - 0.5 * _LOG_2PI, NEG_INF)


def _mix_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    w, mu1, s1, mu2, s2 = _mix_unpack(t)
    xp, ok = _pos(x)
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


# ---------------------------------------------------------------- registry
def _nat2(names: tuple[str, str], f: Callable[[FloatArray], tuple[float, float]]) -> Any:
    def natural(t: FloatArray) -> dict[str, float]:
        a, b = f(t)
        return {names[0]: a, names[1]: b}

    return natural


def _e(v: Any) -> float:
    return math.exp(float(v))


NORMAL = Family(
    "normal", "normal", "norm", ("mean", "sd"), False, False, _norm_logpdf, _norm_cdfs,
    _nat2(("mean", "sd"), lambda t: (float(t[0]), _e(t[1]))),
    lambda t, loc=0.0: stats.norm(loc=float(t[0]) + loc, scale=_e(t[1])),
    _norm_start,
)  # fmt: skip
LOGNORMAL = Family(
    "lognormal", "lognormal", "lognorm", ("median", "sigma"), True, False, _lognorm_logpdf, _lognorm_cdfs,
    _nat2(("median", "sigma"), lambda t: (_e(t[0]), _e(t[1]))),
    lambda t, loc=0.0: stats.lognorm(_e(t[1]), loc=loc, scale=_e(t[0])),
    _lognorm_start,
)  # fmt: skip
GAMMA = Family(
    "gamma", "gamma", "gamma", ("shape", "scale"), True, False, _gamma_logpdf, _gamma_cdfs,
    _nat2(("shape", "scale"), lambda t: (_e(t[0]), _e(t[1]))),
    lambda t, loc=0.0: stats.gamma(_e(t[0]), loc=loc, scale=_e(t[1])),
    _gamma_start,
)  # fmt: skip
WEIBULL = Family(
    "weibull", "Weibull", "weibull_min", ("shape", "scale"), True, False, _weib_logpdf, _weib_cdfs,
    _nat2(("shape", "scale"), lambda t: (_e(t[0]), _e(t[1]))),
    lambda t, loc=0.0: stats.weibull_min(_e(t[0]), loc=loc, scale=_e(t[1])),
    _weib_start,
)  # fmt: skip
EXPONENTIAL = Family(
    "exponential", "exponential", "expon", ("scale",), True, False, _exp_logpdf, _exp_cdfs,
    lambda t: {"scale": _e(t[0])},
    lambda t, loc=0.0: stats.expon(loc=loc, scale=_e(t[0])),
    _exp_start,
)  # fmt: skip
LOGLOGISTIC = Family(
    "loglogistic", "log-logistic", "fisk", ("shape", "median"), True, False, _fisk_logpdf, _fisk_cdfs,
    _nat2(("shape", "median"), lambda t: (_e(t[0]), _e(t[1]))),
    lambda t, loc=0.0: stats.fisk(_e(t[0]), loc=loc, scale=_e(t[1])),
    _fisk_start,
)  # fmt: skip
INVGAUSS = Family(
    "invgauss", "inverse Gaussian", "invgauss", ("mean", "shape"), True, False, _ig_logpdf, _ig_cdfs,
    _nat2(("mean", "shape"), lambda t: (_e(t[0]), _e(t[1]))),
    lambda t, loc=0.0: stats.invgauss(_e(t[0]) / _e(t[1]), loc=loc, scale=_e(t[1])),
    _ig_start,
)  # fmt: skip
LOMAX = Family(
    "lomax", "Pareto (Lomax)", "lomax", ("shape", "scale"), True, False, _lomax_logpdf, _lomax_cdfs,
    _nat2(("shape", "scale"), lambda t: (_e(t[0]), _e(t[1]))),
    lambda t, loc=0.0: stats.lomax(_e(t[0]), loc=loc, scale=_e(t[1])),
    _lomax_start,
)  # fmt: skip
MIXTURE = Family(
    "lognormal-mix", "2-lognormal mix", "custom",
    ("weight_fast", "median_fast", "sigma_fast", "median_slow", "sigma_slow"), True, False,
    _mix_logpdf, _mix_cdfs, _mix_natural, _mix_freeze, _mix_start,
)  # fmt: skip

FAMILIES: dict[str, Family] = {
    f.name: f
    for f in (
        NORMAL,
        LOGNORMAL,
        GAMMA,
        WEIBULL,
        EXPONENTIAL,
        LOGLOGISTIC,
        INVGAUSS,
        LOMAX,
        MIXTURE,
    )
}
"""Whole-distribution families with a fixed support, by the name ``--families`` takes."""

SHIFTED: dict[str, tuple[Family, str]] = {
    "lognormal3": (LOGNORMAL, "shifted lognormal"),
    "gamma3": (GAMMA, "shifted gamma"),
    "weibull3": (WEIBULL, "shifted Weibull"),
}
"""Three-parameter versions: bound to the data minimum by :func:`get`."""

TAIL_FAMILY = "gpd"
"""The generalised Pareto tail model (fitted above a threshold; see ``tail.py``)."""

ALIASES = {
    "pareto": "lomax",
    "fisk": "loglogistic",
    "log-logistic": "loglogistic",
    "inverse-gaussian": "invgauss",
    "mixture": "lognormal-mix",
    "genpareto": "gpd",
    "norm": "normal",
    "lognorm": "lognormal",
    "expon": "exponential",
}

DEFAULT_FAMILIES: tuple[str, ...] = (*FAMILIES, *SHIFTED, TAIL_FAMILY)


def get(name: str, minimum: float) -> Family:
    """The family called ``name``; a shifted one measures its floor from ``minimum``."""
    if name in SHIFTED:
        base, title = SHIFTED[name]
        return _shifted(base, name, title, minimum)
    return FAMILIES[name]


def resolve(names: list[str] | tuple[str, ...] | None) -> list[str]:
    """Canonical family names; an unknown one is a ValueError naming the choices."""
    if names is None:
        return list(DEFAULT_FAMILIES)
    out: list[str] = []
    for raw in names:
        key = ALIASES.get(raw.strip().lower(), raw.strip().lower())
        if key not in DEFAULT_FAMILIES:
            raise ValueError(f"unknown family {raw!r}; choose from {', '.join(DEFAULT_FAMILIES)}.")
        if key not in out:
            out.append(key)
    if not out:
        raise ValueError("no family given; choose from " + ", ".join(DEFAULT_FAMILIES) + ".")
    return out


def registry_table() -> list[dict[str, Any]]:
    """The registry as rows (name, scipy distribution, parameters), for --help and JSON."""
    rows = [
        {
            "name": f.name,
            "title": f.title,
            "scipy": f.scipy_name,
            "params": list(f.param_names),
            "support": "x > location" if f.shifted else ("x > 0" if f.positive else "all reals"),
        }
        for f in (*FAMILIES.values(), *(get(n, 0.0) for n in SHIFTED))
    ]
    rows.append(
        {
            "name": TAIL_FAMILY,
            "title": "GPD tail",
            "scipy": "genpareto",
            "params": ["threshold", "shape", "scale"],
            "support": "tail only: x > threshold",
        }
    )
    return rows
