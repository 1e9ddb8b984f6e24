"""The arithmetic behind ``Binned``'s point estimates, and counting values into its layouts.

``estimate_curve`` builds the estimated CDF (the reading of ``binned.py``'s module text)
as counts at the finite bucket edges, with its left and right limits there (an exact
zero bucket, or the mass of an open-ended bucket, is a jump) and, per segment between
edges, whether it is read in log x. ``fill`` counts raw values into a distribution's
own layouts: a bootstrap replicate drawn from a model goes the way the data went.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
from numpy.typing import NDArray

from .buckets import Buckets, ExplicitPart, ExponentialPart, Extremes, FloatArray, Part

IntArray = NDArray[np.int64]


def estimate_curve(b: Buckets) -> tuple[FloatArray, FloatArray, FloatArray, NDArray[np.bool_]]:
    """(knots, count just below each knot, count at it, log flag per segment)."""
    used = b.counts > 0
    lows, highs, counts, log = b.lows[used], b.highs[used], b.counts[used], b.log[used]
    fin_lo, fin_hi = np.isfinite(lows), np.isfinite(highs)
    # A bucket with no width, or open on one side, is a point mass at its finite end.
    point = (lows == highs) | ~fin_lo | ~fin_hi
    where = np.where(fin_lo, lows, highs)
    where = np.where(~fin_lo & ~fin_hi, 0.0, where)
    spread = ~point
    ends = np.concatenate((lows[fin_lo], highs[fin_hi], where[point]))
    knots = np.unique(ends) if ends.size else np.zeros(1)

    # Right-continuous count at each knot: points at or below it, spread buckets ended by it,
    # and the share of the spread buckets that straddle it.
    p_at, p_c = where[point], counts[point]
    order = np.argsort(p_at, kind="stable")
    p_cum = np.concatenate(([0.0], np.cumsum(p_c[order])))
    points_le = p_cum[np.searchsorted(p_at[order], knots, side="right")]
    points_lt = p_cum[np.searchsorted(p_at[order], knots, side="left")]
    s_lo, s_hi, s_c, s_log = lows[spread], highs[spread], counts[spread], log[spread]
    order = np.argsort(s_hi, kind="stable")
    s_cum = np.concatenate(([0.0], np.cumsum(s_c[order])))
    done = s_cum[np.searchsorted(s_hi[order], knots, side="right")]
    partial = np.zeros(knots.size)
    first = np.searchsorted(knots, s_lo, side="right")
    last = np.searchsorted(knots, s_hi, side="left")
    inside = np.maximum(last - first, 0)
    if inside.sum():
        which = np.repeat(np.arange(s_lo.size), inside)
        offsets = np.arange(which.size) - np.repeat(np.cumsum(inside) - inside, inside)
        k_idx = first[which] + offsets
        share = _share(knots[k_idx], s_lo[which], s_hi[which], s_log[which])
        np.add.at(partial, k_idx, s_c[which] * share)
    at = points_le + done + partial
    before = at - (points_le - points_lt)

    # Segment j (knots[j], knots[j+1]) is read in log x when only log-read buckets cover it.
    n_seg = max(knots.size - 1, 0)
    cover_lin, cover_log = np.zeros(n_seg + 1), np.zeros(n_seg + 1)
    s0 = np.searchsorted(knots, s_lo, side="left")
    s1 = np.searchsorted(knots, s_hi, side="left")
    np.add.at(cover_lin, s0[~s_log], 1)
    np.add.at(cover_lin, s1[~s_log], -1)
    np.add.at(cover_log, s0[s_log], 1)
    np.add.at(cover_log, s1[s_log], -1)
    seg_log = (np.cumsum(cover_lin)[:n_seg] == 0) & (np.cumsum(cover_log)[:n_seg] > 0) & (knots[:n_seg] > 0)
    return knots, before, at, seg_log


def _share(x: FloatArray, lo: FloatArray, hi: FloatArray, log: NDArray[np.bool_]) -> FloatArray:
    """Share of a bucket's count at or below x under its reading (linear or log-linear)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        lin = (x - lo) / (hi - lo)
        lg = np.log(x / lo) / np.log(hi / lo)
    return np.asarray(np.clip(np.where(log, lg, lin), 0.0, 1.0), dtype=np.float64)


# ---------------------------------------------------------------- counting values in
def fill(parts: list[Part], values: FloatArray) -> list[Part]:
    """``values`` counted into the layouts of ``parts``, shared among them by their counts."""
    weights = np.array([p.count for p in parts], dtype=np.float64)
    if not parts or not weights.sum():
        return []
    cuts = np.round(np.cumsum(weights) / weights.sum() * values.size).astype(np.int64)
    out, start = [], 0
    for part, stop in zip(parts, cuts, strict=True):
        chunk = values[start:stop]
        start = stop
        if chunk.size:
            out.append(_counted(part, chunk))
    return out


def _extremes_like(part: Part, v: FloatArray) -> Extremes:
    """The extremes the original export gave, now of ``v``."""
    ex = part.extremes
    return Extremes(
        float(v.min()) if not math.isnan(ex.minimum) else math.nan,
        float(v.max()) if not math.isnan(ex.maximum) else math.nan,
        float(v.sum()) if not math.isnan(ex.total) else math.nan,
    )


def _counted(part: Part, v: FloatArray) -> Part:
    if isinstance(part, ExplicitPart):
        if math.isfinite(part.floor):
            v = np.maximum(v, part.floor)
        idx = np.searchsorted(part.bounds, v, side="left")  # (b[i-1], b[i]] -> i
        counts = np.bincount(idx, minlength=part.bounds.size + 1).astype(np.float64)
        return ExplicitPart(part.bounds, counts, part.floor, _extremes_like(part, v))
    return _counted_exponential(part, v)


def exponential_index(x: FloatArray, scale: int) -> IntArray:
    """The bucket index i with base^i < x <= base^(i+1), base = 2^(2^-scale), for x > 0.

    From the mapping of the OpenTelemetry metrics data model (exponential buckets):
    i = ceil(log2(x) * 2^scale) - 1, computed in log2 and nudged one bucket where a
    rounding error put x outside the bucket's own edges.
    """
    k = float(2.0**scale)
    i = (np.ceil(np.log2(x) * k) - 1).astype(np.int64)
    lo = np.exp2(i / k)
    hi = np.exp2((i + 1) / k)
    i = np.where(x <= lo, i - 1, np.where(x > hi, i + 1, i))
    return np.asarray(i, dtype=np.int64)


def _counted_exponential(part: ExponentialPart, v: FloatArray) -> ExponentialPart:
    x = v / part.factor
    t = part.zero_threshold
    zero = np.abs(x) <= t
    pos, neg = x[(x > 0) & ~zero], -x[(x < 0) & ~zero]

    def counts(a: FloatArray) -> tuple[int, FloatArray]:
        if not a.size:
            return 0, np.empty(0)
        idx = exponential_index(a, part.scale)
        lo = int(idx.min())
        return lo, np.bincount(idx - lo).astype(np.float64)

    p_off, p = counts(pos)
    n_off, n = counts(neg)
    return replace(
        part,
        positive_offset=p_off,
        positive=p,
        negative_offset=n_off,
        negative=n,
        zero_count=float(np.count_nonzero(zero)),
        extremes=_extremes_like(part, v),
    )
