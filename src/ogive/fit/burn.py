"""Error-budget burn over time: an objective read window by window, and added up.

For an objective such as ``250ms@99%`` (at most 1 % of values over 250 ms) and a
timeline of window sketches:

* **burn rate** per window: the window's share over the threshold ÷ the allowed share
  (1× spends the budget exactly as fast as the objective allows; 10× would spend a
  month's budget in three days). Its interval is the window's Clopper–Pearson interval
  (:mod:`ogive.fit.objective`) divided by the allowed share.
* **a mark** where the rate exceeds a chosen rate ``mark_rate``: *credible* (``!``)
  when the whole interval is above it, *estimate* (``?``) when only the estimate is.
  Each window's interval is at the stated confidence on its own; over many windows a
  few marks of the second kind come from chance alone, which is why they are told
  apart from the first.
* **cumulative budget spent**: the values over the threshold so far ÷ the budget of the
  whole timeline (allowed share × all its values), so the last window reads the
  budget spent over the whole span, and the slope shows when the burning began.
  Counts come from ``count_bounds``, summed as a sure range.

The budget here is that of the timeline's own span and traffic — not of a 28-day
objective period, of which this may be a small part.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..sketch import Distribution
from .distances import num_or_none
from .objective import Objective, ObjectiveCheck, ShareOver, compliance, narrowed, share_over

CREDIBLE, ESTIMATE, NONE = "credible", "estimate", ""
DEFAULT_MARK_RATE = 1.0
"""Mark windows burning faster than the objective allows (1×) unless told otherwise."""


@dataclass(frozen=True)
class BurnWindow:
    """One window's share over the threshold as a burn rate, and the budget spent so far."""

    start_us: float
    share: ShareOver
    rate: float
    """Share over ÷ allowed share (NaN with no values, or where the share is only a range)."""
    rate_low: float
    rate_high: float
    mark: str
    """``credible``, ``estimate`` or empty (see the module text)."""
    spent_low: float
    """Cumulative budget spent through this window, fewest values over (share of the whole budget)."""
    spent_high: float

    def to_dict(self) -> dict[str, Any]:
        return {
            "start_us": self.start_us,
            "n": self.share.n,
            "over_low": self.share.over_low,
            "over_high": self.share.over_high,
            "share": num_or_none(self.share.estimate),
            "share_low": num_or_none(self.share.low),
            "share_high": num_or_none(self.share.high),
            "burn_rate": num_or_none(self.rate),
            "burn_rate_low": num_or_none(self.rate_low),
            "burn_rate_high": num_or_none(self.rate_high),
            "mark": self.mark,
            "cumulative_spent_low": num_or_none(self.spent_low),
            "cumulative_spent_high": num_or_none(self.spent_high),
        }


@dataclass(frozen=True)
class BurnSeries:
    """One objective over one timeline stream."""

    stream: str
    objective: Objective
    threshold: float
    """In the windows' unit."""
    unit: str
    mark_rate: float
    confidence: float
    width_us: float
    windows: tuple[BurnWindow, ...]
    whole: ObjectiveCheck
    """The objective read on every value of the stream: share over, budget spent, compliance."""

    @property
    def first_credible(self) -> BurnWindow | None:
        """The first window whose whole interval is above the mark rate."""
        return next((w for w in self.windows if w.mark == CREDIBLE), None)

    @property
    def spent(self) -> tuple[float, float]:
        """Budget spent over the whole span (sure range of the count ÷ the whole budget)."""
        return (self.windows[-1].spent_low, self.windows[-1].spent_high) if self.windows else (0.0, 0.0)

    def to_dict(self) -> dict[str, Any]:
        first = self.first_credible
        return {
            "stream": self.stream,
            "objective": self.objective.to_dict(),
            "threshold": self.threshold,
            "unit": self.unit,
            "mark_rate": self.mark_rate,
            "confidence": self.confidence,
            "whole": self.whole.to_dict(),
            "budget_spent": [num_or_none(x) for x in self.spent],
            "first_credible_start_us": None if first is None else first.start_us,
            "windows": [w.to_dict() for w in self.windows],
        }


def _mark(low: float, estimate: float, rate: float) -> str:
    if low > rate:
        return CREDIBLE
    if math.isfinite(estimate) and estimate > rate:
        return ESTIMATE
    return NONE


def budget_burn(
    stream: str,
    windows: list[tuple[float, Distribution | None]],
    whole: Distribution,
    objective: Objective,
    *,
    mark_rate: float = DEFAULT_MARK_RATE,
    confidence: float = 0.95,
    width_us: float = math.nan,
) -> BurnSeries:
    """Burn rate per window and cumulative budget spent; ``windows`` are (start, sketch or None).

    ValueError when the threshold's unit does not convert to the windows' or the mark
    rate is not positive.
    """
    if not mark_rate > 0:
        raise ValueError(f"the burn mark rate must be above 0, got {mark_rate!r}.")
    x = objective.threshold.in_unit(whole.unit, objective.text)
    allowed = objective.allowed
    budget = allowed * whole.count
    out: list[BurnWindow] = []
    low_sum = high_sum = 0
    for start, d in windows:
        if d is None or d.count == 0:
            s = ShareOver(x, whole.unit, 0, 0, 0, math.nan, math.nan, math.nan, confidence)
        else:
            s = share_over(d, x, confidence)
        low_sum += s.over_low
        high_sum += s.over_high
        rate, lo, hi = s.estimate / allowed, s.low / allowed, s.high / allowed
        spent = (low_sum / budget, high_sum / budget) if budget > 0 else (math.nan, math.nan)
        out.append(BurnWindow(start, s, rate, lo, hi, _mark(lo, rate, mark_rate), *spent))
    all_of = share_over(whole, x, confidence)
    if sum(w.share.n for w in out) == whole.count:  # the windows hold the same values: two sure ranges
        all_of = narrowed(all_of, low_sum, high_sum)
    return BurnSeries(
        stream,
        objective,
        x,
        whole.unit,
        mark_rate,
        confidence,
        width_us,
        tuple(out),
        ObjectiveCheck(stream, objective, all_of, compliance(all_of, allowed)),
    )
