"""Goodness of fit of a model against a sketch: KS, Anderson–Darling, Cramér–von Mises.

The three statistics are integrals of the gap between the empirical CDF F_n and the
model CDF F (D'Agostino & Stephens, *Goodness-of-Fit Techniques*, 1986, ch. 4):

    D  = sup |F_n - F|
    W² = n ∫ (F_n - F)² dF
    A² = n ∫ (F_n - F)² / (F (1 - F)) dF

A sketch gives F_n as a weighted sample: the exact tail values with weight one each,
and the middle as many thin slices, each a point at its median carrying its share of
the values. Between consecutive points F_n is constant (S), so every integral is exact
in closed form over u = F(x):

    ∫ (S - u)² du              = [(u - S)³ / 3]
    ∫ (S - u)² / (u (1 - u)) du = [S² ln u - (1 - S)² ln(1 - u) - u]

For a sample held exactly (weights one) these equal the usual computing formulas
(the ones ``scipy.stats.kstest``, ``cramervonmises`` and ``anderson`` use), which the
tests check; for a large sketch the slices add an error below n / (12 M²) to W².
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..sketch import Sketch, quantile_label
from .family import FloatArray, log1mexp
from .grouped import exact_values

SLICES = 20000
"""Middle slices of a large sketch; W² error below n / (12 * SLICES²)."""


@dataclass(frozen=True)
class WeightedSample:
    values: FloatArray
    """Sorted."""
    weights: FloatArray
    n: float


def sample_from_sketch(sketch: Sketch, *, slices: int = SLICES) -> WeightedSample:
    """Exact tails as single values, the middle as equal-weight slices at their medians."""
    if sketch.exact:
        v = exact_values(sketch)
        return WeightedSample(v, np.ones(v.size), float(v.size))
    n, nl, nh = sketch.count, sketch.low.size, sketch.high.size
    m = n - nl - nh
    k = max(min(slices, m), 1)
    bounds = nl + np.arange(k + 1) * (m / k)
    mids = sketch.value_at(0.5 * (bounds[:-1] + bounds[1:]) - 0.5)
    values = np.concatenate((sketch.low, mids, sketch.high))
    weights = np.concatenate((np.ones(nl), np.full(k, m / k), np.ones(nh)))
    order = np.argsort(values, kind="stable")
    return WeightedSample(values[order], weights[order], float(n))


def exact_sample(values: FloatArray) -> WeightedSample:
    v = np.sort(np.asarray(values, dtype=np.float64))
    return WeightedSample(v, np.ones(v.size), float(v.size))


@dataclass(frozen=True)
class Distances:
    ks: float
    ad: float
    cvm: float


def distances(
    logcdf: FloatArray, logsf: FloatArray, sample: WeightedSample, *, atom: float = 0.0
) -> Distances:
    """KS, A² and W² from the model's log CDF and log survival at the sorted sample.

    ``atom``: a share of the values the sample leaves out because the model matches
    them exactly at one point below all of them (the zeros of a zero-inflated model,
    at probability ``atom`` in both): F_n = F there, so the integrals start at
    u = ``atom`` with S = ``atom`` instead of at 0 (a Stieltjes integral over a jump
    where the two CDFs agree adds nothing).
    """
    n = sample.n
    u = np.clip(np.exp(logcdf), 0.0, 1.0)
    s_after = atom + (1.0 - atom) * np.cumsum(sample.weights) / n
    s_after[-1] = 1.0
    s_before = np.concatenate(([atom], s_after[:-1]))
    ks = float(max(np.max(s_after - u), np.max(u - s_before), 0.0))
    n = n / (1.0 - atom)  # the statistics are of all the values, the atom's included

    # Segments: [atom, u_1] at S = atom, [u_i, u_{i+1}] at S_i, [u_N, 1] at S = 1.
    u_lo, u_hi, s_mid = u[:-1], u[1:], s_after[:-1]
    cvm = float(((u_hi - s_mid) ** 3 - (u_lo - s_mid) ** 3).sum() / 3)
    cvm += float((u[0] - atom) ** 3 / 3 + (1 - u[-1]) ** 3 / 3)

    with np.errstate(invalid="ignore", divide="ignore"):
        lc = np.minimum(logcdf, 0.0)
        ls = np.where(np.isfinite(logsf), np.minimum(logsf, 0.0), log1mexp(lc))
        lc_lo, lc_hi, ls_lo, ls_hi = lc[:-1], lc[1:], ls[:-1], ls[1:]
        seg = s_mid**2 * (lc_hi - lc_lo) - (1 - s_mid) ** 2 * (ls_hi - ls_lo) - (u_hi - u_lo)
        seg = np.where(u_hi > u_lo, seg, 0.0)
        if atom > 0:
            # [S^2 ln u - (1 - S)^2 ln(1 - u) - u] from u = atom to u_1, at S = atom.
            first = (
                atom**2 * (lc[0] - math.log(atom))
                - (1 - atom) ** 2 * (ls[0] - math.log1p(-atom))
                - (u[0] - atom)
            )
        else:
            first = -ls[0] - u[0]
        last = -1.0 - lc[-1] + u[-1]
        ad = float(np.nansum(seg) + first + last)
    return Distances(ks=ks, ad=n * ad if math.isfinite(ad) else math.inf, cvm=n * cvm)


def quantile_errors(
    ppf: Callable[[FloatArray], FloatArray], sketch: Sketch, probs: tuple[float, ...]
) -> dict[str, float]:
    """(model - sketch) / |sketch| at each probability, by label; inf where undefined."""
    if not probs:
        return {}
    p = np.array(probs)
    with np.errstate(all="ignore"):
        mq, sq = ppf(p), sketch.quantile(p)
        rel = (mq - sq) / np.abs(sq)
    return by_label(probs, np.where(np.isfinite(rel), rel, np.inf))


def by_label(probs: tuple[float, ...], values: FloatArray) -> dict[str, float]:
    return {quantile_label(p): float(v) for p, v in zip(probs, values, strict=True)}
