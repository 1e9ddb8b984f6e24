"""Parametric-bootstrap p-values for a fitted model, each replicate handled like the data.

With estimated parameters the classical tables of KS, A² and W² do not apply; drawing
from the fitted model, refitting, and recomputing the statistic gives their null
distribution (Stute, González Manteiga & Presedo Quindimil 1993; the procedure
``scipy.stats.goodness_of_fit`` follows). Each replicate goes the whole way the data
went: rounded to the data's lattice, sketched with the same settings, read as grouped
data, fitted from the original estimate and scored from its sketch, so whatever the
sketch or the grouping does to the statistic is in its null distribution too.
p = (1 + #{T* >= T}) / (B + 1).
"""

from __future__ import annotations

import math

import numpy as np

from ..sketch import Sketch
from .family import FloatArray
from .results import Candidate
from .single import Context, context_of, fit_one


def bootstrap_p_values(
    cand: Candidate, theta: FloatArray, ctx: Context, replicates: int, rng: np.random.Generator
) -> dict[str, float]:
    """p-values of KS, A² and W² for ``cand`` (fitted with ``theta`` in context ``ctx``)."""
    like = ctx.sketch
    observed = cand.scores
    loc = cand.model.params.get("location") if "location" in cand.model.params else None
    worse = {"ks": 0, "ad": 0, "cvm": 0}
    used = 0
    for _ in range(replicates):
        x = np.asarray(cand.model.dist.rvs(size=like.count, random_state=rng), dtype=np.float64)
        if ctx.lattice:
            x = np.round(x / ctx.lattice) * ctx.lattice
        s = Sketch(like.unit, compression=like.compression, tail_size=like.tail_size, scale=like.digest.scale)
        s.add(x)
        rctx = context_of(s)
        t0 = theta.copy()
        if loc is not None:
            # The floor is measured from this replicate's own minimum.
            t0[-1] = math.log(max(rctx.floor - loc, 1e-12 * max(abs(rctx.floor), 1.0)))
        got = fit_one(cand.family, rctx, start=t0)
        if not isinstance(got, tuple):
            continue  # a replicate the family cannot fit is left out of the reference set
        used += 1
        stats = got[0].scores
        worse["ks"] += stats.ks >= observed.ks
        worse["ad"] += stats.ad >= observed.ad
        worse["cvm"] += stats.cvm >= observed.cvm
    return {k: (1 + v) / (used + 1) for k, v in worse.items()}
