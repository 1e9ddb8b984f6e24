"""The sketch of one numeric field: a t-digest, exact tails, counts and provenance.

Quantiles follow ``numpy.quantile``'s default definition (linear interpolation between
order statistics, Hyndman & Fan 1996 type 7): the answer is at 0-based sorted position
``q * (n - 1)``. Positions that fall among the ``tail_size`` smallest or largest values
are answered from exact buffers, so the minimum, the maximum and the extreme tail
(p99.99 and beyond on ordinary file sizes) are exact, not interpolated; a sketch of at
most ``2 * tail_size`` values is exact everywhere.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .digest import DEFAULT_COMPRESSION, TDigest

FloatArray = NDArray[np.float64]

DEFAULT_TAIL = 1024
MAX_TAIL = 1 << 20
EXAMPLES_KEPT = 5
"""How many example locations a skip reason keeps (the first ones seen)."""


@dataclass
class SkipTally:
    """Rows passed over for one reason: how many, and where the first ones were."""

    count: int = 0
    examples: list[str] = dataclasses.field(default_factory=list)

    def add(self, count: int, examples: list[str]) -> None:
        self.count += count
        room = EXAMPLES_KEPT - len(self.examples)
        if room > 0:
            self.examples.extend(examples[:room])


@dataclass
class Provenance:
    """Where the values came from; merged sketches keep every source they saw."""

    sources: list[str] = dataclasses.field(default_factory=list)
    field: str = ""
    lines_read: int = 0
    rows_read: int = 0
    skipped: dict[str, SkipTally] = dataclasses.field(default_factory=dict)
    time_first: str | None = None
    time_last: str | None = None
    partial: str | None = None
    """Why the scan stopped early (interrupted, corrupt input), or None when complete."""

    def skip(self, reason: str, count: int, examples: list[str]) -> None:
        if count:
            self.skipped.setdefault(reason, SkipTally()).add(count, examples)

    @property
    def skipped_total(self) -> int:
        return sum(t.count for t in self.skipped.values())


class Sketch:
    """A mergeable summary of one numeric field in one unit.

    ``add`` takes float64 arrays; NaN and infinities are counted (``nan_count``,
    ``inf_count``) and kept out of the digest, negative values are counted and kept.
    """

    def __init__(
        self,
        unit: str = "",
        *,
        compression: float = DEFAULT_COMPRESSION,
        tail_size: int = DEFAULT_TAIL,
        scale: str = "k1",
    ) -> None:
        if not 1 <= tail_size <= MAX_TAIL:
            # The exact tails are kept in memory whole: a bound keeps a sketch small.
            raise ValueError(f"tail_size must lie between 1 and {MAX_TAIL}, got {tail_size!r}.")
        self.unit = unit
        self.tail_size = int(tail_size)
        self.digest = TDigest(compression, scale)
        self.count = 0
        self.total = 0.0
        self.nan_count = 0
        self.inf_count = 0
        self.negative_count = 0
        self.zero_count = 0
        self.low: FloatArray = np.empty(0)
        """The ``tail_size`` smallest values, sorted."""
        self.high: FloatArray = np.empty(0)
        """The ``tail_size`` largest values, sorted."""
        self.provenance = Provenance()
        self.merge_slack = 0.0
        """Rank error (in positions) inherited from merged inputs; see rank_error_bound."""

    @property
    def compression(self) -> float:
        return self.digest.compression

    # ------------------------------------------------------------------ building
    def add(self, values: ArrayLike) -> None:
        """Fold in a batch of values; NaN and infinities are counted, not sketched."""
        arr = np.asarray(values, dtype=np.float64).ravel()
        if arr.size == 0:
            return
        # A finite sum proves every value finite: one pass instead of two on the
        # common path (a sum that overflows just takes the careful path).
        with np.errstate(over="ignore", invalid="ignore"):
            total = float(arr.sum())
        if not math.isfinite(total):
            finite = np.isfinite(arr)
            bad = arr[~finite]
            nans = int(np.count_nonzero(np.isnan(bad)))
            self.nan_count += nans
            self.inf_count += bad.size - nans
            arr = arr[finite]
            if arr.size == 0:
                return
            with np.errstate(over="ignore"):
                total = float(arr.sum())  # inf only if huge finite values overflow
        self.count += arr.size
        self.total += total
        self.negative_count += int(np.count_nonzero(arr < 0))
        self.zero_count += int(np.count_nonzero(arr == 0))
        self.digest.add(arr)
        self._fold_tails(arr, arr)

    def _fold_tails(self, low_in: FloatArray, high_in: FloatArray) -> None:
        """Keep the ``tail_size`` smallest and largest values seen.

        Once a buffer is full only values strictly beyond its innermost entry can
        change it (an equal value would replace an equal value), so one comparison pass
        leaves a handful of candidates to partition instead of the whole batch.
        """
        k = self.tail_size
        if self.low.size >= k:
            low_in = low_in[low_in < self.low[-1]]
        if low_in.size:
            lo = np.concatenate((self.low, low_in))
            if lo.size > k:
                lo = np.partition(lo, k - 1)[:k]
            self.low = np.sort(lo)
        if self.high.size >= k:
            high_in = high_in[high_in > self.high[0]]
        if high_in.size:
            hi = np.concatenate((self.high, high_in))
            if hi.size > k:
                hi = np.partition(hi, hi.size - k)[hi.size - k :]
            self.high = np.sort(hi)

    def merge(self, other: Sketch) -> None:
        """Fold ``other`` into this sketch (same unit checked by the caller)."""
        # Centroids of different inputs interleave and may overlap in value once
        # regrouped, so the error each single-stream input had is carried forward
        # (ranks add). Only the leaves' own errors are summed: counting every
        # intermediate merge's bound again would grow the slack quadratically in a
        # left fold (10 merged copies: 2.3% of n) while the measured error stays at
        # single-digest size; the tree test in tests/test_sketch_bound.py checks that
        # this still covers the error on data built to break it.
        slack = self._leaf_slack() + other._leaf_slack()
        means, weights, pure = other.digest.centroids()
        self.digest.add_centroids(means, weights, pure)
        self.count += other.count
        self.total += other.total
        self.nan_count += other.nan_count
        self.inf_count += other.inf_count
        self.negative_count += other.negative_count
        self.zero_count += other.zero_count
        self.tail_size = max(self.tail_size, other.tail_size)
        self._fold_tails(other.low, other.high)
        self.merge_slack = slack if not self.exact else 0.0
        a, b = self.provenance, other.provenance
        a.sources.extend(s for s in b.sources if s not in a.sources)
        a.field = a.field or b.field
        a.lines_read += b.lines_read
        a.rows_read += b.rows_read
        for reason, tally in b.skipped.items():
            a.skip(reason, tally.count, tally.examples)
        firsts = [t for t in (a.time_first, b.time_first) if t]
        lasts = [t for t in (a.time_last, b.time_last) if t]
        a.time_first = min(firsts) if firsts else None
        a.time_last = max(lasts) if lasts else None
        a.partial = "; ".join(p for p in (a.partial, b.partial) if p) or None

    # ------------------------------------------------------------------ queries
    @property
    def min(self) -> float:
        if not self.count:
            return float("nan")
        return float(self.low[0]) if self.low.size else float(self.digest.quantile_at(np.array(0.0)))

    @property
    def max(self) -> float:
        if not self.count:
            return float("nan")
        if self.high.size:
            return float(self.high[-1])
        return float(self.digest.quantile_at(np.array(float(self.count - 1))))

    @property
    def mean(self) -> float:
        return self.total / self.count if self.count else float("nan")

    @property
    def exact(self) -> bool:
        """True when every value is held exactly (n <= 2 * tail_size)."""
        return self.count <= 2 * self.tail_size and self.count <= self.low.size + self.high.size

    def _exact_values(self) -> FloatArray:
        """All values, sorted, when ``exact`` (the buffers overlap by nl + nh - n)."""
        overlap = self.low.size + self.high.size - self.count
        return np.concatenate((self.low, self.high[overlap:])) if self.count > self.low.size else self.low

    def quantile(self, q: ArrayLike) -> FloatArray:
        """Quantiles for q in [0, 1] (vectorised); NaN when the sketch is empty."""
        qa = np.asarray(q, dtype=np.float64)
        if np.any((qa < 0) | (qa > 1) | np.isnan(qa)):
            raise ValueError("q must lie in [0, 1].")
        if self.count == 0:
            return np.full(qa.shape, np.nan)
        return self.value_at(qa * (self.count - 1))

    def value_at(self, position: ArrayLike) -> FloatArray:
        """Value at 0-based fractional sorted positions in [0, n - 1]."""
        pos = np.clip(np.asarray(position, dtype=np.float64), 0, self.count - 1)
        n, nl, nh = self.count, self.low.size, self.high.size
        if self.exact:
            # The buffers hold every value, also the seam between them.
            return np.asarray(np.interp(pos, np.arange(n, dtype=float), self._exact_values()))
        out = self.digest.quantile_at(pos) if self.count > nl else np.zeros(pos.shape)
        if nl and nh:
            # Between the buffers the answer is known to lie between their inner ends;
            # clipping keeps the quantile function monotone across the seams.
            out = np.clip(out, self.low[-1], self.high[0])
        # Exact where both neighbouring order statistics are in a buffer.
        in_low = np.ceil(pos) <= nl - 1
        in_high = np.floor(pos) >= n - nh
        if nl:
            out = np.where(in_low, np.interp(pos, np.arange(nl, dtype=float), self.low), out)
        if nh:
            start = n - nh
            out = np.where(in_high, np.interp(pos - start, np.arange(nh, dtype=float), self.high), out)
        return np.asarray(out, dtype=np.float64)

    def rank(self, x: ArrayLike) -> FloatArray:
        """Number of values <= x (fractional where interpolated)."""
        xa = np.asarray(x, dtype=np.float64)
        n = self.count
        if n == 0:
            return np.zeros(xa.shape)
        if self.exact:
            return np.searchsorted(self._exact_values(), xa, side="right").astype(np.float64)
        out = self.digest.rank_of(xa) if n > self.low.size else np.zeros(xa.shape)
        if self.low.size and self.high.size:
            out = np.clip(out, self.low.size, n - self.high.size)  # as in value_at
        # Exact below the largest buffered low value: everything else is >= it.
        if self.low.size:
            exact_low = np.searchsorted(self.low, xa, side="right").astype(float)
            out = np.where(xa < self.low[-1], exact_low, out)
        if self.high.size:
            above = self.high.size - np.searchsorted(self.high, xa, side="right")
            out = np.where(xa >= self.high[0], n - above, out)
        return np.clip(out, 0, n)

    def cdf(self, x: ArrayLike) -> FloatArray:
        """Empirical CDF, P(X <= x), vectorised; right-continuous at repeated values."""
        if self.count == 0:
            return np.full(np.shape(x), np.nan)
        return self.rank(x) / self.count

    def _leaf_slack(self) -> float:
        """Positions of error inherited from single-stream inputs (see ``merge``)."""
        if self.exact:
            return 0.0
        if self.merge_slack > 0:
            return self.merge_slack
        per = self._pair_bounds()
        return float(per.max()) if per.size else 0.0

    def rank_error_bound(self) -> float:
        """Largest possible |rank error| / n of an interpolated quantile or CDF answer.

        Why this form: between the knots of two adjacent centroids a and b the answer
        v lies between their means, so at least the values before a (and all of a when
        a is pure) are <= v and none after b (nor b itself when pure) are < v. The
        target position can therefore be off by at most ``w_a + (w_b - 1) / 2`` or
        ``(w_a - 1) / 2 + w_b``; the bound is the largest such figure over the pairs
        that answer queries outside the exact tails, over n. It is reached only when
        a centroid straddles a gap in the data (two modes with nothing between them,
        measured at 1.3 x the heaviest centroid); on smooth data the error is far
        smaller, about 3 sqrt(w) / (2 n) (``benchmarks/sketch_accuracy.py``,
        ``tests/test_sketch_bound.py``). The pair argument needs centroids that do not
        overlap in value, true within one stream; a merge can break that, so a merged
        sketch adds the bounds its inputs had (``merge_slack``, kept in the file).
        Zero when the sketch is exact. The comparison code widens intervals by it.
        """
        per = self._pair_bounds()
        if per.size == 0:
            return 0.0
        return float((per.max() + self.merge_slack) / self.count)

    def rank_error_at(self, q: ArrayLike) -> FloatArray:
        """The same bound, for the pair of centroids that answers each q (0 where exact)."""
        qa = np.asarray(q, dtype=np.float64)
        per = self._pair_bounds()
        if per.size == 0:
            return np.zeros(qa.shape)
        pos = qa * (self.count - 1)
        knot_pos, _ = self.digest.knots()
        j = np.clip(np.searchsorted(knot_pos, pos, side="right") - 1, 0, knot_pos.size - 2)
        # Knots come in (first, last) pairs per centroid: even j is inside a centroid.
        pair = np.clip((j - 1) // 2, 0, per.size - 1)
        inside = j % 2 == 0
        _, w, pure = self.digest.centroids()
        own = np.where(pure, 0.0, w)[j // 2]
        err = np.where(inside & (own == 0), 0.0, per[pair]) + self.merge_slack
        nl, nh, n = self.low.size, self.high.size, self.count
        exact = (np.ceil(pos) <= nl - 1) | (np.floor(pos) >= n - nh)
        return np.where(exact, 0.0, err) / n

    def _pair_bounds(self) -> FloatArray:
        """Per adjacent centroid pair: the worst position error between their knots."""
        if self.exact or self.count == 0:
            return np.empty(0)
        _, w, p = self.digest.centroids()
        if w.size < 2:
            return np.zeros(1) if w.size == 0 or p[0] else np.array([float(w[0])])
        wa, wb, pa, pb = w[:-1], w[1:], p[:-1], p[1:]
        # From a's last knot to b's first knot, against the rank interval v can have.
        reach_up = np.where(pa, 0.0, (wa - 1.0) / 2.0) + np.where(pb, 0.0, wb)
        reach_down = np.where(pa, 0.0, wa) + np.where(pb, 0.0, (wb - 1.0) / 2.0)
        per = np.maximum(reach_up, reach_down)
        # Pairs wholly inside the exact tails never answer a query.
        before = np.cumsum(w) - w
        first_knot = np.where(p, before, before + (w - 1.0) / 2.0)
        last_knot = np.where(p, before + w - 1.0, first_knot)
        lo_edge, hi_edge = self.low.size - 1, self.count - self.high.size
        used = (first_knot[1:] > lo_edge) & (last_knot[:-1] < hi_edge)
        return np.where(used, per, 0.0)

    def summary(self) -> dict[str, Any]:
        """The fields every view shows, as plain numbers."""
        qs = (0.5, 0.9, 0.99, 0.999, 0.9999)
        vals = self.quantile(np.array(qs)) if self.count else [float("nan")] * len(qs)
        out: dict[str, Any] = {"n": self.count, "unit": self.unit, "min": self.min}
        out.update({_label(q): float(v) for q, v in zip(qs, vals, strict=True)})
        out.update({"max": self.max, "mean": self.mean})
        return out


def _label(q: float) -> str:
    """0.999 -> 'p99.9'."""
    s = f"{q * 100:.6f}".rstrip("0").rstrip(".")
    return f"p{s}"


def quantile_label(q: float) -> str:
    """The trade's name for a quantile: 0.5 -> 'p50', 0.9999 -> 'p99.99'."""
    return _label(q)


@dataclass
class SketchSet:
    """Named sketches that belong together (groups of ``--by``, before/after)."""

    sketches: dict[str, Sketch] = dataclasses.field(default_factory=dict)
    unassigned: dict[str, SkipTally] = dataclasses.field(default_factory=dict)
    """Rows read but given to no sketch, by reason: a missing or unreadable time when the
    sketches are cut by time (``before``/``after``, windows), a line too long to read a
    group from. Counted here so that every row read is in a sketch or counted."""

    def __getitem__(self, name: str) -> Sketch:
        return self.sketches[name]

    def names(self) -> list[str]:
        return list(self.sketches)
