"""The sketch of one numeric field: a t-digest, exact tails, counts and provenance.

Quantiles follow ``numpy.quantile``'s default definition (linear interpolation between
order statistics, Hyndman & Fan 1996 type 7): the answer is at 0-based sorted position
``q * (n - 1)``. Positions that fall among the ``tail_size`` smallest or largest values
are answered from exact buffers, so the minimum, the maximum and the extreme tail
(p99.99 and beyond on ordinary file sizes) are exact, not interpolated; a sketch of at
most ``2 * tail_size`` values is exact everywhere.
"""

from __future__ import annotations

import copy
import dataclasses
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .digest import DEFAULT_COMPRESSION, TDigest
from .invariants import check_sketch
from .provenance import EXAMPLES_KEPT as EXAMPLES_KEPT
from .provenance import Provenance, SkipTally, quantile_label
from .rank_error import quantile_rank_error
from .sums import ZERO, Scaled, add_scaled, scale_scaled
from .tails import Side, fold_tails

if TYPE_CHECKING:
    from .binned import Binned

FloatArray = NDArray[np.float64]

DEFAULT_SCALE = "k1-ladder"
"""k1 with fine centroids around the ladder's quantiles (``scale.py`` says why)."""

DEFAULT_TAIL = 512
MAX_TAIL = 1 << 20


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
        scale: str = DEFAULT_SCALE,
    ) -> None:
        if not 1 <= tail_size <= MAX_TAIL:
            # The exact tails are kept in memory whole: a bound keeps a sketch small.
            raise ValueError(f"tail_size must lie between 1 and {MAX_TAIL}, got {tail_size!r}.")
        self.unit = unit
        self.tail_size = int(tail_size)
        self.digest = TDigest(compression, scale)
        self.count = 0
        self._base: Scaled = ZERO
        """Sum of values that came in by merges and loads, as ``(total, exponent)`` of
        :mod:`.sums` (values added one by one are summed by the digest)."""
        self.nan_count = 0
        self.inf_count = 0
        self.negative_count = 0
        self.zero_count = 0
        self.low: FloatArray = np.empty(0)
        """The ``tail_size`` smallest values, sorted."""
        self.high: FloatArray = np.empty(0)
        """The ``tail_size`` largest values, sorted."""
        self.provenance = Provenance()

    @property
    def compression(self) -> float:
        return self.digest.compression

    @property
    def total(self) -> float:
        """Sum of the finite values divided by ``2 ** sum_exponent``. Raw values are summed
        by the digest in fixed blocks, so the figure does not depend on how a scan
        batched them."""
        return self._sum()[0]

    @property
    def sum_exponent(self) -> int:
        """0, or the power of two the sum is divided by (values near the float limit)."""
        return self._sum()[1]

    def _sum(self) -> Scaled:
        return add_scaled(self._base, self.digest.raw_sum())

    def set_sum(self, total: float, exponent: int = 0) -> None:
        """Make the sum ``total * 2 ** exponent`` (the loader: a saved sketch's sum)."""
        raw = self.digest.raw_sum()
        self._base = add_scaled((total, exponent), (-raw[0], raw[1]))

    # ------------------------------------------------------------------ building
    def add(self, values: ArrayLike) -> None:
        """Fold in a batch of values; NaN and infinities are counted, not sketched."""
        arr = np.asarray(values, dtype=np.float64).ravel()
        if arr.size == 0:
            return
        # A finite sum proves every value finite: one pass instead of two on the
        # common path (a sum that overflows just takes the careful path).
        with np.errstate(over="ignore", invalid="ignore"):
            finite_sum = float(arr.sum())
        if not math.isfinite(finite_sum):
            finite = np.isfinite(arr)
            bad = arr[~finite]
            nans = int(np.count_nonzero(np.isnan(bad)))
            self.nan_count += nans
            self.inf_count += bad.size - nans
            arr = arr[finite]
            if arr.size == 0:
                return
        self.count += arr.size
        self.negative_count += int(np.count_nonzero(arr < 0))
        self.zero_count += int(np.count_nonzero(arr == 0))
        self.digest.add(arr)
        self._fold_tails(arr, arr)

    def add_sum(self, value: float, exponent: int) -> None:
        """Add ``value * 2 ** exponent`` to the sum without overflowing.

        Values near the float64 limit (a damaged field reading 1.7e308) have a sum no
        float holds, though their mean is an ordinary number (:mod:`.sums`).
        """
        self._base = add_scaled(self._base, (value, exponent))

    def scale_sum(self, factor: float) -> None:
        """The merged part of the sum times ``factor`` (a change of unit; the digest
        scales its own raw sum in ``scale_values``), rescaled when it would overflow."""
        self._base = scale_scaled(self._base, factor)

    def _fold_tails(self, low_in: FloatArray, high_in: FloatArray) -> None:
        """Keep the ``tail_size`` smallest and largest values seen (``low_in``/``high_in``:
        every value of a batch, or at least every value beyond ``fold_tails``'s cut).

        Once a buffer is full only values strictly beyond its innermost entry can
        change it (an equal value would replace an equal value), so one comparison pass
        leaves a handful of candidates to partition instead of the whole batch.
        """
        k = self.tail_size
        before = self.count - low_in.size  # the batch is already counted
        if self.low.size >= k:  # full: an equal value would only replace an equal one
            low_in = low_in[low_in < self.low[-1]]
        if self.high.size >= k:
            high_in = high_in[high_in > self.high[0]]
        if not low_in.size and not high_in.size:
            return
        self.low, self.high = fold_tails(
            [(self.low, before <= self.low.size), (low_in, True)],
            [(self.high, before <= self.high.size), (high_in, True)],
            self.tail_size,
        )

    def copy(self) -> Sketch:
        """An independent sketch in the same state, for a reader beside a running scan.

        Arrays are never changed in place here or in the digest (``TDigest.copy``), so
        they are shared; the provenance is copied. Cheaper than merging into a fresh
        sketch, which regrouped every centroid: the screen's copy of each sketch, twice
        a second, was a sixth of the demo's work.
        """
        out = Sketch.__new__(Sketch)
        out.__dict__.update(self.__dict__)
        out.digest = self.digest.copy()
        out.provenance = copy.deepcopy(self.provenance)
        return out

    def merge(self, other: Sketch) -> None:
        """Fold ``other`` into this sketch (same unit checked by the caller)."""
        self.merge_many([other])

    def merge_many(self, others: Sequence[Sketch]) -> None:
        """Fold several sketches in with one regroup of all their centroids.

        Centroids keep their value ranges through the merge, so the bounds of
        ``count_bounds`` and ``order_statistic_bounds`` stay valid however the inputs'
        centroids interleave; nothing is carried as slack.
        """
        self.low, self.high = fold_tails(
            [s.tail_side(low=True) for s in (self, *others)],
            [s.tail_side(low=False) for s in (self, *others)],
            max(self.tail_size, *(o.tail_size for o in others)) if others else self.tail_size,
        )
        parts = [o.digest for o in others if o.count]
        if parts:
            cols = [d.centroids() for d in parts]
            spans = [d.ranges() for d in parts]
            self.digest.add_centroids(
                np.concatenate([c[0] for c in cols]),
                np.concatenate([c[1] for c in cols]),
                np.concatenate([c[2] for c in cols]),
                (np.concatenate([r[0] for r in spans]), np.concatenate([r[1] for r in spans])),
            )
        for other in others:
            self._absorb_counts(other)

    def _absorb_counts(self, other: Sketch) -> None:
        """Everything of ``other`` but its centroids: counts, tails, provenance."""
        self.count += other.count
        self.add_sum(other.total, other.sum_exponent)
        self.nan_count += other.nan_count
        self.inf_count += other.inf_count
        self.negative_count += other.negative_count
        self.zero_count += other.zero_count
        self.tail_size = max(self.tail_size, other.tail_size)
        self.provenance.absorb(other.provenance)

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
        if not self.count:
            return float("nan")
        total, exponent = self._sum()  # one read of the digest's raw sum, not two
        try:
            mean = math.ldexp(total / self.count, exponent)
        except OverflowError:  # rounding of a sum of values at the float limit
            mean = math.copysign(math.inf, total)
        # Rounding of a sum of values at the float limit must not step past them.
        return min(max(mean, self.min), self.max) if self.low.size and self.high.size else mean

    def check(self) -> None:
        """Raise ValueError, in one sentence naming it, when the sketch is inconsistent
        (unsorted tails, tails outside [min, max], weights not adding up to n, NaN or
        infinity in the arrays, quantiles that fall). The reference t-digest asserts
        such invariants after its merges; the loader runs this on every file and the
        tests after every merge (``invariants.py``)."""
        check_sketch(self)

    @property
    def exact(self) -> bool:
        """True when every value is held exactly (n <= 2 * tail_size)."""
        return self.count <= 2 * self.tail_size and self.count <= self.low.size + self.high.size

    def tail_side(self, *, low: bool) -> Side:
        """One exact tail for a merge, and whether it holds every value of this sketch
        (an exact sketch offers all its values: its two buffers together hold them)."""
        if self.exact and self.count:
            return self._exact_values(), True
        buf = self.low if low else self.high
        return buf, self.count <= buf.size

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

    # ------------------------------------------------------------------ bounds
    def _layout(self) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
        """Centroid lows and highs, each sorted, with the weights in the same orders.

        Ranges are clipped to [min, max]: every value lies there, and a centroid whose
        range was guessed from its neighbours (an import, an old file) may reach past.
        """
        _, w, _ = self.digest.centroids()
        lo, hi = self.digest.ranges()
        lo, hi = np.clip(lo, self.min, self.max), np.clip(hi, self.min, self.max)
        i, j = np.argsort(lo, kind="stable"), np.argsort(hi, kind="stable")
        return lo[i], w[i], hi[j], w[j]

    def count_bounds(self, x: ArrayLike) -> tuple[FloatArray, FloatArray]:
        """Smallest and largest possible number of values <= x (vectorised).

        Valid for any centroid layout: a centroid whose largest value is <= x counts
        whole in the lower bound, one whose smallest value is <= x counts whole in the
        upper bound, and the exact buffers settle every x below the largest buffered
        low value or at or above the smallest buffered high one. Equal where exact.
        """
        xa = np.asarray(x, dtype=np.float64)
        n, nl, nh = self.count, self.low.size, self.high.size
        if n == 0:
            return np.zeros(xa.shape), np.zeros(xa.shape)
        if self.exact:
            c = np.searchsorted(self._exact_values(), xa, side="right").astype(np.float64)
            return c, c.copy()
        lo_s, lo_w, hi_s, hi_w = self._layout()
        at_most = np.concatenate(([0.0], np.cumsum(lo_w)))[np.searchsorted(lo_s, xa, side="right")]
        at_least = np.concatenate(([0.0], np.cumsum(hi_w)))[np.searchsorted(hi_s, xa, side="right")]
        in_low = np.searchsorted(self.low, xa, side="right").astype(np.float64)
        above = nh - np.searchsorted(self.high, xa, side="right")
        at_least = np.maximum(at_least, in_low)
        at_most = np.minimum(at_most, n - above)
        if nl:
            sure = xa < self.low[-1]
            at_least, at_most = np.where(sure, in_low, at_least), np.where(sure, in_low, at_most)
        if nh:
            sure = xa >= self.high[0]
            at_least, at_most = np.where(sure, n - above, at_least), np.where(sure, n - above, at_most)
        return np.asarray(at_least, dtype=np.float64), np.asarray(at_most, dtype=np.float64)

    def order_statistic_bounds(self, rank: ArrayLike) -> tuple[FloatArray, FloatArray]:
        """Values sure to bracket the order statistics X_(rank) (0-based ranks, vectorised).

        From the buffers where they hold the rank, otherwise from the centroids' ranges:
        at most ``rank`` values lie below the low end (only centroids that start below it
        can hold them) and at least ``rank + 1`` lie at or below the high end. Valid for
        any centroid layout, arrival order or merge history; the width is that of the
        centroids around the rank, which the ``k1-ladder`` scale keeps small around the
        ladder's quantiles.
        """
        r = np.clip(np.asarray(rank, dtype=np.float64), 0, max(self.count - 1, 0))
        n, nl, nh = self.count, self.low.size, self.high.size
        if n == 0:
            return np.full(r.shape, np.nan), np.full(r.shape, np.nan)
        if self.exact:
            v = self._exact_values()[r.astype(np.int64)]
            return v, v.copy()
        lo_s, lo_w, hi_s, hi_w = self._layout()
        before = np.cumsum(lo_w) - lo_w  # weight of centroids earlier in low order
        through = np.cumsum(hi_w)
        j = np.clip(np.searchsorted(before, r, side="right") - 1, 0, lo_s.size - 1)
        k = np.clip(np.searchsorted(through, r + 1, side="left"), 0, hi_s.size - 1)
        low, high = lo_s[j], hi_s[k]
        if nl:
            low = np.maximum(low, self.low[-1])
            in_low = r <= nl - 1
            exact_low = self.low[np.minimum(r, nl - 1).astype(np.int64)]
            low, high = np.where(in_low, exact_low, low), np.where(in_low, exact_low, high)
        if nh:
            start = n - nh
            high = np.minimum(high, self.high[0])
            in_high = r >= start
            exact_high = self.high[np.clip(r - start, 0, nh - 1).astype(np.int64)]
            low, high = np.where(in_high, exact_high, low), np.where(in_high, exact_high, high)
        return np.asarray(low, dtype=np.float64), np.asarray(high, dtype=np.float64)

    def rank_error_at(self, q: ArrayLike) -> FloatArray:
        """Largest possible rank error / n of the quantile answer at each q (0 where exact).

        The answer v at position ``q (n - 1)`` is right when that position lies in v's
        rank interval [#(x < v) - 1, #(x <= v)]; ``count_bounds`` bounds both ends, so
        the bound holds for any centroid layout (``tests/test_sketch_bound.py``).
        """
        return quantile_rank_error(self, q)

    def rank_error_bound(self) -> float:
        """Largest possible |error| / n of a count read from ``rank`` (or ``cdf``).

        Between two breakpoints of ``count_bounds`` the bounds are flat while ``rank``
        rises, so the largest gap sits at the smallest value of a centroid (the upper
        bound steps up there) or just below its largest (the lower bound steps up at
        it); those are the points checked. The same figure bounds the rank error of a
        quantile answer up to one position of interpolation (see ``rank_error_at``).
        Zero when the sketch is exact; a worst case, reached only where a centroid
        straddles a gap in the data.
        """
        if self.exact or self.count == 0:
            return 0.0
        lo, hi = self.digest.ranges()
        _, knot_vals = self.digest.knots()
        x = np.unique(np.concatenate((lo, hi, np.nextafter(hi, -np.inf), knot_vals)))
        at_least, at_most = self.count_bounds(x)
        r = self.rank(x)
        return float(np.max(np.maximum(r - at_least, at_most - r)) / self.count)

    def cdf_knots(self) -> FloatArray:
        """Every x where the sketch's CDF can bend: digest knots and the exact buffers."""
        if self.count == 0:
            return np.empty(0)
        _, knot_vals = self.digest.knots()
        return np.concatenate((knot_vals, self.low, self.high))

    def bound_steps(self) -> FloatArray:
        """Every x where ``count_bounds`` can step: centroid ends, buffered values and their neighbours."""
        if self.count == 0:
            return np.empty(0)
        lo, hi = self.digest.ranges()
        return np.concatenate(
            (self.cdf_knots(), lo, hi, np.nextafter(hi, -np.inf), np.nextafter(self.low, -np.inf))
        )

    def summary(self) -> dict[str, Any]:
        """The fields every view shows, as plain numbers."""
        qs = (0.5, 0.9, 0.99, 0.999, 0.9999)
        vals = self.quantile(np.array(qs)) if self.count else [float("nan")] * len(qs)
        out: dict[str, Any] = {"n": self.count, "unit": self.unit, "min": self.min}
        out.update({quantile_label(q): float(v) for q, v in zip(qs, vals, strict=True)})
        out.update({"max": self.max, "mean": self.mean})
        return out


@dataclass
class SketchSet:
    """Named sketches that belong together (groups of ``--by``, before/after); an entry may
    also be a binned distribution read from telemetry histograms (``binned.py``)."""

    sketches: dict[str, Sketch | Binned] = dataclasses.field(default_factory=dict)
    unassigned: dict[str, SkipTally] = dataclasses.field(default_factory=dict)
    """Rows read but given to no sketch, by reason: a missing or unreadable time when the
    sketches are cut by time (``before``/``after``, windows), a line too long to read a
    group from. Counted here so that every row read is in a sketch or counted."""

    def __getitem__(self, name: str) -> Sketch | Binned:
        return self.sketches[name]

    def names(self) -> list[str]:
        return list(self.sketches)
