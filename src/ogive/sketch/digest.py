"""A merging t-digest, vectorised with numpy.

Method: T. Dunning and O. Ertl, "Computing extremely accurate quantiles using
t-digests" (2019), the *merging* variant (section 3). Incoming values are buffered; a
flush sorts the buffer, merges it with the sorted centroids, and regroups the run into
clusters so that no cluster spans more than one unit of the scale function ``k``.

Where this implementation departs from the paper's sequential loop, and why:

* Clusters are cut where ``floor(k(q_mid))`` changes, ``q_mid`` being each item's
  cumulative mid-rank. This is one pass of numpy over the sorted run instead of a
  Python loop; a cluster still spans at most about one unit of ``k`` (plus the width of
  a single item that straddles a cut), which is the paper's size bound.
* Each centroid carries a ``pure`` flag: true when every value in it is equal. Repeated
  values (integer-millisecond latencies, bucketed sizes) are the norm in our data, and
  interpolating between two pure centroids would invent values that never occur; a
  pure centroid answers its whole rank range with its single value instead, so ties
  give exact quantiles and a right-continuous CDF.
* Each centroid also carries the smallest and largest value it holds (``ranges``),
  folded by min/max like the weights are by sum (and, like the means, kept rounded as
  the file holds them: ``rounding.py``). They cost two numbers per centroid and
  buy a rank bound that needs no assumption about how centroids lie: every value of a
  centroid is inside its range whatever the arrival order, the flush sizes or the
  merges, so counts of values below x are bounded by whole centroids
  (``Sketch.rank_bounds``). Centroids from different flushes or merged digests may
  overlap in value; the ranges say by how much.
* A flush (``_absorb_sorted``) never builds the merged run: the ~10^3 centroids stay a
  side array whose places among the ~10^6 sorted values are computed, so the values
  are touched by the sort, one equality pass and one ``reduceat``. Folding in other
  centroids (merges, loading) takes the plain path, ``_regroup(merge_sorted(...))``;
  both give the same clusters (tested).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .rounding import settle
from .runs import Columns, merge_sorted, neighbour_ranges, sort_floats
from .scale import INVERSES, SCALES
from .sums import ZERO, Scaled, add_scaled, block_sum, scale_scaled

FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]

DEFAULT_COMPRESSION = 1600.0
"""Chosen by measurement (``benchmarks/sketch_accuracy.py``, ``benchmarks/interval_bench.py``,
figures in the README): with the default ``k1-ladder`` scale it keeps about 1200
centroids (800 from k1, the rest around the ladder's quantiles), the most that fit with
their ranges beside the 2 x 512 exact tail values in a 64 KB file (56-59 KB measured for
17-digit values); recorded in every sketch file."""

MAX_COMPRESSION = 1e5
"""Beyond this a digest is no longer small (and a file asking for 1e11, found by fuzzing,
made the first flush try to allocate hundreds of GB)."""
_MIN_BUFFER = 1 << 20
_HEAVY_RUN = 0.1
"""A run of equal values spanning this much of k becomes its own cluster(s)."""
_HEAVY_SHARE = 0.25
"""Cap on such runs per regroup, as a share of the compression (bounds the file size)."""


class TDigest:
    """Centroids (mean, weight, pure) sorted by mean, plus an append-only buffer.

    Invariant after every flush: ``weights.sum() == count`` and ``means`` is sorted.
    Values given to :meth:`add` must be finite; the caller (``Sketch``) counts and
    removes NaN and infinities so that nothing is dropped silently.
    """

    __slots__ = (
        "_buf",
        "_buf_n",
        "_hi",
        "_limit",
        "_lo",
        "_means",
        "_pure",
        "_raw_sum",
        "_version",
        "_view",
        "_weights",
        "compression",
        "scale",
    )

    def __init__(self, compression: float = DEFAULT_COMPRESSION, scale: str = "k1") -> None:
        if not 10 <= compression <= MAX_COMPRESSION:
            raise ValueError(f"compression must lie between 10 and {MAX_COMPRESSION:g}, got {compression!r}.")
        if scale not in SCALES:
            raise ValueError(f"scale must be one of {sorted(SCALES)}, got {scale!r}.")
        self.compression = float(compression)
        self.scale = scale
        self._means: FloatArray = np.empty(0)
        self._weights: FloatArray = np.empty(0)
        self._pure: BoolArray = np.empty(0, dtype=bool)
        self._lo: FloatArray = np.empty(0)
        self._hi: FloatArray = np.empty(0)
        self._buf: list[FloatArray] = []
        self._buf_n = 0
        # A large buffer amortises the sort/merge; memory stays bounded by it.
        self._limit = max(_MIN_BUFFER, int(50 * compression))
        self._raw_sum: Scaled = ZERO
        """Sum of the values merged from the buffer, summed in blocks of ``_limit`` values."""
        self._version = 0
        """Bumped by every change, so a cached view of the buffered state knows it is current."""
        self._view: tuple[int, Columns, Scaled] | None = None

    def copy(self) -> TDigest:
        """An independent digest in the same state (arrays are never changed in place, so
        they are shared; the buffer list is not)."""
        out = TDigest.__new__(TDigest)
        for name in TDigest.__slots__:
            setattr(out, name, getattr(self, name))
        out._buf = list(self._buf)
        out._view = None
        return out

    # ------------------------------------------------------------------ building
    def add(self, values: ArrayLike) -> None:
        """Buffer finite values; every full buffer's worth is merged.

        The merges happen at every ``_limit``-th value, wherever the batches begin and
        end, so the centroids depend on the values and their order only: a scan that
        hands the same rows over in other batches (a progress report flushing early,
        other chunk sizes) builds the same digest, byte for byte.
        The values are copied: a reader may refill the array it handed over.
        """
        arr = np.array(values, dtype=np.float64, copy=True).ravel()
        if arr.size == 0:
            return
        self._buf.append(arr)
        self._buf_n += arr.size
        self._version += 1
        while self._buf_n >= self._limit:
            self._merge_first(self._limit)

    @property
    def buffered(self) -> int:
        """Values added but not yet merged into the centroids."""
        return self._buf_n

    def add_centroids(
        self,
        means: ArrayLike,
        weights: ArrayLike,
        pure: ArrayLike | None = None,
        ranges: tuple[ArrayLike, ArrayLike] | None = None,
    ) -> None:
        """Fold in weighted points (another digest's centroids, pre-binned values, an import).

        ``ranges`` = (smallest, largest) value behind each point. Without it a point of
        weight one or marked pure is its own range, and any other point is taken to
        reach to its neighbours' means (the best guess for an import that kept no
        ranges; a bound built on it assumes that digest's centroids did not overlap).
        """
        m = np.asarray(means, dtype=np.float64).ravel()
        w = np.asarray(weights, dtype=np.float64).ravel()
        if m.shape != w.shape:
            raise ValueError("means and weights must have the same length.")
        if m.size == 0:
            return
        p = np.zeros(m.size, dtype=bool) if pure is None else np.asarray(pure, dtype=bool).ravel()
        p = p | (w <= 1.0)
        order = np.argsort(m, kind="stable")
        m, w, p = m[order], w[order], p[order]
        if ranges is None:
            lo, hi = neighbour_ranges(m, p)
        else:
            lo = np.asarray(ranges[0], dtype=np.float64).ravel()[order]
            hi = np.asarray(ranges[1], dtype=np.float64).ravel()[order]
            if lo.shape != m.shape or hi.shape != m.shape:
                raise ValueError("ranges must have one (low, high) pair per point.")
            if np.any(lo > m) or np.any(hi < m):
                raise ValueError("every point's mean must lie inside its range.")
        self.flush()
        mine = (self._means, self._weights, self._pure, self._lo, self._hi)
        self._regroup(*merge_sorted(mine, (m, w, p, lo, hi)))
        self._version += 1

    def restore(
        self, means: FloatArray, weights: FloatArray, pure: BoolArray, lows: FloatArray, highs: FloatArray
    ) -> None:
        """Take a saved digest's centroids as they are (the loader, after its checks).

        A file ogive wrote holds the clusters its digest had; regrouping them again on
        every load cost ~1 ms per sketch, 100 s for a file of 10^5 groups. More
        centroids than the compression can have (a file not written this way) are
        regrouped as any import is.
        """
        if self._weights.size or self._buf or means.size > 4 * self.compression + 64:
            self.add_centroids(means, weights, pure, (lows, highs))
            return
        self._means, self._weights, self._pure, self._lo, self._hi = means, weights, pure, lows, highs

    def flush(self) -> None:
        """Merge the whole buffer into the centroids now (a caller bounding memory).

        Queries do not flush: they read a merged view (``_settled``) and leave the
        digest as it was, so when they run cannot change what it becomes.
        """
        if self._buf:
            self._merge_first(self._buf_n)

    def _merge_first(self, k: int) -> None:
        """Merge the first ``k`` buffered values into the centroids."""
        # A fresh array to sort in place: buffered arrays may be shared with a copy of
        # this digest, a concatenation is not (and copying it again cost 4 ms a flush).
        parts = self._buf
        buffered = np.concatenate(parts) if len(parts) > 1 else parts[0]
        incoming = buffered[:k] if len(parts) > 1 else buffered[:k].copy()
        rest = buffered[k:]
        self._buf = [rest.copy()] if rest.size else []
        self._buf_n = rest.size
        self._raw_sum = add_scaled(self._raw_sum, block_sum(incoming))
        self._version += 1
        sort_floats(incoming)
        self._absorb_sorted(incoming)

    def _settled(self) -> tuple[Columns, Scaled]:
        """(centroid columns, sum of every added value) as if the buffer were merged now.

        Computed on a copy and cached until the next change: a progress report or a
        screen reading a digest mid-scan must not decide where its merges fall.
        """
        if not self._buf:
            return (self._means, self._weights, self._pure, self._lo, self._hi), self._raw_sum
        if self._view is None or self._view[0] != self._version:
            scratch = self.copy()
            scratch.flush()
            cols = (scratch._means, scratch._weights, scratch._pure, scratch._lo, scratch._hi)
            self._view = (self._version, cols, scratch._raw_sum)
        return self._view[1], self._view[2]

    def raw_sum(self) -> Scaled:
        """Sum of every value added through :meth:`add` (merged or buffered), as
        ``(total, exponent)`` of :mod:`.sums` (values near the float limit overflow).

        Summed in fixed blocks of the buffer's size, so it does not depend on how the
        values were batched (float addition is not associative).
        """
        return self._settled()[1]

    def _absorb_sorted(self, x: FloatArray) -> None:
        """The same clustering as ``_regroup(merge_sorted(...))`` for unit-weight values.

        Why a second code path: a flush brings ~10^6 values and ~10^3 centroids. The
        general path materialises the merged (mean, weight, pure) run and makes about
        fifteen passes over it; here the centroids stay a small side array, their
        places in the merged order are computed (``P``), cluster cuts are found by
        searching the ~compression boundaries against that layout, and the values are
        touched only by one equality pass (to find runs of ties) and one ``reduceat``.
        ``tests/test_sketch_digest.py`` checks both paths give the same centroids.
        """
        m, w, p = self._means, self._weights, self._pure
        c_lo, c_hi = self._lo, self._hi
        k_n, n = m.size, x.size
        big_n = n + k_n
        at = np.searchsorted(x, m, side="left")  # values placed before centroid i
        pos_c = at + np.arange(k_n)  # merged index of centroid i
        extra = np.concatenate(([0.0], np.cumsum(w - 1.0)))  # weight beyond 1 per element, before i
        total = float(n + (w.sum() if k_n else 0.0))
        cmid = pos_c + extra[:-1] + 0.5 * w
        kf, kinv, c = SCALES[self.scale], INVERSES[self.scale], self.compression
        first = 0.5 if (k_n == 0 or pos_c[0] > 0) else 0.5 * w[0]
        last = total - 0.5 if (k_n == 0 or pos_c[-1] < big_n - 1) else total - 0.5 * w[-1]
        k_ends = np.floor(kf(np.array([first, last]) / total, c, total))
        steps = np.arange(k_ends[0] + 1, k_ends[1] + 1)
        # First merged element whose mid-rank reaches each boundary: either inside the
        # gap of plain values before centroid i, or centroid i itself.
        t = kinv(steps, c, total) * total
        i = np.searchsorted(cmid, t, side="left")
        g0 = np.where(i > 0, pos_c[np.maximum(i - 1, 0)] + 1, 0) if k_n else np.zeros(t.size, dtype=np.int64)
        g1 = pos_c[np.minimum(i, k_n - 1)] if k_n else np.full(t.size, big_n)
        g1 = np.where(i < k_n, g1, big_n)
        e = np.maximum(np.ceil(t - 0.5 - extra[i]), g0).astype(np.int64)
        cuts = [np.minimum(e, g1)]
        heavy = self._heavy_runs(x, m, w, p, at, total)
        if heavy is not None:
            cuts.append(heavy)
        starts = np.unique(np.concatenate([np.zeros(1, dtype=np.int64), *cuts]))
        starts = starts[starts < big_n]
        ends = np.concatenate((starts[1:], [big_n]))
        # Split each merged range [a, b) into its plain values and its centroids.
        ca, cb = np.searchsorted(pos_c, starts, side="left"), np.searchsorted(pos_c, ends, side="left")
        ja, jb = starts - ca, ends - cb
        cnt_x, cnt_c = jb - ja, cb - ca
        sums = np.zeros(starts.size)
        has = cnt_x > 0
        r_lo, r_hi = np.full(starts.size, np.inf), np.full(starts.size, -np.inf)
        if n:
            sums[has] = np.add.reduceat(x, ja[has])
            r_lo[has], r_hi[has] = x[ja[has]], x[jb[has] - 1]  # x is sorted
        wts = cnt_x.astype(np.float64)
        if k_n:
            hc = cnt_c > 0
            sums[hc] += np.add.reduceat(w * m, ca[hc])
            wts[hc] += np.add.reduceat(w, ca[hc])
            r_lo[hc] = np.minimum(r_lo[hc], np.minimum.reduceat(c_lo, ca[hc]))
            r_hi[hc] = np.maximum(r_hi[hc], np.maximum.reduceat(c_hi, ca[hc]))
            impure = np.concatenate(([0], np.cumsum(~p)))
            all_pure = impure[cb] == impure[ca]
            lo_is_c = (ca < k_n) & (pos_c[np.minimum(ca, k_n - 1)] == starts)
            hi_is_c = (cb > 0) & (pos_c[np.maximum(cb - 1, 0)] == ends - 1)
            lo = np.where(lo_is_c, m[np.minimum(ca, k_n - 1)], x[np.minimum(ja, n - 1)] if n else 0.0)
            hi = np.where(hi_is_c, m[np.maximum(cb - 1, 0)], x[np.maximum(jb - 1, 0)] if n else 0.0)
        else:
            all_pure = np.ones(starts.size, dtype=bool)
            lo, hi = x[ja], x[jb - 1]
        pure = all_pure & (lo == hi)
        mean = np.where(pure, lo, np.clip(sums / wts, lo, hi))
        self._means, self._lo, self._hi = settle(mean, r_lo, r_hi, pure)
        self._weights, self._pure = wts, pure

    def _heavy_runs(
        self, x: FloatArray, m: FloatArray, w: FloatArray, p: BoolArray, at: NDArray[np.intp], total: float
    ) -> NDArray[np.int64] | None:
        """Merged-order start and end of every run of one repeated value heavy enough
        (``_HEAVY_RUN`` of k) to get clusters of its own; None when there is none."""
        n, k_n = x.size, m.size
        vs: list[FloatArray] = []
        ls: list[NDArray[np.intp]] = []
        rs: list[NDArray[np.intp]] = []
        if n > 1:
            eq = x[1:] == x[:-1]
            if eq.any():
                # Runs of >= 2 equal values: stretches between value changes, longer than one.
                cut = np.flatnonzero(~eq) + 1
                starts, ends = np.concatenate(([0], cut)), np.concatenate((cut, [n]))
                long = ends - starts >= 2
                ls.append(starts[long])
                vs.append(x[ls[-1]])
                rs.append(ends[long])
        if k_n:
            link = np.zeros(k_n, dtype=bool)
            link[:-1] |= (m[1:] == m[:-1]) & p[1:] & p[:-1]
            link[1:] |= link[:-1]
            meets_x = (at < n) & (x[np.minimum(at, max(n - 1, 0))] == m) if n else np.zeros(k_n, dtype=bool)
            vc = np.unique(m[p & ((w > 1) | link | meets_x)])
            lxc, rxc = np.searchsorted(x, vc, side="left"), np.searchsorted(x, vc, side="right")
            alone = rxc - lxc < 2  # the others are already runs of x
            vs.append(vc[alone])
            ls.append(lxc[alone])
            rs.append(rxc[alone])
        if not vs:
            return None
        v = np.concatenate(vs)
        if v.size == 0:
            return None
        lx, rx = np.concatenate(ls), np.concatenate(rs)
        lc, rc = np.searchsorted(m, v, side="left"), np.searchsorted(m, v, side="right")
        # An impure centroid whose mean happens to equal v breaks the run: in merged
        # order centroids come before the plain values, so the run starts after it.
        imp = np.flatnonzero(~p)
        if imp.size:
            j = np.searchsorted(imp, rc, side="left") - 1
            last = imp[np.maximum(j, 0)]
            lc = np.where((j >= 0) & (last >= lc), last + 1, lc)
        cum_w = np.concatenate(([0.0], np.cumsum(w)))
        w_before = lx + cum_w[lc]
        w_run = (rx - lx) + (cum_w[rc] - cum_w[lc])
        items = (rx - lx) + (rc - lc)
        kf, c = SCALES[self.scale], self.compression
        k_lo = kf(w_before / total, c, total)
        k_hi = kf((w_before + w_run) / total, c, total)
        span = k_hi - k_lo
        keep = _heaviest(np.flatnonzero((span >= _HEAVY_RUN) & ((items >= 2) | (w_run > 1))), span, c)
        start = (lx + lc)[keep]
        end = start + items[keep]
        return np.concatenate((start, end)).astype(np.int64)

    def _regroup(
        self, means: FloatArray, weights: FloatArray, pure: BoolArray, lows: FloatArray, highs: FloatArray
    ) -> None:
        """Cut the sorted run into clusters and reduce each to one centroid.

        The cuts are where ``floor(k(q_mid))`` steps, found from the ~compression
        boundaries ``q(j)`` by binary search, so no transcendental function runs over
        the whole batch.
        """
        n = means.size
        cw = np.cumsum(weights)
        total = float(cw[-1])
        mid = cw - 0.5 * weights
        kf, kinv, c = SCALES[self.scale], INVERSES[self.scale], self.compression
        k_ends = np.floor(kf(np.array([mid[0], mid[-1]]) / total, c, total))
        steps = np.arange(k_ends[0] + 1, k_ends[1] + 1)
        cuts = [np.searchsorted(mid, kinv(steps, c, total) * total, side="left")]
        # Runs of one repeated value that weigh a fair share of a cluster get clusters
        # of their own, so their edges are exact instead of blurred into a neighbour.
        same = (means[1:] == means[:-1]) & pure[1:] & pure[:-1]
        cand = pure & (weights > 1)
        cand[1:] |= same
        cand[:-1] |= same
        idx = np.flatnonzero(cand)
        if idx.size:
            linked = same[idx[:-1]] & (idx[1:] == idx[:-1] + 1)
            r_start = idx[np.concatenate(([True], ~linked))]
            r_end = idx[np.concatenate((~linked, [True]))] + 1
            k_lo = kf((cw[r_start] - weights[r_start]) / total, c, total)
            k_hi = kf(cw[r_end - 1] / total, c, total)
            span = k_hi - k_lo
            heavy = _heaviest(np.flatnonzero(span >= _HEAVY_RUN), span, c)
            cuts += [r_start[heavy], r_end[heavy]]
        starts = np.unique(np.concatenate([[0], *cuts]))
        starts = starts[starts < n]
        ends = np.concatenate((starts[1:], [n]))
        w = np.add.reduceat(weights, starts)
        lo, hi = means[starts], means[ends - 1]
        m = np.add.reduceat(weights * means, starts) / w
        p = np.logical_and.reduceat(pure, starts) & (lo == hi)
        # Rounding in the weighted sum must not move a cluster outside its members.
        m = np.where(p, lo, np.clip(m, lo, hi))
        r_lo, r_hi = np.minimum.reduceat(lows, starts), np.maximum.reduceat(highs, starts)
        self._means, self._lo, self._hi = settle(m, r_lo, r_hi, p)
        self._weights, self._pure = w, p

    def scale_values(self, factor: float) -> None:
        """Multiply every value by ``factor`` > 0 (a change of unit): order, weights and
        ranges carry over, so every answer scales and every bound still holds."""
        if not factor > 0:
            raise ValueError(f"factor must be positive, got {factor!r}.")
        self.flush()
        self._raw_sum = scale_scaled(self._raw_sum, factor)
        self._version += 1
        m, lo, hi = self._means * factor, self._lo * factor, self._hi * factor
        # Rounding may put a product a hair inside the true scaled end: widen by an ulp.
        lo, hi = np.nextafter(lo, -np.inf), np.nextafter(hi, np.inf)
        lo, hi = np.where(self._pure, m, lo), np.where(self._pure, m, hi)
        self._means, self._lo, self._hi = settle(m, lo, hi, self._pure)

    # ------------------------------------------------------------------ reading
    @property
    def count(self) -> float:
        return float(self._weights.sum()) + self._buf_n

    def centroids(self) -> tuple[FloatArray, FloatArray, BoolArray]:
        """Sorted (means, weights, pure), buffered values included; arrays are copies."""
        m, w, p, _, _ = self._settled()[0]
        return m.copy(), w.copy(), p.copy()

    def ranges(self) -> tuple[FloatArray, FloatArray]:
        """(smallest, largest) value held by each centroid, in centroid order; copies."""
        _, _, _, lo, hi = self._settled()[0]
        return lo.copy(), hi.copy()

    def knots(self) -> tuple[FloatArray, FloatArray]:
        """The piecewise-linear quantile function as (position, value) knots.

        Positions are 0-based element indices in sorted order (the j-th smallest value
        sits at position j), the convention of ``numpy.quantile``'s default (linear,
        Hyndman & Fan type 7) method. A centroid of weight w starting after c values
        has its centre at position ``c + (w - 1) / 2``; a pure centroid holds its value
        flat from position ``c`` to ``c + w - 1``.
        """
        m, w, p, _, _ = self._settled()[0]
        if w.size == 0:
            return np.empty(0), np.empty(0)
        before = np.cumsum(w) - w
        first = np.where(p, before, before + 0.5 * (w - 1.0))
        last = np.where(p, before + w - 1.0, first)
        pos = np.column_stack((first, last)).ravel()
        val = np.repeat(m, 2)
        return pos, val

    def quantile_at(self, position: FloatArray) -> FloatArray:
        """Value at 0-based fractional sorted positions (see :meth:`knots`)."""
        pos, val = self.knots()
        if pos.size == 0:
            return np.full(np.shape(position), np.nan)
        return np.interp(position, pos, val)

    def rank_of(self, x: FloatArray) -> FloatArray:
        """Number of values <= x (fractional), inverse of :meth:`quantile_at`."""
        pos, val = self.knots()
        x = np.asarray(x, dtype=np.float64)
        if pos.size == 0:
            return np.zeros(x.shape)
        i = np.searchsorted(val, x, side="right")  # knots with value <= x
        j = np.clip(i, 1, val.size - 1)
        v0, v1, p0, p1 = val[j - 1], val[j], pos[j - 1], pos[j]
        span = np.where(v1 > v0, v1 - v0, 1.0)
        inner = p0 + (x - v0) / span * (p1 - p0)
        r = np.where(i <= 0, -1.0, np.where(i >= val.size, pos[-1], inner))
        return r + 1.0


def _heaviest(runs: NDArray[np.intp], span: FloatArray, compression: float) -> NDArray[np.intp]:
    """At most ``_HEAVY_SHARE * compression`` of the heavy runs, the heaviest first.

    Finely quantised data (3-decimal ms at 10^7 values) has thousands of runs over the
    threshold; a cluster for each would triple the file (64 KB -> 69 KB measured on
    such data). The heaviest runs, where a blurred edge would cost the most rank,
    keep their clusters; the order of the result does not matter to the caller.
    """
    cap = int(compression * _HEAVY_SHARE)
    if runs.size <= cap:
        return runs
    return runs[np.argpartition(span[runs], runs.size - cap)[runs.size - cap :]]
