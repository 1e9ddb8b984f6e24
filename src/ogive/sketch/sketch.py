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
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .digest import DEFAULT_COMPRESSION, TDigest

FloatArray = NDArray[np.float64]

DEFAULT_TAIL = 1024
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
        if tail_size < 1:
            raise ValueError(f"tail_size must be at least 1, got {tail_size!r}.")
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

    @property
    def compression(self) -> float:
        return self.digest.compression

    # ------------------------------------------------------------------ building
    def add(self, values: ArrayLike) -> None:
        arr = np.asarray(values, dtype=np.float64).ravel()
        if arr.size == 0:
            return
        finite = np.isfinite(arr)
        if not finite.all():
            bad = arr[~finite]
            nans = int(np.isnan(bad).sum())
            self.nan_count += nans
            self.inf_count += bad.size - nans
            arr = arr[finite]
            if arr.size == 0:
                return
        self.count += arr.size
        self.total += float(arr.sum())
        self.negative_count += int((arr < 0).sum())
        self.zero_count += int((arr == 0).sum())
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
        out = self.digest.quantile_at(pos) if self.count > nl else np.zeros(pos.shape)
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
        out = self.digest.rank_of(xa) if n > self.low.size else np.zeros(xa.shape)
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

    def rank_error_bound(self) -> float:
        """A conservative rank error (as a fraction of n) for interpolated answers.

        Half the largest centroid's share of the data: no query inside the digest can
        be further than that from the true rank. Used to widen confidence intervals.
        """
        if self.exact or self.count == 0:
            return 0.0
        _, w, p = self.digest.centroids()
        impure = w[~p]
        return float(impure.max() / 2 / self.count) if impure.size else 0.0

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

    def __getitem__(self, name: str) -> Sketch:
        return self.sketches[name]

    def names(self) -> list[str]:
        return list(self.sketches)
