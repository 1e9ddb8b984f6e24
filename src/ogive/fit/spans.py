"""Where a change lies and what shape it has: a step at a window boundary, or a span
of windows that mix before and after (a rollout). Numpy only.

*Where, how surely.* The split is placed where D is largest. Its uncertainty comes
from a bootstrap of windows (M. Hušková and C. Kirch, "Bootstrapping confidence
intervals for the change-point of time series", *J. Time Ser. Anal.* 29 (2008)
947–972): windows before the split are redrawn from the windows before it, those
after from those after, and the split is placed again; the central 90 % of the
shifts is the interval. A window boundary is all the data can resolve, so the
interval is never narrower than one window either side.

*Step or span.* Between the periods before (CDF F_L) and after (F_R) a window of a
rollout is a mix ``(1 - w) F_L + w F_R``, w the share already switched. Each window's
w is estimated by weighted least squares at the grid, and a ramp (w rising evenly
from 0 at t0 to 1 at t1, averaged over each window) is fitted to them by weighted
least squares, the weights being the windows' n. A step is the ramp with t0 = t1
(which may fall inside a window: a change at 13:02 leaves the 13:00 window partly
switched). The ramp is reported, as a span from t0 to t1, when it beats the best
step by more than chance: its lower squared error, in units of the noise variance
measured on the windows well inside either period (robustly: 1.4826 × the median
absolute deviation), passes the 99 % point of chi-square with one degree of freedom,
and it lasts at least 1.5 windows. Neighbouring change points whose middle period
looks like a mix of the periods either side are first joined into one (binary
segmentation cuts a slow rollout into a staircase of steps).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Protocol

import numpy as np
from numpy.typing import NDArray

from .splits import best_split, run_weights

FloatArray = NDArray[np.float64]


class Tested(Protocol):
    """What the search says of a split it called a change (``ogive.fit.changes.Split``)."""

    @property
    def at(self) -> int: ...
    @property
    def distance(self) -> float: ...
    @property
    def threshold(self) -> float: ...
    @property
    def p_value(self) -> float: ...


BOOTSTRAP = 99
"""Redraws for the interval of a change's place."""
LOCAL = 64
"""Windows either side of a change used to place it (the bootstrap) and to shape its span."""
SEARCH = 16
"""How far (windows) beyond the change points a span's ends are looked for."""
RAMP_CHI2 = 6.635
"""A ramp replaces a step when it lowers the weighted squared error by this many noise
variances: the 99 % point of chi-square with one degree of freedom (the ramp's one
extra parameter), from scipy.stats.chi2.ppf(0.99, 1)."""


@dataclass(frozen=True)
class Change:
    """A change between the windows before ``first`` and those from ``last`` on.

    A step has ``first == last``: the change lies at that window boundary. A span
    (a gradual change) runs from window ``first`` to ``last`` (exclusive); the
    windows in between are mixes of before and after.
    """

    first: int
    last: int
    at: float
    """Estimated boundary, in windows (fractional for a span's ends: see start/end)."""
    low: int
    high: int
    """Interval for the boundary of a step, in windows (``low <= first <= high``)."""
    start: float
    end: float
    """A span's ends in windows, fractional (where its mix reaches 0 and 1); for a step both are ``first``."""
    before: tuple[int, int]
    after: tuple[int, int]
    """The windows of the period before and after it (start, stop), for ladders."""
    distance: float
    threshold: float
    p_value: float
    shares: tuple[float, ...] = field(default=())
    """A span's per-window share of "after" (its transitional windows)."""

    @property
    def gradual(self) -> bool:
        return self.last > self.first

    def to_dict(self) -> dict[str, Any]:
        return {
            "first_window": self.first,
            "last_window": self.last,
            "interval_windows": [self.low, self.high],
            "span_windows": [self.start, self.end],
            "gradual": self.gradual,
            "before_windows": list(self.before),
            "after_windows": list(self.after),
            "distance": self.distance,
            "threshold": self.threshold,
            "p_value": self.p_value,
            "shares": list(self.shares),
        }


def locate(
    counts: FloatArray, sizes: FloatArray, lo: int, at: int, hi: int, rng: np.random.Generator
) -> tuple[int, int]:
    """90 % bootstrap interval of the split between ``lo:at`` and ``at:hi`` (windows)."""
    a, b = max(lo, at - LOCAL), min(hi, at + LOCAL)
    left = np.arange(a, at)[sizes[a:at] > 0]
    right = np.arange(at, b)[sizes[at:b] > 0]
    if left.size < 2 or right.size < 2:
        return at - 1, at + 1
    shifts = []
    for _ in range(BOOTSTRAP):
        pick = np.concatenate((rng.choice(left, at - a), rng.choice(right, b - at)))
        k, d = best_split(counts[pick], sizes[pick])
        if np.isfinite(d):
            shifts.append(k - (at - a))
    if not shifts:
        return at - 1, at + 1
    s_lo, s_hi = np.quantile(np.asarray(shifts), [0.05, 0.95])
    return min(at + int(np.floor(s_lo)), at - 1), max(at + int(np.ceil(s_hi)), at + 1)


def mix_shares(counts: FloatArray, sizes: FloatArray, before: FloatArray, after: FloatArray) -> FloatArray:
    """Each window's share of ``after`` in the best mix ``(1 - w) before + w after`` (CDFs
    at the grid), weighted least squares; NaN for empty windows."""
    pooled = (before + after) / 2.0
    with np.errstate(divide="ignore", invalid="ignore"):
        v = np.where((pooled > 0) & (pooled < 1), 1.0 / (pooled * (1.0 - pooled)), 0.0)
        d = after - before
        denom = float((v * d * d).sum())
        f = counts / sizes[:, None]
        w = ((f - before[None, :]) * (v * d)[None, :]).sum(axis=1) / denom if denom > 0 else np.nan
    return np.where(sizes > 0, w, np.nan)


def _cdf(counts: FloatArray, sizes: FloatArray, a: int, b: int) -> FloatArray | None:
    n = float(sizes[a:b].sum())
    return counts[a:b].sum(axis=0) / n if n > 0 else None


def _ramp_mean(t: FloatArray, t0: FloatArray, t1: FloatArray) -> FloatArray:
    """Mean over window [t, t + 1) of the ramp from 0 at ``t0`` to 1 at ``t1`` (a step when
    they meet): the share a window holds of a change spread evenly over that time.
    Broadcasts: ``t`` along the last axis, candidate ramps along the first."""
    span = np.maximum(t1 - t0, 1e-9)

    def integral(u: FloatArray) -> FloatArray:  # of the ramp from -inf to u
        inside = np.clip(u - t0, 0.0, span)
        return inside * inside / (2.0 * span) + np.maximum(u - t1, 0.0)

    return np.asarray(integral(t + 1.0) - integral(t), dtype=np.float64)


def _shape(
    counts: FloatArray, sizes: FloatArray, lo: int, first: int, last: int, hi: int
) -> tuple[float, float, FloatArray, int] | None:
    """Step or ramp around the change(s) at windows ``first..last`` between ``lo`` and ``hi``.

    Returns (t0, t1, shares, a): the change runs from window position t0 to t1 (equal
    for a step), ``shares`` are the mix shares of windows ``a, a + 1, ...``. None when
    the periods either side are too short to tell.
    """
    a, b = max(lo, first - LOCAL), min(hi, last + LOCAL)
    t0, t1 = float(first), float(last)
    shares = np.full(b - a, np.nan)
    idx = np.arange(a, b, dtype=np.float64)
    n = sizes[a:b]
    cands = np.arange(max(a, first - SEARCH), min(b, last + SEARCH) + 0.01, 0.25)
    c0, c1 = np.meshgrid(cands, cands, indexing="ij")
    keep = c1 >= c0
    r0, r1 = c0[keep][:, None], c1[keep][:, None]
    pred = _ramp_mean(idx[None, :], r0, r1)
    step = (r1 == r0)[:, 0]
    for _ in range(3):  # the periods are re-read without the windows found mixed
        before = _cdf(counts, sizes, a, max(int(np.floor(t0)), a + 1))
        after = _cdf(counts, sizes, min(int(np.ceil(t1)), b - 1), b)
        if before is None or after is None:
            return None
        shares = mix_shares(counts[a:b], n, before, after)
        ok = np.isfinite(shares) & (n > 0)
        sse = (((np.where(ok, shares, 0.0)[None, :] - pred) ** 2) * np.where(ok, n, 0.0)[None, :]).sum(axis=1)
        i_step = int(np.argmin(np.where(step, sse, np.inf)))
        i_ramp = int(np.argmin(np.where(step, np.inf, sse)))
        own = _ramp_mean(idx, r0[i_step], r1[i_step])
        stable = ok & ((own == 0.0) | (own == 1.0))
        stable &= (idx < r0[i_step, 0] - 1) | (idx > r0[i_step, 0] + 1)
        if stable.sum() < 4:
            return None
        resid = (shares - own)[stable] * np.sqrt(n[stable])
        var = (1.4826 * float(np.median(np.abs(resid)))) ** 2
        if not var > 0:
            return None
        gain = (sse[i_step] - sse[i_ramp]) / var
        r = i_ramp if gain > RAMP_CHI2 and r1[i_ramp, 0] - r0[i_ramp, 0] >= 1.5 else i_step
        new = (float(r0[r, 0]), float(r1[r, 0]))
        if r == i_ramp:
            new = _trim_ends(new, shares, n, var, a)
        if new == (t0, t1):
            break
        t0, t1 = new
    return t0, t1, shares, a


def _trim_ends(
    ramp: tuple[float, float], shares: FloatArray, n: FloatArray, var: float, a: int
) -> tuple[float, float]:
    """A ramp's ends moved inwards to where the shares say the change had begun and ended.

    An even ramp is only a model: a deploy host by host is a staircase, and the
    straight line through its steps starts before the first step. Fitted without that
    assumption (shares non-decreasing: the pool-adjacent-violators algorithm, R. E.
    Barlow et al., *Statistical Inference under Order Restrictions*, 1972, ch. 1), the
    span starts at the first pooled block clearly above 0 and ends after the last one
    clearly below 1 (by 2 standard errors of the block); the ends only ever move in.
    """
    t0, t1 = ramp
    lo, hi = max(int(np.floor(t0)) - a, 0), min(int(np.ceil(t1)) - a, shares.size)
    ok = np.flatnonzero(np.isfinite(shares[lo:hi]) & (n[lo:hi] > 0)) + lo
    if ok.size < 2:
        return ramp
    blocks = _pooled(shares[ok], n[ok])
    start, end = t0, t1
    for first, _last, mean, weight in blocks:
        if mean > 2.0 * np.sqrt(var / weight):
            start = max(t0, float(a + ok[first]))
            break
    for _first, last, mean, weight in reversed(blocks):
        if mean < 1.0 - 2.0 * np.sqrt(var / weight):
            end = min(t1, float(a + ok[last] + 1))
            break
    return (start, end) if end > start else ramp


def _pooled(y: FloatArray, w: FloatArray) -> list[tuple[int, int, float, float]]:
    """Weighted non-decreasing fit: (first, last, mean, weight) of each pooled block."""
    blocks: list[tuple[int, int, float, float]] = []
    for i, (yi, wi) in enumerate(zip(y.tolist(), w.tolist(), strict=True)):
        blocks.append((i, i, yi, wi))
        while len(blocks) > 1 and blocks[-2][2] > blocks[-1][2]:
            f2, _, m2, w2 = blocks.pop(-2)
            _, l1, m1, w1 = blocks.pop()
            blocks.append((f2, l1, (m1 * w1 + m2 * w2) / (w1 + w2), w1 + w2))
    return blocks


def _joins(counts: FloatArray, sizes: FloatArray, lo: int, k1: int, k2: int, hi: int) -> bool:
    """True when windows ``k1:k2`` look like a mix of ``lo:k1`` and ``k2:hi`` (one rollout)."""
    before, middle, after = (
        _cdf(counts, sizes, lo, k1),
        _cdf(counts, sizes, k1, k2),
        _cdf(counts, sizes, k2, hi),
    )
    if before is None or middle is None or after is None:
        return False
    n_mid = float(sizes[k1:k2].sum())
    w = float(mix_shares(middle[None, :] * n_mid, np.array([n_mid]), before, after)[0])
    if not 0.05 < w < 0.95:
        return False
    mix = (1 - w) * before + w * after
    weight = run_weights(middle * n_mid, n_mid)
    resid = np.abs(middle - mix) * weight * np.sqrt(n_mid)
    step = np.abs(after - before) * weight * np.sqrt(n_mid)
    # The middle is far closer to the mix than before is to after.
    return bool(resid.max() < 0.25 * step.max())


def describe(
    counts: FloatArray,
    sizes: FloatArray,
    bounds: list[int],
    tests: Mapping[int, Tested],
    rng: np.random.Generator,
) -> list[Change]:
    """Join rollout staircases, then place each change and decide step or span."""
    m = sizes.size
    groups: list[list[int]] = []
    for k in bounds:
        if groups:
            prev = groups[-1]
            lo = bounds[bounds.index(prev[0]) - 1] if bounds.index(prev[0]) > 0 else 0
            i = bounds.index(k)
            hi = bounds[i + 1] if i + 1 < len(bounds) else m
            if _joins(counts, sizes, lo, prev[-1], k, hi) and _joins(counts, sizes, lo, prev[0], k, hi):
                prev.append(k)
                continue
        groups.append([k])
    out = []
    for gi, grp in enumerate(groups):
        lo = groups[gi - 1][-1] if gi > 0 else 0
        hi = groups[gi + 1][0] if gi + 1 < len(groups) else m
        first, last = grp[0], grp[-1]
        best = max((tests[k] for k in grp if k in tests), key=lambda t: t.distance)
        shape = _shape(counts, sizes, lo, first, last, hi)
        if shape is not None and shape[1] > shape[0]:
            t0, t1, shares, a = shape
            s, e = int(np.floor(t0)), int(np.ceil(t1))
            mixed = tuple(float(x) for x in shares[s - a : e - a])
            out.append(
                Change(s, e, (t0 + t1) / 2, s - 1, e + 1, t0, t1, (lo, s), (e, hi),
                       best.distance, best.threshold, best.p_value, mixed)
            )  # fmt: skip
            continue
        at = best.at if len(grp) == 1 or shape is None else round(shape[0])
        low, high = locate(counts, sizes, lo, at, hi, rng)
        out.append(
            Change(at, at, float(at), low, high, float(at), float(at), (lo, at), (at, hi),
                   best.distance, best.threshold, best.p_value)
        )  # fmt: skip
    return out
