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
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .scale import INVERSES, SCALES

FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]

DEFAULT_COMPRESSION = 1000.0
"""Chosen by measurement (``benchmarks/accuracy.py``); recorded in every sketch file."""

_MIN_BUFFER = 1 << 20
_HEAVY_RUN = 0.1
"""A run of equal values spanning this much of k becomes its own cluster(s)."""


class TDigest:
    """Centroids (mean, weight, pure) sorted by mean, plus an append-only buffer.

    Invariant after every flush: ``weights.sum() == count`` and ``means`` is sorted.
    Values given to :meth:`add` must be finite; the caller (``Sketch``) counts and
    removes NaN and infinities so that nothing is dropped silently.
    """

    __slots__ = ("_buf", "_buf_n", "_limit", "_means", "_pure", "_weights", "compression", "scale")

    def __init__(self, compression: float = DEFAULT_COMPRESSION, scale: str = "k1") -> None:
        if not compression >= 10:
            raise ValueError(f"compression must be at least 10, got {compression!r}.")
        if scale not in SCALES:
            raise ValueError(f"scale must be one of {sorted(SCALES)}, got {scale!r}.")
        self.compression = float(compression)
        self.scale = scale
        self._means: FloatArray = np.empty(0)
        self._weights: FloatArray = np.empty(0)
        self._pure: BoolArray = np.empty(0, dtype=bool)
        self._buf: list[FloatArray] = []
        self._buf_n = 0
        # A large buffer amortises the sort/merge; memory stays bounded by it.
        self._limit = max(_MIN_BUFFER, int(50 * compression))

    # ------------------------------------------------------------------ building
    def add(self, values: ArrayLike) -> None:
        """Buffer finite values; flushes when the buffer is full."""
        arr = np.asarray(values, dtype=np.float64).ravel()
        if arr.size == 0:
            return
        self._buf.append(arr)
        self._buf_n += arr.size
        if self._buf_n >= self._limit:
            self.flush()

    def add_centroids(self, means: ArrayLike, weights: ArrayLike, pure: ArrayLike | None = None) -> None:
        """Fold in weighted points (another digest's centroids, an imported digest)."""
        m = np.asarray(means, dtype=np.float64).ravel()
        w = np.asarray(weights, dtype=np.float64).ravel()
        if m.shape != w.shape:
            raise ValueError("means and weights must have the same length.")
        if m.size == 0:
            return
        p = np.zeros(m.size, dtype=bool) if pure is None else np.asarray(pure, dtype=bool).ravel()
        p = p | (w <= 1.0)
        self.flush()
        order = np.argsort(m, kind="stable")
        self._regroup(*_merge_sorted(self._means, self._weights, self._pure, m[order], w[order], p[order]))

    def flush(self) -> None:
        """Merge the buffer into the centroids."""
        if not self._buf:
            return
        incoming = np.concatenate(self._buf) if len(self._buf) > 1 else self._buf[0].copy()
        incoming.sort()
        self._buf = []
        self._buf_n = 0
        self._regroup(
            *_merge_sorted(
                self._means,
                self._weights,
                self._pure,
                incoming,
                np.ones(incoming.size),
                np.ones(incoming.size, dtype=bool),
            )
        )

    def _regroup(self, means: FloatArray, weights: FloatArray, pure: BoolArray) -> None:
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
            heavy = k_hi - k_lo >= _HEAVY_RUN
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
        self._means, self._weights, self._pure = m, w, p

    # ------------------------------------------------------------------ reading
    @property
    def count(self) -> float:
        return float(self._weights.sum()) + self._buf_n

    def centroids(self) -> tuple[FloatArray, FloatArray, BoolArray]:
        """Sorted (means, weights, pure) after a flush; arrays are copies."""
        self.flush()
        return self._means.copy(), self._weights.copy(), self._pure.copy()

    def knots(self) -> tuple[FloatArray, FloatArray]:
        """The piecewise-linear quantile function as (position, value) knots.

        Positions are 0-based element indices in sorted order (the j-th smallest value
        sits at position j), the convention of ``numpy.quantile``'s default (linear,
        Hyndman & Fan type 7) method. A centroid of weight w starting after c values
        has its centre at position ``c + (w - 1) / 2``; a pure centroid holds its value
        flat from position ``c`` to ``c + w - 1``.
        """
        self.flush()
        w, m, p = self._weights, self._means, self._pure
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


def _merge_sorted(
    m1: FloatArray, w1: FloatArray, p1: BoolArray, m2: FloatArray, w2: FloatArray, p2: BoolArray
) -> tuple[FloatArray, FloatArray, BoolArray]:
    """Merge two runs sorted by mean without a full argsort (O(n) placement)."""
    if m1.size == 0:
        return m2, w2, p2
    at = np.searchsorted(m2, m1, side="left") + np.arange(m1.size)
    n = m1.size + m2.size
    slot = np.ones(n, dtype=bool)
    slot[at] = False
    m = np.empty(n)
    w = np.empty(n)
    p = np.empty(n, dtype=bool)
    m[at], w[at], p[at] = m1, w1, p1
    m[slot], w[slot], p[slot] = m2, w2, p2
    return m, w, p
