"""Scan throughput per record format, beside polars parsing the same field of the same file.

Generates (once, cached by size) one invented log per format ogive recognises — the
Saltmarsh Ferries scenario of ``tests/formats`` at scale: ECS-shaped NDJSON, combined
access log with a latency, RFC 3164 and RFC 5424 syslog, free text with a leading ISO
time, CSV with quoted fields, OTLP JSON traces, IIS's W3C extended log — and runs, each in its own subprocess:

* ``ogive``: ``scan`` with no options beyond what the format needs (the value found
  from the file; times read where the format carries them);
* ``polars``: polars' own parse of the same value (and time, where ogive reads one):
  ``scan_ndjson`` + struct fields, ``scan_csv`` (space-separated, ``#`` lines as comments
  for the W3C log), ``str.extract``/``extract_groups`` over
  the lines, or ``scan_ndjson`` + explode for OTLP — the parse cost alone, no sketch.

Each child reports wall seconds, CPU seconds (user + system, ``getrusage``), its peak
RSS (``VmHWM``) and its peak anonymous RSS (``RssAnon``, sampled every 20 ms). Printed
per format: MB/s, CPU-s, peak and anonymous RSS, and the ratio ogive/polars of MB/s.
The machine may be shared: ``--repeat 3`` keeps the best and shows the median.

    python benchmarks/formats_bench.py --size-mb 300
    python benchmarks/formats_bench.py --size-mb 50 --only access --only otlp
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import numpy as np
import polars as pl

BLOCK = 200_000
ROUTES = np.array(["/book", "/book", "/fares", "/fares", "/timetable", "/healthz"])
HOSTS = np.array(["quay-a", "quay-b", "quay-c"])
START_S = 1_772_614_800  # 2026-03-04T09:00:00Z


def _fmt(template: str, *cols: str) -> pl.Expr:
    """``template`` with each ``{}`` replaced by the next column (JSON braces stay literal)."""
    parts = template.split("{}")
    assert len(parts) == len(cols) + 1
    exprs: list[pl.Expr] = [pl.lit(parts[0])]
    for col, lit in zip(cols, parts[1:], strict=True):
        exprs += [pl.col(col).cast(pl.String), pl.lit(lit)]
    return pl.concat_str(exprs)


def _times(rng: np.random.Generator, start: int, n: int) -> pl.Series:
    us = (START_S * 1_000_000) + (start + np.arange(n)) * 40_000 + rng.integers(0, 1000, n)
    return pl.Series(us).cast(pl.Datetime("us"))


def _ms(rng: np.random.Generator, n: int) -> np.ndarray:
    hit = rng.random(n) < 0.8
    return np.where(hit, rng.lognormal(1.5, 0.5, n), rng.lognormal(3.8, 0.7, n))


def block_ndjson(rng: np.random.Generator, start: int, n: int) -> pl.Series:
    df = pl.DataFrame(
        {
            "t": _times(rng, start, n).dt.strftime("%Y-%m-%dT%H:%M:%S%.3fZ"),
            "d": (_ms(rng, n) * 1e6).astype(np.int64),
            "h": HOSTS[rng.integers(0, 3, n)],
            "r": ROUTES[rng.integers(0, 6, n)],
            "s": rng.choice([200, 200, 200, 503], n),
        }
    )
    return df.select(
        _fmt(
            '{"@timestamp":"{}","log.level":"info","service":{"name":"booking-api"},"host":{"name":"{}"},'
            '"http":{"request":{"method":"GET"},"response":{"status_code":{}}},"url":{"path":"{}"},'
            '"event":{"duration":{}},"labels":{"k.dot":"ebb"}}',
            "t",
            "h",
            "s",
            "r",
            "d",
        )
    ).to_series()


def block_access(rng: np.random.Generator, start: int, n: int) -> pl.Series:
    secs = np.where(rng.random(n) < 0.25, 0.0, _ms(rng, n) / 1000)
    df = pl.DataFrame(
        {
            "t": _times(rng, start, n).dt.strftime("%d/%b/%Y:%H:%M:%S +0000"),
            "a": rng.integers(0, 250, n),
            "r": ROUTES[rng.integers(0, 6, n)],
            "b": rng.integers(200, 5200, n),
            "l": pl.Series(secs).round(3).cast(pl.String).str.pad_end(5, "0"),
        }
    )
    return df.select(
        _fmt(
            '10.4.1.{} - - [{}] "GET {} HTTP/1.1" 200 {} "-" "Saltmarsh-App/3.1 (iOS)" {}',
            "a",
            "t",
            "r",
            "b",
            "l",
        )
    ).to_series()


def block_syslog3164(rng: np.random.Generator, start: int, n: int) -> pl.Series:
    t = _times(rng, start, n)
    stamp = (
        t.dt.strftime("%b ") + t.dt.day().cast(pl.String).str.pad_start(2, " ") + t.dt.strftime(" %H:%M:%S")
    )
    df = pl.DataFrame({"t": stamp, "h": HOSTS[rng.integers(0, 3, n)], "d": np.round(_ms(rng, n), 2)})
    return df.select(
        _fmt('{} {} berth-planner[1234]: plan berth=4 vessel="MV Curlew" dur={}ms ok', "t", "h", "d")
    ).to_series()


def block_syslog5424(rng: np.random.Generator, start: int, n: int) -> pl.Series:
    df = pl.DataFrame(
        {
            "t": _times(rng, start, n).dt.strftime("%Y-%m-%dT%H:%M:%S%.6fZ"),
            "h": HOSTS[rng.integers(0, 3, n)],
            "d": np.round(_ms(rng, n), 2),
        }
    )
    return df.select(
        _fmt(
            '<134>1 {} {} tide-feed 2001 READ [tide@32473 dur="{}ms" quay="{}"] level read',
            "t",
            "h",
            "d",
            "h",
        )
    ).to_series()


def block_text(rng: np.random.Generator, start: int, n: int) -> pl.Series:
    df = pl.DataFrame(
        {
            "t": _times(rng, start, n).dt.strftime("%Y-%m-%dT%H:%M:%S%.3fZ"),
            "r": ROUTES[rng.integers(0, 6, n)],
            "d": np.round(_ms(rng, n), 2),
        }
    )
    return df.select(_fmt("{} INFO fare-quote route={} took={}ms cache=hit", "t", "r", "d")).to_series()


def block_csv(rng: np.random.Generator, start: int, n: int) -> pl.Series:
    df = pl.DataFrame(
        {
            "r": ROUTES[rng.integers(0, 6, n)],
            "t": _times(rng, start, n).dt.strftime("%Y-%m-%dT%H:%M:%SZ"),
            "d": np.round(_ms(rng, n), 2),
        }
    )
    return df.select(_fmt('"{}, GET","Godwit, the ""old"" one",{},{}', "r", "t", "d")).to_series()


def block_otlp(rng: np.random.Generator, start: int, n: int) -> pl.Series:
    """One document per 4 spans (collectors batch; real batches are often larger)."""
    per = 4
    docs = n // per
    t0 = (START_S * 10**9) + (start + np.arange(docs * per)) * 40_000_000
    dur = (_ms(rng, docs * per) * 1e6).astype(np.int64)
    spans = pl.DataFrame({"s": t0, "e": t0 + dur, "k": rng.integers(2, 4, docs * per)}).select(
        _fmt(
            '{"traceId":"5b8efff798038103d269b633813fc60c","spanId":"eee19b7ec3c1b174","name":"POST /book",'
            '"kind":{},"startTimeUnixNano":"{}","endTimeUnixNano":"{}","status":{"code":1}}',
            "k",
            "s",
            "e",
        ).alias("span")
    )
    grouped = spans.with_columns(pl.Series("doc", np.repeat(np.arange(docs), per))).group_by(
        "doc", maintain_order=True
    )
    joined = grouped.agg(pl.col("span").str.join(","))
    return joined.select(
        _fmt(
            '{"resourceSpans":[{"resource":{"attributes":[{"key":"service.name","value":{"stringValue":"booking-api"}}]},'
            '"scopeSpans":[{"scope":{"name":"saltmarsh.tracing"},"spans":[{}]}]}]}',
            "span",
        )
    ).to_series()


W3C_FIELDS = (
    "date time s-ip cs-method cs-uri-stem cs-uri-query s-port c-ip cs(User-Agent) sc-status time-taken"
)
W3C_HEAD = "\n".join(
    (
        "#Software: Microsoft Internet Information Services 10.0",
        "#Version: 1.0",
        "#Date: 2026-03-04 09:00:00",
        f"#Fields: {W3C_FIELDS}",
    )
)


def block_w3c(rng: np.random.Generator, start: int, n: int) -> pl.Series:
    """IIS's W3C extended log: single spaces, time-taken in whole milliseconds."""
    df = pl.DataFrame(
        {
            "t": _times(rng, start, n).dt.strftime("%Y-%m-%d %H:%M:%S"),
            "s": HOSTS[rng.integers(0, 3, n)],
            "r": ROUTES[rng.integers(0, 6, n)],
            "i": start + np.arange(n),
            "c": rng.integers(1, 250, n),
            "d": np.round(_ms(rng, n)).astype(np.int64),
        }
    )
    template = "{} {} GET {} id={} 443 172.16.0.{} Saltmarsh-App/3.1+(iOS) 200 {}"
    return df.select(_fmt(template, "t", "s", "r", "i", "c", "d")).to_series()


FORMATS: dict[str, tuple[str, Callable[[np.random.Generator, int, int], pl.Series], str]] = {
    # name: (file suffix, block maker, header line)
    "ndjson": ("ndjson", block_ndjson, ""),
    "access": ("log", block_access, ""),
    "syslog3164": ("log", block_syslog3164, ""),
    "syslog5424": ("log", block_syslog5424, ""),
    "text": ("log", block_text, ""),
    "csv": ("csv", block_csv, '"Request, path","Vessel ""name""",When,Latency (ms)'),
    "otlp": ("jsonl", block_otlp, ""),
    "w3c": ("log", block_w3c, W3C_HEAD),
}


def generate(folder: Path, name: str, size_mb: int) -> Path:
    suffix, make, header = FORMATS[name]
    path = folder / f"formats_{name}_{size_mb}mb.{suffix}"
    target = size_mb * 1_000_000
    if path.exists() and path.stat().st_size >= target:
        return path
    rng = np.random.default_rng(20260304)
    tmp = path.with_suffix(".tmp")
    with open(tmp, "wb") as fh:
        if header:
            fh.write((header + "\n").encode())
        start = 0
        while fh.tell() < target:
            lines = make(rng, start, BLOCK)
            fh.write(("\n".join(lines.to_list()) + "\n").encode())
            start += BLOCK
    os.replace(tmp, path)
    return path


CHILD = r"""
import json, os, resource, sys, threading, time
kind, fmt, path = sys.argv[1], sys.argv[2], sys.argv[3]
peak_anon = [0]
def watch():
    while True:
        with open("/proc/self/status") as fh:
            for ln in fh:
                if ln.startswith("RssAnon:"):
                    peak_anon[0] = max(peak_anon[0], int(ln.split()[1]))
        time.sleep(0.02)
threading.Thread(target=watch, daemon=True).start()
import polars as pl
from ogive.read import scan, ScanOptions
# Timing starts after the imports: both sides pay for polars' import alike.
r0 = resource.getrusage(resource.RUSAGE_SELF)
t0 = time.perf_counter()
out = {}
if kind == "ogive":
    res = scan([path], ScanOptions())
    s = next(iter(res.sketches.sketches.values()))
    out = {"n": sum(x.count for x in res.sketches.sketches.values()), "p99": float(s.quantile(0.99)),
           "time": s.provenance.time_first is not None, "format": res.format}
else:
    def lines():
        return pl.scan_csv(path, has_header=False, separator="\x1f", quote_char=None, infer_schema=False)
    n = 0
    if fmt == "ndjson":
        lf = pl.scan_ndjson(path).select(
            pl.col("event").struct.field("duration"),
            pl.col("@timestamp").str.to_datetime("%Y-%m-%dT%H:%M:%S%.fZ"),
        )
    elif fmt == "csv":
        lf = pl.scan_csv(path).select("Latency (ms)")
    elif fmt == "w3c":
        # polars' CSV reader on the space-separated entries, directives as comments.
        schema = {f"c{i}": pl.String for i in range(11)}
        lf = pl.scan_csv(
            path, has_header=False, separator=" ", comment_prefix="#", quote_char=None, schema=schema
        ).select(
            pl.col("c10").cast(pl.Float64),
            pl.concat_str("c0", "c1", separator=" ").str.to_datetime("%Y-%m-%d %H:%M:%S"),
        )
    elif fmt == "otlp":
        # The same decoding ogive does: a declared schema, then one row per span.
        span = pl.Struct({"startTimeUnixNano": pl.String, "endTimeUnixNano": pl.String})
        scope = pl.Struct({"spans": pl.List(span)})
        dtype = pl.Struct({"resourceSpans": pl.List(pl.Struct({"scopeSpans": pl.List(scope)}))})
        lf = (
            lines()
            .select(pl.first().str.json_decode(dtype).struct.field("resourceSpans").alias("rs"))
            .explode("rs")
            .select(pl.col("rs").struct.field("scopeSpans").alias("ss"))
            .explode("ss")
            .select(pl.col("ss").struct.field("spans").alias("sp"))
            .explode("sp")
            .select(
                pl.col("sp").struct.field("endTimeUnixNano").cast(pl.Int64)
                - pl.col("sp").struct.field("startTimeUnixNano").cast(pl.Int64),
                pl.col("sp").struct.field("startTimeUnixNano").cast(pl.Int64),
            )
        )
    else:
        rx, tfmt = {
            "access": (r"\[([^\]]+)\] .* ([\d.]+)$", "%d/%b/%Y:%H:%M:%S %z"),
            "syslog3164": (r"^(\w{3} [ \d]\d \d\d:\d\d:\d\d) .* dur=([\d.]+)ms", None),
            "syslog5424": (r"^<\d+>1 (\S+) .* dur=\"([\d.]+)ms", "%Y-%m-%dT%H:%M:%S%.fZ"),
            "text": (r"^(\S+) .* took=([\d.]+)ms", "%Y-%m-%dT%H:%M:%S%.fZ"),
        }[fmt]
        g = pl.first().str.extract_groups(rx)
        t = g.struct.field("1")
        lf = lines().select(
            g.struct.field("2").cast(pl.Float64),
            t.str.to_datetime(tfmt, strict=False)
            if tfmt
            else t.str.strptime(pl.Datetime, "%b %e %H:%M:%S", strict=False),
        )
    for b in lf.collect_batches():
        n += b.height
    out = {"n": n}
r1 = resource.getrusage(resource.RUSAGE_SELF)
out["seconds"] = time.perf_counter() - t0
out["cpu"] = (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)
with open("/proc/self/status") as fh:
    hwm = [ln for ln in fh if ln.startswith("VmHWM:")]
out["rss_mb"] = int(hwm[0].split()[1]) / 1024 if hwm else 0.0
out["anon_mb"] = peak_anon[0] / 1024
print(json.dumps(out))
"""


def run_child(kind: str, fmt: str, path: Path) -> dict[str, float]:
    proc = subprocess.run(
        [sys.executable, "-c", CHILD, kind, fmt, str(path)], capture_output=True, text=True, check=False
    )
    if proc.returncode != 0:
        return {"error": 1.0, "seconds": float("nan"), "msg": proc.stderr.strip().splitlines()[-1][:200]}  # type: ignore[dict-item]
    result: dict[str, float] = json.loads(proc.stdout.strip().splitlines()[-1])
    return result


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--size-mb", type=int, default=300, help="size of each generated file (default 300)")
    ap.add_argument(
        "--dir", type=Path, default=Path("/tmp/ogive-bench"), help="where generated files are cached"
    )
    ap.add_argument("--repeat", type=int, default=1, help="runs per measurement; best and median shown")
    ap.add_argument("--only", action="append", choices=sorted(FORMATS), help="formats to run (repeatable)")
    args = ap.parse_args()
    args.dir.mkdir(parents=True, exist_ok=True)
    print(
        f"{'format':<11} {'tool':<7} {'MB/s best':>9} {'median':>7} {'CPU-s':>6} {'peak RSS':>9}"
        f" {'anon RSS':>9} {'n':>11}  ratio"
    )
    for name in args.only or list(FORMATS):
        path = generate(args.dir, name, args.size_mb)
        mb = path.stat().st_size / 1e6
        best: dict[str, dict[str, float]] = {}
        for kind in ("ogive", "polars"):
            runs = [run_child(kind, name, path) for _ in range(args.repeat)]
            good = [r for r in runs if "error" not in r]
            if not good:
                print(f"{name:<11} {kind:<7} failed: {runs[0].get('msg')}")
                continue
            top = min(good, key=lambda r: r["seconds"])
            best[kind] = top
            med = statistics.median(r["seconds"] for r in good)
            ratio = ""
            if kind == "polars" and "ogive" in best:
                ratio = f"{top['seconds'] / best['ogive']['seconds']:.2f}"
            print(
                f"{name:<11} {kind:<7} {mb / top['seconds']:9.1f} {mb / med:7.1f} {top['cpu']:6.1f}"
                f" {top['rss_mb']:7.0f}MB {top['anon_mb']:7.0f}MB {top['n']:11,.0f}  {ratio}"
            )
    print(f"(files of about {args.size_mb} MB in {args.dir}; ratio = ogive MB/s / polars MB/s)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
