"""Grouped-data maximum likelihood from a sketch: bins from its CDF, exact tails as points.

A sketch no longer holds the values, but it knows, to within its rank error, how many
fall between any two numbers, and it holds the smallest and largest ``tail_size``
values exactly. That is grouped (interval-censored) data plus a few exact
observations, and its likelihood is

    log L(theta) = sum_i log f(x_i; theta) + sum_j c_j log[F(b_j; theta) - F(a_j; theta)]

over the exact values x_i and the bins (a_j, b_j] holding c_j values. Maximising it is
the classical grouped-data maximum likelihood (Kendall & Stuart, *The Advanced Theory
of Statistics*, vol. 2, ch. 18 "grouped data"; Heitjan 1989, "Inference from grouped
continuous data: a review", *Statistical Science* 4(2)); with a couple of hundred bins
placed at quantiles, dense where the tails thin out, it loses very little information
against the raw-data MLE (Kulldorff 1961, *Contributions to the theory of estimation
from grouped and partially grouped samples*). scipy fits the same likelihood from
``scipy.stats.CensoredData.interval_censored``; the tests check that the two agree.

The optimiser starts from quantile-matching estimates (the family's CDF at a few
sketch quantiles pulled towards the nominal probabilities on the probit scale) and
works in each family's unconstrained parameters, so it needs no bounds.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np
from scipy import optimize, special

from ..sketch import Sketch
from .families import DataSummary, Family, FloatArray, _log1mexp

DEFAULT_BINS = 240
"""Interior bins of the grouped likelihood; more buys almost nothing (Kulldorff 1961)."""

_QM_PROBS = np.array([0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95, 0.99, 0.999])
_LOG_HALF = math.log(0.5)


@dataclass(frozen=True)
class GroupedData:
    """Exact values (each once, ties repeated) and interval-censored counts over bins."""

    points: FloatArray
    edges: FloatArray
    """Bin boundaries, increasing; bin j is (edges[j], edges[j+1]]."""
    counts: FloatArray
    n: int

    def shifted(self, by: float) -> GroupedData:
        return GroupedData(self.points - by, self.edges - by, self.counts, self.n)

    def above(self, threshold: float) -> GroupedData:
        """The values above ``threshold``, as excesses over it (bins cut at it)."""
        pts = self.points[self.points > threshold] - threshold
        if self.edges.size >= 2 and self.edges[-1] > threshold:
            keep = self.edges > threshold
            first = int(np.argmax(keep))
            edges = self.edges[first:]
            counts = self.counts[first:]
            if first > 0:
                # The bin straddling the threshold: keep the share above it, linearly.
                a, b = self.edges[first - 1], self.edges[first]
                share = (b - threshold) / (b - a) if b > a else 1.0
                edges = np.concatenate(([threshold], edges))
                counts = np.concatenate(([self.counts[first - 1] * share], counts))
            edges = edges - threshold
        else:
            edges, counts = np.empty(0), np.empty(0)
        n = round(float(pts.size + counts.sum()))
        return GroupedData(pts, edges, counts, n)


def exact_values(sketch: Sketch) -> FloatArray:
    """All the values of an exact sketch (n <= 2 * tail_size), sorted."""
    n, k = sketch.count, sketch.low.size
    if n <= k:
        return sketch.low.copy()
    return np.concatenate((sketch.low, sketch.high[sketch.high.size - (n - k) :]))


def tail_grid(p_lo: float, p_hi: float, bins: int) -> FloatArray:
    """Probabilities from p_lo to p_hi, half evenly spaced, half evenly in logit(p).

    The logit half crowds the ends, where a family's tail is decided; the even half
    keeps the body from being starved of bins.
    """
    half = max(bins // 2, 2)
    lo, hi = math.log(p_lo / (1 - p_lo)), math.log(p_hi / (1 - p_hi))
    logit = 1.0 / (1.0 + np.exp(-np.linspace(lo, hi, half + 1)))
    even = np.linspace(p_lo, p_hi, bins - half + 1)
    return np.unique(np.clip(np.concatenate((logit, even)), p_lo, p_hi))


def grouped_from_sketch(sketch: Sketch, *, bins: int = DEFAULT_BINS) -> GroupedData:
    """The sketch as exact tail values plus bins between them (counts from its ranks)."""
    n = sketch.count
    if n == 0:
        raise ValueError("the sketch is empty; there is nothing to fit.")
    if sketch.exact:
        return GroupedData(exact_values(sketch), np.empty(0), np.empty(0), n)
    low, high = sketch.low, sketch.high
    nl, nh = low.size, high.size
    p = tail_grid(nl / n, (n - nh) / n, bins)
    inner = sketch.value_at(p[1:-1] * (n - 1))
    edges = np.unique(np.concatenate(([low[-1]], inner, [high[0]])))
    edges = edges[(edges >= low[-1]) & (edges <= high[0])]
    # Edges closer than rounding noise would make bins no CDF can resolve: merge them.
    tol = 1e-9 * max(float(np.abs(edges).max()), 1e-300)
    keep = np.concatenate((np.diff(edges) > tol, [True]))
    keep[0] = True
    edges = edges[keep]
    cum = np.clip(sketch.rank(edges), nl, n - nh)
    cum[0], cum[-1] = nl, n - nh
    cum = np.maximum.accumulate(cum)
    counts = np.diff(cum)
    counts[counts < 1e-6] = 0.0  # interpolation dust, not values
    return GroupedData(np.concatenate((low, high)), edges, counts, n)


def summarise(data: GroupedData) -> DataSummary:
    """Quantiles of the grouped data (points and bins, linear within a bin) for the starts."""
    xs, cw = _cumulative(data)
    probs = np.array(
        [0.001, 0.01, 0.05, 0.1, 0.1587, 0.25, 0.4, 0.5, 0.6, 0.75, 0.8413, 0.9, 0.95, 0.99, 0.999]
    )
    qs = np.interp(probs * cw[-1], cw, xs)
    # Mean: points exactly, bins at their midpoints.
    mids = 0.5 * (data.edges[1:] + data.edges[:-1]) if data.edges.size > 1 else np.empty(0)
    total = float(data.points.sum() + (mids * data.counts).sum())
    weight = float(data.points.size + data.counts.sum())
    return DataSummary(probs, qs, total / weight, float(xs[0]), float(xs[-1]))


def _cumulative(data: GroupedData) -> tuple[FloatArray, FloatArray]:
    """(x, number of values <= x) at every point and bin edge, piecewise linear between."""
    xs = np.concatenate((data.points, data.edges))
    w = np.concatenate((np.ones(data.points.size), np.zeros(data.edges.size)))
    if data.edges.size > 1:
        # Spread each bin's count onto its upper edge; interpolation makes it linear.
        w[data.points.size + 1 :] = data.counts
    order = np.argsort(xs, kind="stable")
    return xs[order], np.cumsum(w[order])


def bin_log_mass(family: Family, edges: FloatArray, theta: FloatArray) -> FloatArray:
    """log P(a < X <= b) for consecutive edges, without cancellation in either tail."""
    lc, ls = family.logcdf_pair(edges, theta)
    a_c, b_c, a_s, b_s = lc[:-1], lc[1:], ls[:-1], ls[1:]
    with np.errstate(invalid="ignore", divide="ignore"):
        lower = b_c + _log1mexp(np.minimum(a_c - b_c, 0.0))
        upper = a_s + _log1mexp(np.minimum(b_s - a_s, 0.0))
    return np.where(b_c < _LOG_HALF, lower, upper)


def log_likelihood(family: Family, data: GroupedData, theta: FloatArray) -> float:
    """The grouped-data log-likelihood (points as densities, bins as probabilities)."""
    with np.errstate(all="ignore"):
        total = float(family.logpdf(data.points, theta).sum()) if data.points.size else 0.0
        if data.counts.size:
            lm = bin_log_mass(family, data.edges, theta)
            used = data.counts > 0
            total += float((data.counts[used] * lm[used]).sum())
    return total if math.isfinite(total) else -math.inf


@dataclass(frozen=True)
class Estimate:
    theta: FloatArray
    loglik: float
    success: bool
    message: str
    evaluations: int


def _qm_objective(family: Family, s: DataSummary, theta: FloatArray, probs: FloatArray) -> float:
    xq = np.interp(probs, s.probs, s.quantiles)
    with np.errstate(all="ignore"):
        lc, ls = family.logcdf_pair(xq, theta)
        z = np.where(lc < _LOG_HALF, special.ndtri(np.exp(lc)), -special.ndtri(np.exp(ls)))
    z = np.clip(np.nan_to_num(z, nan=40.0, posinf=40.0, neginf=-40.0), -40, 40)
    v = float(((z - special.ndtri(probs)) ** 2).sum())
    return v if math.isfinite(v) else 1e12


def quantile_matching(family: Family, s: DataSummary) -> list[FloatArray]:
    """Refined starting points, best first: each crude start nudged to match quantiles."""
    probs = _QM_PROBS[(s.probs[0] <= _QM_PROBS) & (s.probs[-1] >= _QM_PROBS)]
    scored = []
    for t0 in family.start(s):
        if not np.all(np.isfinite(t0)):
            continue
        # A location floor stays where the start put it: quantiles cannot see the density
        # at the minimum, and matching them drags the floor onto it, where the
        # likelihood then has almost no gradient to pull it back.
        free = t0.size - 1 if family.shifted else t0.size
        fixed = t0[free:]

        def objective(t: FloatArray, fixed: FloatArray = fixed) -> float:
            return _qm_objective(family, s, np.concatenate((t, fixed)), probs)

        res = optimize.minimize(
            objective,
            t0[:free],
            method="Nelder-Mead",
            options={"maxiter": (80 if free <= 3 else 40) * free, "xatol": 1e-3, "fatol": 1e-5},
        )
        scored.append((float(res.fun), np.concatenate((np.asarray(res.x, dtype=np.float64), fixed))))
    scored.sort(key=lambda r: r[0])
    return [t for _, t in scored]


def maximise(family: Family, data: GroupedData, starts: list[FloatArray], *, tries: int = 2) -> Estimate:
    """Maximise the grouped likelihood from the best ``tries`` starts; keep the best."""
    if not starts:
        return Estimate(np.empty(0), -math.inf, False, "no usable starting point", 0)
    scale = 1.0 / max(data.n, 1)
    evals = 0

    def nll(t: FloatArray) -> float:
        nonlocal evals
        evals += 1
        v = -log_likelihood(family, data, t) * scale
        return v if math.isfinite(v) else 1e30

    best: Estimate | None = None
    for t0 in starts[:tries]:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            # BFGS, not L-BFGS-B: with two to five parameters its pure-numpy steps cost
            # far less per iteration than L-BFGS-B's compiled core calls do here.
            res = optimize.minimize(nll, t0, method="BFGS", options={"maxiter": 400, "gtol": 1e-6})
            if not res.success or not math.isfinite(res.fun) or res.fun >= 1e29:
                res2 = optimize.minimize(
                    nll, res.x if math.isfinite(res.fun) and res.fun < 1e29 else t0, method="Nelder-Mead",
                    options={"maxiter": 600 * t0.size, "xatol": 1e-7, "fatol": 1e-12},
                )  # fmt: skip
                if res2.fun <= res.fun:
                    res = res2
        theta = np.asarray(res.x, dtype=np.float64)
        ll = log_likelihood(family, data, theta)
        ok = bool(math.isfinite(ll)) and (bool(res.success) or res.nit > 0)
        msg = str(res.message) if not res.success else "converged"
        cand = Estimate(theta, ll, ok, msg, evals)
        if best is None or cand.loglik > best.loglik:
            best = cand
    assert best is not None
    return Estimate(best.theta, best.loglik, best.success, best.message, evals)


def fit_family(family: Family, data: GroupedData) -> Estimate:
    """Quantile-matching starts, then grouped maximum likelihood."""
    starts = quantile_matching(family, summarise(data))
    return maximise(family, data, starts, tries=2 if family.n_params >= 3 else 1)


def out_of_support(sketch: Sketch) -> int:
    """Values at or below zero: outside the support of every positive family."""
    return int(sketch.zero_count + sketch.negative_count)
