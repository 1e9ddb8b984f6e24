"""Generalised Pareto model of the values above a tail threshold (peaks over threshold).

Above a high threshold u, the excesses X - u of almost any distribution are close to a
generalised Pareto distribution (Pickands 1975; Balkema & de Haan 1974); fitting it to
the tail alone is the peaks-over-threshold method (Coles, *An Introduction to
Statistical Modeling of Extreme Values*, 2001, ch. 4). It says nothing about the body,
so the model ogive builds from it is spliced: below u it *is* the sketch, above u the
GPD scaled to the tail share. Its statistics are computed on the tail alone and are
not comparable with those of whole-distribution models; the report keeps it apart.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy import stats

from ..sketch import Sketch, quantile_label
from .estimate import fit_family
from .family import NEG_INF, DataSummary, Family, FloatArray, from_logsf
from .grouped import GroupedData
from .results import Candidate, FittedModel, NotFitted, Scores
from .scores import WeightedSample, distances, quantile_errors

DEFAULT_TAIL_PROB = 0.95
"""Threshold at the sketch's p95: common practice for latency tails with many values."""
MIN_EXCESSES = 50
"""Fewer values above the threshold leave the shape parameter unidentified (common practice)."""

_XI_ZERO = 1e-8


def _gpd_logz(y: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray, float, float]:
    xi, lsig = float(t[0]), float(t[1])
    sig = math.exp(lsig)
    z = 1 + xi * y / sig
    return y, z, xi, sig


def _gpd_logpdf(y: FloatArray, t: FloatArray) -> FloatArray:
    y, z, xi, sig = _gpd_logz(y, t)
    ok = (y >= 0) & (z > 0)
    if abs(xi) < _XI_ZERO:
        v = -y / sig - math.log(sig)
    else:
        v = -math.log(sig) - (1 / xi + 1) * np.log(np.where(ok, z, 1.0))
    return np.where(ok, v, NEG_INF)


def _gpd_cdfs(y: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    y, z, xi, sig = _gpd_logz(y, t)
    pos = y >= 0
    if abs(xi) < _XI_ZERO:
        logsf = -np.where(pos, y, 0.0) / sig
    else:
        # Beyond the upper end point (xi < 0) the survival is zero.
        with np.errstate(divide="ignore"):
            logsf = np.where(z > 0, -np.log(np.where(z > 0, z, 1.0)) / xi, NEG_INF)
    return from_logsf(logsf, pos)


def _gpd_start(s: DataSummary) -> list[FloatArray]:
    med = max(s.q(0.5), 1e-300)
    return [np.array([0.1, math.log(med / math.log(2))]), np.array([-0.1, math.log(med / math.log(2))])]


GPD = Family(
    name="gpd",
    title="GPD tail",
    scipy_name="genpareto",
    param_names=("shape", "scale"),
    positive=True,
    shifted=False,
    logpdf=_gpd_logpdf,
    logcdf_pair=_gpd_cdfs,
    natural=lambda t: {"shape": float(t[0]), "scale": math.exp(float(t[1]))},
    freeze=lambda t: stats.genpareto(float(t[0]), scale=math.exp(float(t[1]))),
    start=_gpd_start,
)
"""In excess space (y = x - threshold): theta = (shape xi, log scale)."""


class SplicedTail:
    """The sketch below the threshold, the GPD above it (scaled to the tail share)."""

    def __init__(self, sketch: Sketch, threshold: float, tail_prob: float, gpd: Any) -> None:
        self.sketch = sketch
        self.threshold = threshold
        self.tail_prob = tail_prob
        """P(X <= threshold) according to the sketch."""
        self.gpd = gpd

    def cdf(self, x: Any) -> FloatArray:
        xa = np.asarray(x, dtype=np.float64)
        above = self.tail_prob + (1 - self.tail_prob) * self.gpd.cdf(xa - self.threshold)
        return np.asarray(np.where(xa > self.threshold, above, self.sketch.cdf(xa)), dtype=np.float64)

    def sf(self, x: Any) -> FloatArray:
        return np.asarray(1.0 - self.cdf(x), dtype=np.float64)

    def ppf(self, q: Any) -> FloatArray:
        qa = np.asarray(q, dtype=np.float64)
        inner = np.clip((qa - self.tail_prob) / (1 - self.tail_prob), 0.0, 1.0)
        above = self.threshold + self.gpd.ppf(inner)
        below = self.sketch.quantile(np.clip(qa, 0.0, 1.0))
        return np.asarray(np.where(qa > self.tail_prob, above, below), dtype=np.float64)


def fit_tail(
    sketch: Sketch, data: GroupedData, sample: WeightedSample, tail_prob: float, probs: tuple[float, ...]
) -> Candidate | NotFitted:
    """The GPD above the sketch's ``tail_prob`` quantile, scored on the tail alone.

    ``probs``: where the relative quantile errors are measured (those above the
    threshold are used). The GPD is fitted to the excesses by the grouped likelihood.
    """
    threshold = float(sketch.quantile(np.array(tail_prob)))
    share = float(sketch.cdf(np.array(threshold)))
    excess = data.above(threshold)
    if excess.n < MIN_EXCESSES:
        return NotFitted(
            GPD.name, GPD.title,
            f"only {excess.n} values lie above the {quantile_label(tail_prob)} threshold; "
            f"at least {MIN_EXCESSES} are needed.",
        )  # fmt: skip
    try:
        est = fit_family(GPD, excess)
    except (ArithmeticError, ValueError) as exc:
        return NotFitted(GPD.name, GPD.title, f"the fit broke down numerically ({exc}).")
    if not math.isfinite(est.loglik):
        return NotFitted(GPD.name, GPD.title, f"no finite likelihood was found ({est.message}).")
    gpd = GPD.freeze(est.theta)
    params = {"threshold": threshold, **GPD.natural(est.theta)}
    model = FittedModel(
        family=GPD.name,
        label=f"GPD tail > {quantile_label(tail_prob)}",
        params=params,
        unit=sketch.unit,
        n_params=2,
        loglik=est.loglik,
        success=est.success,
        message=est.message,
        support=(
            f"tail only: values above {threshold:.6g} {sketch.unit} ({quantile_label(tail_prob)}); "
            "below it the model is the sketch itself"
        ),
        tail_only=True,
        threshold=threshold,
        dist=SplicedTail(sketch, threshold, share, gpd),
    )
    keep = sample.values > threshold
    tail_sample = WeightedSample(sample.values[keep], sample.weights[keep], float(sample.weights[keep].sum()))
    with np.errstate(all="ignore"):
        lc, ls = GPD.logcdf_pair(tail_sample.values - threshold, est.theta)
    d = distances(lc, ls, tail_sample) if tail_sample.values.size else None
    errs = quantile_errors(model.ppf, sketch, tuple(p for p in probs if p > tail_prob))
    aic = 4 - 2 * est.loglik
    bic = 2 * math.log(max(excess.n, 1)) - 2 * est.loglik
    scores = Scores(
        d.ks if d else math.nan, d.ad if d else math.nan, d.cvm if d else math.nan, aic, bic,
        max((abs(v) for v in errs.values()), default=math.nan), errs, tail_sample.n,
    )  # fmt: skip
    return Candidate(0, model, scores, {})
