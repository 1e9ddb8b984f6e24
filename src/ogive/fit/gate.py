"""The regression gate: limits on named quantiles of a candidate B against a baseline A.

A limit ``p99=+5%`` says "B's p99 may be at most 5 % above A's p99"; ``p50=+2ms`` says
"at most 2 ms above". Each limit ends in one of three states:

* ``exceeded`` — B's lowest plausible quantile is above what the limit allows even at
  A's highest plausible quantile. This is the claim a failing gate makes.
* ``holds`` — no credible evidence that the limit is exceeded. With ``prove`` the
  data must also *show* the limit is met (B's highest plausible quantile within what
  A's lowest allows); otherwise the limit is ``undecided``.
* ``undecided`` — the data cannot decide: too few values to bound that quantile (p99.99
  needs well over 10,000 values), or, with ``prove``, the interval straddles the limit.

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

from ..numbers import quantity
from ..sketch import Sketch, quantile_label
from ..sketch.units import SECONDS_PER_UNIT
from .ladder import QuantileInterval, quantile_intervals

TIME_UNITS = SECONDS_PER_UNIT
"""Seconds per unit, for limits written in another time unit than the sketch's."""

_LIMIT = re.compile(
    r"^\s*(?P<q>p[0-9.]+|median)\s*=\s*(?P<amount>[+-]?[0-9.]+(?:[eE][+-]?[0-9]+)?)\s*(?P<unit>%|[A-Za-zµ]+)?\s*$"
)

EXCEEDED, HOLDS, UNDECIDED = "exceeded", "holds", "undecided"


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
        """The largest B value this limit allows for a given A value."""
        return a_value * (1.0 + self.amount) if self.relative else a_value + self.amount

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


def parse_limit(text: str, unit: str) -> Limit:
    """``p99=+5%``, ``p50=+2ms``, ``p99.9=0.3s``, ``median=+1`` (sketch unit) -> Limit.

    Raises ValueError with a full sentence for anything else.
    """
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
    a: QuantileInterval
    b: QuantileInterval
    allowed: float
    """What the limit allows at A's point estimate."""
    reason: str

    def to_dict(self) -> dict[str, Any]:
        return {
            "limit": self.limit.to_dict(),
            "status": self.status,
            "a": self.a.to_dict(),
            "b": self.b.to_dict(),
            "allowed": self.allowed if math.isfinite(self.allowed) else None,
            "reason": self.reason,
        }


@dataclass(frozen=True)
class GateResult:
    labels: tuple[str, str]
    unit: str
    confidence: float
    per_interval_confidence: float
    prove: bool
    checks: tuple[LimitCheck, ...]

    @property
    def exit_code(self) -> int:
        """0 every limit holds, 1 a limit is credibly exceeded, 2 the data cannot decide."""
        statuses = {c.status for c in self.checks}
        if EXCEEDED in statuses:
            return 1
        if UNDECIDED in statuses:
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
    "quantiles not listed or traffic not sampled. Follow your team's own release policy."
)


def _check(limit: Limit, a: QuantileInterval, b: QuantileInterval, unit: str, prove: bool) -> LimitCheck:
    def q(x: float) -> str:  # the one number formatter of ogive.numbers, to four figures
        return quantity(x, unit, digits=4)

    lab = limit.label
    allowed_hi = limit.allowed(a.high)
    allowed_lo = limit.allowed(a.low)
    allowed_pt = limit.allowed(a.estimate)
    if math.isfinite(b.low) and math.isfinite(allowed_hi) and b.low > allowed_hi:
        return LimitCheck(
            limit, EXCEEDED, a, b, allowed_pt,
            f"B's {lab} is at least {q(b.low)}, above the {q(allowed_hi)} the limit "
            f"allows even at A's highest plausible {lab} ({q(a.high)}).",
        )  # fmt: skip
    if not (math.isfinite(b.high) and math.isfinite(allowed_lo)):
        short = [name for name, iv in (("A", a), ("B", b)) if not iv.bounded]
        needed = values_needed(limit.q, a.confidence)
        return LimitCheck(
            limit, UNDECIDED, a, b, allowed_pt,
            f"too few values to bound {lab} on side {' and '.join(short) or 'A'} "
            f"(n = {a.n:,} and {b.n:,}; about {needed:,} or more are needed at this confidence).",
        )  # fmt: skip
    if b.high <= allowed_lo:
        return LimitCheck(
            limit, HOLDS, a, b, allowed_pt,
            f"shown within the limit: B's {lab} is at most {q(b.high)}, within the "
            f"{q(allowed_lo)} allowed even at A's lowest plausible {lab}.",
        )  # fmt: skip
    straddle = (
        f"B's {lab} ({q(b.estimate)}, plausibly {q(b.low)} to {q(b.high)}) "
        f"against {q(allowed_pt)} allowed: the interval reaches both sides of the limit"
    )
    if prove:
        return LimitCheck(limit, UNDECIDED, a, b, allowed_pt, straddle + "; --prove needs it shown within.")
    return LimitCheck(limit, HOLDS, a, b, allowed_pt, straddle + ", so no credible evidence it is exceeded.")


def values_needed(q: float, confidence: float) -> int:
    """Smallest n for which both order-statistic bounds of the q-quantile exist.

    The upper bound exists once P(all n values below x_q) = q**n <= (1 - confidence)/2,
    the lower once (1 - q)**n <= (1 - confidence)/2.
    """
    half = (1.0 - confidence) / 2.0
    return math.ceil(math.log(half) / math.log(max(q, 1.0 - q)))


def gate(
    a: Sketch,
    b: Sketch,
    limits: list[Limit],
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
    qs = tuple(lim.q for lim in limits)
    ia = quantile_intervals(a, qs, each)
    ib = quantile_intervals(b, qs, each)
    checks = tuple(_check(lim, x, y, a.unit, prove) for lim, x, y in zip(limits, ia, ib, strict=True))
    return GateResult(labels, a.unit, confidence, each, prove, checks)
