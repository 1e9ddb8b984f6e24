"""Fit every candidate family to one sketch, score each against it, and rank them.

The public entry point is :func:`fit_sketch`; ``ogive fit``, the workspace's model
pane and ``ogive plot --model`` all call it, so they always agree. Estimation is in
:mod:`ogive.fit.estimate` (grouped-data maximum likelihood), the statistics in
:mod:`ogive.fit.scores`, the tail-only model in :mod:`ogive.fit.tail`.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..sketch import Sketch, quantile_label
from . import families as fam
from .estimate import (
    DEFAULT_BINS,
    Estimate,
    GroupedData,
    exact_values,
    fit_family,
    grouped_from_sketch,
    maximise,
    out_of_support,
)
from .families import Family, FloatArray
from .scores import SLICES, WeightedSample, distances, exact_sample, sample_from_sketch
from .tail import DEFAULT_TAIL_PROB, GPD, MIN_EXCESSES, SplicedTail

TAIL_PROBS = (0.5, 0.9, 0.99, 0.999)
"""Where the tail error is measured."""
TABLE_PROBS = (0.5, 0.9, 0.99, 0.999, 0.9999)
"""Model vs sketch quantiles shown for every candidate."""
RANK_KEYS = ("tail", "ks", "ad", "cvm", "aic", "bic")
BOOTSTRAP_MAX_N = 5000
"""Above this many values (or for an inexact sketch) p-values are not computed: every
test rejects every model at such sizes, so only the distances are informative."""


@dataclass(frozen=True)
class FittedModel:
    """One family with its fitted parameters, in natural units of the sketch."""

    family: str
    label: str
    """Short name for tables and plot legends."""
    params: dict[str, float]
    unit: str
    n_params: int
    loglik: float
    """Grouped-data log-likelihood at the estimate (tail-only: of the excesses)."""
    success: bool
    message: str
    support: str
    """How the family met the data's support: plain, location shift, tail only."""
    tail_only: bool = False
    threshold: float | None = None
    dist: Any = field(default=None, compare=False, repr=False)
    """scipy frozen distribution (or an object with ppf/cdf/sf) of the fitted model."""

    def ppf(self, q: Any) -> FloatArray:
        return np.asarray(self.dist.ppf(np.asarray(q, dtype=np.float64)), dtype=np.float64)

    def cdf(self, x: Any) -> FloatArray:
        return np.asarray(self.dist.cdf(np.asarray(x, dtype=np.float64)), dtype=np.float64)

    def sf(self, x: Any) -> FloatArray:
        return np.asarray(self.dist.sf(np.asarray(x, dtype=np.float64)), dtype=np.float64)

    def to_dict(self) -> dict[str, Any]:
        return {
            "family": self.family,
            "label": self.label,
            "params": {k: _finite(v) for k, v in self.params.items()},
            "unit": self.unit,
            "n_params": self.n_params,
            "loglik": _finite(self.loglik),
            "success": self.success,
            "message": self.message,
            "support": self.support,
            "tail_only": self.tail_only,
            "threshold": _finite(self.threshold) if self.threshold is not None else None,
        }


@dataclass(frozen=True)
class Scores:
    """How far a model is from the sketch; smaller is better for every field."""

    ks: float
    ad: float
    cvm: float
    aic: float
    bic: float
    tail_error: float
    """Largest |relative quantile error| over p50, p90, p99, p99.9 (tail-only: those above u)."""
    quantile_errors: dict[str, float]
    n: float
    """Values the statistics were computed on (tail-only: those above the threshold)."""
    p_values: dict[str, float] | None = None
    bootstrap: int = 0

    def to_dict(self) -> dict[str, Any]:
        return {
            "ks": _finite(self.ks),
            "ad": _finite(self.ad),
            "cvm": _finite(self.cvm),
            "aic": _finite(self.aic),
            "bic": _finite(self.bic),
            "tail_error": _finite(self.tail_error),
            "quantile_errors": {k: _finite(v) for k, v in self.quantile_errors.items()},
            "n": self.n,
            "p_values": self.p_values,
            "bootstrap_replicates": self.bootstrap,
        }


@dataclass(frozen=True)
class Candidate:
    """A fitted model in the ranking: the model, its scores, its quantiles."""

    rank: int
    model: FittedModel
    scores: Scores
    quantiles: dict[str, float]
    """Model quantiles at p50 ... p99.99 (compare with FitReport.sketch_quantiles)."""

    @property
    def label(self) -> str:
        return self.model.label

    @property
    def family(self) -> str:
        return self.model.family

    @property
    def params(self) -> dict[str, float]:
        return self.model.params

    def ppf(self, q: Any) -> FloatArray:
        return self.model.ppf(q)

    def cdf(self, x: Any) -> FloatArray:
        return self.model.cdf(x)

    def to_dict(self) -> dict[str, Any]:
        return {
            "rank": self.rank,
            **self.model.to_dict(),
            "scores": self.scores.to_dict(),
            "quantiles": {k: _finite(v) for k, v in self.quantiles.items()},
        }


@dataclass(frozen=True)
class NotFitted:
    family: str
    label: str
    reason: str
    out_of_support: int = 0

    def to_dict(self) -> dict[str, Any]:
        return {"family": self.family, "label": self.label, "reason": self.reason,
                "out_of_support": self.out_of_support}  # fmt: skip


@dataclass(frozen=True)
class FitReport:
    """Candidates best first by ``rank_key``; tail-only models and refusals kept apart."""

    n: int
    unit: str
    rank_key: str
    models: tuple[Candidate, ...]
    tail_models: tuple[Candidate, ...]
    not_fitted: tuple[NotFitted, ...]
    sketch_quantiles: dict[str, float]
    out_of_support: int
    notes: tuple[str, ...]

    @property
    def ranked(self) -> tuple[Candidate, ...]:
        return self.models

    @property
    def best(self) -> Candidate | None:
        return self.models[0] if self.models else None

    def to_dict(self) -> dict[str, Any]:
        return {
            "n": self.n,
            "unit": self.unit,
            "rank_key": self.rank_key,
            "rank_meaning": RANK_MEANING[self.rank_key],
            "models": [c.to_dict() for c in self.models],
            "tail_models": [c.to_dict() for c in self.tail_models],
            "not_fitted": [x.to_dict() for x in self.not_fitted],
            "sketch_quantiles": {k: _finite(v) for k, v in self.sketch_quantiles.items()},
            "out_of_support": self.out_of_support,
            "notes": list(self.notes),
        }


RANK_MEANING = {
    "tail": "largest relative quantile error over p50/p90/p99/p99.9, then KS distance",
    "ks": "Kolmogorov-Smirnov distance sup|F_sketch - F_model|",
    "ad": "Anderson-Darling statistic A² (weights the tails)",
    "cvm": "Cramér-von Mises statistic W²",
    "aic": "Akaike information criterion from the grouped likelihood",
    "bic": "Bayesian information criterion from the grouped likelihood",
}


def _finite(x: float | None) -> float | None:
    return float(x) if x is not None and math.isfinite(x) else None


# ---------------------------------------------------------------- public API
def fit_sketch(
    sketch: Sketch,
    families: list[str] | tuple[str, ...] | None = None,
    *,
    rank_by: str = "tail",
    bins: int = DEFAULT_BINS,
    tail_prob: float = DEFAULT_TAIL_PROB,
    bootstrap: int = 99,
    bootstrap_top: int = 3,
    seed: int = 0,
    slices: int = SLICES,
) -> FitReport:
    """Fit ``families`` (default: all) to the sketch alone, score and rank them.

    ``rank_by`` is one of :data:`RANK_KEYS`; ``tail`` (the default) orders by the
    largest relative quantile error over p50/p90/p99/p99.9, ties by KS distance. When
    the sketch holds at most :data:`BOOTSTRAP_MAX_N` values exactly, the best
    ``bootstrap_top`` get parametric-bootstrap p-values from ``bootstrap`` replicates
    (Stute, Gonzáles Manteiga & Presedo Quindimil 1993, "Bootstrap based
    goodness-of-fit tests"), each replicate refitted as the original was.
    Raises ValueError (a full sentence) for an unknown family or rank key, or an
    empty sketch.
    """
    names = fam.resolve(families)
    if rank_by not in RANK_KEYS:
        raise ValueError(f"unknown rank key {rank_by!r}; choose from {', '.join(RANK_KEYS)}.")
    if not 0.5 <= tail_prob < 1:
        raise ValueError(f"tail_prob must be at least 0.5 and below 1, got {tail_prob}.")
    if sketch.count < 3:
        raise ValueError(f"a fit needs at least 3 values; the sketch holds {sketch.count}.")
    if not sketch.max > sketch.min:
        raise ValueError(
            f"all {sketch.count} values equal {sketch.min:g}; no continuous family describes a single value."
        )
    data = grouped_from_sketch(sketch, bins=bins)
    sample = sample_from_sketch(sketch, slices=slices)
    sq = {
        quantile_label(p): float(v)
        for p, v in zip(TABLE_PROBS, sketch.quantile(np.array(TABLE_PROBS)), strict=True)
    }
    bad = out_of_support(sketch)
    floor = float(data.points.min()) if data.points.size else sketch.min

    fitted: list[tuple[Candidate, Estimate, Family]] = []
    tails: list[Candidate] = []
    refused: list[NotFitted] = []
    for name in names:
        if name == fam.TAIL_FAMILY:
            got = _fit_tail(sketch, data, sample, tail_prob)
            if isinstance(got, NotFitted):
                refused.append(got)
            else:
                tails.append(got)
            continue
        family = fam.get(name, floor)
        if family.positive and bad:
            refused.append(NotFitted(name, family.title, _support_refusal(sketch), bad))
            continue
        if family.positive and sketch.min <= 0:
            refused.append(NotFitted(name, family.title, "the smallest value is not above zero.", bad))
            continue
        try:
            est = fit_family(family, data)
        except (ArithmeticError, ValueError) as exc:
            # A family whose parameters run off to a boundary (overflow, log of zero) on
            # these data: reported as not fitted, with the reason, never a traceback.
            refused.append(NotFitted(name, family.title, f"the fit broke down numerically ({exc}).", bad))
            continue
        if not math.isfinite(est.loglik):
            refused.append(
                NotFitted(name, family.title, f"no finite likelihood was found ({est.message}).", bad)
            )
            continue
        model = _model(family, est, sketch, bad)
        fitted.append((_score(model, family, est, sketch, sample, data.n), est, family))

    fitted.sort(key=lambda r: _rank_value(r[0], rank_by))
    ranked: list[Candidate] = []
    rng = np.random.default_rng(seed)
    do_boot = sketch.exact and sketch.count <= BOOTSTRAP_MAX_N and bootstrap > 0
    for i, (cand, est, family) in enumerate(fitted):
        scores = cand.scores
        if do_boot and i < bootstrap_top:
            pv = bootstrap_p_values(family, est.theta, exact_values(sketch), scores, bootstrap, rng)
            scores = dataclasses.replace(scores, p_values=pv, bootstrap=bootstrap)
        ranked.append(Candidate(i + 1, cand.model, scores, cand.quantiles))
    tails_ranked = tuple(Candidate(i + 1, c.model, c.scores, c.quantiles) for i, c in enumerate(tails))
    notes = _notes(sketch, rank_by, bad, do_boot, bootstrap, bootstrap_top, slices)
    return FitReport(
        n=sketch.count,
        unit=sketch.unit,
        rank_key=rank_by,
        models=tuple(ranked),
        tail_models=tails_ranked,
        not_fitted=tuple(refused),
        sketch_quantiles=sq,
        out_of_support=bad,
        notes=notes,
    )


# ---------------------------------------------------------------- pieces
def _support_refusal(sketch: Sketch) -> str:
    return (
        f"{sketch.zero_count} zero and {sketch.negative_count} negative values lie outside its "
        "support (x > 0): not applicable; the shifted families fit them with a location floor."
    )


def _label(family: Family) -> str:
    return family.title


def _model(family: Family, est: Estimate, sketch: Sketch, bad: int) -> FittedModel:
    params = family.natural(est.theta)
    if family.shifted:
        loc = params["location"]
        support = f"location shift: floor at {loc:.6g} {sketch.unit}".rstrip()
        if bad:
            support += f"; covers the {bad} values at or below zero"
    elif family.positive:
        support = "x > 0: every value inside the support"
    else:
        support = "all real numbers"
    return FittedModel(
        family=family.name,
        label=_label(family),
        params=params,
        unit=sketch.unit,
        n_params=family.n_params,
        loglik=est.loglik,
        success=est.success,
        message=est.message,
        support=support,
        dist=family.freeze(est.theta),
    )


def _quantile_errors(model: FittedModel, sketch: Sketch, probs: tuple[float, ...]) -> dict[str, float]:
    if not probs:
        return {}
    p = np.array(probs)
    with np.errstate(all="ignore"):
        mq, sq = model.ppf(p), sketch.quantile(p)
        rel = (mq - sq) / np.abs(sq)
    return _qdict(probs, np.where(np.isfinite(rel), rel, np.inf))


def _qdict(probs: tuple[float, ...], values: FloatArray) -> dict[str, float]:
    return {quantile_label(p): float(v) for p, v in zip(probs, values, strict=True)}


def _score(
    model: FittedModel, family: Family, est: Estimate, sketch: Sketch, sample: WeightedSample, n: int
) -> Candidate:
    with np.errstate(all="ignore"):
        lc, ls = family.logcdf_pair(sample.values, est.theta)
    d = distances(lc, ls, sample)
    errs = _quantile_errors(model, sketch, TAIL_PROBS)
    k = family.n_params
    aic = 2 * k - 2 * est.loglik
    bic = k * math.log(n) - 2 * est.loglik
    scores = Scores(d.ks, d.ad, d.cvm, aic, bic, max(abs(v) for v in errs.values()), errs, sample.n)
    with np.errstate(all="ignore"):
        mq = model.ppf(np.array(TABLE_PROBS))
    return Candidate(0, model, scores, _qdict(TABLE_PROBS, mq))


def _fit_tail(
    sketch: Sketch, data: GroupedData, sample: WeightedSample, tail_prob: float
) -> Candidate | NotFitted:
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
    errs = _quantile_errors(model, sketch, tuple(p for p in TAIL_PROBS if p > tail_prob))
    aic = 4 - 2 * est.loglik
    bic = 2 * math.log(max(excess.n, 1)) - 2 * est.loglik
    scores = Scores(
        d.ks if d else math.nan, d.ad if d else math.nan, d.cvm if d else math.nan, aic, bic,
        max((abs(v) for v in errs.values()), default=math.nan), errs, tail_sample.n,
    )  # fmt: skip
    with np.errstate(all="ignore"):
        mq = model.ppf(np.array(TABLE_PROBS))
    return Candidate(
        0, model, scores, {quantile_label(p): float(v) for p, v in zip(TABLE_PROBS, mq, strict=True)}
    )


def _rank_value(c: Candidate, key: str) -> tuple[int, float, float]:
    s = c.scores
    primary = {"tail": s.tail_error, "ks": s.ks, "ad": s.ad, "cvm": s.cvm, "aic": s.aic, "bic": s.bic}[key]
    primary = primary if math.isfinite(primary) else math.inf
    return (0 if c.model.success else 1, primary, s.ks)


def bootstrap_p_values(
    family: Family,
    theta: FloatArray,
    values: FloatArray,
    observed: Scores,
    replicates: int,
    rng: np.random.Generator,
) -> dict[str, float]:
    """Parametric-bootstrap p-values of KS, A² and W², refitting every replicate.

    With estimated parameters the classical tables do not apply; drawing from the
    fitted model, refitting, and recomputing the statistic gives their null
    distribution (Stute et al. 1993; the procedure ``scipy.stats.goodness_of_fit``
    follows). p = (1 + #{T* >= T}) / (B + 1).
    """
    dist = family.freeze(theta)
    n = values.size
    loc = family.natural(theta).get("location") if family.shifted else None
    worse = {"ks": 0, "ad": 0, "cvm": 0}
    for _ in range(replicates):
        x = np.sort(np.asarray(dist.rvs(size=n, random_state=rng), dtype=np.float64))
        fb = fam.get(family.name, float(x[0]))
        t0 = theta.copy()
        if loc is not None:
            t0[-1] = math.log(max(float(x[0]) - loc, 1e-12 * max(abs(float(x[0])), 1.0)))
        est = maximise(fb, GroupedData(x, np.empty(0), np.empty(0), n), [t0], tries=1)
        with np.errstate(all="ignore"):
            lc, ls = fb.logcdf_pair(x, est.theta)
        d = distances(lc, ls, exact_sample(x))
        worse["ks"] += d.ks >= observed.ks
        worse["ad"] += d.ad >= observed.ad
        worse["cvm"] += d.cvm >= observed.cvm
    return {k: (1 + v) / (replicates + 1) for k, v in worse.items()}


def _notes(
    sketch: Sketch, rank_by: str, bad: int, did_boot: bool, replicates: int, top: int, slices: int
) -> tuple[str, ...]:
    notes = [f"ranked by {rank_by}: {RANK_MEANING[rank_by]}."]
    if did_boot:
        notes.append(
            f"p-values by parametric bootstrap ({replicates} replicates, each refitted) for the best {top}; "
            "a small p-value says the family does not describe these values."
        )
    else:
        notes.append(
            f"with n = {sketch.count} values every goodness-of-fit test rejects every model, so no p-values "
            "are given: rank by distance and judge the tail errors."
        )
    if not sketch.exact:
        notes.append(
            f"fitted and scored from the sketch: exact smallest/largest {sketch.low.size} values, the middle "
            f"from the t-digest (rank error up to {sketch.rank_error_bound():.2g} of n; statistics over "
            f"{slices} slices)."
        )
    if bad:
        notes.append(
            f"{bad} values at or below zero ({sketch.zero_count} zero, {sketch.negative_count} negative): "
            "positive families are not applicable; shifted families fit them with a location floor."
        )
    notes.append(
        "tail-only models (GPD above a threshold) are scored on the tail alone and not ranked with the rest."
    )
    return tuple(notes)
