"""Fit every candidate family to one sketch, score each against it, and rank them.

The public entry point is :func:`fit_sketch`; ``ogive fit``, the workspace's model
pane and ``ogive plot --model`` all call it, so they always agree. What the data are
(a lattice, an atom at zero) is decided once per sketch (:class:`Context`), each family
is fitted by :func:`fit_one` (estimation in ``estimate.py``, statistics in
``scores.py``), the tail-only model by ``tail.fit_tail``, the order by ``ranking.py``,
the p-values by ``bootstrap.py``.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from ..sketch import Sketch
from . import families as fam
from .atoms import WithZeros
from .estimate import Estimate, fit_family, maximise, out_of_support
from .family import Family, FloatArray
from .grouped import DEFAULT_BINS, GroupedData, detect_lattice, grouped_from_sketch, spacings
from .mixture import degenerate
from .ranking import RANK_KEYS, RANK_MEANING, choose_key, rank_value
from .results import Candidate, FitReport, FittedModel, NotFitted, Scores
from .scores import SLICES, WeightedSample, by_label, distances, quantile_errors, sample_from_sketch
from .shifted import boundary_note
from .tail import DEFAULT_TAIL_PROB, fit_tail

__all__ = ["RANK_KEYS", "Candidate", "FitReport", "FittedModel", "NotFitted", "Scores", "fit_sketch"]

TAIL_PROBS = (0.5, 0.9, 0.99, 0.999)
"""Where the tail error is measured."""
TABLE_PROBS = (0.5, 0.9, 0.99, 0.999, 0.9999)
"""Model vs sketch quantiles shown for every candidate."""
BOOTSTRAP_MAX_N = 5000
"""Above this many values p-values are not computed: every test rejects every model at
such sizes, so only the distances are informative."""


@dataclass(frozen=True)
class Context:
    """What every family's fit to one sketch shares: the data as a likelihood sees them."""

    sketch: Sketch
    data: GroupedData
    sample: WeightedSample
    lattice: float | None
    zero_atom: bool
    """Exact zeros in continuous values, held as one group at or below 0."""
    out_of_support: int
    """Values no positive family can hold (below zero; zero too without a lattice or atom)."""
    floor: float
    """Where a location floor is measured from: nothing in the data lies below it."""

    @property
    def zero_share(self) -> float:
        return self.sketch.zero_count / self.sketch.count if self.zero_atom else 0.0

    def positive_sample(self) -> WeightedSample:
        keep = self.sample.values > 0
        return WeightedSample(
            self.sample.values[keep], self.sample.weights[keep], float(self.sample.weights[keep].sum())
        )


def context_of(sketch: Sketch, *, bins: int = DEFAULT_BINS, slices: int = SLICES) -> Context:
    lattice = detect_lattice(sketch)
    zero_atom = lattice is None and sketch.zero_count > 0 and sketch.negative_count == 0
    data = grouped_from_sketch(sketch, bins=bins, lattice=lattice, zero_atom=zero_atom)
    floor = sketch.min - lattice / 2 if lattice else sketch.min
    return Context(
        sketch=sketch,
        data=data,
        sample=sample_from_sketch(sketch, slices=slices),
        lattice=lattice,
        zero_atom=zero_atom,
        out_of_support=out_of_support(sketch, lattice, zero_atom),
        floor=floor,
    )


# ---------------------------------------------------------------- public API
def fit_sketch(
    sketch: Sketch,
    families: list[str] | tuple[str, ...] | None = None,
    *,
    rank_by: str = "auto",
    bins: int = DEFAULT_BINS,
    tail_prob: float = DEFAULT_TAIL_PROB,
    bootstrap: int = 99,
    bootstrap_top: int = 3,
    seed: int = 0,
    slices: int = SLICES,
) -> FitReport:
    """Fit ``families`` (default: all) to the sketch alone, score and rank them.

    ``rank_by`` is one of :data:`RANK_KEYS`; ``auto`` (the default) picks the key the
    data support (``ranking.choose_key`` says which and why). When the sketch holds at
    most :data:`BOOTSTRAP_MAX_N` values, the best ``bootstrap_top`` get
    parametric-bootstrap p-values from ``bootstrap`` replicates (Stute, González
    Manteiga & Presedo Quindimil 1993, "Bootstrap based goodness-of-fit tests"), each
    replicate sketched and refitted as the original was. Raises ValueError (a full
    sentence) for an unknown family or rank key, or too few distinct values.
    """
    names = fam.resolve(families)
    key, reason = choose_key(rank_by, sketch.count)
    if not 0.5 <= tail_prob < 1:
        raise ValueError(f"tail_prob must be at least 0.5 and below 1, got {tail_prob}.")
    if sketch.count < 3:
        raise ValueError(f"a fit needs at least 3 values; the sketch holds {sketch.count}.")
    if not sketch.max > sketch.min:
        raise ValueError(
            f"all {sketch.count} values equal {sketch.min:g}; no continuous family describes a single value."
        )
    ctx = context_of(sketch, bins=bins, slices=slices)
    fitted: list[tuple[Candidate, FloatArray]] = []
    tails: list[Candidate] = []
    refused: list[NotFitted] = []
    for name in names:
        if name == fam.TAIL_FAMILY:
            got = fit_tail(sketch, ctx.data, ctx.sample, tail_prob, TAIL_PROBS)
            if isinstance(got, NotFitted):
                refused.append(got)
            else:
                tails.append(_with_table(got, sketch))
            continue
        one = fit_one(name, ctx)
        if isinstance(one, NotFitted):
            refused.append(one)
        else:
            fitted.append(one)

    fitted.sort(key=lambda r: rank_value(r[0], key))
    ranked: list[Candidate] = []
    rng = np.random.default_rng(seed)
    do_boot = sketch.count <= BOOTSTRAP_MAX_N and bootstrap > 0
    for i, (cand, theta) in enumerate(fitted):
        scores = cand.scores
        if do_boot and i < bootstrap_top:
            from .bootstrap import bootstrap_p_values

            pv = bootstrap_p_values(cand, theta, ctx, bootstrap, rng)
            scores = dataclasses.replace(scores, p_values=pv, bootstrap=bootstrap)
        ranked.append(Candidate(i + 1, cand.model, scores, cand.quantiles))
    tails_ranked = tuple(dataclasses.replace(c, rank=i + 1) for i, c in enumerate(tails))
    return FitReport(
        n=sketch.count,
        unit=sketch.unit,
        rank_key=key,
        models=tuple(ranked),
        tail_models=tails_ranked,
        not_fitted=tuple(refused),
        sketch_quantiles=by_label(TABLE_PROBS, sketch.quantile(np.array(TABLE_PROBS))),
        out_of_support=ctx.out_of_support,
        notes=_notes(ctx, key, reason, do_boot, bootstrap, bootstrap_top, slices, [c for c, _ in fitted]),
        rank_reason=reason,
        lattice=ctx.lattice,
        zero_count=sketch.zero_count,
    )


def fit_one(
    name: str, ctx: Context, start: FloatArray | None = None
) -> tuple[Candidate, FloatArray] | NotFitted:
    """One family fitted and scored (rank 0), with its parameter vector; or why not.

    ``start`` (a parameter vector) replaces the quantile-matching starts: the bootstrap
    refits each replicate from the original estimate.
    """
    sketch = ctx.sketch
    family = fam.get(name, ctx.floor)
    bad = ctx.out_of_support
    if family.positive and bad:
        return NotFitted(name, family.title, _support_refusal(sketch), bad)
    if family.positive and ctx.floor <= 0 and not (ctx.lattice or ctx.zero_atom):
        return NotFitted(name, family.title, "the smallest value is not above zero.", bad)
    with_zeros = family.positive and ctx.zero_atom
    data = ctx.data.without_zero_atom() if with_zeros else ctx.data
    try:
        est = _estimate(family, data, start)
    except (ArithmeticError, ValueError) as exc:
        # A family whose parameters run off to a boundary (overflow, log of zero) on
        # these data: reported as not fitted, with the reason, never a traceback.
        return NotFitted(name, family.title, f"the fit broke down numerically ({exc}).", bad)
    if not math.isfinite(est.loglik):
        return NotFitted(name, family.title, f"no finite likelihood was found ({est.message}).", bad)
    params = family.natural(est.theta)
    if family.name == "lognormal-mix" and (why := degenerate(params)):
        return NotFitted(name, family.title, why, bad)
    share = ctx.zero_share if with_zeros else 0.0
    loglik, k = est.loglik, family.n_params
    dist = family.freeze(est.theta)
    if share:
        z, n = sketch.zero_count, sketch.count
        loglik += z * math.log(share) + (n - z) * math.log1p(-share)
        k += 1
        dist = WithZeros(dist, share)
    boundary = _edge_note(family, params)
    if family.shifted and data.points.size and not ctx.lattice:
        boundary = boundary_note(family, est.theta, float(data.points.min()), sketch.count)
    model = FittedModel(
        family=family.name,
        label=family.title + (" + zeros" if share else ""),
        params={**params, "zero_share": share} if share else params,
        unit=sketch.unit,
        n_params=k,
        loglik=loglik,
        success=est.success,
        message=est.message,
        support=_support(family, params, ctx, share),
        dist=dist,
        boundary=boundary,
        zero_share=share,
    )
    scores = _score(model, family, est.theta, ctx, share)
    return _with_table(Candidate(0, model, scores, {}), sketch), est.theta


# ---------------------------------------------------------------- pieces
def _estimate(family: Family, data: GroupedData, start: FloatArray | None) -> Estimate:
    if start is None:
        return fit_family(family, data)
    objective = spacings(data) if family.shifted and data.points.size else data
    est = maximise(family, objective, [start], tries=1)
    if objective is data:
        return est
    from .estimate import log_likelihood

    return dataclasses.replace(est, loglik=log_likelihood(family, data, est.theta))


LOMAX_SHAPE_EDGE = 1e4
"""A Lomax shape beyond this is the exponential limit (shape, scale -> infinity together)."""


def _edge_note(family: Family, params: dict[str, float]) -> str | None:
    """A fit whose parameters ran off to a limit where the family becomes another one."""
    if family.name == "lomax" and params["shape"] > LOMAX_SHAPE_EDGE:
        scale = params["scale"] / params["shape"]
        return (
            f"at the boundary: the shape ran to infinity, where a Lomax is the exponential of scale "
            f"{scale:.4g} (fit that family instead)"
        )
    return None


def _support_refusal(sketch: Sketch) -> str:
    return (
        f"{sketch.negative_count} values below zero"
        + (f" and {sketch.zero_count} zero" if sketch.zero_count else "")
        + " lie outside its support (x > 0): not applicable; the shifted families and the normal fit them."
    )


def _support(family: Family, params: dict[str, float], ctx: Context, share: float) -> str:
    unit = ctx.sketch.unit
    if family.shifted:
        text = f"location shift: floor at {params['location']:.6g} {unit}".rstrip()
        if ctx.sketch.zero_count or ctx.sketch.negative_count:
            text += "; covers the values at or below zero"
        return text
    if share:
        return f"x > 0, plus a point mass of {share:.2%} at exactly 0 (the zeros)"
    if family.positive:
        if ctx.lattice and ctx.sketch.zero_count:
            return f"x > 0: a logged 0 is the interval [0, {ctx.lattice / 2:g}) it was rounded from"
        return "x > 0: every value inside the support"
    return "all real numbers"


def _score(model: FittedModel, family: Family, theta: FloatArray, ctx: Context, share: float) -> Scores:
    sample = ctx.positive_sample() if share else ctx.sample
    with np.errstate(all="ignore"):
        lc, ls = family.logcdf_pair(sample.values, theta)
        if share:
            # G = w + (1 - w) F on x > 0: the zeros are matched exactly at the atom.
            lc = np.logaddexp(math.log(share), math.log1p(-share) + lc)
            ls = math.log1p(-share) + ls
    d = distances(lc, ls, sample, atom=share)
    errs = quantile_errors(model.ppf, ctx.sketch, TAIL_PROBS)
    k, n = model.n_params, ctx.sketch.count
    aic = 2 * k - 2 * model.loglik
    bic = k * math.log(n) - 2 * model.loglik
    return Scores(d.ks, d.ad, d.cvm, aic, bic, max(abs(v) for v in errs.values()), errs, float(n))


def _with_table(c: Candidate, sketch: Sketch) -> Candidate:
    """The candidate with its model quantiles at p50 ... p99.99 for the table."""
    with np.errstate(all="ignore"):
        mq = c.model.ppf(np.array(TABLE_PROBS))
    return dataclasses.replace(c, quantiles=by_label(TABLE_PROBS, mq))


def _notes(
    ctx: Context,
    key: str,
    reason: str,
    did_boot: bool,
    replicates: int,
    top: int,
    slices: int,
    fitted: list[Candidate],
) -> tuple[str, ...]:
    sketch = ctx.sketch
    n = sketch.count
    notes = [f"ranked by {key}: {RANK_MEANING[key]}" + (f" - chosen by auto: {reason}." if reason else ".")]
    if ctx.lattice:
        h = ctx.lattice
        notes.append(
            f"every value lies on a lattice of {h:g} {sketch.unit}: each is read as the interval it was "
            f"rounded from (value +- {h / 2:g}), so the models describe the values before rounding.".replace(
                "  ", " "
            )
        )
    if sketch.zero_count:
        share = sketch.zero_count / n
        if ctx.lattice:
            notes.append(
                f"zeros: {share:.2%} of the values ({sketch.zero_count:,}) are 0; on the lattice a 0 stands "
                f"for [0, {ctx.lattice / 2:g}), which the positive families cover."
            )
        elif ctx.zero_atom:
            notes.append(
                f"zeros: {share:.2%} of the values ({sketch.zero_count:,}) are exactly 0. Every model counts "
                "them as one group at or below 0; the positive families ('+ zeros') give them a point mass "
                "of that weight (one more parameter), the others the probability they put at or below 0."
            )
    if sketch.negative_count:
        notes.append(
            f"{sketch.negative_count:,} values are below zero: the positive families are not applicable; the "
            "shifted families and the normal fit them."
        )
    if did_boot:
        notes.append(
            f"p-values by parametric bootstrap ({replicates} replicates, each sketched and refitted) for the "
            f"best {top}; a small p-value says the family does not describe these values."
        )
    else:
        notes.append(
            f"with n = {n:,} values every goodness-of-fit test rejects every model, so no p-values are "
            "given: rank by distance and judge the tail errors."
        )
    if not sketch.exact:
        notes.append(
            f"fitted and scored from the sketch: exact smallest/largest {sketch.low.size} values, the middle "
            f"from the t-digest (counts within {sketch.rank_error_bound():.2g} of n; statistics over "
            f"{slices:,} slices)."
        )
    for c in fitted:
        if c.model.boundary:
            notes.append(f"{c.label}: {c.model.boundary}; ranked after the ordinary fits.")
    notes.append(
        "tail-only models (GPD above a threshold) are scored on the tail alone and not ranked with the rest."
    )
    return tuple(notes)
