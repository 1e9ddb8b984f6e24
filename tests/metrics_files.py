"""Writers of OTLP JSON metric and OpenMetrics files from known raw samples, for the tests.

Written here from the specs (opentelemetry-proto metrics.proto and its JSON encoding;
OpenMetrics 1.0 "Histogram"), independently of ogive's reader: buckets are counted
with ``numpy.searchsorted`` for explicit bounds ((b[i-1], b[i]]) and with
i = ceil(log2(x) * 2^scale) - 1 for exponential ones, so the truth behind every
bucket is the raw sample the test holds.
"""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np

BOUNDS = [0.5, 1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000]
T0 = 1_772_582_400 * 10**9  # 2026-03-04T00:00:00Z in ns


def explicit(values: np.ndarray, bounds: list[float] = BOUNDS) -> list[int]:
    idx = np.searchsorted(np.array(bounds), values, side="left")
    return np.bincount(idx, minlength=len(bounds) + 1).astype(int).tolist()


def exponential(values: np.ndarray, scale: int) -> tuple[int, list[int]]:
    i = np.array([math.ceil(math.log2(v) * 2**scale) - 1 for v in values])
    lo = int(i.min())
    return lo, np.bincount(i - lo).astype(int).tolist()


def hist_point(
    counts: list[int], start: int, t: int, attrs: dict[str, str] | None = None, **extra: Any
) -> dict[str, Any]:
    return {
        "attributes": [{"key": k, "value": {"stringValue": v}} for k, v in (attrs or {}).items()],
        "startTimeUnixNano": str(start),
        "timeUnixNano": str(t),
        "count": str(sum(counts)),
        "bucketCounts": [str(c) for c in counts],
        "explicitBounds": extra.pop("bounds", BOUNDS),
        **extra,
    }


def exp_point(values: np.ndarray, scale: int, start: int, t: int, **extra: Any) -> dict[str, Any]:
    off, counts = exponential(values, scale)
    return {
        "startTimeUnixNano": str(start),
        "timeUnixNano": str(t),
        "count": str(len(values)),
        "scale": scale,
        "zeroCount": "0",
        "positive": {"offset": off, "bucketCounts": [str(c) for c in counts]},
        **extra,
    }


def line(
    points: list[dict[str, Any]],
    *,
    name: str = "latency",
    unit: str = "ms",
    temporality: int = 2,
    kind: str = "histogram",
    service: str = "svc",
) -> str:
    return json.dumps(
        {
            "resourceMetrics": [
                {
                    "resource": {"attributes": [{"key": "service.name", "value": {"stringValue": service}}]},
                    "scopeMetrics": [
                        {
                            "scope": {"name": "test"},
                            "metrics": [
                                {
                                    "name": name,
                                    "unit": unit,
                                    kind: {"aggregationTemporality": temporality, "dataPoints": points},
                                }
                            ],
                        }
                    ],
                }
            ]
        }
    )


def scrape(
    values: np.ndarray,
    labels: str = 'job="a"',
    ts: float | None = None,
    created: float | None = None,
    name: str = "lat_seconds",
    bounds: list[float] = BOUNDS,
) -> list[str]:
    """An OpenMetrics histogram (cumulative buckets, +Inf, _count, _sum) of ``values``."""
    cum = np.cumsum(explicit(values, bounds))
    stamp = f" {ts}" if ts is not None else ""
    out = [
        f'{name}_bucket{{{labels},le="{b}"}} {c}{stamp}' for b, c in zip([*bounds, "+Inf"], cum, strict=True)
    ]
    out += [f"{name}_count{{{labels}}} {len(values)}{stamp}", f"{name}_sum{{{labels}}} {values.sum()}{stamp}"]
    if created is not None:
        out.append(f"{name}_created{{{labels}}} {created}{stamp}")
    return out
