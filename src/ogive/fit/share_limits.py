"""Gate limits on the share of values over a threshold: ``over(300ms)<=0.1%`` and ``over(300ms)=+20%``.

* ``over(300ms)<=0.1%`` (absolute): at most 0.1 % of B's values may be over 300 ms.
* ``over(300ms)=+20%`` (relative): B's share over 300 ms may be at most 20 % above A's
  (``=0`` no higher than A's).

Each side's share gets the Clopper–Pearson interval of :mod:`ogive.fit.objective`
(widened to the counts the sketch is sure of), at the level the gate hands down — the
same Bonferroni level as the quantile limits, 1 − (1 − confidence)/(2L) for L limits of
either kind — so every claim of the gate holds together with at least the stated
confidence. The states are the quantile limits' own:

* ``exceeded`` — B's lowest plausible share is above the most the limit allows at any
  plausible share of A's (for an absolute limit: above the limit).
* ``holds`` — B's highest plausible share is within the least the limit allows.
* ``unclear`` — the intervals reach both sides.
* ``buckets too coarse`` — telemetry histograms: unclear, and the threshold falls
  inside a bucket whose unknown split alone keeps it open (knowing the count on either
  side would decide it).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Any

from ..numbers import percent, quantity, span
from ..sketch import Distribution
from .limit_states import COARSE, EXCEEDED, HOLDS, UNCLEAR
from .objective import ShareOver, clopper_pearson, parse_threshold, share_over

_SHARE_LIMIT = re.compile(
    r"^\s*over\s*\(\s*(?P<x>[^)]*?)\s*\)\s*(?P<op><=|=)\s*(?P<amount>[+-]?[0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?)"
    r"\s*(?P<pct>%)?\s*$"
)


def is_share_limit(text: str) -> bool:
    return text.strip().lower().startswith("over")


@dataclass(frozen=True)
class ShareLimit:
    """How large B's share over ``threshold`` may be: ``amount`` of all values, or relative to A's."""

    text: str
    threshold: float
    """In the sketches' unit."""
    unit: str
    amount: float
    """A share (absolute) or a relative change (``0.2`` for +20 %)."""
    relative: bool

    @property
    def label(self) -> str:
        return f"over({quantity(self.threshold, self.unit, compact=True)})"

    def allowed(self, a_share: float) -> float:
        return max(a_share * (1.0 + self.amount), 0.0) if self.relative else self.amount

    def to_dict(self) -> dict[str, Any]:
        return {
            "text": self.text,
            "kind": "share over threshold",
            "threshold": self.threshold,
            "unit": self.unit,
            "amount": self.amount,
            "relative": self.relative,
        }


def parse_share_limit(text: str, unit: str) -> ShareLimit:
    """``over(300ms)<=0.1%``, ``over(0.3s)=+20%``, ``over(300)=0`` -> ShareLimit (ValueError otherwise)."""
    m = _SHARE_LIMIT.match(text)
    if not m:
        raise ValueError(
            f"limit {text!r} is not of the form over(THRESHOLD)<=SHARE% or over(THRESHOLD)=CHANGE%, "
            "such as over(300ms)<=0.1% or over(300ms)=+20%."
        )
    x = parse_threshold(m["x"], "limit").in_unit(unit, text)
    amount = float(m["amount"])
    if m["op"] == "<=":
        if m["pct"] is None or not 0.0 <= amount < 100.0:
            raise ValueError(
                f"limit {text!r}: an absolute share is a percentage from 0% to below 100%, such as <=0.1%."
            )
        return ShareLimit(text.strip(), x, unit, amount / 100.0, False)
    if m["pct"] is None and amount != 0.0:
        raise ValueError(f"limit {text!r}: a change of the share is a percentage of A's, such as =+20%.")
    if amount <= -100.0:
        raise ValueError(f"limit {text!r}: a share cannot fall by 100% or more.")
    return ShareLimit(text.strip(), x, unit, amount / 100.0, True)


@dataclass(frozen=True)
class ShareCheck:
    """One share limit's state, with both sides' shares and what the limit allows."""

    limit: ShareLimit
    status: str
    a: ShareOver
    b: ShareOver
    allowed_low: float
    """The least the limit allows over A's interval (the limit itself when absolute)."""
    allowed_high: float
    reason: str
    note: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {
            "limit": self.limit.to_dict(),
            "status": self.status,
            "a": self.a.to_dict(),
            "b": self.b.to_dict(),
            "allowed_low": self.allowed_low,
            "allowed_high": self.allowed_high,
            "reason": self.reason,
            "note": self.note,
        }


def _iv(s: ShareOver) -> str:
    lo, hi = s.observed
    est = percent(s.estimate) if math.isfinite(s.estimate) else f"{percent(lo)} to {percent(hi)}"
    return f"{est} [{percent(s.low)}, {percent(s.high)}]"


def _decide(limit: ShareLimit, a: tuple[float, float], b: tuple[float, float]) -> str:
    lo_allowed, hi_allowed = limit.allowed(a[0]), limit.allowed(a[1])
    if b[0] > hi_allowed:
        return EXCEEDED
    if b[1] <= lo_allowed:
        return HOLDS
    return UNCLEAR


def _point(s: ShareOver, k: int) -> tuple[float, float]:
    """The interval had the count over been known to be ``k``."""
    return clopper_pearson(k, k, s.n, s.confidence)


def _coarse(limit: ShareLimit, a: ShareOver, b: ShareOver) -> str:
    """Why the buckets, not the sample, keep the limit open (empty when they do not)."""
    sides = [("B", b)] + ([("A", a)] if limit.relative else [])
    for name, s in sides:
        if s.bucket is None:
            continue
        for k in (s.over_low, s.over_high):
            iv_a = _point(a, k) if name == "A" else (a.low, a.high)
            iv_b = _point(b, k) if name == "B" else (b.low, b.high)
            if _decide(limit, iv_a, iv_b) != UNCLEAR:
                where = span(s.bucket[0], s.bucket[1], s.unit)
                return (
                    f"the buckets are too coarse to decide: {quantity(limit.threshold, limit.unit)} lies "
                    f"inside {name}'s bucket {where}, and how that bucket's values split around it "
                    "would decide the limit"
                )
    return ""


def check_share(
    limit: ShareLimit, da: Distribution, db: Distribution, confidence: float, prove: bool = False
) -> ShareCheck:
    """``limit`` on A and B with each share's interval at ``confidence`` (the gate's per-interval level)."""
    a = share_over(da, limit.threshold, confidence)
    b = share_over(db, limit.threshold, confidence)
    lo_allowed, hi_allowed = limit.allowed(a.low), limit.allowed(a.high)
    over = quantity(limit.threshold, limit.unit)
    sides = f"B {_iv(b)} against A {_iv(a)} over {over}"
    what = f"B's share over {over}"
    allowance = (
        f"the most the limit allows at any plausible share of A's ({percent(hi_allowed)})"
        if limit.relative
        else f"the limit ({percent(hi_allowed)})"
    )
    status = _decide(limit, (a.low, a.high), (b.low, b.high))
    note = ""
    if limit.relative and a.over_high == 0:
        note = (
            "A has no values over the threshold: the relative limit allows only as much as A's interval "
            "reaches; an absolute limit says plainly how much is allowed"
        )
    if status == EXCEEDED:
        reason = f"{what} is at least {percent(b.low)}, above {allowance}; {sides}."
    elif status == HOLDS:
        least = f"the least the limit allows at any plausible share of A's ({percent(lo_allowed)})"
        reason = (
            f"shown within the limit: {what} is at most {percent(b.high)}, within "
            f"{least if limit.relative else f'the limit ({percent(lo_allowed)})'}; {sides}."
        )
    else:
        coarse = _coarse(limit, a, b)
        if coarse:
            status, reason = COARSE, f"{coarse}; {sides}."
        else:
            tail = "--prove needs it shown within." if prove else "no credible evidence that it is exceeded."
            where = (
                f"the intervals reach both sides of the limit (allowed {percent(lo_allowed)} to "
                f"{percent(hi_allowed)} over A's interval)"
                if limit.relative
                else f"the limit ({percent(hi_allowed)}) lies inside B's interval"
            )
            reason = f"{where}: {sides}; {tail}"
    return ShareCheck(limit, status, a, b, lo_allowed, hi_allowed, reason, note)
