"""A sketch as data a likelihood can use: exact values and interval-censored counts.

A sketch no longer holds the values, but it knows, to within its rank error, how many
fall between any two numbers, and it holds the smallest and largest ``tail_size``
values exactly. That is grouped (interval-censored) data plus a few exact
observations (Heitjan 1989, "Inference from grouped continuous data: a review",
*Statistical Science* 4(2)); ``estimate.py`` maximises its likelihood.

Three situations change what an observation *is*, and each is decided here, once:

* **A lattice.** Latencies logged as integer milliseconds (or to three decimals) are
  rounded: a logged 5 is any value in [4.5, 5.5). Fitting the logged numbers as if
  exact biases every fit (a lognormal's median by 10 % on ``ceil(lognormal(1.5, 0.6))``),
  so when every value the sketch holds exactly lies on a lattice of step h, each value
  k counts as the interval [k - h/2, k + h/2] and the middle of the sketch is binned at
  half-lattice points (``detect_lattice``, ``grouped_from_sketch``). scipy fits the same
  likelihood from ``scipy.stats.CensoredData.interval_censored``; the tests compare.
* **An atom at zero** in otherwise continuous values (a timer that reads exactly 0):
  the zeros count as one group "at or below 0" for every family, so a likelihood holds
  them as a probability whichever family is fitted and the AIC of all of them compare
  (positive families give the group a point mass of its own, ``models.py``).
* **Spacings** for a location floor: ``spacings`` turns the exact values into the
  intervals between neighbours, the maximum-product-of-spacings objective of Cheng &
  Amin (1983), which stays bounded where the likelihood of a floor at the minimum
  does not (``shifted.py``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from ..sketch import Sketch
from .family import DataSummary, FloatArray

DEFAULT_BINS = 240
"""Interior bins of the grouped likelihood; more buys almost nothing (Kulldorff 1961,
*Contributions to the theory of estimation from grouped and partially grouped samples*)."""

LATTICE_STEPS = tuple(c * 10.0**k for k in range(6, -10, -1) for c in (5.0, 2.5, 2.0, 1.0))
"""Candidate lattice steps, largest first: 1, 2, 2.5 and 5 times a power of ten."""
MIN_LATTICE_SHARE = 1e-5
"""A step below this share of the data's spread (p10 to p90) changes no fit: continuous."""


@dataclass(frozen=True)
class GroupedData:
    """Exact values (each once, ties repeated) and counts over intervals (low, high]."""

    points: FloatArray
    lows: FloatArray
    highs: FloatArray
    counts: FloatArray
    n: int
    lattice: float | None = None
    """The lattice step the values were read on, or None for continuous values."""
    zero_atom: float = 0.0
    """Exact zeros held as the interval (-inf, 0] (see the module docstring)."""

    @classmethod
    def from_edges(cls, points: FloatArray, edges: FloatArray, counts: FloatArray, n: int) -> GroupedData:
        """Consecutive bins (edges[j], edges[j+1]] holding counts[j]."""
        if edges.size < 2:
            return cls(points, np.empty(0), np.empty(0), np.empty(0), n)
        return cls(points, edges[:-1], edges[1:], counts, n)

    def shifted(self, by: float) -> GroupedData:
        return replace(self, points=self.points - by, lows=self.lows - by, highs=self.highs - by)

    def above(self, threshold: float) -> GroupedData:
        """The values above ``threshold``, as excesses over it (intervals cut at it, linearly)."""
        pts = self.points[self.points > threshold] - threshold
        keep = self.highs > threshold
        lows, highs, counts = self.lows[keep], self.highs[keep], self.counts[keep]
        cut = lows < threshold
        with np.errstate(invalid="ignore", divide="ignore"):
            share = np.where(np.isfinite(lows), (highs - threshold) / (highs - lows), 1.0)
        counts = np.where(cut, counts * share, counts)
        lows = np.where(cut, threshold, lows)
        n = round(float(pts.size + counts.sum()))
        return GroupedData(pts, lows - threshold, highs - threshold, counts, n, self.lattice)

    def without_zero_atom(self) -> GroupedData:
        """The data without the zero group: what a positive family's own part is fitted to."""
        if not self.zero_atom:
            return self
        keep = ~(np.isneginf(self.lows) & (self.highs == 0.0))
        n = round(self.n - self.zero_atom)
        return replace(
            self, lows=self.lows[keep], highs=self.highs[keep], counts=self.counts[keep], n=n, zero_atom=0.0
        )


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


# ---------------------------------------------------------------- lattice
def lattice_evidence(sketch: Sketch) -> FloatArray:
    """Values the sketch is sure were in the data: exact tails and centroid ends."""
    parts = [sketch.low, sketch.high]
    if not sketch.exact and sketch.count:
        lo, hi = sketch.digest.ranges()
        parts += [lo, hi]
    v = np.concatenate(parts)
    return np.unique(v[np.isfinite(v)])


def detect_lattice(sketch: Sketch) -> float | None:
    """The step h of the lattice every value lies on (1 for integer ms), or None.

    Checked on every value the sketch holds for certain (``lattice_evidence``), so one
    value off the lattice - a continuous measurement - rules it out. Only steps of 1, 2,
    2.5 or 5 times a power of ten are tried (the ways instruments round); a step under
    ``MIN_LATTICE_SHARE`` of the spread is ignored, and at least five distinct values
    are needed to call anything a lattice.
    """
    v = lattice_evidence(sketch)
    if v.size < 5:
        return None
    span = float(v[-1] - v[0])
    p10, p90 = sketch.quantile(np.array([0.1, 0.9]))
    spread = float(p90 - p10) or span  # robust to a far outlier; the span if the body is one value
    if not span > 0:
        return None
    for h in LATTICE_STEPS:
        if h > span / 4:
            continue
        if h < MIN_LATTICE_SHARE * spread:
            return None
        r = v / h
        if np.all(np.abs(r - np.round(r)) <= 1e-6 + 1e-12 * np.abs(r)):
            return h
    return None


def _lattice_grouped(sketch: Sketch, h: float, bins: int) -> GroupedData:
    """Every value k as [k - h/2, k + h/2]; the middle of the sketch binned at half-steps."""
    n = sketch.count
    half = h / 2.0
    if sketch.exact:
        ks, reps = np.unique(exact_values(sketch), return_counts=True)
        return GroupedData(np.empty(0), ks - half, ks + half, reps.astype(np.float64), n, h)
    nl, nh = sketch.low.size, sketch.high.size
    inner = sketch.value_at(tail_grid(nl / n, (n - nh) / n, bins) * (n - 1))
    ks = np.unique(np.concatenate((sketch.low, np.round(inner / h) * h, sketch.high)))
    # Count of values <= each lattice point: exact in the buffers and at pure centroids.
    cum = np.maximum.accumulate(np.clip(sketch.rank(ks), 0.0, float(n)))
    cum[-1] = float(n)
    counts = np.diff(np.concatenate(([0.0], cum)))
    lows = np.concatenate(([ks[0] - half], ks[:-1] + half))
    keep = counts > 1e-9
    return GroupedData(np.empty(0), lows[keep], ks[keep] + half, counts[keep], n, h)


# ---------------------------------------------------------------- building
def grouped_from_sketch(
    sketch: Sketch, *, bins: int = DEFAULT_BINS, lattice: float | None = None, zero_atom: bool = False
) -> GroupedData:
    """The sketch as exact tail values plus bins between them (counts from its ranks).

    ``lattice`` (a step from ``detect_lattice``) reads every value as its rounding
    interval; ``zero_atom`` holds the exact zeros as one group (-inf, 0] (only for data
    whose smallest value is 0 and that lie on no lattice).
    """
    n = sketch.count
    if n == 0:
        raise ValueError("the sketch is empty; there is nothing to fit.")
    if lattice:
        return _lattice_grouped(sketch, lattice, bins)
    if sketch.exact:
        data = GroupedData.from_edges(exact_values(sketch), np.empty(0), np.empty(0), n)
    else:
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
        data = GroupedData.from_edges(np.concatenate((low, high)), edges, counts, n)
    return _with_zero_atom(data, sketch.zero_count) if zero_atom and sketch.zero_count else data


def _with_zero_atom(data: GroupedData, zeros: int) -> GroupedData:
    """Move the exact zeros (points, and any a bin starting at 0 holds) to (-inf, 0]."""
    in_points = int(np.count_nonzero(data.points == 0.0))
    points = data.points[data.points != 0.0]
    counts = data.counts.copy()
    first = np.flatnonzero(data.lows == 0.0)
    if first.size and zeros > in_points:
        # A bin (0, e] was counted from the buffer's end at 0: the zeros beyond the
        # buffer are in it.
        counts[first[0]] = max(counts[first[0]] - (zeros - in_points), 0.0)
    lows = np.concatenate(([-np.inf], data.lows))
    highs = np.concatenate(([0.0], data.highs))
    counts = np.concatenate(([float(zeros)], counts))
    return GroupedData(points, lows, highs, counts, data.n, None, float(zeros))


def spacings(data: GroupedData) -> GroupedData:
    """The exact values turned into the intervals between neighbours (product of spacings).

    Each distinct value v (with its ties) becomes the interval from the atom below it
    to v; one more interval runs from the largest value to infinity, so the objective
    has the n + 1 spacings of Cheng & Amin (1983). A value that closes an interval
    already there (the top of the bins) joins it.
    """
    if data.points.size == 0:
        return data
    vals, mult = np.unique(data.points, return_counts=True)
    lows, highs, counts = data.lows, data.highs, data.counts.copy()
    on_top = np.isin(vals, highs)
    for v, m in zip(vals[on_top], mult[on_top], strict=True):
        counts[np.flatnonzero(highs == v)[0]] += m
    vals, mult = vals[~on_top], mult[~on_top]
    ends = np.unique(np.concatenate((vals, highs)))
    prev = np.searchsorted(ends, vals, side="left") - 1
    below = np.where(prev >= 0, ends[np.maximum(prev, 0)], -np.inf)
    top = float(ends[-1])
    return GroupedData(
        np.empty(0),
        np.concatenate((lows, below, [top])),
        np.concatenate((highs, vals, [np.inf])),
        np.concatenate((counts, mult.astype(np.float64), [1.0])),
        data.n,
        data.lattice,
        data.zero_atom,
    )


# ---------------------------------------------------------------- summaries for starts
def summarise(data: GroupedData) -> DataSummary:
    """Quantiles of the grouped data (linear within an interval) and its mean, for starts."""
    xs, cw = _cumulative(data)
    probs = np.array(
        [0.001, 0.01, 0.05, 0.1, 0.1587, 0.25, 0.4, 0.5, 0.6, 0.75, 0.8413, 0.9, 0.95, 0.99, 0.999]
    )
    qs = np.interp(probs * cw[-1], cw, xs)
    lo, hi = _finite_ends(data)
    total = float(data.points.sum() + (0.5 * (lo + hi) * data.counts).sum())
    weight = float(data.points.size + data.counts.sum())
    return DataSummary(probs, qs, total / weight, float(xs[0]), float(xs[-1]))


def _finite_ends(data: GroupedData) -> tuple[FloatArray, FloatArray]:
    """Interval ends with an infinite side moved onto the finite one."""
    lo = np.where(np.isfinite(data.lows), data.lows, data.highs)
    hi = np.where(np.isfinite(data.highs), data.highs, lo)
    return lo, hi


def _cumulative(data: GroupedData) -> tuple[FloatArray, FloatArray]:
    """(x, number of values <= x) at every point and interval end, piecewise linear."""
    lo, hi = _finite_ends(data)
    xs = np.concatenate((data.points, lo, hi))
    w = np.concatenate((np.ones(data.points.size), np.zeros(lo.size), data.counts))
    order = np.argsort(xs, kind="stable")
    return xs[order], np.cumsum(w[order])
