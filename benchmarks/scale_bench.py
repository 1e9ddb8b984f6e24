"""Flat memory and throughput as files grow: ogive scan at 1 GB and 8 GB, and --by with
10^5 distinct keys.

* The 1 GB files are ``scan_bench.py``'s (same generator, cached); the 8 GB ones are
  its 4 GB files written twice (header once), which costs a minute instead of ten.
  Repeated content does not help a streaming scan: every byte is still read and
  parsed, and the sketch only sees values.
* ``--by key`` runs on a generated CSV whose ``key`` column has 10^5 distinct values:
  the group cap (1000 by default) must hold memory down, every row must still be
  counted (in its group or in ``key=(other)``).

Each run is a separate child process reporting its own wall time and peak RSS
(VmHWM). Printed: MB/s and peak RSS per size, and the 8 GB / 1 GB ratios (goal:
within 20%, i.e. 0.8-1.2). The machine is shared: run it more than once.

    python benchmarks/scale_bench.py --dir /var/tmp/ogive-bench
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

sys.path.insert(0, str(Path(__file__).resolve().parent))
from scan_bench import PATTERN, generate

CHILD = r"""
import json, sys, time
kind, path, pattern = sys.argv[1], sys.argv[2], sys.argv[3]
from ogive.read import scan, ScanOptions
t0 = time.perf_counter()
if kind == "csv":
    r = scan([path], ScanOptions(column="latency_ms", unit="ms"))
elif kind == "text":
    r = scan([path], ScanOptions(pattern=pattern, unit="ms"))
else:
    r = scan([path], ScanOptions(column="latency_ms", unit="ms", by="key"))
out = {"seconds": time.perf_counter() - t0, "sketches": len(r.sketches.sketches),
       "values": sum(s.count for s in r.sketches.sketches.values()), "rows": r.rows_read}
with open("/proc/self/status") as fh:
    out["rss_mb"] = int([ln for ln in fh if ln.startswith("VmHWM:")][0].split()[1]) / 1024
print(json.dumps(out))
"""


def run_child(kind: str, path: Path) -> dict[str, float]:
    proc = subprocess.run(
        [sys.executable, "-c", CHILD, kind, str(path), PATTERN], capture_output=True, text=True, check=False
    )
    if proc.returncode != 0:
        raise SystemExit(f"{kind} on {path} failed:\n{proc.stderr}")
    out: dict[str, float] = json.loads(proc.stdout.strip().splitlines()[-1])
    return out


def doubled(src: Path, dst: Path, *, header: bool) -> Path:
    """``src`` twice over into ``dst`` (its first line once when ``header``)."""
    if dst.exists() and dst.stat().st_size >= 2 * src.stat().st_size - (1 << 20):
        return dst
    tmp = dst.with_suffix(".tmp")
    with open(tmp, "wb") as out:
        for i in range(2):
            with open(src, "rb") as fh:
                if header and i:
                    fh.readline()
                while block := fh.read(16 << 20):
                    out.write(block)
    os.replace(tmp, dst)
    return dst


def keyed(folder: Path, keys: int, rows: int) -> Path:
    path = folder / f"bench_keys_{keys}_{rows}.csv"
    if path.exists():
        return path
    rng = np.random.default_rng(5)
    # Every key appears at least once; the rest are drawn at random.
    k = np.concatenate((np.arange(keys), rng.integers(0, keys, rows - keys)))
    rng.shuffle(k)
    df = pl.DataFrame(
        {
            "key": np.char.add("tenant-", np.char.zfill(k.astype(str), 6)),
            "latency_ms": np.round(rng.lognormal(2.0, 0.8, rows), 3),
        }
    )
    tmp = path.with_suffix(".tmp")
    df.write_csv(tmp)
    os.replace(tmp, path)
    return path


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument(
        "--dir", type=Path, default=Path("/tmp/ogive-bench"), help="where generated files are cached"
    )
    ap.add_argument("--repeat", type=int, default=1, help="runs per measurement; the fastest is kept")
    args = ap.parse_args()
    args.dir.mkdir(parents=True, exist_ok=True)
    csv1, log1 = generate(args.dir, 1000)
    csv4, log4 = generate(args.dir, 4000)
    csv8 = doubled(csv4, args.dir / "bench_v2_8000mb.csv", header=True)
    log8 = doubled(log4, args.dir / "bench_v2_8000mb.log", header=False)
    for label, kind, small, big in (("CSV", "csv", csv1, csv8), ("text log", "text", log1, log8)):
        res = {}
        for path in (small, big):
            runs = [run_child(kind, path) for _ in range(args.repeat)]
            res[path] = min(runs, key=lambda r: r["seconds"])
        a, b = res[small], res[big]
        mb_a, mb_b = small.stat().st_size / 1e6, big.stat().st_size / 1e6
        print(f"{label}:")
        for mb, r in ((mb_a, a), (mb_b, b)):
            speed = mb / r["seconds"]
            print(f"  {mb:7.0f} MB  {speed:6.1f} MB/s  peak RSS {r['rss_mb']:5.0f} MB  n={r['values']:.0f}")
        print(
            f"  8 GB / 1 GB: peak RSS x{b['rss_mb'] / a['rss_mb']:.2f}, throughput "
            f"x{(mb_b / b['seconds']) / (mb_a / a['seconds']):.2f}  (goal: both within 0.8-1.2)"
        )
    keys = keyed(args.dir, 100_000, 4_000_000)
    r = run_child("by", keys)
    mb = keys.stat().st_size / 1e6
    print(f"--by key, 10^5 distinct keys, {r['rows']:.0f} rows ({mb:.0f} MB):")
    print(
        f"  {mb / r['seconds']:6.1f} MB/s  peak RSS {r['rss_mb']:5.0f} MB  sketches {r['sketches']:.0f} "
        f"(cap 1000 + the (other) group)  values {r['values']:.0f} of {r['rows']:.0f} rows"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
