"""Scan throughput and peak memory: ogive's scan against polars' own parse of one column.

Generates (once, cached by size) an invented CSV of request records and an invented
free-text access log, then runs in separate subprocesses, one after another:

* ogive ``scan`` of the latency column / the latency field of the text log;
* polars streaming the same column (``pl.scan_csv(f).select(col).collect_batches()``)
  or ``str.extract`` of the same regex over the log lines — the parse cost alone;
* polars' exact quantile of the column (``collect`` of ``quantile``) — the memory
  reference a sketch is meant to beat.

Each child reports its wall time and its own peak RSS (``ru_maxrss``). Printed: MB/s,
peak RSS, and the ratio ogive/polars. The machine is shared: run it more than once.

    python benchmarks/scan_bench.py --size-mb 200
    python benchmarks/scan_bench.py --size-mb 1000 --size-mb 4000 --dir /var/tmp
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import polars as pl

PATTERN = r"rt=([0-9.]+)ms"
ROWS_PER_BLOCK = 500_000


def _block(rng: np.random.Generator, start: int, n: int) -> pl.DataFrame:
    """Invented scenario: a catalogue service with a fast cache-hit mode and a slow miss mode."""
    hit = rng.random(n) < 0.82
    latency = np.where(hit, rng.lognormal(1.2, 0.45, n), rng.lognormal(3.6, 0.7, n))
    routes = np.array(["/v2/shelf", "/v2/shelf/{id}", "/v2/basket", "/v2/search", "/healthz"])
    methods = np.array(["GET", "GET", "GET", "POST", "PUT"])
    secs = 1_780_000_000 + (start + np.arange(n)) // 40
    ts = pl.from_epoch(pl.Series(secs), time_unit="s").dt.strftime("%Y-%m-%dT%H:%M:%SZ")
    return pl.DataFrame(
        {
            "ts": ts,
            "host": pl.Series(np.char.add("shelf-", (rng.integers(0, 24, n)).astype(str))),
            "method": methods[rng.integers(0, 5, n)],
            "route": routes[rng.integers(0, 5, n)],
            "status": rng.choice([200, 200, 200, 201, 304, 404, 500], n),
            "latency_ms": np.round(latency, 3),
            "bytes": rng.integers(80, 90_000, n),
            "request_id": pl.Series(rng.integers(0, 2**62, n)).cast(pl.String).str.zfill(20)
            + pl.Series(rng.integers(0, 2**40, n)).cast(pl.String).str.zfill(12),
        }
    )


def generate(folder: Path, size_mb: int) -> tuple[Path, Path]:
    csv = folder / f"bench_v2_{size_mb}mb.csv"
    log = folder / f"bench_v2_{size_mb}mb.log"
    target = size_mb * 1_000_000
    rng = np.random.default_rng(20260304)
    if not csv.exists() or csv.stat().st_size < target:
        tmp = csv.with_suffix(".tmp")
        with open(tmp, "wb") as fh:
            start = 0
            header = True
            while fh.tell() < target:
                df = _block(rng, start, ROWS_PER_BLOCK)
                df.write_csv(fh, include_header=header)
                header = False
                start += ROWS_PER_BLOCK
        os.replace(tmp, csv)
    if not log.exists() or log.stat().st_size < target:
        tmp = log.with_suffix(".tmp")
        with open(tmp, "wb") as fh:
            start = 0
            while fh.tell() < target:
                df = _block(rng, start, ROWS_PER_BLOCK)
                line = pl.format(
                    '10.4.{}.{} - - [{}] "{} {} HTTP/1.1" {} {} rt={}ms id={}',
                    pl.col("bytes") % 250,
                    pl.col("status") % 250,
                    pl.col("ts"),
                    pl.col("method"),
                    pl.col("route"),
                    pl.col("status"),
                    pl.col("bytes"),
                    pl.col("latency_ms"),
                    pl.col("request_id"),
                )
                lines = df.select(line.alias("l")).to_series()
                fh.write(("\n".join(lines.to_list()) + "\n").encode())
                start += ROWS_PER_BLOCK
        os.replace(tmp, log)
    return csv, log


CHILD = r"""
import json, resource, sys, time
kind, path, pattern = sys.argv[1], sys.argv[2], sys.argv[3]
import polars as pl
from ogive.read import scan, ScanOptions
# Timing starts after the imports: both sides pay for polars' import alike.
t0 = time.perf_counter()
if kind == "ogive-csv":
    s = scan([path], ScanOptions(column="latency_ms", unit="ms")).sketches["all"]
    out = {"n": s.count, "p99": float(s.quantile(0.99))}
elif kind == "ogive-text":
    s = scan([path], ScanOptions(pattern=pattern, unit="ms")).sketches["all"]
    out = {"n": s.count, "p99": float(s.quantile(0.99))}
elif kind == "polars-csv":
    n = 0
    for b in pl.scan_csv(path).select("latency_ms").collect_batches():
        n += b.height
    out = {"n": n}
elif kind == "polars-text":
    n = 0
    lf = pl.scan_csv(path, has_header=False, separator="\x1f", quote_char=None, infer_schema=False)
    for b in lf.select(pl.first().str.extract(pattern, 1).cast(pl.Float64)).collect_batches():
        n += b.height
    out = {"n": n}
else:  # polars-exact
    out = {"p99": pl.scan_csv(path).select(pl.col("latency_ms").quantile(0.99)).collect().item()}
out["seconds"] = time.perf_counter() - t0
# VmHWM is this process's own peak (ru_maxrss would carry the parent's peak across exec).
with open("/proc/self/status") as fh:
    hwm = [ln for ln in fh if ln.startswith("VmHWM:")]
peak_kb = int(hwm[0].split()[1]) if hwm else resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
out["rss_mb"] = peak_kb / 1024
print(json.dumps(out))
"""


def run_child(kind: str, path: Path) -> dict[str, float]:
    proc = subprocess.run(
        [sys.executable, "-c", CHILD, kind, str(path), PATTERN], capture_output=True, text=True, check=False
    )
    if proc.returncode != 0:
        raise SystemExit(f"{kind} failed:\n{proc.stderr}")
    result: dict[str, float] = json.loads(proc.stdout.strip().splitlines()[-1])
    return result


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument(
        "--size-mb", type=int, action="append", help="file size to test (repeatable; default 200)"
    )
    ap.add_argument(
        "--dir", type=Path, default=Path("/tmp/ogive-bench"), help="where generated files are cached"
    )
    ap.add_argument("--repeat", type=int, default=1, help="runs per measurement; the fastest is kept")
    args = ap.parse_args()
    args.dir.mkdir(parents=True, exist_ok=True)
    for size in args.size_mb or [200]:
        csv, log = generate(args.dir, size)
        for label, path, ours, theirs in (
            ("CSV", csv, "ogive-csv", "polars-csv"),
            ("text log", log, "ogive-text", "polars-text"),
        ):
            mb = path.stat().st_size / 1e6
            runs = {k: [run_child(k, path) for _ in range(args.repeat)] for k in (ours, theirs)}
            best = {k: min(v, key=lambda r: r["seconds"]) for k, v in runs.items()}
            a, b = best[ours], best[theirs]
            print(f"{label} {mb:.0f} MB:")
            print(
                f"  ogive scan   {mb / a['seconds']:7.1f} MB/s  peak RSS {a['rss_mb']:6.0f} MB"
                f"  (n={a['n']:.0f})"
            )
            print(f"  polars parse {mb / b['seconds']:7.1f} MB/s  peak RSS {b['rss_mb']:6.0f} MB")
            print(
                f"  throughput ratio ogive/polars = {b['seconds'] / a['seconds']:.2f}"
                "  (goal >= 0.75, aim 0.9)"
            )
            if label == "CSV":
                e = run_child("polars-exact", path)
                print(
                    f"  polars exact quantile: {mb / e['seconds']:7.1f} MB/s"
                    f"  peak RSS {e['rss_mb']:6.0f} MB; "
                    f"p99 exact {e['p99']:.3f} vs sketch {a['p99']:.3f}"
                )
    return 0


if __name__ == "__main__":
    sys.exit(main())
