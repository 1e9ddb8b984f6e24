"""Axis scales, tick choice and tick labels for the text plots (formatting only).

Ticks follow the usual 1-2-5 rule for linear axes (steps of 1, 2 or 5 times a power
of ten), decades with 2 and 5 in between for log axes, and the trade's quantile names
(p50, p99, p99.9) on the logit probability axis. A tick is kept only when its label
fits beside its neighbours, so the axes stay readable at 40 columns.

Labels are written by :func:`ogive.numbers.quantity` (compact: ``250ms``, ``1.5s``, ``2m``).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from ..sketch import quantile_label


def distinct_labels(values: Sequence[float], fmt: Callable[[float, int], str]) -> list[str]:
    """Labels with just enough digits that neighbouring ticks never read the same."""
    labels: list[str] = []
    for digits in range(2, 8):
        labels = [fmt(v, digits) for v in values]
        if len(set(labels)) == len(labels):
            return labels
    return labels


# ---------------------------------------------------------------- scales
@dataclass(frozen=True)
class Scale:
    """A monotone map from data values to [0, 1] along an axis."""

    kind: str
    """'linear', 'log' or 'logit' (probabilities, tails stretched)."""
    lo: float
    hi: float
    """Data range shown, in data units (probabilities for 'logit')."""

    def forward(self, x: np.ndarray) -> np.ndarray:
        with np.errstate(divide="ignore", invalid="ignore"):
            t = _transform(self.kind, np.asarray(x, dtype=np.float64))
            a, b = _transform(self.kind, np.array([self.lo, self.hi]))
            return np.asarray((t - a) / (b - a), dtype=np.float64)


def _transform(kind: str, x: np.ndarray) -> np.ndarray:
    if kind == "log":
        return np.where(x > 0, np.log10(np.where(x > 0, x, 1.0)), -np.inf)
    if kind == "logit":
        xc = np.clip(x, 1e-15, 1 - 1e-15)
        out = np.log10(xc / (1 - xc))
        return np.where(x <= 0, -np.inf, np.where(x >= 1, np.inf, out))
    return x


def _inverse(kind: str, t: float) -> float:
    if kind == "log":
        return float(10**t)
    if kind == "logit":
        return float(1 / (1 + 10 ** (-t)))
    return t


def make_scale(kind: str, values: np.ndarray, *, pad: float = 0.03, include: Sequence[float] = ()) -> Scale:
    """A scale covering every finite value (positive ones on log), padded a little.

    The padding keeps the extreme points off the frame line so they stay visible.
    """
    v = np.asarray(values, dtype=np.float64)
    v = v[np.isfinite(v) & (np.abs(v) < 1e300)]
    if kind == "log":
        v = v[v > 0]
    elif kind == "logit":
        v = v[(v > 0) & (v < 1)]
    extra = np.asarray([x for x in include if math.isfinite(x)], dtype=np.float64)
    v = np.concatenate((v, extra))
    if v.size == 0:
        return Scale(kind, *((0.1, 0.9) if kind == "logit" else (1.0, 10.0) if kind == "log" else (0.0, 1.0)))
    t = _transform(kind, v)
    a, b = float(t.min()), float(t.max())
    if b - a <= 0:
        width = abs(a) * 0.1 if (a != 0 and kind == "linear") else 0.5
        a, b = a - width, b + width
    span = b - a
    a, b = a - pad * span, b + pad * span
    return Scale(kind, _inverse(kind, a), _inverse(kind, b))


# ---------------------------------------------------------------- ticks
@dataclass(frozen=True)
class Tick:
    value: float
    label: str
    position: float
    """Place along the axis in [0, 1]."""
    major: bool = True
    """Minor ticks get a tick mark but no label."""


def nice_step(span: float, max_ticks: int) -> float:
    """The smallest 1-2-5 step giving at most ``max_ticks`` intervals over ``span``."""
    raw = span / max(max_ticks, 1)
    if raw <= 0 or not math.isfinite(raw):
        return 1.0
    mag = 10 ** math.floor(math.log10(raw))
    for m in (1.0, 2.0, 5.0, 10.0):
        if m * mag >= raw * (1 - 1e-9):
            return m * mag
    return 10 * mag


def _linear_candidates(lo: float, hi: float, max_ticks: int) -> list[float]:
    step = nice_step(hi - lo, max_ticks)
    first = math.ceil(lo / step - 1e-9)
    last = math.floor(hi / step + 1e-9)
    return [round(k * step, 12) for k in range(first, last + 1)]


def _log_candidates(lo: float, hi: float, mantissas: Sequence[int]) -> list[float]:
    out = []
    for d in range(math.floor(math.log10(lo)) - 1, math.ceil(math.log10(hi)) + 1):
        for m in mantissas:
            v = m * 10.0**d
            if lo <= v <= hi:
                out.append(float(f"{v:.12g}"))
    return out


LOGIT_LADDER: tuple[float, ...] = (
    0.5,
    0.9,
    0.1,
    0.99,
    0.01,
    0.999,
    0.001,
    0.9999,
    0.0001,
    0.99999,
    0.00001,
    0.999999,
    0.75,
    0.25,
)
"""Probabilities labelled on a logit axis, most important first."""


def prob_label(p: float) -> str:
    return quantile_label(p)


def choose_ticks(
    scale: Scale,
    length: int,
    fmt: Callable[[float, int], str],
    *,
    horizontal: bool,
    min_gap: int = 1,
) -> list[Tick]:
    """Ticks whose labels fit: ``length`` is the axis size in cells.

    Horizontal labels need their width plus ``min_gap`` between neighbours; vertical
    ones need one free row between them.
    """

    def fits(cands: list[float], labels: list[str]) -> bool:
        pos = scale.forward(np.asarray(cands)) * (length - 1)
        if horizontal:
            for i in range(1, len(cands)):
                need = (len(labels[i - 1]) + len(labels[i])) / 2 + min_gap
                if pos[i] - pos[i - 1] < need:
                    return False
        else:
            cells = np.round(pos)
            if np.any(np.diff(cells) < 2):
                return False
        return True

    def build(cands: list[float], major: bool = True) -> list[Tick]:
        labels = distinct_labels(cands, fmt) if major else [""] * len(cands)
        pos = scale.forward(np.asarray(cands, dtype=np.float64))
        return [Tick(v, lab, float(p), major) for v, lab, p in zip(cands, labels, pos, strict=True)]

    if scale.kind == "logit":
        chosen: list[float] = []
        for p in LOGIT_LADDER:
            if not scale.lo <= p <= scale.hi:
                continue
            trial = sorted([*chosen, p])
            if fits(trial, [prob_label(x) for x in trial]):
                chosen = trial
        return [Tick(p, prob_label(p), float(scale.forward(np.array([p]))[0])) for p in chosen]

    if scale.kind == "log":
        best: list[Tick] = []
        for mant in ((1,), (1, 2, 5), (1, 2, 3, 5, 7)):
            cands = _log_candidates(scale.lo, scale.hi, mant)
            if len(cands) >= 2 and fits(cands, distinct_labels(cands, fmt)):
                best = build(cands)
        if len(best) >= 2:
            if all(_is_decade(t.value) for t in best):
                minor = [v for v in _log_candidates(scale.lo, scale.hi, (2, 5))]
                best = sorted(best + build(minor, major=False), key=lambda t: t.position)
            return best
        # Too many decades for the room: every 2nd, 3rd, ... decade, the rest as minor ticks.
        decades = _log_candidates(scale.lo, scale.hi, (1,))
        if len(decades) >= 3:
            for every in (2, 3, 4, 5, 6, 10):
                major = [v for v in decades if round(math.log10(v)) % every == 0]
                if len(major) >= 2 and fits(major, distinct_labels(major, fmt)):
                    minor = [v for v in decades if v not in major]
                    return sorted(build(major) + build(minor, major=False), key=lambda t: t.position)
        # 1-2-5 everywhere does not fit (a short axis over a decade or two): add them by
        # importance, decades first, keeping each that still fits. Linear steps would
        # crowd the top of a log axis and leave one label (a 9-row axis over 1.5-50 ms
        # showed only "50ms").
        picked: list[float] = []
        for mant in ((1,), (5,), (2,), (3,), (7,)):
            for v in _log_candidates(scale.lo, scale.hi, mant):
                trial = sorted([*picked, v])
                if fits(trial, distinct_labels(trial, fmt)):
                    picked = trial
        if len(picked) >= 2:
            return build(picked)
        # Less than a decade shown: 1-2-5 steps placed on the log axis.
    for max_ticks in range(max(length // 2, 2), 0, -1):
        cands = _linear_candidates(scale.lo, scale.hi, max_ticks)
        if scale.kind == "log":
            cands = [c for c in cands if c > 0]
        if len(cands) >= 1 and fits(cands, distinct_labels(cands, fmt)):
            return build(cands)
    return []


def _is_decade(v: float) -> bool:
    lg = math.log10(v)
    return abs(lg - round(lg)) < 1e-9
