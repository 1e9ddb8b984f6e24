"""Fit every candidate family to one sketch, score each against it, and rank them.

The public entry point is :func:`fit_sketch`; ``ogive fit``, the workspace's model
pane and ``ogive plot --model`` all call it, so they always agree. Each family is
fitted by ``single.fit_one`` (what the data are is decided once, ``single.Context``),
the tail-only model by ``tail.fit_tail``, the order by ``ranking.py``, the p-values by
``bootstrap.py``.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ..sketch import Distribution, is_binned
from . import families as fam
from .bootstrap import bootstrap_p_values
from .family import FloatArray
from .grouped import DEFAULT_BINS
from .ranking import RANK_KEYS, RANK_MEANING, choose_key, rank_value
from .results import Candidate, FitReport, FittedModel, NotFitted, Scores
from .scores import SLICES, by_label
from .single import TABLE_PROBS, TAIL_PROBS, Context, context_of, fit_one, with_table
from .tail import DEFAULT_TAIL_PROB, fit_tail

__all__ = ["RANK_KEYS", "Candidate", "FitReport", "FittedModel", "NotFitted", "Scores", "fit_sketch"]

BOOTSTRAP_MAX_N = 5000
"""Above this many values p-values are not computed: every test rejects every model at
such sizes, so only the distances are informative."""


# ---------------------------------------------------------------- public API
FIT_LIMIT = 1e150
"""Beyond this a value squared overflows float64: moments, likelihoods and bins break."""


def fit_sketch(
    sketch: Distribution,
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
    if max(abs(sketch.min), abs(sketch.max)) > FIT_LIMIT:
        raise ValueError(
            f"the values reach {sketch.max if abs(sketch.max) > abs(sketch.min) else sketch.min:g}, "
            "too close to the largest number a computer float holds to fit a model (its moments "
            "and densities overflow); check the field and its unit, or scan without those rows."
        )
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
                tails.append(with_table(got, sketch))
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
    if is_binned(sketch):
        b = sketch.buckets()
        notes.append(
            f"fitted from the buckets themselves: grouped maximum likelihood on {int((b.counts > 0).sum())} "
            "non-empty buckets, each an interval holding its count"
            + (", with the exact min and max as single values" if sketch.low.size or sketch.high.size else "")
            + f" (the likelihood scipy.stats.fit maximises on CensoredData.interval_censored); KS, AD and "
            f"CvM compare the model with a {sketch.interpolation} reading inside the buckets, which can be "
            f"off by up to {sketch.rank_error_bound():.2g} of n between bucket edges."
        )
    elif not sketch.exact:
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
