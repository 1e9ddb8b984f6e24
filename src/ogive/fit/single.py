"""One family fitted to one sketch and scored: what ``fit_sketch`` does for each family.

What the data are (a lattice, an atom at zero) is decided once per sketch
(:class:`Context`); :func:`fit_one` fits a family to it (estimation in ``estimate.py``,
statistics in ``scores.py``). The bootstrap calls the same function on each replicate,
so a replicate is fitted and scored exactly as the data were.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from ..sketch import Sketch
from . import families as fam
from .atoms import WithZeros
from .estimate import Estimate, fit_family, log_likelihood, maximise, out_of_support
from .family import Family, FloatArray
from .grouped import DEFAULT_BINS, GroupedData, detect_lattice, grouped_from_sketch, spacings
from .mixture import degenerate
from .results import Candidate, FittedModel, NotFitted, Scores
from .scores import SLICES, WeightedSample, by_label, distances, quantile_errors, sample_from_sketch
from .shifted import boundary_note

TAIL_PROBS = (0.5, 0.9, 0.99, 0.999)
"""Where the tail error is measured."""
TABLE_PROBS = (0.5, 0.9, 0.99, 0.999, 0.9999)
"""Model vs sketch quantiles shown for every candidate."""


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
    return with_table(Candidate(0, model, scores, {}), sketch), est.theta


# ---------------------------------------------------------------- pieces
def _estimate(family: Family, data: GroupedData, start: FloatArray | None) -> Estimate:
    if start is None:
        return fit_family(family, data)
    objective = spacings(data) if family.shifted and data.points.size else data
    est = maximise(family, objective, [start], tries=1)
    if objective is data:
        return est
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


def with_table(c: Candidate, sketch: Sketch) -> Candidate:
    """The candidate with its model quantiles at p50 ... p99.99 for the table."""
    with np.errstate(all="ignore"):
        mq = c.model.ppf(np.array(TABLE_PROBS))
    return dataclasses.replace(c, quantiles=by_label(TABLE_PROBS, mq))
