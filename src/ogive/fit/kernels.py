"""The eight two-parameter families: closed-form log-density, log CDF and survival, starts.

Each section gives a family's kernels in its unconstrained parameters (see
``family.py``) and the crude starting points quantile matching refines; the registry
rows at the end tie them to the scipy.stats distribution of the fitted model.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np
from scipy import special, stats

from .family import (
    LOG_2PI,
    NEG_INF,
    BoolArray,
    DataSummary,
    Family,
    FloatArray,
    from_logsf,
    log1mexp,
    positive_part,
)


# ---------------------------------------------------------------- normal
def _norm_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    mu, sig = t[0], math.exp(t[1])
    z = (x - mu) / sig
    return np.asarray(-0.5 * z * z - t[1] - 0.5 * LOG_2PI)


def _norm_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    z = (x - t[0]) / math.exp(t[1])
    return special.log_ndtr(z), special.log_ndtr(-z)


def _norm_start(s: DataSummary) -> list[FloatArray]:
    sd = max((s.q(0.8413) - s.q(0.1587)) / 2, 1e-12 * max(abs(s.q(0.5)), 1.0))
    return [np.array([s.q(0.5), math.log(sd)])]


# ---------------------------------------------------------------- lognormal (median, sigma)
def _ln_z(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray, BoolArray]:
    xp, ok = positive_part(x)
    lx = np.log(xp)
    return (lx - t[0]) / math.exp(t[1]), lx, ok


def _lognorm_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    z, lx, ok = _ln_z(x, t)
    return np.where(ok, -0.5 * z * z - t[1] - lx - 0.5 * LOG_2PI, NEG_INF)


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
    xp, ok = positive_part(x)
    lx = np.log(xp)
    v = (a - 1) * lx - xp / math.exp(lsc) - special.gammaln(a) - a * lsc
    return np.where(ok, v, NEG_INF)


def _gamma_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    a, sc = math.exp(t[0]), math.exp(t[1])
    xp, ok = positive_part(x)
    y = xp / sc
    # One incomplete gamma function per point, the smaller of the two: below the mean
    # (y < a) the CDF, above it the survival (a gamma's median lies below its mean, so
    # there the survival is at most 1/2 and its log is well conditioned). The other side
    # is rebuilt from it with log1mexp, accurate wherever the computed one is not near 1.
    # Half the special-function work of computing both: that work was most of a gamma
    # fit's time (each bootstrap replicate refits it).
    low = y < a
    lc, ls = np.empty_like(y), np.empty_like(y)
    with np.errstate(divide="ignore"):
        lc[low] = np.log(special.gammainc(a, y[low]))
        ls[~low] = np.log(special.gammaincc(a, y[~low]))
        ls[low] = log1mexp(lc[low])
        lc[~low] = log1mexp(ls[~low])
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
    xp, ok = positive_part(x)
    ly = np.log(xp) - lsc
    return np.where(ok, t[0] - lsc + (c - 1) * ly - np.exp(c * ly), NEG_INF)


def _weib_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    c = math.exp(t[0])
    xp, ok = positive_part(x)
    logsf = -np.exp(c * (np.log(xp) - t[1]))
    return from_logsf(logsf, ok)


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
    return from_logsf(-np.where(ok, x, 0.0) / math.exp(t[0]), ok)


def _exp_start(s: DataSummary) -> list[FloatArray]:
    return [np.array([math.log(max(s.mean, 1e-300))])]


# ---------------------------------------------------------------- log-logistic (shape, scale = median)
def _fisk_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    c = math.exp(t[0])
    xp, ok = positive_part(x)
    ly = np.log(xp) - t[1]
    v = t[0] - t[1] + (c - 1) * ly - 2 * np.logaddexp(0.0, c * ly)
    return np.where(ok, v, NEG_INF)


def _fisk_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    c = math.exp(t[0])
    xp, ok = positive_part(x)
    u = c * (np.log(xp) - t[1])
    return np.where(ok, -np.logaddexp(0.0, -u), NEG_INF), np.where(ok, -np.logaddexp(0.0, u), 0.0)


def _fisk_start(s: DataSummary) -> list[FloatArray]:
    q25, q75 = max(s.q(0.25), 1e-300), max(s.q(0.75), 1e-300)
    c = 2 * math.log(3) / max(math.log(q75) - math.log(q25), 1e-6)
    return [np.array([math.log(c), math.log(max(s.q(0.5), 1e-300))])]


# ---------------------------------------------------------------- inverse Gaussian (mean, shape lambda)
def _ig_logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
    m, lam = math.exp(t[0]), math.exp(t[1])
    xp, ok = positive_part(x)
    v = 0.5 * (t[1] - LOG_2PI - 3 * np.log(xp)) - lam * (xp - m) ** 2 / (2 * m * m * xp)
    return np.where(ok, v, NEG_INF)


def _ig_cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    # F = Phi(a) + exp(2 lam / m) Phi(-b), S = Phi(-a) - exp(2 lam / m) Phi(-b),
    # with a = sqrt(lam/x) (x/m - 1), b = sqrt(lam/x) (x/m + 1) (Chhikara & Folks 1989).
    m, lam = math.exp(t[0]), math.exp(t[1])
    xp, ok = positive_part(x)
    r = np.sqrt(lam / xp)
    a, b = r * (xp / m - 1), r * (xp / m + 1)
    second = 2 * lam / m + special.log_ndtr(-b)
    logcdf = np.logaddexp(special.log_ndtr(a), second)
    first = special.log_ndtr(-a)
    with np.errstate(invalid="ignore"):
        logsf = first + log1mexp(np.minimum(second - first, 0.0))
    logsf = np.where(np.isfinite(logsf), logsf, log1mexp(np.minimum(logcdf, 0.0)))
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
    return from_logsf(-c * np.log1p(np.where(ok, x, 0.0) / math.exp(t[1])), ok)


def _lomax_start(s: DataSummary) -> list[FloatArray]:
    med = max(s.q(0.5), 1e-300)
    out = []
    for c in (1.5, 4.0):
        out.append(np.array([math.log(c), math.log(med / (2 ** (1 / c) - 1))]))
    return out


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
