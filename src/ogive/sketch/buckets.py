"""Bucket layouts of telemetry histograms, as the open specs define them (numpy only, no I/O).

Two layouts, each kept in the form its spec writes it, so a saved file reads like the
export it came from and two parts can be told to share a layout without comparing
floating-point edges:

* :class:`ExplicitPart` — explicit bounds b_0 < ... < b_{m-1} and m + 1 counts. Bucket 0
  is (-inf, b_0], bucket i is (b_{i-1}, b_i], the last is (b_{m-1}, +inf): the
  ``HistogramDataPoint`` of opentelemetry-proto ``opentelemetry/proto/metrics/v1/
  metrics.proto`` ("inclusive of their upper boundary ... intentionally compatible with
  the OpenMetrics histogram definition") and the OpenMetrics classic histogram
  (``_bucket{le="b_i"}`` counts are cumulative; ``le="+Inf"`` is the last). ``floor``
  closes the first bucket from below where the values cannot go lower (a duration is
  never negative: the reader sets 0); -inf otherwise.
* :class:`ExponentialPart` — ``ExponentialHistogramDataPoint`` of the same proto: with
  base = 2^(2^-scale), positive bucket with index i covers (base^i, base^(i+1)], the
  negative bucket with index i covers [-base^(i+1), -base^i), and ``zero_count`` values
  have |x| <= ``zero_threshold`` (exactly zero when the threshold is 0). Counts are
  listed from ``offset``. ``factor`` multiplies every edge (the unit conversion of the
  reader: an export in seconds read in ms has factor 1000).

Both give their buckets as :class:`Buckets` (lows, highs, counts, closed-below flags),
clipped to the exact minimum and maximum where the export gave them (every value lies
in [min, max], so the clipped ranges are still sure to hold the bucket's values).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]

EXPLICIT, EXPONENTIAL = "explicit", "exponential"
INTERPOLATION = {EXPLICIT: "linear", EXPONENTIAL: "log-linear"}
"""How a point estimate is read inside a bucket of each layout."""


@dataclass(frozen=True)
class Buckets:
    """Buckets as intervals: every value counted in bucket j lies between lows[j] and highs[j].

    ``closed_low[j]`` says a value may equal lows[j] (otherwise it is strictly above);
    a value may always equal highs[j] or lie just below it. Sorted by lows.
    """

    lows: FloatArray
    highs: FloatArray
    counts: FloatArray
    closed_low: BoolArray
    log: BoolArray
    """Interpolate in log x inside this bucket (exponential layouts, positive buckets)."""


def _sum_or_nan(a: float, b: float) -> float:
    return a + b if math.isfinite(a) and math.isfinite(b) else math.nan


def _min_known(a: float, b: float) -> float:
    return min(a, b) if not (math.isnan(a) or math.isnan(b)) else math.nan


def _max_known(a: float, b: float) -> float:
    return max(a, b) if not (math.isnan(a) or math.isnan(b)) else math.nan


@dataclass(frozen=True)
class Extremes:
    """What an export may say beyond the counts: the exact min, max and sum (NaN: not given)."""

    minimum: float = math.nan
    maximum: float = math.nan
    total: float = math.nan

    def __add__(self, other: Extremes) -> Extremes:
        return Extremes(
            _min_known(self.minimum, other.minimum),
            _max_known(self.maximum, other.maximum),
            _sum_or_nan(self.total, other.total),
        )

    def scaled(self, factor: float) -> Extremes:
        return Extremes(self.minimum * factor, self.maximum * factor, self.total * factor)


def _clip(b: Buckets, ex: Extremes) -> Buckets:
    """Bucket ranges narrowed to [min, max] where those are known (the values all lie there)."""
    lows, highs, closed = b.lows, b.highs, b.closed_low
    if not math.isnan(ex.minimum):
        raised = lows <= ex.minimum
        lows = np.where(raised, ex.minimum, lows)
        closed = closed | raised  # the minimum itself is a value
        highs = np.maximum(highs, lows)
    if not math.isnan(ex.maximum):
        highs = np.minimum(highs, ex.maximum)
        lows = np.minimum(lows, highs)
    return replace(b, lows=lows, highs=highs, closed_low=closed)


@dataclass(frozen=True)
class ExplicitPart:
    """Explicit-bounds buckets (see the module text) with their counts and extremes."""

    bounds: FloatArray
    counts: FloatArray
    floor: float = -math.inf
    extremes: Extremes = Extremes()

    kind = EXPLICIT

    @property
    def key(self) -> tuple[Any, ...]:
        """Parts with equal keys have the same buckets: their counts add."""
        return (EXPLICIT, self.floor, self.bounds.tobytes())

    @property
    def count(self) -> float:
        return float(self.counts.sum())

    def buckets(self, *, clipped: bool = True) -> Buckets:
        """The buckets as intervals, narrowed to [min, max] unless ``clipped`` is False."""
        m = self.bounds.size
        lows = np.concatenate(([self.floor], self.bounds))
        highs = np.concatenate((self.bounds, [math.inf]))
        closed = np.zeros(m + 1, dtype=bool)
        closed[0] = math.isfinite(self.floor)  # a floor is a value the data may take (0 ms)
        raw = Buckets(lows, highs, self.counts.astype(np.float64), closed, np.zeros(m + 1, dtype=bool))
        return _clip(raw, self.extremes) if clipped else raw

    def plus(self, other: ExplicitPart) -> ExplicitPart:
        return ExplicitPart(
            self.bounds, self.counts + other.counts, self.floor, self.extremes + other.extremes
        )

    def scaled(self, factor: float) -> ExplicitPart:
        return ExplicitPart(
            self.bounds * factor, self.counts, self.floor * factor, self.extremes.scaled(factor)
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            "layout": EXPLICIT,
            "bounds": self.bounds.tolist(),
            "counts": self.counts.tolist(),
            "floor": self.floor if math.isfinite(self.floor) else None,
            **_extremes_dict(self.extremes),
        }


@dataclass(frozen=True)
class ExponentialPart:
    """Base-2 exponential buckets (see the module text) with their counts and extremes."""

    scale: int
    positive_offset: int
    positive: FloatArray
    negative_offset: int = 0
    negative: FloatArray = field(default_factory=lambda: np.empty(0))
    zero_count: float = 0.0
    zero_threshold: float = 0.0
    factor: float = 1.0
    extremes: Extremes = Extremes()

    kind = EXPONENTIAL

    @property
    def key(self) -> tuple[Any, ...]:
        return (EXPONENTIAL, self.scale, self.zero_threshold, self.factor)

    @property
    def count(self) -> float:
        return float(self.positive.sum() + self.negative.sum() + self.zero_count)

    def edges(self, index: NDArray[np.int64]) -> FloatArray:
        """base^index times the factor: exact powers of two for scale <= 0."""
        if self.scale <= 0:
            out = np.ldexp(1.0, (index * (1 << -self.scale)).astype(np.int64))
        else:
            out = np.exp2(index / float(1 << self.scale))
        return np.asarray(out * self.factor, dtype=np.float64)

    def buckets(self, *, clipped: bool = True) -> Buckets:
        """The buckets as intervals, narrowed to [min, max] unless ``clipped`` is False."""
        ip = self.positive_offset + np.arange(self.positive.size, dtype=np.int64)
        ineg = self.negative_offset + np.arange(self.negative.size, dtype=np.int64)
        t = self.zero_threshold * self.factor
        neg_lo, neg_hi = -self.edges(ineg + 1), -self.edges(ineg)
        lows = np.concatenate((neg_lo[::-1], [-t], self.edges(ip)))
        highs = np.concatenate((neg_hi[::-1], [t], self.edges(ip + 1)))
        counts = np.concatenate((self.negative[::-1], [self.zero_count], self.positive))
        closed = np.concatenate((np.ones(ineg.size, dtype=bool), [True], np.zeros(ip.size, dtype=bool)))
        log = np.concatenate((np.zeros(ineg.size + 1, dtype=bool), np.ones(ip.size, dtype=bool)))
        raw = Buckets(lows, highs, counts.astype(np.float64), closed, log)
        return _clip(raw, self.extremes) if clipped else raw

    def plus(self, other: ExponentialPart) -> ExponentialPart:
        """Counts of the same grid added bucket by bucket (offsets aligned, nothing re-binned)."""
        pos_off, pos = _aligned(self.positive_offset, self.positive, other.positive_offset, other.positive)
        neg_off, neg = _aligned(self.negative_offset, self.negative, other.negative_offset, other.negative)
        return replace(
            self,
            positive_offset=pos_off,
            positive=pos,
            negative_offset=neg_off,
            negative=neg,
            zero_count=self.zero_count + other.zero_count,
            extremes=self.extremes + other.extremes,
        )

    def scaled(self, factor: float) -> ExponentialPart:
        return replace(self, factor=self.factor * factor, extremes=self.extremes.scaled(factor))

    def to_dict(self) -> dict[str, Any]:
        return {
            "layout": EXPONENTIAL,
            "scale": self.scale,
            "factor": self.factor,
            "zero_threshold": self.zero_threshold,
            "zero_count": self.zero_count,
            "positive": {"offset": self.positive_offset, "counts": self.positive.tolist()},
            "negative": {"offset": self.negative_offset, "counts": self.negative.tolist()},
            **_extremes_dict(self.extremes),
        }


Part = ExplicitPart | ExponentialPart


def _aligned(off_a: int, a: FloatArray, off_b: int, b: FloatArray) -> tuple[int, FloatArray]:
    if not a.size:
        return off_b, b.copy()
    if not b.size:
        return off_a, a.copy()
    lo, hi = min(off_a, off_b), max(off_a + a.size, off_b + b.size)
    out = np.zeros(hi - lo)
    out[off_a - lo : off_a - lo + a.size] += a
    out[off_b - lo : off_b - lo + b.size] += b
    return lo, out


def _extremes_dict(ex: Extremes) -> dict[str, float | None]:
    def num(v: float) -> float | None:
        return None if math.isnan(v) else v

    return {"min": num(ex.minimum), "max": num(ex.maximum), "sum": num(ex.total)}


def inconsistency(part: Part) -> str | None:
    """Why a part's counts contradict its own min and max (a count in a bucket wholly outside
    [min, max]), or None. Clipping to [min, max] would otherwise hide the contradiction."""
    ex = part.extremes
    if math.isnan(ex.minimum) and math.isnan(ex.maximum):
        return None
    b = part.buckets(clipped=False)
    used = b.counts > 0
    if ex.minimum > ex.maximum:
        return "its min is above its max"
    if not math.isnan(ex.minimum) and np.any(b.highs[used] < ex.minimum):
        return "it counts values below its own min"
    above = (b.lows > ex.maximum) | ((b.lows == ex.maximum) & ~b.closed_low)
    if not math.isnan(ex.maximum) and np.any(above[used]):
        return "it counts values above its own max"
    return None


def combine(parts: list[Part]) -> Buckets:
    """Every bucket of every part in one array set, sorted by lows (parts keep their edges)."""
    each = [p.buckets() for p in parts]
    lows = np.concatenate([b.lows for b in each])
    order = np.argsort(lows, kind="stable")
    return Buckets(
        lows[order],
        np.concatenate([b.highs for b in each])[order],
        np.concatenate([b.counts for b in each])[order],
        np.concatenate([b.closed_low for b in each])[order],
        np.concatenate([b.log for b in each])[order],
    )
