"""The invented demo scenario, written as access logs of any size.

The story (ours, made up): *Hollowfen Provisions*, a small online grocer, runs a
``checkout`` service on four hosts. On 2026-03-04 at 13:00 UTC release ``v4.2.0`` went
out; it added the shopper's delivery zone to the price-cache key. Cache hits stay as fast
as before, but the hit rate drops (misses go from about 7 % to 16 % of cached requests)
and the miss path got heavier (it now also recomputes zone surcharges: its median goes
from 38 ms to 64 ms, with a wider spread). The median barely moves; p90 and p99 do.
That is the kind of change ogive exists to show. Phase ``rollout`` tells the same day
as a rolling deploy: the release reaches ``ck-web-01`` at 13:00 and one more host every
13 min 20 s, the last at 13:40, so the change is a 40-minute span, not an instant.

Latency per request is a mixture: a lognormal cache hit, or a lognormal cache miss, scaled
per route and per host (``ck-web-04`` is older hardware, about 18 % slower), plus rare
outcomes with their own timing: rate-limited ``429`` answered at the edge in well under a
millisecond, ``500`` errors on the slow path, and ``504`` gateway timeouts just past 3 s.

Everything is vectorised with numpy and formatted with polars, block by block, so a
gigabyte is written in seconds with bounded memory, and the same seed always gives the
same bytes. A few deliberately unusable rows (a value that is not a number, a record
without the value) can be mixed in so that the bad-row report has something to show.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import gzip
import os
import tempfile
import time
from collections.abc import Iterator
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import IO, Any, cast

import numpy as np
import polars as pl
from numpy.typing import NDArray

from .errors import OgiveError
from .outputs import CheckedStdout, check_target

FORMATS = ("text", "csv", "ndjson")
PHASES = ("before", "after", "day", "rollout")

SHOP = "Hollowfen Provisions"
SERVICE = "checkout"
RELEASE_NAME = "v4.2.0"
DAY_START = dt.datetime(2026, 3, 4, tzinfo=dt.UTC)
RELEASE = dt.datetime(2026, 3, 4, 13, 0, tzinfo=dt.UTC)
DAY_END = dt.datetime(2026, 3, 5, tzinfo=dt.UTC)
RELEASE_ISO = "2026-03-04T13:00:00Z"
ROLLOUT_END = dt.datetime(2026, 3, 4, 13, 40, tzinfo=dt.UTC)
"""Phase 'rollout': the same release, deployed one host at a time from RELEASE to here."""

HOSTS = ("ck-web-01", "ck-web-02", "ck-web-03", "ck-web-04")
HOST_FACTOR = np.array([1.0, 0.97, 1.03, 1.18])


@dataclass(frozen=True)
class Route:
    method: str
    path: str
    weight: float
    """Share of traffic."""
    factor: float
    """Latency multiplier on both cache paths."""
    miss_factor: float
    """Multiplier on the cache-miss share (checkout misses more: fresher prices)."""
    size: float
    """Median response size in bytes."""
    cached: bool = True


ROUTES = (
    Route("GET", "/api/cart", 0.30, 1.0, 1.0, 1800),
    Route("POST", "/api/cart/items", 0.12, 1.4, 1.0, 450),
    Route("GET", "/api/catalog", 0.33, 0.8, 0.8, 5200),
    Route("POST", "/api/checkout", 0.06, 2.6, 1.5, 900),
    Route("GET", "/api/shipping/quote", 0.09, 1.8, 1.2, 700),
    Route("GET", "/healthz", 0.10, 1.0, 0.0, 60, cached=False),
)


@dataclass(frozen=True)
class Phase:
    """Cache behaviour in one period: miss share and both lognormal paths (median, sigma)."""

    miss_share: float
    hit_median_ms: float
    hit_sigma: float
    miss_median_ms: float
    miss_sigma: float


BEFORE = Phase(miss_share=0.07, hit_median_ms=3.2, hit_sigma=0.35, miss_median_ms=38.0, miss_sigma=0.45)
AFTER = Phase(miss_share=0.16, hit_median_ms=3.3, hit_sigma=0.35, miss_median_ms=64.0, miss_sigma=0.55)

TIMEOUT_MS = 3000.0
SHARE_429 = 0.0015
SHARE_500 = 0.0008
SHARE_504 = 0.0002


def phase_span(phase: str) -> tuple[dt.datetime, dt.datetime]:
    if phase == "before":
        return DAY_START, RELEASE
    if phase == "after":
        return RELEASE, DAY_END
    if phase in ("day", "rollout"):
        return DAY_START, DAY_END
    raise OgiveError(f"unknown phase {phase!r}; choose one of {', '.join(PHASES)}.")


def _us(moment: dt.datetime) -> int:
    return int(moment.timestamp() * 1_000_000)


# ---------------------------------------------------------------------- the requests
def host_release_us(rollout: bool) -> NDArray[np.int64]:
    """When each host starts serving the release: all at 13:00, or (a rolling deploy) one
    host after another, evenly from 13:00 to 13:40."""
    start, end = _us(RELEASE), _us(ROLLOUT_END)
    steps = np.linspace(start, end, len(HOSTS)) if rollout else np.full(len(HOSTS), start)
    return steps.astype(np.int64)


def requests(rng: np.random.Generator, ts_us: NDArray[np.int64], *, rollout: bool = False) -> pl.DataFrame:
    """One row per request at the given epoch-microsecond times (the release applies by
    time, on each host from its own moment when ``rollout``)."""
    n = ts_us.size
    r = rng.choice(len(ROUTES), size=n, p=np.array([x.weight for x in ROUTES]))
    h = rng.integers(0, len(HOSTS), size=n)
    after = ts_us >= host_release_us(rollout)[h]
    factor = np.array([x.factor for x in ROUTES])[r] * HOST_FACTOR[h]
    cached = np.array([x.cached for x in ROUTES])[r]

    def pick(name: str) -> NDArray[np.float64]:
        return np.where(after, getattr(AFTER, name), getattr(BEFORE, name))

    miss = cached & (rng.random(n) < pick("miss_share") * np.array([x.miss_factor for x in ROUTES])[r])
    z = rng.standard_normal(n)
    hit_ms = pick("hit_median_ms") * np.exp(pick("hit_sigma") * z)
    miss_ms = pick("miss_median_ms") * np.exp(pick("miss_sigma") * z)
    health_ms = 0.6 * np.exp(0.25 * z)
    latency = np.where(cached, np.where(miss, miss_ms, hit_ms) * factor, health_ms)

    status = _statuses(rng, r)
    size = np.array([x.size for x in ROUTES])[r] * np.exp(0.3 * rng.standard_normal(n))
    # Rare outcomes with their own timing; /healthz is answered before the rate limiter.
    u = rng.random(n)
    limited = cached & (u < SHARE_429)
    failed = cached & (u >= SHARE_429) & (u < SHARE_429 + SHARE_500)
    timed_out = cached & (u >= SHARE_429 + SHARE_500) & (u < SHARE_429 + SHARE_500 + SHARE_504)
    latency = np.where(limited, 0.35 * np.exp(0.3 * z), latency)
    latency = np.where(failed, miss_ms * factor * 1.5, latency)
    latency = np.where(timed_out, TIMEOUT_MS + rng.exponential(4.0, n), latency)
    status = np.where(limited, 429, np.where(failed, 500, np.where(timed_out, 504, status)))
    size = np.where(limited | failed | timed_out, 160.0, np.where(status == 304, 0.0, size))
    # Rejected at the edge (429) never reaches the cache: it counts as neither hit nor miss.
    cache = np.where(~cached | limited, 2, np.where(miss | failed | timed_out, 1, 0))

    return pl.DataFrame(
        {
            "ts": pl.Series(ts_us.astype("datetime64[us]")),
            "host": pl.Series(HOSTS).gather(h),
            "method": pl.Series([x.method for x in ROUTES]).gather(r),
            "route": pl.Series([x.path for x in ROUTES]).gather(r),
            "status": status.astype(np.int64),
            "latency_ms": np.round(np.maximum(latency, 0.001), 3),
            "bytes": np.rint(size).astype(np.int64),
            "request_id": _hex_ids(rng, n),
            "cache": pl.Series(["hit", "miss", "none"]).gather(cache),
        }
    )


def _statuses(rng: np.random.Generator, r: NDArray[np.int64]) -> NDArray[np.int64]:
    u = rng.random(r.size)
    cart_items, catalog, checkout = (
        _route_index(p) for p in ("/api/cart/items", "/api/catalog", "/api/checkout")
    )
    status = np.where(r == cart_items, 201, 200)
    status = np.where((r == catalog) & (u < 0.07), 304, status)
    status = np.where((r == catalog) & (u >= 0.07) & (u < 0.082), 404, status)
    status = np.where((r == cart_items) & (u < 0.01), 400, status)
    status = np.where((r == checkout) & (u < 0.015), 402, status)
    status = np.where((r == checkout) & (u >= 0.015) & (u < 0.02), 409, status)
    return status.astype(np.int64)


def _route_index(path: str) -> int:
    return next(i for i, x in enumerate(ROUTES) if x.path == path)


_HEX = np.frombuffer(b"0123456789abcdef", dtype=np.uint8)


def _hex_ids(rng: np.random.Generator, n: int, width: int = 24) -> pl.Series:
    # Random bytes split into nibbles: half the draws of one integer per hex digit.
    raw = np.frombuffer(rng.bytes(n * width // 2), dtype=np.uint8).reshape(n, width // 2)
    nibbles = np.empty((n, width), dtype=np.uint8)
    nibbles[:, 0::2] = raw >> 4
    nibbles[:, 1::2] = raw & 15
    return pl.Series(_HEX[nibbles].view(f"S{width}").ravel()).cast(pl.String)


_TS = "%Y-%m-%dT%H:%M:%S%.3fZ"
CSV_HEADER = "timestamp,host,method,route,status,latency_ms,bytes,request_id"
TEXT_PATTERN = r"dur=(\S+)"
"""The ``--pattern`` that finds the duration in the text log."""


def _lines(df: pl.DataFrame, fmt: str) -> pl.Series:
    ts = pl.col("ts").dt.strftime(_TS)
    ms = pl.col("latency_ms")
    if fmt == "csv":
        cols = [ts, "host", "method", "route", "status", ms, "bytes", "request_id"]
        expr = pl.concat_str([pl.col(c) if isinstance(c, str) else c for c in cols], separator=",")
    elif fmt == "text":
        # Our own line layout: time host "METHOD route" status bytes=N rid=ID cache=X dur=D
        # with the duration last, in ms below a second and in s from there on.
        dur = (
            pl.when(ms >= 1000)
            .then(pl.concat_str([(ms / 1000).round(3).cast(pl.String), pl.lit("s")]))
            .otherwise(pl.concat_str([ms.cast(pl.String), pl.lit("ms")]))
        )
        expr = pl.concat_str(
            [
                ts,
                pl.lit(" "),
                pl.col("host"),
                pl.lit(' "'),
                pl.col("method"),
                pl.lit(" "),
                pl.col("route"),
                pl.lit('" '),
                pl.col("status"),
                pl.lit(" bytes="),
                pl.col("bytes"),
                pl.lit(" rid="),
                pl.col("request_id"),
                pl.lit(" cache="),
                pl.col("cache"),
                pl.lit(" dur="),
                dur,
            ]
        )
    elif fmt == "ndjson":
        expr = pl.concat_str(
            [
                pl.lit('{"ts":"'),
                ts,
                pl.lit('","host":"'),
                pl.col("host"),
                pl.lit('","http":{"method":"'),
                pl.col("method"),
                pl.lit('","route":"'),
                pl.col("route"),
                pl.lit('","status":'),
                pl.col("status"),
                pl.lit(',"bytes":'),
                pl.col("bytes"),
                pl.lit('},"timing":{"total_ms":'),
                ms,
                pl.lit(',"cache":"'),
                pl.col("cache"),
                pl.lit('"},"request_id":"'),
                pl.col("request_id"),
                pl.lit('"}'),
            ]
        )
    else:
        raise OgiveError(f"unknown format {fmt!r}; choose one of {', '.join(FORMATS)}.")
    return df.select(expr.alias("line")).to_series()


BAD_KINDS = ("not_a_number", "missing_field")


def bad_line(good: str, fmt: str, kind: str) -> str:
    """A spoilt copy of a good line: the value unreadable, or absent altogether."""
    if fmt == "csv":
        parts = good.split(",")
        if kind == "not_a_number":
            parts[5] = "n/a"
            return ",".join(parts)
        return ",".join(parts[:5])  # cut off before the latency: the row is short
    if fmt == "text":
        head, _, _ = good.rpartition(" dur=")
        return head + (" dur=-" if kind == "not_a_number" else " upstream_reset")
    start = good.index('"timing":{')
    end = good.index("}", start) + 1
    if kind == "not_a_number":
        return good[:start] + '"timing":{"total_ms":"timeout","cache":"miss"}' + good[end:]
    return good[: start - 1] + good[end:]  # no timing object at all


# ---------------------------------------------------------------------- writing
@dataclass(frozen=True)
class WriteResult:
    path: str
    format: str
    phase: str
    rows: int
    bad_rows: int
    bytes_written: int
    """Uncompressed bytes."""
    compressed: bool
    span_start: str
    span_end: str
    """The phase's time span; the rows' timestamps spread evenly over it."""
    elapsed_s: float
    seed: int

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)


def blocks(
    fmt: str,
    phase: str,
    *,
    rows: int | None = None,
    size_bytes: int | None = None,
    seed: int = 0,
    bad_rows: int = 0,
    block_rows: int = 100_000,
) -> Iterator[tuple[bytes, int, int]]:
    """(bytes, rows, spoilt rows) blocks of the scenario; the CSV header comes first.

    With ``size_bytes`` the row count is fixed up front from the width of a probe of
    2000 rows, so the timestamps can spread evenly over the phase; the file lands within
    about 1 % of the size asked for.
    """
    if fmt not in FORMATS:
        raise OgiveError(f"unknown format {fmt!r}; choose one of {', '.join(FORMATS)}.")
    if (rows is None) == (size_bytes is None):
        raise OgiveError("give exactly one of a row count or a size.")
    if rows is not None and rows < 1:
        raise OgiveError(f"the row count must be at least 1, got {rows}.")
    if size_bytes is not None and size_bytes < 1:
        raise OgiveError(f"the size must be positive, got {size_bytes} bytes.")
    rng = np.random.default_rng(seed)
    start, end = phase_span(phase)
    t0, span = _us(start), _us(end) - _us(start)
    header = (CSV_HEADER + "\n").encode() if fmt == "csv" else b""
    target = rows
    done = 0
    budget = (size_bytes - len(header)) if size_bytes is not None else None
    first = True
    bad_at: NDArray[np.int64] = np.empty(0, dtype=np.int64)
    while target is None or done < target:
        n = block_rows if target is None else min(block_rows, target - done)
        if target is None:
            # Size mode, first block: measure a row, fix the total, then carry on as rows.
            probe = _lines(requests(np.random.default_rng(seed + 1), np.full(2000, t0)), fmt)
            per_row = (probe.str.len_bytes().sum() + probe.len()) / probe.len()
            target = max(1, round((budget or 1) / per_row))
            n = min(block_rows, target)
        if first:
            k = min(bad_rows, target)
            # Spread evenly, never on the first line, so a header stays recognisable.
            spread = np.linspace(target * 0.05, target * 0.95, k).astype(np.int64) + 1
            bad_at = np.unique(np.minimum(spread, target - 1))
        idx = np.arange(done, done + n, dtype=np.int64)
        # Evenly spread, strictly increasing times: row i sits in slot i of the span.
        ts = t0 + ((idx + rng.random(n)) * (span / target)).astype(np.int64)
        lines = _lines(requests(rng, ts, rollout=phase == "rollout"), fmt)
        mine = bad_at[(bad_at >= done) & (bad_at < done + n)]
        if mine.size:
            values = lines.to_list()
            for pos in mine.tolist():
                # Alternate the kinds in file order: each appears when there are two or more.
                kind = BAD_KINDS[int(np.searchsorted(bad_at, pos)) % len(BAD_KINDS)]
                values[pos - done] = bad_line(values[pos - done], fmt, kind)
            lines = pl.Series("line", values, dtype=pl.String)
        body = (lines.str.join("\n").item() + "\n").encode()
        if first:
            body = header + body
            first = False
        done += n
        yield body, n, int(mine.size)


def write(
    path: str,
    fmt: str,
    phase: str,
    *,
    rows: int | None = None,
    size_bytes: int | None = None,
    seed: int = 0,
    bad_rows: int = 0,
    compress: bool | None = None,
    block_rows: int = 100_000,
) -> WriteResult:
    """Write the scenario to ``path`` (``-`` for stdout), gzip when asked or named ``.gz``.

    A file appears only when complete: the blocks go to a temporary file beside it, which
    is renamed at the end (an interrupted multi-GB run leaves nothing half-written).
    """
    if compress is None:
        compress = path.endswith(".gz")
    began = time.perf_counter()
    total = rows_done = spoilt = 0
    out: IO[bytes] | gzip.GzipFile
    tmp: str | None = None
    check_target(path)
    if path == "-":
        raw: IO[bytes] = cast(IO[bytes], CheckedStdout(what="the generated log"))
    else:
        target = Path(os.path.realpath(path))
        folder = target.parent if str(target.parent) else Path(".")
        try:
            fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
        except OSError as exc:
            raise OgiveError(f"cannot write {path}: {exc.strerror or exc}.") from None
        raw = os.fdopen(fd, "wb")
    try:
        # mtime=0 keeps gzip output identical for identical seeds.
        out = gzip.GzipFile(fileobj=raw, mode="wb", compresslevel=6, mtime=0) if compress else raw
        for body, n, bad in blocks(
            fmt, phase, rows=rows, size_bytes=size_bytes, seed=seed, bad_rows=bad_rows, block_rows=block_rows
        ):
            out.write(body)
            total += len(body)
            rows_done += n
            spoilt += bad
        if compress:
            out.close()
        raw.flush()
        if tmp is not None:
            os.fsync(raw.fileno())
            raw.close()
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)  # an ordinary file, not mkstemp's private 0600
            os.replace(tmp, target)
            tmp = None
    except OSError as exc:
        raise OgiveError(f"cannot write {path}: {exc.strerror or exc}; nothing was kept.") from None
    finally:
        if tmp is not None:
            with contextlib.suppress(OSError):
                raw.close()
            with contextlib.suppress(OSError):
                os.unlink(tmp)
    start, end = phase_span(phase)
    return WriteResult(
        path=path,
        format=fmt,
        phase=phase,
        rows=rows_done,
        bad_rows=spoilt,
        bytes_written=total,
        compressed=compress,
        span_start=start.strftime("%Y-%m-%dT%H:%M:%SZ"),
        span_end=end.strftime("%Y-%m-%dT%H:%M:%SZ"),
        elapsed_s=time.perf_counter() - began,
        seed=seed,
    )


@dataclass(frozen=True)
class DemoFile:
    name: str
    format: str
    phase: str
    rows: int
    bad_rows: int
    seed: int


DEMO_SET = (
    DemoFile("checkout-before.log", "text", "before", 12_000, 4, 101),
    DemoFile("checkout-after.log.gz", "text", "after", 12_000, 4, 102),
    DemoFile("checkout-day.csv", "csv", "day", 24_000, 6, 103),
    DemoFile("checkout-before.ndjson", "ndjson", "before", 4_000, 2, 104),
    DemoFile("checkout-after.ndjson.gz", "ndjson", "after", 4_000, 2, 105),
    DemoFile("checkout-rollout.csv.gz", "csv", "rollout", 48_000, 4, 106),
)
"""The bundled ``demo_logs/`` files; ``ogive generate --demo-set DIR`` rewrites them byte for byte."""


def write_demo_set(folder: str | os.PathLike[str]) -> list[WriteResult]:
    target = Path(folder)
    try:
        target.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OgiveError(f"cannot create {target}: {exc.strerror or exc}.") from None
    return [
        write(str(target / f.name), f.format, f.phase, rows=f.rows, seed=f.seed, bad_rows=f.bad_rows)
        for f in DEMO_SET
    ]
