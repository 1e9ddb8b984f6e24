"""Two distributions side by side, from their sketches alone: did B move from A, where, how much.

Pieces (each cites its method where it lives):

* the quantile ladder with order-statistic intervals (:mod:`ogive.fit.ladder`);
* the two-sample Kolmogorov–Smirnov distance and the Wasserstein-1 distance (here);
* the shift function (:mod:`ogive.fit.shift`);
* the tail budget: the share of B above A's p99 and p99.9, with a G test (here).

What a ladder verdict means. Each interval covers its true quantile with probability
at least ``confidence`` (per quantile, per sample). A row says ``higher`` only when B's
whole interval lies above A's. If both intervals cover their true quantiles — which
happens with probability at least ``confidence ** 2`` for independent samples (0.9025
at 0.95) — separated intervals imply the true quantiles differ in that direction. So a
single row's call is wrong with probability at most ``1 - confidence ** 2``; when
nothing changed the chance of a call is far smaller (two 95 % intervals of similar width
separate by chance about 0.6 % of the time, from the normal approximation). Over the
seven rows these chances add up (union bound), so read a lone marginal call with care;
the shift function's band is simultaneous by construction, and the gate
(:mod:`ogive.fit.gate`) sets its levels so that its claims hold jointly.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..sketch import Sketch, SketchSet
from .ladder import LADDER_QS, LadderRow, ladder
from .shift import ShiftFunction, shift_function

FloatArray = NDArray[np.float64]


def _num(x: float) -> float | None:
    return float(x) if np.isfinite(x) else None


def _support(s: Sketch) -> FloatArray:
    """Every x where the sketch's CDF can bend: digest knots and the exact buffers."""
    if s.count == 0:
        return np.empty(0)
    _, knot_vals = s.digest.knots()
    return np.concatenate((knot_vals, s.low, s.high))


# ---------------------------------------------------------------- distances
@dataclass(frozen=True)
class KSResult:
    """Two-sample Kolmogorov–Smirnov distance between the sketches' CDFs.

    Method: N. Smirnov (1948), "Table for estimating the goodness of fit of empirical
    distributions", *Ann. Math. Statist.* 19, 279–281: under no difference,
    sqrt(nm/(n+m))·D has the Kolmogorov limit distribution. A sketch bounds the count
    of values below any x (``Sketch.count_bounds``), so the distance the raw data would
    give lies in [``distance_low``, ``distance_high``] for sure; the difference is called
    only when ``distance_low`` passes the critical value. The p-value is a number only
    when both sketches hold every value; otherwise what is known is the interval
    [``p_low``, ``p_high``] it lies in (from the two ends of the distance), and
    ``p_value`` is NaN: a bound printed as a p-value averaged 0.998 under no change.
    """

    distance: float
    """The sketches' own estimate (their interpolated CDFs)."""
    distance_low: float
    distance_high: float
    at: float
    """The value where the estimated CDFs are furthest apart."""
    critical: float
    """Asymptotic critical value at 1 - confidence."""
    p_value: float
    """Asymptotic p-value when both sketches are exact; NaN otherwise (see p_low/p_high)."""
    p_low: float
    p_high: float
    differs: bool
    confidence: float
    exact: bool

    @property
    def slack(self) -> float:
        """How far the raw-data distance may lie from the estimate, either way."""
        return max(self.distance_high - self.distance, self.distance - self.distance_low)

    @property
    def slack_at(self) -> float:
        """How far below the estimate the raw-data distance may lie."""
        return self.distance - self.distance_low

    @property
    def threshold(self) -> float:
        """What ``distance`` must exceed to be called a difference."""
        return self.critical + self.slack_at

    def to_dict(self) -> dict[str, Any]:
        return {
            "distance": self.distance,
            "distance_low": self.distance_low,
            "distance_high": self.distance_high,
            "at": _num(self.at),
            "critical": self.critical,
            "p_value": _num(self.p_value),
            "p_low": self.p_low,
            "p_high": self.p_high,
            "differs": self.differs,
            "confidence": self.confidence,
            "exact": self.exact,
            "method": "two-sample Kolmogorov-Smirnov (Smirnov asymptotic); distance bounded by the "
            "sketches' count bounds",
        }


def _breakpoints(s: Sketch) -> FloatArray:
    """Every x where the sketch's CDF or its count bounds can step."""
    if s.count == 0:
        return np.empty(0)
    lo, hi = s.digest.ranges()
    return np.concatenate((_support(s), lo, hi, np.nextafter(hi, -np.inf), np.nextafter(s.low, -np.inf)))


def ks_distance(a: Sketch, b: Sketch, *, confidence: float = 0.95) -> KSResult:
    from scipy import stats

    x = np.unique(np.concatenate((_support(a), _support(b))))
    if x.size == 0:
        raise ValueError("both sketches are empty; there is nothing to compare.")
    n, m = a.count, b.count
    gap = np.abs(a.cdf(x) - b.cdf(x))
    i = int(np.argmax(gap))
    d = float(gap[i])
    # Bounds on the raw-data distance: at each breakpoint the two counts lie in their
    # sketches' bounds; the true sup is at least the smallest gap they allow anywhere,
    # and at most the largest (the bounds are flat between breakpoints).
    xb = np.unique(np.concatenate((_breakpoints(a), _breakpoints(b))))
    a_lo, a_hi = (v / n for v in a.count_bounds(xb))
    b_lo, b_hi = (v / m for v in b.count_bounds(xb))
    d_lo = float(max(np.max(np.maximum(a_lo - b_hi, b_lo - a_hi)), 0.0))
    d_hi = float(np.max(np.maximum(a_hi - b_lo, b_hi - a_lo)))
    d_lo, d_hi = min(d_lo, d), max(d_hi, d)
    scale = np.sqrt(n * m / (n + m))
    crit = float(stats.kstwobign.isf(1.0 - confidence) / scale)
    exact = a.exact and b.exact
    p_low = float(min(stats.kstwobign.sf(d_hi * scale), 1.0))
    p_high = float(min(stats.kstwobign.sf(d_lo * scale), 1.0))
    return KSResult(
        distance=d,
        distance_low=d_lo,
        distance_high=d_hi,
        at=float(x[i]),
        critical=crit,
        p_value=float(min(stats.kstwobign.sf(d * scale), 1.0)) if exact else float("nan"),
        p_low=p_low,
        p_high=p_high,
        differs=d_lo > crit,
        confidence=confidence,
        exact=exact,
    )


@dataclass(frozen=True)
class WassersteinResult:
    """Wasserstein-1 (earth mover's) distance: the mean absolute gap between quantile functions.

    W1 = ∫₀¹ |Q_A(p) − Q_B(p)| dp = ∫ |F_A(x) − F_B(x)| dx (S. S. Vallender, "Calculation
    of the Wasserstein distance between probability distributions on the line", *Theory
    Probab. Appl.* 18, 1974). In the value's unit: "on average a request moved this far".
    """

    distance: float
    unit: str
    relative: float
    """W1 divided by |A's mean|: a unit-free size of the move; NaN when that mean is near
    zero (see ``relative_note``), where the ratio would say nothing."""
    relative_note: str = ""
    """Why no relative size is given, or empty."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "distance": self.distance,
            "unit": self.unit,
            "relative": _num(self.relative),
            "relative_note": self.relative_note,
        }


def wasserstein(a: Sketch, b: Sketch) -> WassersteinResult:
    x = np.unique(np.concatenate((_support(a), _support(b))))
    if x.size < 2:
        return WassersteinResult(0.0, a.unit, 0.0)
    # The CDFs are steps (exact buffers) or linear pieces (digest) between these points;
    # the midpoint rule is exact for both (bar a sign change inside one linear piece).
    mid = (x[:-1] + x[1:]) / 2.0
    w1 = float(np.sum(np.abs(a.cdf(mid) - b.cdf(mid)) * np.diff(x)))
    note = _mean_far_from_zero(a)
    return WassersteinResult(w1, a.unit, w1 / abs(a.mean) if not note else float("nan"), note)


def _mean_far_from_zero(a: Sketch) -> str:
    """Empty when |A's mean| is a fair yardstick for a move; else why it is not.

    It is when A's values all lie on one side of zero (latencies, sizes), or when the
    mean is at least as far from zero as A's p10-p90 spread; otherwise a small mean
    would turn any move into a huge percentage.
    """
    mean = a.mean
    if not math.isfinite(mean) or mean == 0:
        return "A's mean is 0"
    if a.min >= 0 or a.max <= 0:
        return ""
    p10, p90 = a.quantile(np.array([0.1, 0.9]))
    if abs(mean) >= p90 - p10:
        return ""
    return "A's mean is near zero against its spread (values on both sides of zero)"


# ---------------------------------------------------------------- tail budget
@dataclass(frozen=True)
class TailBudget:
    """How much of B lies above a cut taken from A (A's p99, A's p99.9).

    Test: the likelihood-ratio (G) test of equal proportions in a 2×2 table, G = 2 Σ O
    ln(O/E), referred to χ² with 1 degree of freedom (R. R. Sokal and F. J. Rohlf,
    *Biometry*, 3rd ed., 1995, section 17.4; A. Agresti, *Categorical Data Analysis*,
    2002, section 3.2). The cut is A's own estimate and is treated as fixed, the usual
    reading of a budget ("1 % may exceed this"). Counts read from a sketch carry its
    rank error; G and the p-value are computed at the end of that range nearest to no
    change, so sketch error never manufactures significance.
    """

    label: str
    q: float
    cut: float
    a_share: float
    """Share of A above the cut (about 1 - q)."""
    b_share: float
    b_count: float
    b_count_low: float
    b_count_high: float
    ratio: float
    """``b_share / a_share``: 2.0 means B spends the tail budget twice as fast."""
    g: float
    """NaN when the table is too thin for the test (``verdict`` 'too few values')."""
    p_value: float
    verdict: str
    """'more above the cut', 'less above the cut', 'no clear change' (B against A), or 'too
    few values' when an expected count is below ``MIN_EXPECTED`` and χ² does not apply."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "label": self.label,
            "q": self.q,
            "cut": _num(self.cut),
            "a_share": self.a_share,
            "b_share": self.b_share,
            "b_count": self.b_count,
            "b_count_low": self.b_count_low,
            "b_count_high": self.b_count_high,
            "ratio": _num(self.ratio),
            "g": _num(self.g),
            "p_value": _num(self.p_value),
            "verdict": self.verdict,
            "method": "G test (likelihood ratio) of equal proportions above A's cut",
        }


def g_test_2x2(k1: float, n1: float, k2: float, n2: float) -> tuple[float, float]:
    """G statistic and χ²(1) p-value for k1/n1 against k2/n2 (no continuity correction)."""
    from scipy import stats

    obs = np.array([[k1, n1 - k1], [k2, n2 - k2]], dtype=np.float64)
    exp = obs.sum(axis=1, keepdims=True) * obs.sum(axis=0, keepdims=True) / obs.sum()
    with np.errstate(divide="ignore", invalid="ignore"):
        terms = np.where(obs > 0, obs * np.log(obs / exp), 0.0)
    g = float(max(2.0 * terms.sum(), 0.0))
    return g, float(stats.chi2.sf(g, 1))


MIN_EXPECTED = 5.0
"""Smallest expected count for the χ² reference of the G test (common practice)."""


def tail_budget(a: Sketch, b: Sketch, q: float, *, confidence: float = 0.95) -> TailBudget:
    from ..sketch import quantile_label

    na, nb = a.count, b.count
    cut = float(a.quantile(np.array(q)))
    ka = float(na - a.rank(np.array(cut)))
    kb = float(nb - b.rank(np.array(cut)))
    # Counts above the cut, bounded by the sketches (exact where they hold the values).
    a_le_lo, a_le_hi = (float(v) for v in a.count_bounds(np.array(cut)))
    b_le_lo, b_le_hi = (float(v) for v in b.count_bounds(np.array(cut)))
    ka_lo, ka_hi = na - a_le_hi, na - a_le_lo
    kb_lo, kb_hi = nb - b_le_hi, nb - b_le_lo
    pa, pb = ka / na, kb / nb
    # Move both counts, within their bounds, towards each other before testing.
    if kb_lo / nb > ka_hi / na:
        ta, tb = ka_hi, kb_lo
    elif kb_hi / nb < ka_lo / na:
        ta, tb = ka_lo, kb_hi
    else:
        ta, tb = None, None
    alpha = 1.0 - confidence
    above = ka + kb
    fewest = min(above, na + nb - above) * min(na, nb) / (na + nb)  # smallest expected cell
    if fewest < MIN_EXPECTED:
        g, p, verdict = float("nan"), float("nan"), "too few values"
    elif ta is None or tb is None:
        g, p, verdict = 0.0, 1.0, "no clear change"
    else:
        g, p = g_test_2x2(ta, na, tb, nb)
        verdict = "no clear change"
        if p < alpha:
            verdict = "more above the cut" if pb > pa else "less above the cut"
    return TailBudget(
        label=f"above A {quantile_label(q)}",
        q=q,
        cut=cut,
        a_share=pa,
        b_share=pb,
        b_count=kb,
        b_count_low=kb_lo,
        b_count_high=kb_hi,
        ratio=pb / pa if pa > 0 else float("inf"),
        g=g,
        p_value=p,
        verdict=verdict,
    )


# ---------------------------------------------------------------- the whole comparison
@dataclass(frozen=True)
class Comparison:
    labels: tuple[str, str]
    unit: str
    n: tuple[int, int]
    confidence: float
    ladder: tuple[LadderRow, ...]
    ks: KSResult
    wasserstein: WassersteinResult
    shift: ShiftFunction
    tail: tuple[TailBudget, ...]
    summary: str
    notes: tuple[str, ...] = ()

    def row(self, label: str) -> LadderRow:
        for r in self.ladder:
            if r.label == label:
                return r
        raise KeyError(label)

    def to_dict(self) -> dict[str, Any]:
        return {
            "labels": list(self.labels),
            "unit": self.unit,
            "n": list(self.n),
            "confidence": self.confidence,
            "verdict_confidence": self.confidence**2,
            "ladder": [r.to_dict() for r in self.ladder],
            "ks": self.ks.to_dict(),
            "wasserstein": self.wasserstein.to_dict(),
            "shift": self.shift.to_dict(),
            "tail": [t.to_dict() for t in self.tail],
            "summary": self.summary,
            "notes": list(self.notes),
        }


def _check_pair(a: Sketch, b: Sketch, labels: tuple[str, str]) -> None:
    for s, name in ((a, labels[0]), (b, labels[1])):
        if s.count == 0:
            raise ValueError(f"sketch {name!r} holds no values; there is nothing to compare.")
    if a.unit != b.unit:
        raise ValueError(
            f"{labels[0]!r} is in {a.unit or 'no unit'!r} and {labels[1]!r} in {b.unit or 'no unit'!r}; "
            "rescan one side with the same --unit so the values compare."
        )


def _summary(
    labels: tuple[str, str], rows: tuple[LadderRow, ...], ks: KSResult, tail: tuple[TailBudget, ...]
) -> str:
    a, b = labels
    up = [r.label for r in rows if r.verdict == "higher"]
    down = [r.label for r in rows if r.verdict == "lower"]
    parts: list[str] = []
    if up:
        parts.append(f"{b} is higher than {a} at {', '.join(up)}")
    if down:
        parts.append(f"{b} is lower than {a} at {', '.join(down)}")
    if not up and not down:
        few = [r.label for r in rows if r.verdict == "too few values"]
        text = f"no quantile of {b} differs credibly from {a}"
        if few:
            text += f" (too few values to tell at {', '.join(few)})"
        parts.append(text)
    parts.append(
        f"KS distance {ks.distance:.3g} "
        + ("beyond noise and sketch error" if ks.differs else "within noise and sketch error")
    )
    for t in tail[:1]:
        parts.append(f"{t.b_share:.2%} of {b} above {a}'s {t.label.split()[-1]} (expected {t.a_share:.2%})")
    return "; ".join(parts) + "."


def _ladder_vs_shift(rows: tuple[LadderRow, ...], shift: ShiftFunction) -> list[str]:
    """Why a ladder row and the shift function can disagree, where they do."""
    direction = dict(zip(np.round(shift.probs, 6).tolist(), shift.direction, strict=True))
    called = [r for r in rows if r.q is not None and r.verdict in ("higher", "lower")]
    split = [r.label for r in called if direction.get(round(r.q or 0.0, 6)) == "no clear change"]
    if not split:
        return []
    k = shift.probs.size
    return [
        f"{', '.join(split)}: the ladder calls a change and the shift function does not. Each ladder row is "
        f"its own {shift.confidence:.0%} comparison; the shift band holds for all {k} quantiles at once "
        f"(each interval at {shift.per_interval_confidence:.2%}), so it is wider: a change this close to "
        "the noise may be one of several rows that separate by chance."
    ]


def compare_sketches(
    a: Sketch,
    b: Sketch,
    *,
    labels: tuple[str, str] = ("A", "B"),
    confidence: float = 0.95,
) -> Comparison:
    """Everything ``ogive compare`` shows for one pair; B is read against A (the baseline).

    Raises ValueError (a full sentence) for empty sketches or different units.
    """
    _check_pair(a, b, labels)
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must lie strictly between 0 and 1, got {confidence!r}.")
    rows = tuple(ladder(a, b, confidence, LADDER_QS))
    ks = ks_distance(a, b, confidence=confidence)
    tail = tuple(tail_budget(a, b, q, confidence=confidence) for q in (0.99, 0.999))
    shift = shift_function(a, b, confidence=confidence, labels=labels)
    notes = list(_ladder_vs_shift(rows, shift))
    for s, name in ((a, labels[0]), (b, labels[1])):
        if s.provenance.partial:
            notes.append(f"{name} is partial: {s.provenance.partial}")
        if s.provenance.skipped_total:
            notes.append(f"{name} skipped {s.provenance.skipped_total} rows (see 'ogive show')")
    return Comparison(
        labels=labels,
        unit=a.unit,
        n=(a.count, b.count),
        confidence=confidence,
        ladder=rows,
        ks=ks,
        wasserstein=wasserstein(a, b),
        shift=shift,
        tail=tail,
        summary=_summary(labels, rows, ks, tail),
        notes=tuple(notes),
    )


# ---------------------------------------------------------------- groups (--by)
@dataclass(frozen=True)
class GroupRow:
    group: str
    n: tuple[int, int]
    p99: LadderRow
    p50: LadderRow
    credible_change: float
    """How far B's p99 interval clears A's, relative to A's p99 (0 when they overlap)."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "group": self.group,
            "n": list(self.n),
            "p50": self.p50.to_dict(),
            "p99": self.p99.to_dict(),
            "credible_change": self.credible_change,
        }


@dataclass(frozen=True)
class GroupComparison:
    labels: tuple[str, str]
    confidence: float
    rows: tuple[GroupRow, ...]
    """Groups present on both sides, largest credible p99 change first."""
    only_a: tuple[str, ...]
    only_b: tuple[str, ...]
    empty: tuple[str, ...] = ()
    """Groups present on both sides but with no values on one side."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "labels": list(self.labels),
            "confidence": self.confidence,
            "rows": [r.to_dict() for r in self.rows],
            "only_a": list(self.only_a),
            "only_b": list(self.only_b),
            "empty": list(self.empty),
        }


def _credible(row: LadderRow) -> float:
    a = row.a_value
    gap = row.change_low if row.change_low > 0 else row.change_high if row.change_high < 0 else 0.0
    if not np.isfinite(gap):
        return 0.0
    return gap / abs(a) if a else gap


def compare_groups(
    a: SketchSet,
    b: SketchSet,
    *,
    labels: tuple[str, str] = ("A", "B"),
    confidence: float = 0.95,
) -> GroupComparison:
    """One p50/p99 row per group found on both sides (the ``--by`` table).

    Sorted by the size of the credible p99 change (the gap between the intervals, as a
    share of A's p99), largest first, then by the point change, so the group that most
    surely got worse heads the list.
    """
    both = [g for g in a.names() if g in b.sketches]
    rows: list[GroupRow] = []
    empty: list[str] = []
    for g in both:
        sa, sb = a[g], b[g]
        if sa.count == 0 or sb.count == 0:
            empty.append(g)
            continue
        _check_pair(sa, sb, (f"{labels[0]}:{g}", f"{labels[1]}:{g}"))
        r50, r99 = ladder(sa, sb, confidence, (0.5, 0.99))[:2]
        rows.append(GroupRow(g, (sa.count, sb.count), r99, r50, _credible(r99)))
    rows.sort(
        key=lambda r: (
            -abs(r.credible_change),
            -abs(r.p99.relative_change) if np.isfinite(r.p99.relative_change) else 0.0,
        )
    )
    return GroupComparison(
        labels=labels,
        confidence=confidence,
        rows=tuple(rows),
        only_a=tuple(g for g in a.names() if g not in b.sketches),
        only_b=tuple(g for g in b.names() if g not in a.sketches),
        empty=tuple(empty),
    )
