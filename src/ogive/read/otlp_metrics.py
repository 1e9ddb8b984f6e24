"""OpenTelemetry metric exports in the OTLP JSON encoding: histogram points as bucket counts.

Follows opentelemetry-proto: the JSON encoding of ``docs/specification.md`` ("JSON
Protobuf Encoding": lowerCamelCase keys, 64-bit integers as decimal strings — numbers
accepted too —, enums as integers, unknown fields ignored) and the messages of
``opentelemetry/proto/metrics/v1/metrics.proto``, one ``ExportMetricsServiceRequest``
(``{"resourceMetrics": [...]}``) per line, as a collector's file exporter writes them:

* ``Histogram.dataPoints``: ``HistogramDataPoint`` with ``explicitBounds`` (m, strictly
  increasing) and ``bucketCounts`` (m + 1), bucket i = (b_{i-1}, b_i]; ``count`` must
  equal the sum of the bucket counts; ``sum``, ``min``, ``max`` optional.
* ``ExponentialHistogram.dataPoints``: ``scale``, ``zeroCount`` (``zeroThreshold``),
  ``positive``/``negative`` = {``offset``, ``bucketCounts``}; base = 2^(2^-scale), bucket
  index i covers (base^i, base^(i+1)].
* ``aggregationTemporality``: 1 DELTA (each point is its own interval), 2 CUMULATIVE
  (each point counts since ``startTimeUnixNano``; ``series.py`` differences them).
* ``flags`` bit 1 (FLAG_NO_RECORDED_VALUE): a point that stands for "no value" (a
  staleness marker); counted, never read as zeros.

A point the spec forbids is skipped and counted by what is wrong with it; nothing in a
line can raise past this module. Points of other metric types (gauge, sum, summary)
are counted apart, as are histograms of another name than ``--metric``.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..sketch.buckets import ExplicitPart, ExponentialPart, Extremes, Part, inconsistency
from . import layout as L
from .skips import BAD_TIMESTAMP
from .times import MAX_US

DELTA, CUMULATIVE = 1, 2
TEMPORALITY = {"1": DELTA, "2": CUMULATIVE, "AGGREGATION_TEMPORALITY_DELTA": DELTA,
               "AGGREGATION_TEMPORALITY_CUMULATIVE": CUMULATIVE}  # fmt: skip
MIN_SCALE, MAX_SCALE = -10, 20
NO_RECORDED_VALUE = 1

# Why a point (or a line) gave no counts (keys as the other formats' reasons, text below).
BAD_COUNTS = "bad_bucket_counts"
BAD_BOUNDS = "bounds_out_of_order"
NAN_BOUND = "nan_bound"
COUNT_MISMATCH = "count_mismatch"
NO_TEMPORALITY = "no_temporality"
MISSING = "missing_field"
BAD_SCALE = "scale_out_of_range"
NO_VALUE = "no_recorded_value"
EXTREMES = "extremes_outside_buckets"
NO_METRICS = "no_metrics"
REASON_TEXT = {
    BAD_COUNTS: "bucket counts that are negative, not whole numbers, or one too many or few for the bounds",
    BAD_BOUNDS: "bucket bounds that do not increase strictly",
    NAN_BOUND: "a bucket bound that is NaN or infinite",
    COUNT_MISMATCH: "a point whose count is not the sum of its bucket counts",
    NO_TEMPORALITY: "a histogram without a DELTA or CUMULATIVE aggregation temporality",
    MISSING: "a histogram point without buckets (or a metric without points)",
    BAD_SCALE: "an exponential histogram scale outside -10 to 20",
    NO_VALUE: "a point flagged 'no recorded value' (a staleness marker)",
    EXTREMES: "a min or max that contradicts the buckets (or is not finite)",
    NO_METRICS: "a JSON object without resourceMetrics",
}


@dataclass
class Point:
    """One histogram point as read: its series, times, temporality and counts."""

    metric: str
    unit: str
    series: tuple[Any, ...]
    """What identifies the stream: metric, resource and scope, the point's attributes."""
    attributes: dict[str, str]
    """Point attributes, then the resource's and the scope's name (for ``--by``)."""
    start_ns: int
    """0 when not given."""
    time_ns: int
    cumulative: bool
    part: Part
    line: int


def _int(v: Any) -> int:
    """A 64-bit integer as the JSON encoding writes it (a decimal string) or as a number."""
    if isinstance(v, bool):
        raise ValueError
    if isinstance(v, int):
        return v
    if isinstance(v, str):
        return int(v)
    if isinstance(v, float) and v.is_integer():
        return int(v)
    raise ValueError


def _float(v: Any) -> float:
    if isinstance(v, bool) or v is None:
        raise ValueError
    if isinstance(v, str) and v in ("NaN", "Infinity", "-Infinity"):
        return float(v.replace("Infinity", "inf"))  # proto3 JSON's non-finite spellings
    return float(v)


def _counts(v: Any) -> np.ndarray:
    """Whole non-negative counts, written as decimal strings or numbers (numpy parses both at
    once: a Python call per count cost most of the scan)."""
    if not isinstance(v, list):
        raise TypeError  # (a null count becomes NaN below and is refused there)
    out = np.array(v, dtype=np.float64)
    if out.ndim != 1 or not np.all((out >= 0) & (out == np.floor(out)) & (out < 2.0**63)):
        raise ValueError
    return out


_BOUNDS: dict[tuple[Any, ...], np.ndarray | str] = {}
"""Explicit bounds already checked, by their JSON values: every point of a series (and mostly of
a metric) repeats the same list, so each is read and judged once."""


def _bounds(v: Any) -> np.ndarray:
    key = tuple(v) if isinstance(v, list) else ()
    got = _BOUNDS.get(key)
    if got is None:
        try:
            arr = np.array([_float(b) for b in v], dtype=np.float64)
        except (TypeError, ValueError):
            got = BAD_COUNTS
        else:
            finite = bool(np.all(np.isfinite(arr)))
            got = NAN_BOUND if not finite else BAD_BOUNDS if np.any(np.diff(arr) <= 0) else arr
        if len(_BOUNDS) < 1024:
            _BOUNDS[key] = got
    if isinstance(got, str):
        raise Skip(got)
    return got


def _attrs(kvs: Any) -> dict[str, str]:
    out: dict[str, str] = {}
    if not isinstance(kvs, list):
        return out
    for kv in kvs:
        if isinstance(kv, dict) and isinstance(kv.get("key"), str) and isinstance(kv.get("value"), dict):
            val = kv["value"]
            for k in ("stringValue", "intValue", "doubleValue", "boolValue"):
                if k in val:
                    out[kv["key"]] = str(val[k]).lower() if k == "boolValue" else str(val[k])
                    break
    return out


class Skip(Exception):
    """A point (or line) that gives no counts, with the reason it is counted under."""

    def __init__(self, reason: str) -> None:
        self.reason = reason


def _extremes(dp: dict[str, Any]) -> Extremes:
    def opt(name: str) -> float:
        if name not in dp or dp[name] is None:
            return math.nan
        v = _float(dp[name])
        if not math.isfinite(v):
            raise Skip(EXTREMES if name != "sum" else MISSING)
        return v

    return Extremes(opt("min"), opt("max"), opt("sum"))


def explicit_part(dp: dict[str, Any], floor: float) -> ExplicitPart:
    """A ``HistogramDataPoint``'s buckets; ``floor`` closes the first bucket (0 for a duration)."""
    try:
        counts = _counts(dp.get("bucketCounts", []))
    except (TypeError, ValueError):
        raise Skip(BAD_COUNTS) from None
    if counts.size == 0:
        raise Skip(MISSING)  # count and sum only: no distribution to read
    bounds = _bounds(dp.get("explicitBounds", []))
    if counts.size != bounds.size + 1:
        raise Skip(BAD_COUNTS)
    f = floor if bounds.size and floor <= bounds[0] else -math.inf
    return ExplicitPart(bounds, counts, f, _extremes(dp))


def exponential_part(dp: dict[str, Any]) -> ExponentialPart:
    try:
        scale = _int(dp.get("scale", 0))
        zero = float(_int(dp.get("zeroCount", 0)))
        threshold = _float(dp.get("zeroThreshold", 0.0))
        pos = dp.get("positive") or {}
        neg = dp.get("negative") or {}
        p_off, n_off = _int(pos.get("offset", 0)), _int(neg.get("offset", 0))
        p_counts, n_counts = _counts(pos.get("bucketCounts", [])), _counts(neg.get("bucketCounts", []))
    except (TypeError, ValueError, AttributeError):
        raise Skip(BAD_COUNTS) from None
    if not MIN_SCALE <= scale <= MAX_SCALE:
        raise Skip(BAD_SCALE)
    if not (math.isfinite(threshold) and threshold >= 0 and zero >= 0):
        raise Skip(BAD_COUNTS)
    return ExponentialPart(scale, p_off, p_counts, n_off, n_counts, zero, threshold, 1.0, _extremes(dp))


def _point(
    dp: Any, exponential: bool, temporality: int, metric: str, unit: str, ident: tuple[Any, ...],
    context: dict[str, str], line: int, floor: float,
) -> Point:  # fmt: skip
    if not isinstance(dp, dict):
        raise Skip(L.BAD_RECORD)
    try:
        flags = _int(dp.get("flags", 0))
    except ValueError:
        flags = 0
    if flags & NO_RECORDED_VALUE:
        raise Skip(NO_VALUE)
    if temporality not in (DELTA, CUMULATIVE):
        raise Skip(NO_TEMPORALITY)
    try:
        time_ns = _int(dp["timeUnixNano"])
        start_ns = _int(dp.get("startTimeUnixNano", 0))
    except KeyError:
        raise Skip(BAD_TIMESTAMP) from None
    except ValueError:
        raise Skip(BAD_TIMESTAMP) from None
    # A start after the point's own time is no interval; past the last second of year
    # 9999 no date can be written (a second short, so float rounding cannot reach it).
    if not 0 < time_ns < (MAX_US - 1e6) * 1000 or not 0 <= start_ns <= time_ns:
        raise Skip(BAD_TIMESTAMP)
    try:
        part: Part = exponential_part(dp) if exponential else explicit_part(dp, floor)
    except ValueError:  # a non-finite min/max/sum, a count over the float range
        raise Skip(BAD_COUNTS) from None
    if "count" in dp:
        try:
            declared = _int(dp["count"])
        except ValueError:
            raise Skip(BAD_COUNTS) from None
        if declared != round(part.count):
            raise Skip(COUNT_MISMATCH)
    if inconsistency(part):
        raise Skip(EXTREMES)
    attrs = _attrs(dp.get("attributes"))
    series = (ident, tuple(sorted(attrs.items())))
    return Point(
        metric, unit, series, {**context, **attrs}, start_ns, time_ns, temporality == CUMULATIVE, part, line
    )


@dataclass
class LineResult:
    points: list[Point]
    skipped: list[str]
    """A reason per point (or for the whole line) that gave no counts."""
    other_types: int = 0
    """Points of gauges, sums and summaries (not distributions)."""
    other_names: int = 0
    """Histogram points of other metrics than the one asked for."""
    names: set[str] | None = None


def parse_line(text: str, line: int, metric: str | None, floor_of: Any) -> LineResult:
    """The histogram points of one line; ``floor_of(unit)`` gives the first bucket's floor."""
    out = LineResult([], [], names=set())
    if not text.strip():
        out.skipped.append(L.BLANK_LINE)
        return out
    try:
        doc = json.loads(text)
    except (ValueError, RecursionError):
        out.skipped.append(L.NOT_JSON)
        return out
    if not isinstance(doc, dict):
        out.skipped.append(L.NOT_AN_OBJECT)
        return out
    rms = doc.get("resourceMetrics")
    if not isinstance(rms, list):
        out.skipped.append(NO_METRICS)
        return out
    for rm in rms:
        if not isinstance(rm, dict):
            out.skipped.append(L.BAD_RECORD)
            continue
        res = rm.get("resource")
        res_attrs = _attrs(res.get("attributes")) if isinstance(res, dict) else {}
        scopes = rm.get("scopeMetrics", rm.get("instrumentationLibraryMetrics"))
        for sm in scopes if isinstance(scopes, list) else []:
            if not isinstance(sm, dict):
                out.skipped.append(L.BAD_RECORD)
                continue
            scope = sm.get("scope", sm.get("instrumentationLibrary"))
            scope_name = str(scope.get("name", "")) if isinstance(scope, dict) else ""
            _metrics(sm.get("metrics"), out, metric, floor_of, line, res_attrs, scope_name)
    return out


def _metrics(
    metrics: Any, out: LineResult, metric: str | None, floor_of: Any, line: int,
    res_attrs: dict[str, str], scope_name: str,
) -> None:  # fmt: skip
    for m in metrics if isinstance(metrics, list) else []:
        if not isinstance(m, dict) or not isinstance(m.get("name"), str):
            out.skipped.append(L.BAD_RECORD)
            continue
        name, unit = m["name"], str(m.get("unit", ""))
        body = m.get("histogram")
        exponential = body is None and "exponentialHistogram" in m
        if exponential:
            body = m["exponentialHistogram"]
        if not isinstance(body, dict):
            if any(k in m for k in ("gauge", "sum", "summary")):
                kind = next(k for k in ("gauge", "sum", "summary") if k in m)
                pts = m[kind].get("dataPoints") if isinstance(m[kind], dict) else None
                out.other_types += len(pts) if isinstance(pts, list) else 1
            elif body is not None or "histogram" in m:
                out.skipped.append(MISSING)
            continue
        points = body.get("dataPoints")
        if not isinstance(points, list):
            out.skipped.append(MISSING)
            continue
        assert out.names is not None
        out.names.add(name)
        if metric is not None and name != metric:
            out.other_names += len(points)
            continue
        try:
            temporality = TEMPORALITY.get(str(body.get("aggregationTemporality", "")), 0)
        except Exception:
            temporality = 0
        ident = (name, tuple(sorted(res_attrs.items())), scope_name)
        context = {**res_attrs, "otel.scope.name": scope_name} if scope_name else dict(res_attrs)
        floor = floor_of(unit)
        for dp in points:
            try:
                out.points.append(
                    _point(dp, exponential, temporality, name, unit, ident, context, line, floor)
                )
            except Skip as s:
                out.skipped.append(s.reason)
            except (TypeError, ValueError, OverflowError, AttributeError):
                out.skipped.append(L.BAD_RECORD)


def looks_like(head: str) -> bool:
    return '"resourceMetrics"' in head
