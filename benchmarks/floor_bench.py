"""The floor of ogive's lean scan design, beside polars' streaming reader and ogive itself.

What it answers: how much of ogive's distance to polars (``scan_bench.py``) is ogive's
own work (sketching, checks, counting) and how much comes with the way the lean default
reads: the file in chunks of a few MB, each handed to polars' eager reader
(``read_csv`` on the bytes, then ``str.extract`` for text) on two parser threads. That
is the only polars path whose memory stays flat and low; polars' streaming reader is
faster but holds ~300 MB of its own (anonymous) memory at 1 GB, and more with the file.

Three sides per case, alternated in rounds (A B C A B C ...), whole processes:

* ``floor``: the chunked eager parse and nothing else (no sketch, no checks, no count of
  bad rows): a bound on what the lean design can reach on this machine;
* ``polars``: polars' streaming reader on the same columns (as in ``scan_bench.py``);
* ``ogive``: ``ogive scan`` (CSV and text cases; the time case uses --split-at).

Printed: median and best wall, median CPU-s, peak RSS; then floor/polars and
ogive/floor ratios (wall medians, CPU medians). A goal above what ``floor`` reaches
cannot be met by tuning ogive; only a different reader (more memory) or less parsing
could. Files are the same invented checkout-service log as ``scan_bench.py``.

    python benchmarks/floor_bench.py                 # ~1 GB files, 5 rounds
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from scan_bench import (
    POLARS_CSV,
    POLARS_CSV_TIME,
    POLARS_TEXT,
    TEXT_PATTERN,
    Run,
    generate,
    measure,
    split_moment,
)

FLOOR = """
import sys, polars as pl
from collections import deque
from concurrent.futures import ThreadPoolExecutor
path, kind, arg = sys.argv[1], sys.argv[2], sys.argv[3]
size = (8 if kind == "csv" else 4) << 20  # ogive's lean chunk sizes
with open(path, "rb") as fh:
    header = [] if kind == "text" else fh.readline().decode().rstrip("\\n").split(",")
    names = [f"c{i}" for i in range(len(header))]
    schema = {n: pl.String for n in names}
    if header:
        v = header.index("latency_ms")
        schema[names[v]] = pl.Float64

    def parse(data):
        if kind == "text":
            lines = pl.read_csv(
                data, has_header=False, separator="\\x1f", quote_char=None, infer_schema=False
            )
            return lines.select(pl.first().str.extract(arg, 1).cast(pl.Float64)).height
        cols = [v] if kind == "csv" else [header.index("ts"), v]
        df = pl.read_csv(data, has_header=False, columns=cols, schema=schema, truncate_ragged_lines=True)
        if kind == "csv-time":
            df = df.select(pl.first().str.to_datetime("%Y-%m-%dT%H:%M:%SZ", time_unit="us"))
        return df.height

    pool, pending, tail, rows = ThreadPoolExecutor(2), deque(), b"", 0
    while data := fh.read(size):
        data = tail + data
        cut = data.rfind(b"\\n") + 1
        tail = data[cut:]
        pending.append(pool.submit(parse, data[:cut]))
        while len(pending) > 4:
            rows += pending.popleft().result()
    rows += sum(f.result() for f in pending) + (parse(tail) if tail else 0)
"""


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--size", type=int, default=1000, help="MB per generated file (default 1000)")
    ap.add_argument("--rounds", type=int, default=5, help="rounds per case (default 5)")
    ap.add_argument("--dir", type=Path, default=Path("/var/tmp/ogive-bench"), help="cache of generated files")
    args = ap.parse_args()
    files = generate(args.dir, args.size)
    split_at = split_moment(files["csv"])
    py = [sys.executable, "-c"]
    csv, log = str(files["csv"]), str(files["log"])
    scan = [sys.executable, "-m", "ogive", "scan"]
    cases = {
        "csv": {
            "floor": [*py, FLOOR, csv, "csv", ""],
            "polars": [*py, POLARS_CSV, csv],
            "ogive": [*scan, csv, "--column", "latency_ms", "--unit", "ms", "--quiet"],
        },
        "csv-time": {
            "floor": [*py, FLOOR, csv, "csv-time", ""],
            "polars": [*py, POLARS_CSV_TIME, csv],
            "ogive": [*scan, csv, "--column", "latency_ms", "--unit", "ms", "--time-field", "ts",
                      "--split-at", split_at, "--quiet"],
        },
        "text": {
            "floor": [*py, FLOOR, log, "text", TEXT_PATTERN],
            "polars": [*py, POLARS_TEXT, log, TEXT_PATTERN],
            "ogive": [*scan, log, "--pattern", TEXT_PATTERN, "--unit", "ms", "--quiet"],
        },
    }  # fmt: skip
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    print(f"{'case':9s} {'side':7s} {'med s':>6s} {'best s':>6s} {'CPU-s':>6s} {'RSS MB':>6s}")
    medians: dict[tuple[str, str], tuple[float, float]] = {}
    for case, sides in cases.items():
        runs: dict[str, list[Run]] = {side: [] for side in sides}
        for _ in range(args.rounds):
            for side, argv in sides.items():
                runs[side].append(measure(argv, env))
        for side, rs in runs.items():
            wall, cpu = statistics.median(r.wall for r in rs), statistics.median(r.cpu for r in rs)
            medians[case, side] = (wall, cpu)
            best, peak = min(r.wall for r in rs), max(r.rss_mb for r in rs)
            print(f"{case:9s} {side:7s} {wall:6.2f} {best:6.2f} {cpu:6.2f} {peak:6.0f}", flush=True)
    print()
    for case in cases:
        (fw, fc), (pw, pc), (ow, oc) = (medians[case, s] for s in ("floor", "polars", "ogive"))
        print(
            f"{case:9s} floor at {pw / fw:.2f} of polars' speed for {fc / pc:.2f}x its CPU; "
            f"ogive at {fw / ow:.2f} of the floor's speed ({pw / ow:.2f} of polars'), {oc / fc:.2f}x its CPU"
        )
    print(f"load {os.getloadavg()[0]:.2f} at the end")
    return 0


if __name__ == "__main__":
    sys.exit(main())
