"""The invented demo scenario as telemetry: OTLP JSON metrics and an OpenMetrics before/after pair.

The same made-up release as the demo logs (``demo.py``: *Hollowfen Provisions*, service
``checkout``, release v4.2.0 at 2026-03-04T13:00:00Z), as its metrics pipeline would have
exported it. The request latencies are drawn from the same scenario (``demo.requests``)
and counted into buckets, so the truth behind every bucket is known:

* ``checkout-metrics.otlp.jsonl.gz``: one ``ExportMetricsServiceRequest`` per host every
  10 minutes, as a collector's file exporter writes it. ``http.server.request.duration``
  (unit ``s``, the explicit bounds OpenTelemetry's HTTP semantic conventions advise,
  CUMULATIVE, one series per route and method; every host restarts with the release, so
  each series has a reset at 13:00) and ``checkout.price_cache.lookup.duration`` (unit
  ``ms``, an exponential histogram of scale 3, DELTA), with resource attributes
  ``service.name`` and ``host.name``.
* ``checkout-before.prom`` and ``checkout-after.prom``: one OpenMetrics scrape of every
  host just before the release (the old processes, counting since midnight) and at the
  end of the day (the new ones, counting since 13:00), ``http_server_request_duration_seconds``
  with the same bounds, ``_count``, ``_sum`` and ``_created``.

Deterministic: fixed seeds, and gzip without a time stamp.
"""

from __future__ import annotations

import gzip
import json
import math
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

from . import demo
from .errors import OgiveError

BOUNDS_S = (0.005, 0.01, 0.025, 0.05, 0.075, 0.1, 0.25, 0.5, 0.75, 1.0, 2.5, 5.0, 7.5, 10.0)
"""OpenTelemetry's advised explicit bounds for ``http.server.request.duration`` (seconds)."""
EXPORT_S = 600
REQUESTS_PER_S = 4.0
CACHE_SCALE = 3
OTLP_NAME = "checkout-metrics.otlp.jsonl.gz"
PROM_NAMES = ("checkout-before.prom", "checkout-after.prom")
SEED = 201
DAY0_NS = int(demo.DAY_START.timestamp()) * 10**9
RELEASE_NS = int(demo.RELEASE.timestamp()) * 10**9
END_NS = int(demo.DAY_END.timestamp()) * 10**9


def day_requests(seed: int = SEED) -> dict[str, NDArray[Any]]:
    """Every request of the day (time, host, route, method, latency in ms) from the scenario."""
    rng = np.random.default_rng(seed)
    n = int(REQUESTS_PER_S * (END_NS - DAY0_NS) / 1e9)
    ts_us = np.sort(rng.integers(DAY0_NS // 1000, END_NS // 1000, size=n))
    df = demo.requests(rng, ts_us)
    return {
        "t_ns": ts_us * 1000,
        "host": df["host"].to_numpy(),
        "route": df["route"].to_numpy(),
        "method": df["method"].to_numpy(),
        "ms": df["latency_ms"].to_numpy(),
        "cache": df["cache"].to_numpy(),
    }


def explicit_counts(values_s: NDArray[np.float64]) -> NDArray[np.int64]:
    """Counts in (b_{i-1}, b_i] (the OTLP and OpenMetrics bucket rule) over ``BOUNDS_S``."""
    idx = np.searchsorted(np.array(BOUNDS_S), values_s, side="left")
    return np.bincount(idx, minlength=len(BOUNDS_S) + 1).astype(np.int64)


def exponential_counts(values: NDArray[np.float64], scale: int) -> tuple[int, list[int]]:
    """(offset, counts) of positive values in buckets (base^i, base^(i+1)], base = 2^(2^-scale)."""
    if not values.size:
        return 0, []
    k = 2.0**scale
    i = (np.ceil(np.log2(values) * k) - 1).astype(np.int64)
    lo = int(i.min())
    return lo, np.bincount(i - lo).astype(np.int64).tolist()


def _attr(key: str, value: str) -> dict[str, Any]:
    return {"key": key, "value": {"stringValue": value}}


def otlp_lines(r: dict[str, NDArray[Any]]) -> Iterator[str]:
    """One export per host per 10 minutes (see the module text); running counts per series."""
    pairs = sorted({(str(m), str(p)) for m, p in zip(r["method"], r["route"], strict=True)})
    route_of = {pair: i for i, pair in enumerate(pairs)}
    ri = np.array([route_of[(str(m), str(p))] for m, p in zip(r["method"], r["route"], strict=True)])
    hi = np.searchsorted(np.array(demo.HOSTS), r["host"])
    seconds = r["ms"] / 1000.0
    b = np.searchsorted(np.array(BOUNDS_S), seconds, side="left")
    shape = (len(demo.HOSTS), len(pairs), len(BOUNDS_S) + 1)
    cum, cum_sum = np.zeros(shape, dtype=np.int64), np.zeros(shape[:2])
    step = EXPORT_S * 10**9
    for end in range(DAY0_NS + step, END_NS + 1, step):
        begin = end - step
        if begin == RELEASE_NS:  # the release restarts every process: cumulative counts begin again
            cum[:], cum_sum[:] = 0, 0.0
        i0, i1 = np.searchsorted(r["t_ns"], [begin, end])
        np.add.at(cum, (hi[i0:i1], ri[i0:i1], b[i0:i1]), 1)
        np.add.at(cum_sum, (hi[i0:i1], ri[i0:i1]), seconds[i0:i1])
        start = RELEASE_NS if end > RELEASE_NS else DAY0_NS
        for h, host in enumerate(demo.HOSTS):
            points = [
                {
                    "attributes": [_attr("http.route", route), _attr("http.request.method", method)],
                    "startTimeUnixNano": str(start),
                    "timeUnixNano": str(end),
                    "count": str(int(cum[h, k].sum())),
                    "sum": round(float(cum_sum[h, k]), 9),
                    "bucketCounts": [str(c) for c in cum[h, k].tolist()],
                    "explicitBounds": list(BOUNDS_S),
                }
                for k, (method, route) in enumerate(pairs)
            ]
            sel = np.flatnonzero((hi[i0:i1] == h) & (r["cache"][i0:i1] != "none")) + i0
            doc = _export(host, points, _lookup_point(r["ms"][sel], begin, end))
            yield json.dumps(doc, separators=(",", ":"))


def _lookup_point(ms: NDArray[np.float64], begin: int, end: int) -> dict[str, Any]:
    """The price-cache lookup time of a window's cached requests, as an exponential DELTA point."""
    lookup = np.round(ms * 0.04 + 0.05, 6)
    off, counts = exponential_counts(lookup, CACHE_SCALE)
    return {
        "startTimeUnixNano": str(begin),
        "timeUnixNano": str(end),
        "count": str(int(lookup.size)),
        "sum": round(float(lookup.sum()), 6),
        "scale": CACHE_SCALE,
        "zeroCount": "0",
        "positive": {"offset": off, "bucketCounts": [str(c) for c in counts]},
        **({"min": float(lookup.min()), "max": float(lookup.max())} if lookup.size else {}),
    }


def _export(host: str, points: list[dict[str, Any]], lookup: dict[str, Any]) -> dict[str, Any]:
    """An ExportMetricsServiceRequest of one host: resource, scope, the two metrics."""
    return {
        "resourceMetrics": [
            {
                "resource": {"attributes": [_attr("service.name", demo.SERVICE), _attr("host.name", host)]},
                "scopeMetrics": [
                    {
                        "scope": {"name": "hollowfen.checkout", "version": demo.RELEASE_NAME},
                        "metrics": [
                            {
                                "name": "http.server.request.duration",
                                "unit": "s",
                                "histogram": {"aggregationTemporality": 2, "dataPoints": points},
                            },
                            {
                                "name": "checkout.price_cache.lookup.duration",
                                "unit": "ms",
                                "exponentialHistogram": {"aggregationTemporality": 1, "dataPoints": [lookup]},
                            },
                        ],
                    }
                ],
            }
        ]
    }


def _le(b: float) -> str:
    return repr(float(b)) if b != math.inf else "+Inf"


def prom_text(r: dict[str, NDArray[Any]], start_ns: int, at_ns: int) -> str:
    """One OpenMetrics scrape of every host at ``at_ns``, counting since ``start_ns``."""
    name = "http_server_request_duration_seconds"
    out = [
        f"# TYPE {name} histogram",
        f"# UNIT {name} seconds",
        f"# HELP {name} Duration of HTTP server requests.",
    ]
    ts = f"{at_ns / 1e9:.3f}"
    created = f"{start_ns / 1e9:.3f}"
    routes = sorted({str(p) for p in r["route"]})
    for host in demo.HOSTS:
        for route in routes:
            sel = (r["host"] == host) & (r["route"] == route) & (r["t_ns"] >= start_ns) & (r["t_ns"] < at_ns)
            v = r["ms"][sel] / 1000.0
            labels = f'instance="{host}",route="{route}"'
            cum = np.cumsum(explicit_counts(v))
            for b, c in zip((*BOUNDS_S, math.inf), cum.tolist(), strict=True):
                out.append(f'{name}_bucket{{{labels},le="{_le(b)}"}} {c} {ts}')
            out.append(f"{name}_count{{{labels}}} {int(v.size)} {ts}")
            out.append(f"{name}_sum{{{labels}}} {float(v.sum()):.6f} {ts}")
            out.append(f"{name}_created{{{labels}}} {created} {ts}")
    out.append("# EOF")
    return "\n".join(out) + "\n"


def write_metrics_set(folder: str | Path) -> list[str]:
    """Write the demo metric files into ``folder``; returns their paths."""
    target = Path(folder)
    r = day_requests()
    paths = []
    try:
        target.mkdir(parents=True, exist_ok=True)
        p = target / OTLP_NAME
        with open(p, "wb") as raw, gzip.GzipFile(fileobj=raw, mode="wb", mtime=0, filename="") as gz:
            for line in otlp_lines(r):
                gz.write(line.encode() + b"\n")
        paths.append(str(p))
        scrapes = ((DAY0_NS, RELEASE_NS - 30 * 10**9), (RELEASE_NS, END_NS - 30 * 10**9))
        for fname, (start, at) in zip(PROM_NAMES, scrapes, strict=True):
            q = target / fname
            q.write_text(prom_text(r, start, at), encoding="utf-8")
            paths.append(str(q))
    except OSError as exc:
        raise OgiveError(f"cannot write the demo metrics into {target}: {exc.strerror or exc}.") from None
    return paths
