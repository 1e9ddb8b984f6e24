"""OpenMetrics (and Prometheus) text exposition: classic histograms as cumulative bucket counts.

Follows the OpenMetrics 1.0 specification, "Histogram" in the text format: a family
``NAME`` of type histogram has samples ``NAME_bucket{le="b"}`` with the *cumulative*
count of values <= b (``le="+Inf"`` MUST be present and counts every value),
``NAME_count`` (equal to the ``+Inf`` bucket) and ``NAME_sum``, and optionally
``NAME_created`` (when the counting started: a reset moves it). Buckets MUST be sorted
by ``le``; a sample may end in a timestamp (OpenMetrics writes seconds, the older
Prometheus text format milliseconds: read by magnitude); an exposition ends with
``# EOF``, after which a file of several scrapes begins the next one. ``# UNIT``
(or a name ending in ``_seconds``, ``_milliseconds``, ``_bytes``) gives the unit.

One histogram of one scrape becomes one cumulative point (``otlp_metrics.Point``), its
bucket i being (le_{i-1}, le_i]; ``series.py`` turns cumulative points into windows.
What the spec forbids is counted by reason and skipped: no ``+Inf`` bucket, counts
that go down as ``le`` grows, negative or fractional counts, a ``_count`` that is not
the ``+Inf`` bucket, a NaN ``le``. Buckets written out of ``le`` order are put in order
and counted in a warning (the counts still say the same thing).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..sketch.buckets import ExplicitPart, Extremes
from . import layout as L
from .otlp_metrics import BAD_BOUNDS, BAD_COUNTS, COUNT_MISMATCH, NAN_BOUND, Point
from .times import MAX_US

NO_INF = "no_inf_bucket"
NOT_CUMULATIVE = "buckets_not_cumulative"
REASON_TEXT = {
    NO_INF: 'a histogram without its le="+Inf" bucket',
    NOT_CUMULATIVE: "cumulative bucket counts that go down as le grows",
}

_SAMPLE = re.compile(
    r"^(?P<name>[A-Za-z_:][A-Za-z0-9_:]*)(?:\{(?P<labels>[^}]*)\})?[ \t]+(?P<value>\S+)"
    r"(?:[ \t]+(?P<ts>[^#\s]\S*))?[ \t]*(?:#.*)?$"
)
_LABEL = re.compile(r'\s*([A-Za-z_][A-Za-z0-9_]*)\s*=\s*"((?:[^"\\]|\\.)*)"\s*,?')
UNITS = {"seconds": "s", "milliseconds": "ms", "microseconds": "us", "nanoseconds": "ns", "bytes": "bytes"}
"""OpenMetrics unit words (``# UNIT`` or the name's suffix) as ogive's units."""
SUFFIXES = ("_bucket", "_count", "_sum", "_created")


def looks_like(lines: list[str]) -> bool:
    """A histogram family declared, or bucket samples with an ``le`` label."""
    for ln in lines:
        s = ln.strip()
        if s.startswith("# TYPE ") and s.split()[-1] in ("histogram", "gaugehistogram"):
            return True
        if "_bucket{" in s and "le=" in s and _SAMPLE.match(s):
            return True
    return False


def _labels(text: str | None) -> tuple[tuple[str, str], ...] | None:
    if not text:
        return ()
    out: list[tuple[str, str]] = []
    pos = 0
    while pos < len(text):
        m = _LABEL.match(text, pos)
        if not m:
            return None if text[pos:].strip(" ,") else tuple(out)
        out.append((m[1], m[2].replace('\\"', '"').replace("\\n", "\n").replace("\\\\", "\\")))
        pos = m.end()
    return tuple(out)


def _number(text: str) -> float:
    return float(text.replace("Inf", "inf"))


def _time_ns(text: str | None) -> int:
    """A sample timestamp in ns: seconds (OpenMetrics) or milliseconds (Prometheus), by size."""
    if text is None:
        return 0
    v = float(text)
    if not math.isfinite(v) or v <= 0:
        raise ValueError
    ns = round(v * (1e6 if v > 1e11 else 1e9))
    if ns >= (MAX_US - 1e6) * 1000:  # past year 9999 (a second short: float rounding) no date
        raise ValueError
    return ns


@dataclass
class _Histogram:
    buckets: list[tuple[float, float]] = field(default_factory=list)
    count: float | None = None
    total: float | None = None
    created_ns: int = 0
    time_ns: int = 0
    line: int = 0
    bad: str | None = None


@dataclass
class Scrape:
    """The histograms of one exposition, gathered sample by sample."""

    types: dict[str, str] = field(default_factory=dict)
    units: dict[str, str] = field(default_factory=dict)
    hists: dict[tuple[Any, ...], _Histogram] = field(default_factory=dict)
    extras: dict[tuple[Any, ...], tuple[str, float, int]] = field(default_factory=dict)
    """(family, labels, time) -> (suffix, value, line) of ``_count``/``_sum``/``_created`` samples."""
    bad_lines: list[int] = field(default_factory=list)
    out_of_order: int = 0


class Exposition:
    """Reads expositions line by line; ``points()`` hands over each finished scrape."""

    def __init__(self, metric: str | None, floor_of: Any) -> None:
        self.metric = metric
        self.floor_of = floor_of
        self.scrape = Scrape()
        self.names: set[str] = set()
        self.out_of_order = 0
        self.other_names = 0

    def line(self, text: str, number: int) -> None:
        s = text.strip()
        if not s:
            return
        sc = self.scrape
        if s.startswith("#"):
            parts = s.split()
            if len(parts) >= 4 and parts[1] in ("TYPE", "UNIT"):
                (sc.types if parts[1] == "TYPE" else sc.units)[parts[2]] = parts[3]
            return
        m = _SAMPLE.match(s)
        labels = _labels(m["labels"]) if m else None
        if m is None or labels is None:
            sc.bad_lines.append(number)
            return
        name = m["name"]
        family, suffix = next(((name[: -len(x)], x) for x in SUFFIXES if name.endswith(x)), (name, ""))
        if not suffix or sc.types.get(family, "histogram") not in ("histogram", "gaugehistogram"):
            return  # a counter, gauge, summary...: not a distribution
        try:
            ts = _time_ns(m["ts"])
        except ValueError:
            ts = -1
        rest = tuple(kv for kv in labels if kv[0] != "le")
        key = (family, rest, ts)
        if suffix != "_bucket":
            try:
                sc.extras[(*key, suffix)] = (suffix, _number(m["value"]), number)
            except ValueError:
                sc.extras[(*key, suffix)] = (suffix, math.nan, number)
            return
        h = sc.hists.setdefault(key, _Histogram(time_ns=ts, line=number))
        le = dict(labels).get("le")
        try:
            bound, value = _number(le if le is not None else "nan"), _number(m["value"])
        except ValueError:
            h.bad = h.bad or (NAN_BOUND if le is None else BAD_COUNTS)
            return
        if math.isnan(bound):
            h.bad = h.bad or NAN_BOUND
        h.buckets.append((bound, value))

    def end_scrape(self) -> tuple[list[Point], list[tuple[str, int]]]:
        """The finished scrape's points and (reason, line) of what was skipped; starts the next."""
        sc, self.scrape = self.scrape, Scrape(types=dict(self.scrape.types), units=dict(self.scrape.units))
        points: list[Point] = []
        skipped = [(L.BAD_RECORD, n) for n in sc.bad_lines]
        for (family, rest, ts), h in sc.hists.items():
            self.names.add(family)
            if self.metric is not None and family != self.metric:
                self.other_names += 1
                continue
            for suffix in ("_count", "_sum", "_created"):
                got = sc.extras.get((family, rest, ts, suffix))
                if got is not None:
                    _, v, _ = got
                    if suffix == "_count":
                        h.count = v
                    elif suffix == "_sum":
                        h.total = v
                    elif math.isfinite(v) and 0 < v < MAX_US / 1e6 - 1:
                        h.created_ns = round(v * 1e9)
            unit = UNITS.get(sc.units.get(family, ""), "") or next(
                (u for word, u in UNITS.items() if family.endswith("_" + word)), ""
            )
            try:
                part = self._part(h, self.floor_of(unit))
            except _Bad as bad:
                skipped.append((bad.reason, h.line))
                continue
            if h.time_ns < 0:
                from .skips import BAD_TIMESTAMP

                skipped.append((BAD_TIMESTAMP, h.line))
                continue
            series = ((family, (), ""), rest)
            points.append(
                Point(family, unit, series, dict(rest), h.created_ns, h.time_ns, True, part, h.line)
            )
        return points, skipped

    def _part(self, h: _Histogram, floor: float) -> ExplicitPart:
        with np.errstate(invalid="ignore"):  # inf - inf in a damaged exposition: judged below
            return self._checked(h, floor)

    def _checked(self, h: _Histogram, floor: float) -> ExplicitPart:
        if h.bad:
            raise _Bad(h.bad)
        les = np.array([b for b, _ in h.buckets])
        cum = np.array([c for _, c in h.buckets])
        if les.size and np.any(np.diff(les) < 0):
            self.out_of_order += 1
            order = np.argsort(les, kind="stable")
            les, cum = les[order], cum[order]
        if les.size == 0 or les[-1] != math.inf:
            raise _Bad(NO_INF)
        if np.any(np.diff(les) == 0):
            raise _Bad(BAD_BOUNDS)
        if np.any(~np.isfinite(cum)) or np.any(cum < 0) or np.any(cum != np.floor(cum)):
            raise _Bad(BAD_COUNTS)
        if np.any(np.diff(cum) < 0):
            raise _Bad(NOT_CUMULATIVE)
        if h.count is not None and h.count != cum[-1]:
            raise _Bad(COUNT_MISMATCH)
        counts = np.diff(np.concatenate(([0.0], cum)))
        bounds = les[:-1]
        f = floor if bounds.size and floor <= bounds[0] else -math.inf
        total = h.total if h.total is not None and math.isfinite(h.total) else math.nan
        return ExplicitPart(bounds, counts, f, Extremes(math.nan, math.nan, total))


class _Bad(Exception):
    def __init__(self, reason: str) -> None:
        self.reason = reason
