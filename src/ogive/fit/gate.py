"""The regression gate: limits on named quantiles of a candidate B against a baseline A.

A limit ``p99=+5%`` says "B's p99 may be at most 5 % above A's p99"; ``p50=+2ms`` says
"at most 2 ms above". A relative limit is taken of |A|, so it allows more, never less,
when A's quantile is below zero (``p10=+10%`` of -5 ms allows -4.5 ms). Each limit
ends in one of four states:

* ``exceeded`` — B's lowest plausible quantile is above the most the limit allows at
  any plausible value of A's. This is the claim a failing gate makes.
* ``holds`` — shown within the limit: B's highest plausible quantile is within the
  least the limit allows at any plausible value of A's.
* ``unclear`` — neither: the intervals reach both sides of the limit. No credible
  evidence that it is exceeded, so the gate passes it, unless ``prove`` asks for it to
  be shown within.
* ``too few values`` — a side the check needs cannot be bounded (p99.99 needs well
  over 10,000 values).
* ``buckets too coarse`` — binned distributions (telemetry histograms) only: unclear,
  and the open question lies inside one bucket whose width alone sets the interval
  (B's p99 is only known to lie between 250 ms and 500 ms, and the limit falls in
  between). The data cannot decide it, so the gate is undecided (exit 2) rather than
  passed; the reason names the bucket.

Confidence. Intervals come from :mod:`ogive.fit.ladder` (order statistics, Conover
1999 section 3.2). With L limits each interval is taken at 1 − (1 − confidence)/(2L)
(Bonferroni over the 2L intervals; no independence assumed), so with probability at
least ``confidence`` every interval covers at once, and then every ``exceeded`` (and,
with ``prove``, every shown ``holds``) is true together. A pass is not a guarantee:
it says the data gave no such evidence, nothing about quantiles not listed, and
nothing about traffic that was not in the sample.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..numbers import quantity, span
from ..sketch import Distribution, quantile_label
from ..sketch.units import SECONDS_PER_UNIT
from .distances import num_or_none
from .ladder import QuantileInterval, above, quantile_intervals
from .limit_states import COARSE, EXCEEDED, HOLDS, STATUSES, TOO_FEW, UNCLEAR
from .share_limits import ShareCheck, ShareLimit, check_share, is_share_limit, parse_share_limit

TIME_UNITS = SECONDS_PER_UNIT
"""Seconds per unit, for limits written in another time unit than the sketch's."""

_LIMIT = re.compile(
    r"^\s*(?P<q>p[0-9.]+|median)\s*=\s*(?P<amount>[+-]?[0-9.]+(?:[eE][+-]?[0-9]+)?)\s*(?P<unit>%|[A-Za-zµ]+)?\s*$"
)

__all__ = ["COARSE", "EXCEEDED", "HOLDS", "STATUSES", "TOO_FEW", "UNCLEAR", "ShareCheck", "ShareLimit"]


@dataclass(frozen=True)
class Limit:
    """How far B's quantile may move above A's: ``amount`` in the sketch unit, or a fraction."""

    text: str
    q: float
    amount: float
    relative: bool

    @property
    def label(self) -> str:
        return quantile_label(self.q)

    def allowed(self, a_value: float) -> float:
        """The largest B value this limit allows for a given A value.

        A relative limit is a share of |A|: multiplying a negative A by 1.1 would move
        the allowance down, so that a file failed against itself.
        """
        return a_value + self.amount * abs(a_value) if self.relative else a_value + self.amount

    def allowed_range(self, a_low: float, a_high: float) -> tuple[float, float]:
        """Least and most this limit allows over A's plausible values [a_low, a_high].

        ``allowed`` is piecewise linear with its only bend at 0, so the extremes lie at
        the ends or at 0; infinite ends give infinite allowances.
        """
        points = [a_low, a_high] + ([0.0] if a_low < 0.0 < a_high else [])
        with np.errstate(invalid="ignore"):
            values = [self.allowed(v) if math.isfinite(v) else v for v in points]
        return min(values), max(values)

    def describe(self, unit: str) -> str:
        if self.relative:
            return f"{self.label} of B at most {self.amount * 100:+.4g}% vs A"
        return f"{self.label} of B at most {self.amount:+.4g} {unit} vs A".replace("  ", " ")

    def to_dict(self) -> dict[str, Any]:
        return {
            "text": self.text,
            "q": self.q,
            "label": self.label,
            "amount": self.amount,
            "relative": self.relative,
        }


def parse_limit(text: str, unit: str) -> Limit | ShareLimit:
    """``p99=+5%``, ``p50=+2ms``, ``p99.9=0.3s``, ``median=+1`` (sketch unit) -> Limit;
    ``over(300ms)<=0.1%``, ``over(300ms)=+20%`` -> ShareLimit (``share_limits.py``).

    Raises ValueError with a full sentence for anything else.
    """
    if is_share_limit(text):
        return parse_share_limit(text, unit)
    m = _LIMIT.match(text)
    if not m:
        if text.strip().lower().startswith("max"):
            raise ValueError(
                f"limit {text!r}: the maximum has no confidence interval (it only grows with "
                "more traffic); put the limit on p99.9 or p99.99 instead."
            )
        raise ValueError(f"limit {text!r} is not of the form QUANTILE=CHANGE, such as p99=+5% or p50=+2ms.")
    qtext = m["q"]
    try:
        q = 0.5 if qtext == "median" else float(qtext[1:]) / 100.0
    except ValueError:
        raise ValueError(f"limit {text!r}: {qtext!r} is not a quantile such as p50, p99 or p99.9.") from None
    if not 0.0 < q < 1.0:
        raise ValueError(f"limit {text!r}: the quantile must lie strictly between p0 and p100.")
    amount = float(m["amount"])
    suffix = m["unit"]
    if suffix == "%":
        return Limit(text, q, amount / 100.0, True)
    if suffix is None or suffix == unit:
        return Limit(text, q, amount, False)
    if suffix in TIME_UNITS and unit in TIME_UNITS:
        return Limit(text, q, amount * TIME_UNITS[suffix] / TIME_UNITS[unit], False)
    raise ValueError(
        f"limit {text!r} is in {suffix!r} but the sketches are in {unit or 'no unit'!r}; "
        "write it in the sketches' unit or as a percentage."
    )


@dataclass(frozen=True)
class LimitCheck:
    limit: Limit
    status: str
    """One of ``STATUSES``."""
    a: QuantileInterval
    b: QuantileInterval
    allowed: float
    """What the limit allows at A's point estimate."""
    reason: str
    allowed_low: float = math.nan
    """The least the limit allows over A's interval (-inf when A is unbounded below)."""
    allowed_high: float = math.nan
    """The most the limit allows over A's interval (inf when A is unbounded above)."""
    note: str = ""
    """How the limit was read, where it matters (a relative limit on a quantile <= 0)."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "limit": self.limit.to_dict(),
            "status": self.status,
            "a": self.a.to_dict(),
            "b": self.b.to_dict(),
            "allowed": num_or_none(self.allowed),
            "allowed_low": num_or_none(self.allowed_low),
            "allowed_high": num_or_none(self.allowed_high),
            "reason": self.reason,
            "note": self.note,
        }


@dataclass(frozen=True)
class GateResult:
    labels: tuple[str, str]
    unit: str
    confidence: float
    per_interval_confidence: float
    prove: bool
    checks: tuple[LimitCheck | ShareCheck, ...]

    @property
    def exit_code(self) -> int:
        """0 no limit credibly exceeded, 1 a limit is, 2 the data cannot decide one (too few
        values, or with ``prove`` a limit not shown within)."""
        statuses = {c.status for c in self.checks}
        if EXCEEDED in statuses:
            return 1
        if TOO_FEW in statuses or COARSE in statuses or (self.prove and UNCLEAR in statuses):
            return 2
        return 0

    @property
    def outcome(self) -> str:
        return {0: "pass", 1: "fail", 2: "undecided"}[self.exit_code]

    def to_dict(self) -> dict[str, Any]:
        return {
            "labels": list(self.labels),
            "unit": self.unit,
            "confidence": self.confidence,
            "per_interval_confidence": self.per_interval_confidence,
            "prove": self.prove,
            "outcome": self.outcome,
            "exit_code": self.exit_code,
            "checks": [c.to_dict() for c in self.checks],
            "meaning": MEANING,
        }


MEANING = (
    "A pass means these data gave no credible evidence that a listed limit is exceeded; "
    "it is evidence for a release decision, not a guarantee, and says nothing about "
    "quantiles or thresholds not listed or traffic not sampled. Follow your team's own release policy."
)


def _fmt(x: float, unit: str) -> str:
    """The one number formatter (ogive.numbers), four figures; 'unbounded' for an end
    the data cannot bound."""
    return quantity(x, unit, digits=4) if math.isfinite(x) else "unbounded"


def _iv(iv: QuantileInterval, unit: str) -> str:
    """'3.642 ms [3.578 ms, 3.71 ms]': an estimate with its interval."""
    return f"{_fmt(iv.estimate, unit)} [{_fmt(iv.low, unit)}, {_fmt(iv.high, unit)}]"


def _check(limit: Limit, a: QuantileInterval, b: QuantileInterval, unit: str, prove: bool) -> LimitCheck:
    lab = limit.label
    lo_allowed, hi_allowed = limit.allowed_range(a.low, a.high)
    allowed_pt = limit.allowed(a.estimate)
    note = ""
    if limit.relative and a.low <= 0:
        note = (
            f"A's {lab} can be at or below zero, so {limit.amount * 100:+.4g}% is taken of |A|; an absolute "
            f"limit such as {lab}=+2{unit} says the same without depending on A's sign"
        )
    sides = f"B {_iv(b, unit)} against A {_iv(a, unit)}"

    def check(status: str, reason: str) -> LimitCheck:
        return LimitCheck(limit, status, a, b, allowed_pt, reason, lo_allowed, hi_allowed, note)

    if math.isfinite(b.low) and math.isfinite(hi_allowed) and above(b, hi_allowed):
        return check(
            EXCEEDED,
            f"B's {lab} is {'more than' if b.low_open else 'at least'} {_fmt(b.low, unit)}, above the "
            "most the limit allows at any plausible "
            f"A ({_fmt(hi_allowed, unit)}); {sides}.",
        )
    if not (math.isfinite(b.high) and math.isfinite(lo_allowed)):
        short = [name for name, iv in (("A", a), ("B", b)) if not iv.bounded]
        needed = values_needed(limit.q, a.confidence)
        return check(
            TOO_FEW,
            f"too few values to bound {lab} on side {' and '.join(short) or 'A'} "
            f"(n = {a.n:,} and {b.n:,}; about {needed:,} or more are needed at this confidence).",
        )
    if b.high <= lo_allowed:
        return check(
            HOLDS,
            f"shown within the limit: B's {lab} is at most {_fmt(b.high, unit)}, within the least the "
            f"limit allows at any plausible A ({_fmt(lo_allowed, unit)}); {sides}.",
        )
    coarse = _coarse_reason(lab, a, b, (max(b.low, lo_allowed), min(b.high, hi_allowed)), unit)
    if coarse:
        return check(COARSE, f"{coarse}; {sides}.")
    tail = "--prove needs it shown within." if prove else "no credible evidence that it is exceeded."
    return check(
        UNCLEAR,
        f"the intervals reach both sides of the limit (allowed {_fmt(lo_allowed, unit)} to "
        f"{_fmt(hi_allowed, unit)} over A's interval): {sides}; {tail}",
    )


def _coarse_reason(
    lab: str, a: QuantileInterval, b: QuantileInterval, region: tuple[float, float], unit: str
) -> str:
    """Why the buckets, not the sample, leave a limit open (empty when they do not).

    B's side: its interval is one bucket and the undecided stretch lies inside it. A's
    side: its interval is one bucket, so the limit itself is only known that well.
    """
    lo, hi = region
    if b.bucket is not None and b.bucket_limited and b.bucket[0] <= lo and hi <= b.bucket[1]:
        return (
            f"the buckets are too coarse to decide: B's {lab} lies in the bucket {span(*b.bucket, unit)}, "
            "and the limit falls inside it"
        )
    if a.bucket is not None and a.bucket_limited:
        return (
            f"the buckets are too coarse to decide: A's {lab} is only known to lie in the bucket "
            f"{span(*a.bucket, unit)}, so the limit is only known that well"
        )
    return ""


def values_needed(q: float, confidence: float) -> int:
    """Smallest n for which both order-statistic bounds of the q-quantile exist.

    The upper bound exists once P(all n values below x_q) = q**n <= (1 - confidence)/2,
    the lower once (1 - q)**n <= (1 - confidence)/2.
    """
    half = (1.0 - confidence) / 2.0
    return math.ceil(math.log(half) / math.log(max(q, 1.0 - q)))


def gate(
    a: Distribution,
    b: Distribution,
    limits: list[Limit | ShareLimit],
    *,
    confidence: float = 0.95,
    prove: bool = False,
    labels: tuple[str, str] = ("A", "B"),
) -> GateResult:
    """Check every limit; intervals at a Bonferroni level so the claims hold jointly."""
    if not limits:
        raise ValueError("no limit given; add at least one, such as --limit p99=+5%.")
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must lie strictly between 0 and 1, got {confidence!r}.")
    for s, name in ((a, labels[0]), (b, labels[1])):
        if s.count == 0:
            raise ValueError(f"sketch {name!r} holds no values; there is nothing to check.")
    if a.unit != b.unit:
        raise ValueError(
            f"{labels[0]!r} is in {a.unit!r} and {labels[1]!r} in {b.unit!r}; they do not compare."
        )
    each = 1.0 - (1.0 - confidence) / (2 * len(limits))
    quantile_limits = [lim for lim in limits if isinstance(lim, Limit)]
    qs = tuple(lim.q for lim in quantile_limits)
    ia = iter(quantile_intervals(a, qs, each) if qs else [])
    ib = iter(quantile_intervals(b, qs, each) if qs else [])
    checks = tuple(
        _check(lim, next(ia), next(ib), a.unit, prove)
        if isinstance(lim, Limit)
        else check_share(lim, a, b, each, prove)
        for lim in limits
    )
    return GateResult(labels, a.unit, confidence, each, prove, checks)
