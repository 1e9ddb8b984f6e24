"""A distribution known only as counts over intervals: telemetry histograms (numpy only).

A ``Binned`` distribution holds one or more bucket layouts (``buckets.py``) with their
counts. Parts that share a layout add their counts; parts of different layouts are
kept side by side and answered together, never re-binned onto each other (that would
invent where inside a bucket the values were).

It answers the same questions as a ``Sketch`` (``distribution.Distribution``) with the
same contract: the bounds are sure, the point estimates are estimates.

* ``count_bounds(x)``: the fewest and most values that can lie at or below x — buckets
  wholly at or below x count in both, buckets that start at or below x only in the
  second. Exact at every bucket edge.
* ``order_statistic_bounds(r)``: values sure to bracket the r-th smallest value (0-based):
  the lower end of the bucket where the buckets' lower ends first cover r + 1 values,
  and the upper end of the bucket where their upper ends do. For one layout that is the
  bucket holding rank r.
* ``quantile_bounds(q)``: the bucket(s) holding positions floor and ceil of q (n - 1),
  so the interval is sure to hold ``numpy.quantile``'s default (Hyndman & Fan type 7)
  answer on the raw values.
* ``quantile(q)``, ``rank(x)``, ``cdf(x)``: point estimates from a CDF that spreads each
  bucket's count over the bucket, **linearly** for explicit bounds and **log-linearly**
  for exponential buckets (their widths grow in proportion to their position, so equal
  shares of log x is the reading that matches the layout); the mass of a bucket open on
  one side sits at its finite end, an exact zero bucket at 0. The quantile estimate is
  the value where this CDF reaches rank + 1/2 (the mid-rank), kept inside its bound.
"""

from __future__ import annotations

import copy
import math
from collections.abc import Sequence
from functools import cached_property
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from .buckets import INTERPOLATION, BoolArray, Buckets, ExponentialPart, FloatArray, Part, combine
from .provenance import Provenance, quantile_label
from .rank_error import quantile_rank_error

KIND = "binned"


class Binned:
    """Counts over intervals from telemetry histograms, in one unit (see the module text)."""

    exact = False
    nan_count = 0
    inf_count = 0

    def __init__(self, unit: str = "", parts: Sequence[Part] = ()) -> None:
        self.unit = unit
        self.parts: list[Part] = []
        self.provenance = Provenance()
        for p in parts:
            self.add_part(p)

    # ------------------------------------------------------------------ building
    def add_part(self, part: Part) -> None:
        """Add a histogram's counts: onto a part of the same layout, else as a new part."""
        for i, p in enumerate(self.parts):
            if p.key == part.key:
                self.parts[i] = p.plus(part)  # type: ignore[arg-type]
                break
        else:
            self.parts.append(part)
        self._forget()

    def copy(self) -> Binned:
        """An independent copy, like ``Sketch.copy``: parts are frozen, so they are
        shared; the provenance is copied."""
        out = Binned(self.unit)
        out.parts = list(self.parts)
        out.provenance = copy.deepcopy(self.provenance)
        return out

    def merge_many(self, others: Sequence[Binned]) -> None:
        """Fold other binned distributions in (units checked by the caller)."""
        for o in others:
            for p in o.parts:
                self.add_part(p)
            self.provenance.absorb(o.provenance)

    def scaled(self, factor: float, unit: str) -> Binned:
        """The same counts with every edge, extreme and sum times ``factor`` (a unit change)."""
        out = Binned(unit, [p.scaled(factor) for p in self.parts])
        out.provenance = self.provenance
        return out

    def like(self, values: ArrayLike) -> Binned:
        """``values`` counted into this distribution's layouts (for a bootstrap replicate).

        With several parts the values are shared among them in proportion to their counts,
        as the original observations were.
        """
        from .bucketing import fill

        return Binned(self.unit, fill(self.parts, np.asarray(values, dtype=np.float64)))

    def _forget(self) -> None:
        for name in ("_b", "_by_high", "_curve", "count", "interpolation"):
            self.__dict__.pop(name, None)

    # ------------------------------------------------------------------ the buckets
    @cached_property
    def _b(self) -> Buckets:
        if not self.parts:
            e = np.empty(0)
            return Buckets(e, e, e, np.empty(0, dtype=bool), np.empty(0, dtype=bool))
        return combine(self.parts)

    def buckets(self) -> Buckets:
        """Every bucket of every part, as intervals with counts, sorted by their lower ends."""
        return self._b

    @cached_property
    def count(self) -> int:
        return round(sum(p.count for p in self.parts))

    @cached_property
    def interpolation(self) -> str:
        """How point estimates are read inside a bucket: 'linear', 'log-linear', or both."""
        kinds = sorted({INTERPOLATION[p.kind] for p in self.parts})
        return " and ".join(kinds) if kinds else "linear"

    @property
    def layouts(self) -> list[str]:
        return [p.kind for p in self.parts]

    def _extreme(self, which: str) -> float:
        vals = [getattr(p.extremes, which) for p in self.parts if p.count]
        return (
            float(min(vals) if which == "minimum" else max(vals))
            if vals and not any(math.isnan(v) for v in vals)
            else math.nan
        )

    @property
    def min_known(self) -> bool:
        return bool(self.count) and not math.isnan(self._extreme("minimum"))

    @property
    def max_known(self) -> bool:
        return bool(self.count) and not math.isnan(self._extreme("maximum"))

    @property
    def min(self) -> float:
        """The smallest value when the export gave it, else the lowest it can be."""
        if not self.count:
            return math.nan
        return float(self.order_statistic_bounds(np.array(0.0))[0])

    @property
    def max(self) -> float:
        """The largest value when the export gave it, else the highest it can be (may be inf)."""
        if not self.count:
            return math.nan
        return float(self.order_statistic_bounds(np.array(float(self.count - 1)))[1])

    @property
    def total(self) -> float:
        """The exact sum when every part's export gave one, else NaN."""
        vals = [p.extremes.total for p in self.parts if p.count]
        return float(sum(vals)) if vals and not any(math.isnan(v) for v in vals) else math.nan

    @property
    def mean(self) -> float:
        return self.total / self.count if self.count else math.nan

    @property
    def low(self) -> FloatArray:
        """The values known exactly at the low end: the minimum, when given."""
        return np.array([self._extreme("minimum")]) if self.min_known else np.empty(0)

    @property
    def high(self) -> FloatArray:
        return np.array([self._extreme("maximum")]) if self.max_known else np.empty(0)

    @property
    def zero_count(self) -> int:
        """Values known to be exactly 0 (an exponential zero bucket of threshold 0, a [0, 0] bucket)."""
        b = self._b
        return round(float(b.counts[(b.lows == 0.0) & (b.highs == 0.0)].sum()))

    @property
    def negative_count(self) -> int:
        """Values known to be below 0 (buckets that lie wholly below it)."""
        b = self._b
        return round(float(b.counts[b.highs < 0.0].sum()))

    # ------------------------------------------------------------------ sure bounds
    @cached_property
    def _by_high(self) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray, FloatArray]:
        b = self._b
        order = np.argsort(b.highs, kind="stable")
        closed = np.where(b.closed_low, b.counts, 0.0)
        return (
            b.highs[order],
            np.cumsum(b.counts[order]),
            np.cumsum(b.counts),
            b.lows[b.closed_low],
            np.cumsum(closed[b.closed_low]),
        )

    def count_bounds(self, x: ArrayLike) -> tuple[FloatArray, FloatArray]:
        """Fewest and most values that can be <= x (vectorised); equal at bucket edges."""
        xa = np.asarray(x, dtype=np.float64)
        if not self.count:
            return np.zeros(xa.shape), np.zeros(xa.shape)
        b = self._b
        hs, cum_h, cum_l, closed_lows, cum_closed = self._by_high
        sure = _take(cum_h, np.searchsorted(hs, xa, side="right"))
        below = _take(cum_l, np.searchsorted(b.lows, xa, side="left"))
        at = _take(cum_closed, np.searchsorted(closed_lows, xa, side="right")) - _take(
            cum_closed, np.searchsorted(closed_lows, xa, side="left")
        )
        most = below + at
        n = float(self.count)
        if self.min_known:
            sure = np.where(xa >= self._extreme("minimum"), np.maximum(sure, 1.0), sure)
        if self.max_known:
            most = np.where(xa < self._extreme("maximum"), np.minimum(most, n - 1.0), most)
        return np.asarray(sure, dtype=np.float64), np.asarray(np.minimum(most, n), dtype=np.float64)

    def order_statistic_bounds(self, rank: ArrayLike) -> tuple[FloatArray, FloatArray]:
        """Values sure to bracket X_(rank) (0-based ranks, vectorised); see the module text."""
        n = self.count
        r = np.clip(np.asarray(rank, dtype=np.float64), 0, max(n - 1, 0))
        if not n:
            return np.full(r.shape, np.nan), np.full(r.shape, np.nan)
        b = self._b
        hs, cum_h, cum_l, _, _ = self._by_high
        need = r + 1.0
        low = b.lows[np.minimum(np.searchsorted(cum_l, need - 0.5, side="left"), b.lows.size - 1)]
        high = hs[np.minimum(np.searchsorted(cum_h, need - 0.5, side="left"), hs.size - 1)]
        if self.min_known:
            first = r < 0.5
            low = np.where(first, self._extreme("minimum"), low)
            high = np.where(first, self._extreme("minimum"), high)
        if self.max_known:
            last = r > n - 1.5
            low = np.where(last, self._extreme("maximum"), low)
            high = np.where(last, self._extreme("maximum"), high)
        return np.asarray(low, dtype=np.float64), np.asarray(high, dtype=np.float64)

    def low_is_open(self, rank: ArrayLike) -> BoolArray:
        """Whether X_(rank) lies strictly above its lower bound (the bound is an open bucket end,
        as every explicit bucket's lower edge is): equal lower and upper bounds of two sides
        then still order them."""
        n = self.count
        r = np.clip(np.asarray(rank, dtype=np.float64), 0, max(n - 1, 0))
        if not n:
            return np.zeros(r.shape, dtype=bool)
        b = self._b
        _, _, cum_l, _, _ = self._by_high
        k = np.minimum(np.searchsorted(cum_l, r + 0.5, side="left"), b.lows.size - 1)
        out = ~b.closed_low[k]
        if self.min_known:
            out &= r >= 0.5
        return np.asarray(out, dtype=bool)

    def quantile_bounds(self, q: ArrayLike) -> tuple[FloatArray, FloatArray]:
        """[lo, hi] sure to hold ``numpy.quantile(raw, q)`` (type 7) for each q."""
        qa = _check_q(q)
        if not self.count:
            return np.full(qa.shape, np.nan), np.full(qa.shape, np.nan)
        pos = qa * (self.count - 1)
        lo, _ = self.order_statistic_bounds(np.floor(pos))
        _, hi = self.order_statistic_bounds(np.ceil(pos))
        return lo, hi

    # ------------------------------------------------------------------ point estimates
    @cached_property
    def _curve(self) -> tuple[FloatArray, FloatArray, FloatArray, BoolArray]:
        """The estimated CDF as counts at its knots (left and right limits) and per-segment log flags."""
        from .bucketing import estimate_curve

        return estimate_curve(self._b)

    def rank(self, x: ArrayLike) -> FloatArray:
        """Estimated number of values <= x (interpolated inside buckets)."""
        xa = np.asarray(x, dtype=np.float64)
        if not self.count:
            return np.zeros(xa.shape)
        knots, before, at, log = self._curve
        j = np.searchsorted(knots, xa, side="right") - 1
        jc = np.clip(j, 0, knots.size - 1)
        nxt = np.minimum(jc + 1, knots.size - 1)
        k0, k1 = knots[jc], knots[nxt]
        with np.errstate(divide="ignore", invalid="ignore"):
            lin = (xa - k0) / (k1 - k0)
            lg = np.log(np.maximum(xa, 1e-300) / k0) / np.log(k1 / k0)
            t = np.clip(np.where(log[np.minimum(jc, log.size - 1)] if log.size else False, lg, lin), 0, 1)
        inside = np.where(xa == k0, at[jc], at[jc] + (before[nxt] - at[jc]) * np.nan_to_num(t))
        out = np.where(j < 0, 0.0, np.where(j >= knots.size - 1, at[-1], inside))
        return np.asarray(np.clip(out, 0.0, float(self.count)), dtype=np.float64)

    def cdf(self, x: ArrayLike) -> FloatArray:
        if not self.count:
            return np.full(np.shape(x), np.nan)
        return self.rank(x) / self.count

    def value_at(self, position: ArrayLike) -> FloatArray:
        """Estimated value at 0-based positions: where the estimated CDF reaches position + 1/2."""
        pos = np.clip(np.asarray(position, dtype=np.float64), 0, max(self.count - 1, 0))
        if not self.count:
            return np.full(pos.shape, np.nan)
        knots, before, at, log = self._curve
        seq = np.column_stack((before, at)).ravel()
        i = np.searchsorted(seq, pos + 0.5, side="left")
        i = np.clip(i, 0, seq.size - 1)
        j = i // 2
        jump = (i % 2 == 1) | (j == 0)
        prev = np.maximum(j - 1, 0)
        r0, r1 = at[prev], before[j]
        k0, k1 = knots[prev], knots[j]
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.clip(np.nan_to_num((pos + 0.5 - r0) / (r1 - r0)), 0, 1)
            seg_log = log[np.minimum(prev, log.size - 1)] if log.size else np.zeros(j.shape, dtype=bool)
            x = np.where(seg_log, k0 * np.power(k1 / k0, t), k0 + t * (k1 - k0))
        est = np.where(jump, knots[j], x)
        lo, _ = self.order_statistic_bounds(np.floor(pos))
        _, hi = self.order_statistic_bounds(np.ceil(pos))
        return np.asarray(np.clip(est, lo, hi), dtype=np.float64)

    def quantile(self, q: ArrayLike) -> FloatArray:
        qa = _check_q(q)
        if not self.count:
            return np.full(qa.shape, np.nan)
        return self.value_at(qa * (self.count - 1))

    # ------------------------------------------------------------------ errors, knots
    def rank_error_bound(self) -> float:
        """Largest possible |error| / n of a count read from ``rank``: the most a bucket (or
        overlapping buckets of several layouts) can hold on either side of a point inside it.
        Zero at bucket edges, where counts are exact."""
        if not self.count:
            return 0.0
        # Between edges the bounds are flat and the estimate moves: the worst gap is
        # at an edge or just below one.
        x = self.bound_steps()
        lo, hi = self.count_bounds(x)
        r = self.rank(x)
        return float(np.max(np.maximum(r - lo, hi - r)) / self.count)

    def rank_error_at(self, q: ArrayLike) -> FloatArray:
        """Largest possible rank error / n of the quantile estimate at each q."""
        return quantile_rank_error(self, q)

    def cdf_knots(self) -> FloatArray:
        """Every x where the estimated CDF can bend: the finite bucket edges."""
        return self._curve[0].copy() if self.count else np.empty(0)

    def bound_steps(self) -> FloatArray:
        """Every x where the count bounds can step: bucket edges and just below them."""
        k = self.cdf_knots()
        return np.concatenate((k, np.nextafter(k, -np.inf)))

    def levels(self) -> FloatArray:
        """Shares of n at which ``quantile_bounds`` can change: the cumulative shares at edges."""
        if not self.count:
            return np.empty(0)
        _, cum_h, cum_l, _, _ = self._by_high
        return np.unique(np.concatenate(([0.0], cum_h / self.count, cum_l / self.count, [1.0])))

    def summary(self) -> dict[str, Any]:
        qs = (0.5, 0.9, 0.99, 0.999, 0.9999)
        vals = self.quantile(np.array(qs)) if self.count else [math.nan] * len(qs)
        out: dict[str, Any] = {"n": self.count, "unit": self.unit, "kind": KIND, "min": self.min}
        out.update({quantile_label(q): float(v) for q, v in zip(qs, vals, strict=True)})
        out.update({"max": self.max, "mean": self.mean})
        return out

    def exponential_scales(self) -> list[int]:
        return [p.scale for p in self.parts if isinstance(p, ExponentialPart)]


def _take(cum: FloatArray, idx: Any) -> FloatArray:
    """cum[idx - 1], with 0 for idx == 0: the total of the first idx entries."""
    padded = np.concatenate(([0.0], cum))
    return np.asarray(padded[np.asarray(idx)], dtype=np.float64)


def _check_q(q: ArrayLike) -> FloatArray:
    qa = np.asarray(q, dtype=np.float64)
    if np.any((qa < 0) | (qa > 1) | np.isnan(qa)):
        raise ValueError("q must lie in [0, 1].")
    return qa
