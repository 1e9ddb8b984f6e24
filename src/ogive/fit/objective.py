"""Service-level objectives: the share of values over a threshold, its interval and the budget.

An objective ``300ms@99.9%`` says "at least 99.9 % of requests take at most 300 ms": the
share **over** the threshold (strictly above it) may be at most 0.1 %, the *allowed
share*, also called the error budget. For one sketch this module answers:

* **the share over the threshold**, with a distribution-free interval. Each value is
  over or not, so with n independent values the count over is Binomial(n, p) whatever
  the distribution, and the Clopper–Pearson interval (C. J. Clopper and E. S. Pearson,
  "The use of confidence or fiducial limits illustrated in the case of the binomial",
  *Biometrika* 26, 1934) covers the rate p with at least the stated confidence — the
  interval ``scipy.stats.binomtest(k, n).proportion_ci(method="exact")`` gives.
  A sketch does not hold k itself but is sure of a range for it
  (``count_bounds``: the fewest and most values at or below the threshold, equal where
  the exact tail buffers answer, the centroids' ranges elsewhere, the bucket edges of a
  telemetry histogram). The interval is taken from the lower end at the fewest and the
  upper end at the most; both ends are monotone in k, so it contains the interval of
  the true k and its coverage is at least the exact one's.
* **compliance**: *met* when the interval's upper end is within the allowed share,
  *missed* when its lower end is above it, *cannot tell* otherwise.
* **the budget spent**: the share over ÷ the allowed share (210 % spent: the objective
  allowed 0.1 % and 0.21 % were over), with the same interval divided through.

What the interval is about: the rate of slow requests in the traffic these values are
a sample of — not a count of the requests of the whole period when the sketch holds
only a window of it. A binned distribution whose bucket edges straddle the threshold
knows the count over only as a range; its share is then reported as that range and
never as a single value (``estimate`` is NaN).
"""

from __future__ import annotations

import math
import re
import sys
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..sketch import Distribution, is_binned
from ..sketch.units import duration_factor
from .distances import num_or_none, pair_or_none

MET, MISSED, CANNOT_TELL = "met", "missed", "cannot tell"
COMPLIANCE = (MET, MISSED, CANNOT_TELL)

_OBJECTIVE = re.compile(
    r"^\s*(?P<x>[0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?)\s*(?P<unit>[A-Za-zµμ]+)?\s*@\s*"
    r"(?P<target>[0-9]*\.?[0-9]+)\s*%\s*$"
)
_THRESHOLD = re.compile(r"^\s*(?P<x>[0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?)\s*(?P<unit>[A-Za-zµμ]+)?\s*$")


@dataclass(frozen=True)
class Threshold:
    """A value as written (``300ms``; no unit means the sketch's own)."""

    value: float
    unit: str | None

    def in_unit(self, unit: str, text: str) -> float:
        """The threshold in ``unit``; ValueError in one sentence when it does not convert."""
        if self.unit is None or self.unit == unit:
            return self.value
        factor = duration_factor(self.unit, unit)
        if factor is None:
            raise ValueError(
                f"{text!r} is in {self.unit!r} but the values are in {unit or 'no unit'!r}; "
                "write the threshold in the values' unit (or without one)."
            )
        return self.value * factor


def parse_threshold(text: str, what: str) -> Threshold:
    """``300ms``, ``0.3s``, ``250`` -> Threshold; ``what`` names the option in the error."""
    m = _THRESHOLD.match(text)
    if not m:
        raise ValueError(
            f"{what} {text!r}: the threshold is not a number with an optional unit, such as 300ms."
        )
    return Threshold(float(m["x"]), m["unit"])


@dataclass(frozen=True)
class Objective:
    """``300ms@99.9%``: at least ``target`` of the values at or below the threshold."""

    text: str
    threshold: Threshold
    target: float
    """The share required at or below the threshold, in (0, 1)."""
    allowed: float
    """The largest share over the threshold the objective allows: the error budget
    (``1 - target``, taken from the written percentage so 99% allows exactly 0.01)."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "text": self.text,
            "threshold": self.threshold.value,
            "threshold_unit": self.threshold.unit,
            "target": self.target,
            "allowed_share": self.allowed,
        }


def parse_objective(text: str) -> Objective:
    """``300ms@99.9%``, ``0.25s@99%``, ``250@99%`` (the sketch's unit) -> Objective."""
    m = _OBJECTIVE.match(text)
    if not m:
        raise ValueError(
            f"objective {text!r} is not of the form THRESHOLD@SHARE%, such as 300ms@99.9% "
            "(99.9% of values at most 300 ms)."
        )
    target = float(m["target"]) / 100.0
    if not 0.0 < target < 1.0:
        raise ValueError(
            f"objective {text!r}: the share must lie strictly between 0% and 100% "
            "(at 100% there is no budget to spend, and any slow value misses it)."
        )
    allowed = (100.0 - float(m["target"])) / 100.0
    return Objective(text.strip(), Threshold(float(m["x"]), m["unit"]), target, allowed)


@dataclass(frozen=True)
class ShareOver:
    """The share of one sketch's values over a threshold, with its interval."""

    threshold: float
    """In the sketch's unit."""
    unit: str
    n: int
    over_low: int
    """The fewest values that can be over the threshold."""
    over_high: int
    """The most (equal to ``over_low`` where the count is exact)."""
    estimate: float
    """The share's estimate; NaN when only a range is known (a threshold inside a bucket)."""
    low: float
    """Clopper–Pearson lower end at ``over_low``."""
    high: float
    """Clopper–Pearson upper end at ``over_high``."""
    confidence: float
    bucket: tuple[float, float] | None = None
    """Binned: the bucket edges around a threshold that falls inside a bucket."""

    @property
    def count_exact(self) -> bool:
        return self.over_low == self.over_high

    @property
    def observed(self) -> tuple[float, float]:
        """The share of these values over the threshold, as the range the sketch is sure of."""
        return (self.over_low / self.n, self.over_high / self.n) if self.n else (math.nan, math.nan)

    def to_dict(self) -> dict[str, Any]:
        return {
            "threshold": self.threshold,
            "unit": self.unit,
            "n": self.n,
            "over_low": self.over_low,
            "over_high": self.over_high,
            "estimate": num_or_none(self.estimate),
            "low": num_or_none(self.low),
            "high": num_or_none(self.high),
            "confidence": self.confidence,
            "count_exact": self.count_exact,
            "bucket": pair_or_none(self.bucket),
        }


def statistics_loaded() -> bool:
    """Whether scipy.stats is imported already: the workspace's screen thread reads objectives
    only then, since importing it there would freeze the keys for seconds (a worker loads it)."""
    return "scipy.stats" in sys.modules


def clopper_pearson(k_low: int, k_high: int, n: int, confidence: float) -> tuple[float, float]:
    """Equal-tailed Clopper–Pearson ends: the lower at ``k_low`` successes, the upper at ``k_high``.

    With ``k_low == k_high == k`` this is the exact binomial interval of Clopper and
    Pearson (1934) as ``scipy.stats.binomtest(k, n).proportion_ci(method="exact")``
    computes it (beta quantiles; the end at k = 0 or k = n is 0 or 1).
    """
    from scipy import stats

    if n <= 0:
        return math.nan, math.nan
    alpha = 1.0 - confidence
    low = 0.0 if k_low <= 0 else float(stats.beta.ppf(alpha / 2, k_low, n - k_low + 1))
    high = 1.0 if k_high >= n else float(stats.beta.ppf(1 - alpha / 2, k_high + 1, n - k_high))
    return low, high


def _bucket_around(d: Distribution, x: float) -> tuple[float, float]:
    """The bucket edges on either side of ``x`` (infinite past the last edge)."""
    edges = np.unique(d.cdf_knots())
    below, above = edges[edges <= x], edges[edges > x]
    return (
        float(below[-1]) if below.size else -math.inf,
        float(above[0]) if above.size else math.inf,
    )


def share_over(d: Distribution, threshold: float, confidence: float = 0.95) -> ShareOver:
    """The share of ``d``'s values strictly over ``threshold`` (in ``d``'s unit); see the module text."""
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must lie strictly between 0 and 1, got {confidence!r}.")
    n = int(d.count)
    if n == 0:
        return ShareOver(threshold, d.unit, 0, 0, 0, math.nan, math.nan, math.nan, confidence)
    fewest_le, most_le = d.count_bounds(np.array([threshold]))
    # Counts of a sketch are whole; a bound read through fractional weights rounds outwards.
    over_low = max(0, n - math.ceil(float(most_le[0]) - 1e-9))
    over_high = min(n, n - math.floor(float(fewest_le[0]) + 1e-9))
    low, high = clopper_pearson(over_low, over_high, n, confidence)
    bucket = None
    if over_low == over_high:
        estimate = over_low / n
    elif is_binned(d):
        estimate, bucket = math.nan, _bucket_around(d, threshold)
    else:
        est = n - float(d.rank(np.array([threshold]))[0])
        estimate = min(max(est, over_low), over_high) / n
    return ShareOver(threshold, d.unit, n, over_low, over_high, estimate, low, high, confidence, bucket)


def narrowed(share: ShareOver, over_low: int, over_high: int) -> ShareOver:
    """``share`` with its count range cut to [over_low, over_high], another sure range of the
    same count (the sum over window sketches that hold the same values): the interval is
    taken again from the tighter ends. Unchanged when the ranges do not meet."""
    lo, hi = max(share.over_low, over_low), min(share.over_high, over_high)
    if lo > hi or (lo, hi) == (share.over_low, share.over_high):
        return share
    low, high = clopper_pearson(lo, hi, share.n, share.confidence)
    est = share.estimate * share.n if math.isfinite(share.estimate) else math.nan
    estimate = lo / share.n if lo == hi else min(max(est, lo), hi) / share.n
    bucket = share.bucket if lo != hi else None
    return ShareOver(
        share.threshold, share.unit, share.n, lo, hi, estimate, low, high, share.confidence, bucket
    )


@dataclass(frozen=True)
class ObjectiveCheck:
    """One objective read on one sketch: share over, compliance and budget spent."""

    name: str
    """The sketch's name (a group, ``before``, a window)."""
    objective: Objective
    share: ShareOver
    status: str
    """One of ``COMPLIANCE``."""

    @property
    def allowed(self) -> float:
        return self.objective.allowed

    @property
    def budget(self) -> float:
        """Observed share ÷ allowed share (1.0 = the whole budget); NaN when only a range is known."""
        return self.share.estimate / self.allowed

    @property
    def budget_range(self) -> tuple[float, float]:
        """The interval's ends ÷ the allowed share."""
        return self.share.low / self.allowed, self.share.high / self.allowed

    @property
    def observed_budget(self) -> tuple[float, float]:
        """The range the sketch is sure of for these values' share, ÷ the allowed share."""
        lo, hi = self.share.observed
        return lo / self.allowed, hi / self.allowed

    def to_dict(self) -> dict[str, Any]:
        lo, hi = self.budget_range
        olo, ohi = self.observed_budget
        return {
            "name": self.name,
            "objective": self.objective.to_dict(),
            "share": self.share.to_dict(),
            "status": self.status,
            "budget_spent": num_or_none(self.budget),
            "budget_spent_low": num_or_none(lo),
            "budget_spent_high": num_or_none(hi),
            "observed_budget_spent": [num_or_none(olo), num_or_none(ohi)],
        }


def compliance(share: ShareOver, allowed: float) -> str:
    """``met`` (interval within the allowed share), ``missed`` (wholly above it) or ``cannot tell``."""
    if share.n == 0:
        return CANNOT_TELL
    if share.high <= allowed:
        return MET
    if share.low > allowed:
        return MISSED
    return CANNOT_TELL


def check_objective(
    name: str, d: Distribution, objective: Objective, confidence: float = 0.95
) -> ObjectiveCheck:
    """Read ``objective`` on ``d``; ValueError when its threshold's unit does not convert."""
    x = objective.threshold.in_unit(d.unit, objective.text)
    share = share_over(d, x, confidence)
    return ObjectiveCheck(name, objective, share, compliance(share, objective.allowed))


def check_objectives(
    named: list[tuple[str, Distribution]], objectives: list[Objective], confidence: float = 0.95
) -> tuple[ObjectiveCheck, ...]:
    """Every objective on every sketch, sketch by sketch (each interval at ``confidence``)."""
    return tuple(check_objective(name, d, o, confidence) for name, d in named for o in objectives)


@dataclass(frozen=True)
class ObjectiveReport:
    """Objectives read on a set of sketches: what ``--objective`` adds to a command's output."""

    checks: tuple[ObjectiveCheck, ...]
    confidence: float

    def to_dict(self) -> dict[str, Any]:
        return {
            "confidence": self.confidence,
            "method": "Clopper-Pearson (1934) on the count over the threshold, widened to the "
            "range of counts the sketch is sure of",
            "checks": [c.to_dict() for c in self.checks],
            "meaning": OBJECTIVE_MEANING,
        }


OBJECTIVE_MEANING = (
    "Each interval is about the rate of values over the threshold in the traffic these values are a "
    "sample of; met/missed says the interval lies within/above the allowed share. It describes the "
    "period the sketch covers, not the rest of an objective's period (a window is not 28 days)."
)


def objective_report(
    named: list[tuple[str, Distribution]], objectives: list[Objective], confidence: float = 0.95
) -> ObjectiveReport:
    return ObjectiveReport(check_objectives(named, objectives, confidence), confidence)
