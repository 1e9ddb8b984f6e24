"""What changed at each change point: p50 … p99.9 before and after, and which moved.

For every change the search found (:mod:`ogive.fit.changes`), the periods either side
reach to the neighbouring changes; a quantile *moved* when the CDFs of the two periods,
at the whole's value of that quantile, are further apart (standardised, as in
:mod:`ogive.fit.splits`) than the threshold of the test that found the change. The
values before and after are read from the windows merged (numpy only; no I/O).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..sketch import Binned, Sketch, merge_binned, quantile_label, timekeys
from ..sketch.distribution import Dist
from .distances import num_or_none
from .ladder import LADDER_QS
from .spans import Change, locate
from .splits import MIN_TAIL_COUNT

FloatArray = NDArray[np.float64]

BODY_MAX_Q = 0.9
"""Quantiles up to this are the body; above it, the tail."""
LADDER_WINDOWS = 500
"""The windows nearest a change merged into its before and after sketches for the
ladder's estimates (merging costs about 0.3 ms a window; the test of what moved reads
the whole periods, from counts)."""


@dataclass(frozen=True)
class QuantileMove:
    """One quantile before and after a change, and whether it moved beyond chance.

    ``z`` is the standardised gap between the CDFs of the two periods at the whole's
    value of this quantile (the statistic of :mod:`ogive.fit.splits` at one grid point);
    the quantile *moved* when ``|z|`` passes the threshold of the test that found the
    change. That threshold bounds the largest gap over every split and every grid
    point of random orders, so the calls hold for all quantiles at once. The ladder's
    order-statistic intervals are not used here: read through window sketches merged
    by the hundred, they carry the merge's rank error and would hide most tail moves;
    ``ogive gate`` on the logs gives them at full precision.
    """

    label: str
    q: float
    before: float
    after: float
    z: float | None
    """None where the grid has no point for this quantile or too few values lie beyond it."""
    moved: bool

    @property
    def relative(self) -> float:
        return (self.after - self.before) / abs(self.before) if self.before else float("nan")

    def to_dict(self) -> dict[str, Any]:
        return {
            "label": self.label,
            "q": self.q,
            "before": num_or_none(self.before),
            "after": num_or_none(self.after),
            "relative_change": num_or_none(self.relative),
            "z": self.z,
            "moved": self.moved,
        }


@dataclass(frozen=True)
class ChangeReport:
    """A change point in time, and what changed (after against before)."""

    change: Change
    start_us: float
    """A step's moment (a window boundary), or where a span begins."""
    end_us: float
    """Where a span ends (equal to ``start_us`` for a step)."""
    low_us: float
    high_us: float
    """The step's interval (a span: a window either side of it)."""
    split_us: float
    """Where to split for ``gate --split-at``: the step, or the end of a span."""
    before_n: int
    after_n: int
    before_windows: tuple[int, int]
    after_windows: tuple[int, int]
    """The windows (start, stop) of the periods read against each other."""
    ladder: tuple[QuantileMove, ...]
    """p50 … p99.9, before against after."""
    kind: str
    """``body``, ``tail``, ``body and tail``, or ``shape`` (no single quantile moved clearly)."""
    moved: tuple[str, ...]
    """Labels of the quantiles that moved, largest relative move first."""

    @property
    def gradual(self) -> bool:
        return self.change.gradual

    def move(self, label: str) -> QuantileMove | None:
        return next((m for m in self.ladder if m.label == label), None)

    @property
    def size(self) -> float:
        """The largest |relative change| of a quantile that moved (0 when none did)."""
        return max((abs(m.relative) for m in self.ladder if m.moved and np.isfinite(m.relative)), default=0.0)

    def to_dict(self) -> dict[str, Any]:
        return {
            "start": timekeys.start_text(self.start_us),
            "end": timekeys.start_text(self.end_us),
            "interval": [timekeys.start_text(self.low_us), timekeys.start_text(self.high_us)],
            "gradual": self.gradual,
            "split_at": timekeys.start_text(self.split_us),
            "kind": self.kind,
            "moved": list(self.moved),
            "before_n": self.before_n,
            "after_n": self.after_n,
            "before_windows": list(self.before_windows),
            "after_windows": list(self.after_windows),
            "ladder": [m.to_dict() for m in self.ladder],
            "search": self.change.to_dict(),
        }


@dataclass(frozen=True)
class Counts:
    """The search's input, kept for the test of what moved: grid values, counts, sizes."""

    grid: FloatArray
    counts: FloatArray
    sizes: FloatArray


@dataclass(frozen=True)
class Stretch:
    """The windows of one stream as the reports need them."""

    windows: Sequence[Dist | None]
    whole: Dist
    unit: str
    start: Callable[[float], float]
    """Epoch microseconds where window position ``i`` (fractional) begins."""


def period_sketch(st: Stretch, a: int, b: int, near_end: bool) -> Dist:
    """The windows ``a:b`` merged (at most the LADDER_WINDOWS nearest the change), into a
    sketch with the windows' own tail size: its exact tails then hold the true extremes
    of all of them (a larger buffer would be filled from each window's few). Binned
    windows (telemetry histograms) add their bucket counts instead."""
    idx = list(range(a, b))
    idx = idx[-LADDER_WINDOWS:] if near_end else idx[:LADDER_WINDOWS]
    chosen = [s for s in (st.windows[i] for i in idx) if s is not None and s.count]
    if isinstance(st.whole, Binned):
        return merge_binned([s for s in chosen if isinstance(s, Binned)]) if chosen else Binned(st.unit)
    parts = [s for s in chosen if isinstance(s, Sketch)]
    tail = min((s.tail_size for s in parts), default=st.whole.tail_size)
    out = Sketch(st.unit, compression=st.whole.compression, tail_size=tail)
    for s in parts:
        out.merge(s)
    return out


def describe_changes(st: Stretch, changes: tuple[Change, ...], cm: Counts) -> tuple[ChangeReport, ...]:
    """What moved at each change, after against before, the periods reaching to the
    neighbouring changes.

    A change after which no quantile moved clearly (``shape``) is still reported, but
    does not cut its neighbours' periods short: a chance split beside a real change
    would otherwise leave that change a thin period to be read against. Such changes
    are set aside one at a time, the weakest first, until every change left moved a
    quantile (the test is on counts, so this costs little); the ladders are then read
    from merged window sketches once.
    """
    active = list(changes)
    while active:
        moves = [_moved(st, c, *_periods(c, active, len(st.windows)), cm) for c in active]
        shapes = [c for c, m in zip(active, moves, strict=True) if not any(m)]
        if not shapes:
            break
        active.remove(min(shapes, key=lambda c: c.distance))
    out = []
    for c in changes:
        others = [x for x in active if x is not c]
        out.append(_report(st, c, *_periods(c, others, len(st.windows)), cm))
    return tuple(out)


def _periods(c: Change, bounds: list[Change], count: int) -> tuple[tuple[int, int], tuple[int, int]]:
    """The windows before and after ``c``, reaching to the nearest of ``bounds`` either side."""
    before = max((x.last for x in bounds if x.last <= c.first and x is not c), default=0)
    after = min((x.first for x in bounds if x.first >= c.last and x is not c), default=count)
    return (before, c.first), (c.last, after)


def _moved(st: Stretch, c: Change, before: tuple[int, int], after: tuple[int, int], cm: Counts) -> list[bool]:
    """Per ladder quantile: did the CDF there move beyond the threshold that found ``c``."""
    return [z is not None and abs(z) > c.threshold for z in _gaps(st.whole, cm, before, after)]


def _report(
    st: Stretch,
    c: Change,
    span_before: tuple[int, int],
    span_after: tuple[int, int],
    cm: Counts,
) -> ChangeReport:
    before = period_sketch(st, span_before[0], span_before[1], True)
    after = period_sketch(st, span_after[0], span_after[1], False)
    qs = np.array(LADDER_QS[:-1])  # p99.99 is beyond what a grid point can carry
    b_est, a_est = before.quantile(qs), after.quantile(qs)
    z = _gaps(st.whole, cm, span_before, span_after)
    ladder = tuple(
        QuantileMove(quantile_label(q), q, float(b), float(a), zq, moved)
        for q, b, a, zq, moved in zip(
            qs.tolist(), b_est, a_est, z, _moved(st, c, span_before, span_after, cm), strict=True
        )
    )
    moved = sorted((m for m in ladder if m.moved), key=_size_of_move)
    body = any(m.q <= BODY_MAX_Q for m in moved)
    tail = any(m.q > BODY_MAX_Q for m in moved)
    kind = "body and tail" if body and tail else "body" if body else "tail" if tail else "shape"
    if c.gradual:
        start, end = st.start(c.start), st.start(c.end)
        low, high, split = st.start(c.first - 1), st.start(c.last + 1), st.start(c.last)
    else:
        start = end = split = st.start(c.first)
        # Placed again between the neighbours kept (a chance split set aside beside it
        # would otherwise pinch the bootstrap to a few windows on one side).
        rng = np.random.default_rng(c.first)
        low_i, high_i = locate(cm.counts, cm.sizes, span_before[0], c.first, span_after[1], rng)
        low, high = st.start(low_i), st.start(high_i)
    return ChangeReport(
        c,
        start,
        end,
        low,
        high,
        split,
        before.count,
        after.count,
        span_before,
        span_after,
        ladder,
        kind,
        tuple(m.label for m in moved),
    )


def _size_of_move(m: QuantileMove) -> float:
    return -abs(m.relative) if np.isfinite(m.relative) else 0.0


def _gaps(whole: Dist, cm: Counts, before: tuple[int, int], after: tuple[int, int]) -> list[float | None]:
    """The standardised CDF gap between the periods at the whole's p50 … p99.9 (None
    where the grid lacks the point or too few values lie beyond it)."""
    nb, na = float(cm.sizes[before[0] : before[1]].sum()), float(cm.sizes[after[0] : after[1]].sum())
    out: list[float | None] = []
    if nb <= 0 or na <= 0:
        return [None] * (len(LADDER_QS) - 1)
    fb = cm.counts[before[0] : before[1]].sum(axis=0) / nb
    fa = cm.counts[after[0] : after[1]].sum(axis=0) / na
    f = (fb * nb + fa * na) / (nb + na)
    for q in LADDER_QS[:-1]:
        x = float(whole.quantile(q)[()])
        g = int(np.searchsorted(cm.grid, x))
        thin = g >= cm.grid.size or min(f[g], 1 - f[g]) * min(nb, na) < MIN_TAIL_COUNT
        if thin or not np.isclose(cm.grid[g], x):
            out.append(None)
            continue
        out.append(float((fb[g] - fa[g]) / np.sqrt(f[g] * (1 - f[g]) * (1 / nb + 1 / na))))
    return out
