"""Distribution-free confidence intervals for quantiles, read from a sketch.

Method: the order-statistic interval for a quantile (W. J. Conover, *Practical
Nonparametric Statistics*, 3rd ed., 1999, section 3.2; G. J. Hahn and W. Q. Meeker,
*Statistical Intervals*, 1991, section 5.2). With n independent values and true
p-quantile x_p, the number K of values <= x_p is Binomial(n, p) whatever the
distribution, so the pair of order statistics (X_(l), X_(u)) with
P(l <= K <= u - 1) >= confidence brackets x_p with at least that probability. The ranks
are taken equal-tailed, exactly as ``scipy.stats.quantile_test(...).confidence_interval``
does (0-based low index ``binom.ppf(a/2) - 1``, high index ``binom.isf(a/2)``), so a
sketch that holds every value gives the same interval as scipy on the raw data.

A sketch does not hold the order statistics themselves, but it can bracket them:
``Sketch.order_statistic_bounds`` gives values sure to lie at or below X_(l) and at or
above X_(u), from the exact tail buffers where they reach and otherwise from the
smallest and largest value of the centroids around those ranks. That holds for any
centroid layout, arrival order or merge history, so the interval read from a sketch
always contains the one scipy would compute from the raw values, and its coverage is
at least the exact interval's. What the sketch costs is only width: the centroids
around a rank, which the sketch's default scale (``k1-ladder``) keeps to a small share
of the interval's own spread around the ladder's quantiles (``sketch/scale.py``).
The point estimate is the sketch's interpolated quantile; it is always inside its
interval (the interval is widened to it in the rare layout where it is not).

When the needed rank lies beyond the data (p99.99 from 5,000 values), that side of the
interval is unbounded (``-inf`` / ``inf``): the data cannot bound it, and callers say so
rather than invent a bound.

A binned distribution (telemetry histograms) answers the same two questions from its
buckets: the order statistics X_(l) and X_(u) are mapped through the bucket bounds (the
lower end of the bucket holding rank l, the upper end of the one holding rank u). That
is conservative — the interval is at least as wide as the exact one would be on the raw
values, and never narrower than the bucket the quantile lies in — so its coverage is
at least the stated confidence. Each interval then also carries that bucket
(``QuantileInterval.bucket``): where the overlap of two intervals lies inside one
bucket that a finer layout could split, the verdict is ``buckets too coarse`` and names
the bucket, instead of blaming the sample size.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..sketch import Distribution, is_binned, quantile_label
from .distances import num_or_none, pair_or_none

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

LADDER_QS: tuple[float, ...] = (0.5, 0.75, 0.9, 0.95, 0.99, 0.999, 0.9999)
"""The quantiles every comparison reports (the maximum is added as its own row)."""


@dataclass(frozen=True)
class QuantileInterval:
    """One quantile of one sketch with its distribution-free interval."""

    q: float
    estimate: float
    low: float
    """Lower bound; ``-inf`` when the data cannot bound it from below."""
    high: float
    """Upper bound; ``inf`` when the data cannot bound it from above."""
    confidence: float
    n: int
    rank_low: int | None
    """0-based order statistic of the lower bound before widening; None when unbounded."""
    rank_high: int | None
    sketch_margin: float
    """How far (in the value's unit) the sketch widened the larger side beyond its own
    estimate of the bounding order statistic: what not holding the values costs here
    (0 where the exact buffers answer; the bucket widths for a binned distribution)."""
    bucket: tuple[float, float] | None = None
    """Binned distributions: the bucket (or, across layouts, the bound) sure to hold the
    quantile itself — the resolution limit; None for a sketch."""
    bucket_limited: bool = False
    """Both ends of the interval come from that one bucket: the bucket, not the number
    of values, sets its width."""
    low_open: bool = False
    """The quantile lies strictly above ``low`` (an open bucket edge): an interval of the
    other side ending exactly at ``low`` is still below it."""

    def __post_init__(self) -> None:
        # The interval is built to contain its own estimate (quantile_intervals widens it
        # where a layout would not); a result that did not would read as a contradiction.
        if np.isfinite(self.estimate) and not self.low <= self.estimate <= self.high:
            bounds = f"[{self.low!r}, {self.high!r}]"
            raise AssertionError(f"{self.label}: estimate {self.estimate!r} outside {bounds}")

    @property
    def label(self) -> str:
        return quantile_label(self.q)

    @property
    def bounded(self) -> bool:
        return bool(np.isfinite(self.low) and np.isfinite(self.high))

    def to_dict(self) -> dict[str, Any]:
        return {
            "q": self.q,
            "label": self.label,
            "estimate": num_or_none(self.estimate),
            "low": num_or_none(self.low),
            "high": num_or_none(self.high),
            "low_unbounded": bool(not np.isfinite(self.low)),
            "high_unbounded": bool(not np.isfinite(self.high)),
            "confidence": self.confidence,
            "n": self.n,
            "rank_low": self.rank_low,
            "rank_high": self.rank_high,
            "sketch_margin": self.sketch_margin,
            "bucket": pair_or_none(self.bucket),
            "bucket_limited": self.bucket_limited,
        }


def order_statistic_ranks(n: int, q: FloatArray, confidence: float) -> tuple[IntArray, IntArray]:
    """0-based indices (low, high) of the equal-tailed order-statistic interval.

    ``low < 0`` or ``high >= n`` mark a side the data cannot bound.
    """
    from scipy import stats

    if not 0 < confidence < 1:
        raise ValueError(f"confidence must lie strictly between 0 and 1, got {confidence!r}.")
    qa = np.asarray(q, dtype=np.float64)
    alpha = (1.0 - confidence) / 2.0
    if n <= 0:
        return np.full(qa.shape, -1, dtype=np.int64), np.full(qa.shape, 0, dtype=np.int64)
    low = np.asarray(stats.binom.ppf(alpha, n, qa), dtype=np.float64) - 1.0
    high = np.asarray(stats.binom.isf(alpha, n, qa), dtype=np.float64)
    low = np.where(np.isfinite(low), low, -1.0)
    high = np.where(np.isfinite(high), high, float(n))
    return low.astype(np.int64), high.astype(np.int64)


def quantile_intervals(
    sketch: Distribution, qs: FloatArray | tuple[float, ...], confidence: float
) -> list[QuantileInterval]:
    """Point estimate and interval for each q, from the sketch alone (vectorised)."""
    qa = np.asarray(qs, dtype=np.float64)
    n = sketch.count
    if n == 0:
        nan = float("nan")
        return [QuantileInterval(float(q), nan, -np.inf, np.inf, confidence, 0, None, None, 0.0) for q in qa]
    est = sketch.quantile(qa)
    lo_i, hi_i = order_statistic_ranks(n, qa, confidence)
    lo_ok, hi_ok = lo_i >= 0, hi_i < n
    ranks = np.concatenate((np.clip(lo_i, 0, n - 1), np.clip(hi_i, 0, n - 1))).astype(np.float64)
    below, above = sketch.order_statistic_bounds(ranks)
    guess = sketch.value_at(ranks)
    lo_val, hi_val = np.minimum(below[: qa.size], est), np.maximum(above[qa.size :], est)
    margin = np.maximum(guess[: qa.size] - below[: qa.size], above[qa.size :] - guess[qa.size :])
    buckets: list[tuple[float, float] | None] = [None] * qa.size
    limited = np.zeros(qa.size, dtype=bool)
    low_open = np.zeros(qa.size, dtype=bool)
    if is_binned(sketch):
        low_open = sketch.low_is_open(np.clip(lo_i, 0, n - 1).astype(np.float64))
        b_lo, b_hi = sketch.quantile_bounds(qa)
        buckets = [(float(x), float(y)) for x, y in zip(b_lo, b_hi, strict=True)]
        limited = (below[: qa.size] >= b_lo) & (above[qa.size :] <= b_hi)
    out = []
    for k, q in enumerate(qa):
        out.append(
            QuantileInterval(
                q=float(q),
                estimate=float(est[k]),
                low=float(lo_val[k]) if lo_ok[k] else -np.inf,
                high=float(hi_val[k]) if hi_ok[k] else np.inf,
                confidence=confidence,
                n=n,
                rank_low=int(lo_i[k]) if lo_ok[k] else None,
                rank_high=int(hi_i[k]) if hi_ok[k] else None,
                sketch_margin=float(max(margin[k], 0.0)),
                bucket=buckets[k],
                bucket_limited=bool(limited[k] and lo_ok[k] and hi_ok[k]),
                low_open=bool(low_open[k] and lo_ok[k]),
            )
        )
    return out


@dataclass(frozen=True)
class LadderRow:
    """One quantile of A and B, the change, and whether the change is credible.

    ``verdict`` is ``higher`` / ``lower`` (B against A) only when the two intervals do
    not overlap; ``no clear change`` when they overlap; ``too few values`` when a side
    needed to decide is unbounded; ``not tested`` for the maximum, which estimates no
    population quantile (it only grows with n), so no interval is given for it.
    """

    label: str
    q: float | None
    a: QuantileInterval | None
    b: QuantileInterval | None
    a_value: float
    b_value: float
    change: float
    relative_change: float
    """(B - A) / |A|; NaN when A is 0."""
    change_low: float
    """Lower end of the interval for B - A (B's low minus A's high); may be -inf."""
    change_high: float
    verdict: str
    bucket: tuple[float, float] | None = None
    """With ``buckets too coarse``: the bucket that holds the overlap (see ``coarse_bucket``)."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "label": self.label,
            "q": self.q,
            "a": self.a.to_dict() if self.a else {"estimate": num_or_none(self.a_value)},
            "b": self.b.to_dict() if self.b else {"estimate": num_or_none(self.b_value)},
            "change": num_or_none(self.change),
            "relative_change": num_or_none(self.relative_change),
            "change_low": num_or_none(self.change_low),
            "change_high": num_or_none(self.change_high),
            "verdict": self.verdict,
            "bucket": pair_or_none(self.bucket),
        }


def _relative(a: float, b: float) -> float:
    return (b - a) / abs(a) if a != 0 and np.isfinite(a) else float("nan")


HIGHER, LOWER, NO_CHANGE, TOO_FEW, COARSE = (
    "higher", "lower", "no clear change", "too few values", "buckets too coarse",
)  # fmt: skip


def coarse_bucket(a: QuantileInterval, b: QuantileInterval) -> tuple[float, float] | None:
    """The bucket that keeps two overlapping intervals from separating, or None.

    It is a bucket of a binned side holding the whole overlap, which the other side
    does not cover from end to end (or covers only with one bucket of its own): splitting
    it finer could separate the intervals, so the buckets — not the sample size — leave
    the question open.
    """
    lo, hi = max(a.low, b.low), min(a.high, b.high)
    for x, y in ((b, a), (a, b)):
        if x.bucket is None:
            continue
        blo, bhi = x.bucket
        if blo <= lo and hi <= bhi and (not (y.low <= blo and bhi <= y.high) or y.bucket_limited):
            return x.bucket
    return None


def above(x: QuantileInterval, limit: float) -> bool:
    """``x``'s quantile is surely above ``limit`` (strictly, an open bucket edge included)."""
    return bool(x.low > limit or (x.low == limit and x.low_open))


def verdict_of(a: QuantileInterval, b: QuantileInterval) -> str:
    if above(b, a.high):
        return HIGHER
    if above(a, b.high):
        return LOWER
    if (
        a.rank_low is not None
        and a.rank_high is not None
        and b.rank_low is not None
        and (b.rank_high is not None)
        and coarse_bucket(a, b) is not None
    ):
        return COARSE
    if not (a.bounded and b.bounded):
        return TOO_FEW
    return NO_CHANGE


def ladder(
    a: Distribution, b: Distribution, confidence: float, qs: tuple[float, ...] = LADDER_QS
) -> list[LadderRow]:
    ia = quantile_intervals(a, qs, confidence)
    ib = quantile_intervals(b, qs, confidence)
    rows = []
    for x, y in zip(ia, ib, strict=True):
        rows.append(
            LadderRow(
                label=x.label,
                q=x.q,
                a=x,
                b=y,
                a_value=x.estimate,
                b_value=y.estimate,
                change=y.estimate - x.estimate,
                relative_change=_relative(x.estimate, y.estimate),
                change_low=y.low - x.high,
                change_high=y.high - x.low,
                verdict=(v := verdict_of(x, y)),
                bucket=coarse_bucket(x, y) if v == COARSE else None,
            )
        )
    mx_a, mx_b = a.max, b.max
    rows.append(
        LadderRow(
            label="max",
            q=None,
            a=None,
            b=None,
            a_value=mx_a,
            b_value=mx_b,
            change=mx_b - mx_a,
            relative_change=_relative(mx_a, mx_b),
            change_low=-np.inf,
            change_high=np.inf,
            verdict="not tested",
        )
    )
    return rows
