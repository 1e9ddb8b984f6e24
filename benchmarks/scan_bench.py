"""Scan speed, CPU and memory: each ogive scan beside its polars (or gzip) counterpart.

What it answers: how fast ``ogive scan`` reads a large file, how much CPU it takes from the
box it shares with the service being investigated, and how much memory it holds, next to
the same parse done by polars (its streaming reader, or ``str.extract``, or
``str.to_datetime``) on the same file in the same run. Every measurement is a whole
process (``python -m ogive scan ...`` against ``python -c <polars snippet>``), imports
included on both sides.

Per run it records, from outside the process:

* wall time, and CPU seconds (user + system, from ``os.wait4``'s resource usage);
* peak RSS and peak anonymous RSS (``VmHWM``/``VmRSS``/``RssAnon`` sampled from
  ``/proc/PID/status`` every 10 ms): file-backed pages (the mapped input, shared
  libraries) are reclaimable, anonymous memory is the process's own.

The cases run in rounds, alternating ogive and its counterpart (A B A B ...), so a
passing load spike hits both; the table shows the best and the median wall of the
rounds, the median CPU, the highest peaks, MB/s at the best wall, and the ratios
ours/theirs (wall and CPU; < 1 means ogive is faster or cheaper). Figures of a shared
machine are noise: the load average is printed beside them.

Files are invented (a checkout service's request log), generated once per size and
cached in ``--dir``: a CSV, the same records as a free-text log and as NDJSON, and a
gzip copy of the CSV.

    python benchmarks/scan_bench.py                  # ~1 GB files, 3 rounds
    python benchmarks/scan_bench.py --size 300 --rounds 3 --cases csv,csv-time
    python benchmarks/scan_bench.py --list           # the cases and their goals
"""

from __future__ import annotations

import argparse
import calendar
import os
import statistics
import subprocess
import sys
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import polars as pl

ROWS_PER_BLOCK = 250_000
START_S = 1_779_900_000
"""2026-05-27T16:40:00Z, the first record's time; 40 records a second follow."""
TEXT_PATTERN = r"rt=([0-9.]+)ms"
TEXT_TIME_PATTERN = r"\[(?P<ts>[^\]]+)\] \"[^\"]*\" \d+ \d+ rt=(?P<value>[0-9.]+)ms"
ISO_FORMAT = "%Y-%m-%dT%H:%M:%SZ"


# ----------------------------------------------------------------- generated files


def _block(rng: np.random.Generator, start: int, n: int) -> pl.DataFrame:
    """Invented records: a checkout service with a fast cache-hit path and a slow miss path,
    24 hosts, and a client id among 10^5."""
    hit = rng.random(n) < 0.82
    latency = np.where(hit, rng.lognormal(1.2, 0.45, n), rng.lognormal(3.6, 0.7, n))
    routes = np.array(["/v2/cart", "/v2/cart/{id}", "/v2/pay", "/v2/search", "/healthz"])
    methods = np.array(["GET", "GET", "GET", "POST", "PUT"])
    secs = START_S + (start + np.arange(n)) // 40
    ts = pl.from_epoch(pl.Series(secs), time_unit="s").dt.strftime(ISO_FORMAT)
    return pl.DataFrame(
        {
            "ts": ts,
            "host": pl.Series(np.char.add("ck-web-", rng.integers(0, 12, n).astype(str))),
            "client": pl.Series(np.char.add("c", rng.integers(0, 100_000, n).astype(str))),
            "method": methods[rng.integers(0, 5, n)],
            "route": routes[rng.integers(0, 5, n)],
            "status": rng.choice([200, 200, 200, 201, 304, 404, 500], n),
            "latency_ms": np.round(latency, 3),
            "bytes": rng.integers(80, 90_000, n),
            "request_id": pl.Series(rng.integers(0, 2**62, n)).cast(pl.String).str.zfill(20),
        }
    )


def _write(path: Path, target: int, render: str) -> None:
    if path.exists() and path.stat().st_size >= target:
        return
    rng = np.random.default_rng(20260304)
    tmp = path.with_suffix(".tmp")
    with open(tmp, "wb") as fh:
        start = 0
        while fh.tell() < target:
            df = _block(rng, start, ROWS_PER_BLOCK)
            if render == "csv":
                df.write_csv(fh, include_header=start == 0)
            elif render == "ndjson":
                nested = df.select(
                    "ts", "host", "client",
                    pl.struct("method", "route", "status").alias("http"),
                    pl.struct(pl.col("latency_ms").alias("total_ms"), "bytes").alias("timing"),
                    "request_id",
                )  # fmt: skip
                nested.write_ndjson(fh)
            else:
                line = pl.format(
                    '10.4.{}.{} - - [{}] "{} {} HTTP/1.1" {} {} rt={}ms host={} id={}',
                    pl.col("bytes") % 250, pl.col("status") % 250, pl.col("ts"), pl.col("method"),
                    pl.col("route"), pl.col("status"), pl.col("bytes"), pl.col("latency_ms"),
                    pl.col("host"), pl.col("request_id"),
                )  # fmt: skip
                lines = df.select(line.alias("l")).to_series()
                fh.write(("\n".join(lines.to_list()) + "\n").encode())
            start += ROWS_PER_BLOCK
    os.replace(tmp, path)


def generate(folder: Path, size_mb: int) -> dict[str, Path]:
    """The files of one size (cached): csv, log, ndjson, csv.gz."""
    target = size_mb * 1_000_000
    files = {
        "csv": folder / f"scan_{size_mb}mb.csv",
        "log": folder / f"scan_{size_mb}mb.log",
        "ndjson": folder / f"scan_{size_mb}mb.ndjson",
        "gz": folder / f"scan_{size_mb}mb.csv.gz",
    }
    for kind in ("csv", "log", "ndjson"):
        _write(files[kind], target, kind)
    gz = files["gz"]
    if not gz.exists():
        tmp = gz.with_suffix(".tmp")
        with open(tmp, "wb") as out:
            subprocess.run(["gzip", "-c", str(files["csv"])], stdout=out, check=True)
        os.replace(tmp, gz)
    return files


# ----------------------------------------------------------------- the cases

POLARS_CSV = """
import sys, polars as pl
n = 0
for b in pl.scan_csv(sys.argv[1]).select("latency_ms").collect_batches():
    n += b.height
"""
POLARS_CSV_TIME = """
import sys, polars as pl
lf = pl.scan_csv(sys.argv[1]).select(
    "latency_ms", pl.col("ts").str.to_datetime("%Y-%m-%dT%H:%M:%SZ", time_unit="us"))
n = 0
for b in lf.collect_batches():
    n += b.height
"""
POLARS_CSV_BY = """
import sys, polars as pl
n = 0
for b in pl.scan_csv(sys.argv[1]).select("latency_ms", sys.argv[2]).collect_batches():
    n += b.height
"""
POLARS_TEXT = """
import sys, polars as pl
lf = pl.scan_csv(sys.argv[1], has_header=False, separator="\\x1f", quote_char=None, infer_schema=False)
n = 0
for b in lf.select(pl.first().str.extract(sys.argv[2], 1).cast(pl.Float64)).collect_batches():
    n += b.height
"""
POLARS_TEXT_TIME = """
import sys, polars as pl
lf = pl.scan_csv(sys.argv[1], has_header=False, separator="\\x1f", quote_char=None, infer_schema=False)
g = pl.first().str.extract_groups(sys.argv[2])
lf = lf.select(
    g.struct.field("value").cast(pl.Float64),
    g.struct.field("ts").str.to_datetime("%Y-%m-%dT%H:%M:%SZ", time_unit="us", strict=False),
)
n = 0
for b in lf.collect_batches():
    n += b.height
"""
POLARS_TEXT_VALUE = """
import sys, polars as pl
lf = pl.scan_csv(sys.argv[1], has_header=False, separator="\\x1f", quote_char=None, infer_schema=False)
g = pl.first().str.extract_groups(sys.argv[2])
n = 0
for b in lf.select(g.struct.field("value").cast(pl.Float64)).collect_batches():
    n += b.height
"""
POLARS_NDJSON = """
import sys, polars as pl
n = 0
# ogive reads each record's time from its ts field unasked (as JSON loggers write it):
# the same parse on both sides.
lf = pl.scan_ndjson(sys.argv[1]).select(
    pl.col("timing").struct.field("total_ms"),
    pl.col("ts").str.to_datetime("%Y-%m-%dT%H:%M:%SZ", time_unit="us"),
)
for b in lf.collect_batches():
    n += b.height
"""


@dataclass(frozen=True)
class Case:
    name: str
    file: str
    ours: list[str]
    """Arguments after ``ogive scan FILE``."""
    theirs: list[str]
    """A whole command line; FILE stands for the file."""
    counterpart: str
    goal: str


def split_moment(csv: Path) -> str:
    """The time of the middle record of the generated CSV (read off its last line)."""
    with open(csv, "rb") as fh:
        fh.seek(max(0, csv.stat().st_size - 4096))
        last = fh.read().rstrip(b"\n").rsplit(b"\n", 1)[-1].decode()
    end = calendar.timegm(time.strptime(last.split(",", 1)[0], ISO_FORMAT))
    mid = START_S + (end - START_S) / 2
    return time.strftime(ISO_FORMAT, time.gmtime(mid))


def cases(split_at: str = "2026-05-28T04:00:00Z") -> list[Case]:
    py = [sys.executable, "-c"]
    csv_v = ["--column", "latency_ms", "--unit", "ms"]
    return [
        Case("csv", "csv", csv_v, [*py, POLARS_CSV, "FILE"], "polars scan_csv(col)",
             "wall >= 0.9x polars (0.8x with reason), CPU <= 1.1x (1.25x)"),
        Case("csv-time", "csv", [*csv_v, "--time-field", "ts", "--split-at", split_at],
             [*py, POLARS_CSV_TIME, "FILE"], "polars col + str.to_datetime",
             ">= 0.8x polars; <= 1.25x our csv"),
        Case("text", "log", ["--pattern", TEXT_PATTERN, "--unit", "ms"],
             [*py, POLARS_TEXT, "FILE", TEXT_PATTERN], "polars str.extract",
             ">= 0.9x polars"),
        Case("text-400mb", "log", ["--pattern", TEXT_PATTERN, "--unit", "ms", "--memory-budget", "400"],
             [*py, POLARS_TEXT, "FILE", TEXT_PATTERN], "polars str.extract",
             "memory granted (400 MB): faster than text, within 400 MB"),
        Case("text-time", "log",
             ["--pattern", TEXT_TIME_PATTERN, "--unit", "ms", "--time-field", "ts", "--split-at", split_at],
             [*py, POLARS_TEXT_TIME, "FILE", TEXT_TIME_PATTERN], "polars extract_groups + to_datetime",
             "<= 1.25x our text"),
        Case("text-same", "log", ["--pattern", TEXT_TIME_PATTERN, "--unit", "ms"],
             [*py, POLARS_TEXT_VALUE, "FILE", TEXT_TIME_PATTERN], "polars value group of that regex",
             "text-time's own pattern without its time: what the time itself costs"),
        Case("ndjson", "ndjson", ["--field", "timing.total_ms", "--unit", "ms"],
             [*py, POLARS_NDJSON, "FILE"], "polars scan_ndjson(field, ts)", ">= 0.8x polars"),
        Case("by-host", "csv", [*csv_v, "--by", "host"], [*py, POLARS_CSV_BY, "FILE", "host"],
             "polars scan_csv(col, host)", "<= 1.2x our csv"),
        Case("by-1e5", "csv", [*csv_v, "--by", "client"],
             [*py, POLARS_CSV_BY, "FILE", "client"], "polars scan_csv(col, client)",
             ">= 100 MB/s (10^5 keys: 1000 groups + (other))"),
        Case("gzip", "gz", csv_v, ["gzip", "-dc", "FILE"], "gzip -dc > /dev/null",
             "<= 1.1x gzip -dc"),
    ]  # fmt: skip


# ----------------------------------------------------------------- measuring


@dataclass
class Run:
    wall: float
    cpu: float
    rss_mb: float
    anon_mb: float


def _status(pid: int) -> tuple[int, int, int]:
    """(VmHWM, VmRSS, RssAnon) in kB, zeros once the process is gone."""
    hwm = rss = anon = 0
    try:
        with open(f"/proc/{pid}/status") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    hwm = int(line.split()[1])
                elif line.startswith("VmRSS:"):
                    rss = int(line.split()[1])
                elif line.startswith("RssAnon:"):
                    anon = int(line.split()[1])
    except (OSError, ValueError):
        pass
    return hwm, rss, anon


def measure(argv: list[str], env: dict[str, str]) -> Run:
    """Run ``argv`` to its end, stdout to /dev/null; wall, CPU and sampled memory peaks."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env)
    peak = anon = 0
    while True:
        pid, status, usage = os.wait4(proc.pid, os.WNOHANG)
        if pid:
            break
        hwm, rss, a = _status(proc.pid)
        peak, anon = max(peak, hwm, rss), max(anon, a)
        time.sleep(0.01)
    wall = time.perf_counter() - t0
    proc.returncode = os.waitstatus_to_exitcode(status)
    err = proc.stderr.read().decode(errors="replace") if proc.stderr else ""
    if proc.returncode != 0:
        raise SystemExit(f"failed ({proc.returncode}): {' '.join(argv)[:300]}\n{err[-2000:]}")
    return Run(wall, usage.ru_utime + usage.ru_stime, peak / 1024, anon / 1024)


OWN_PAIRS = (
    ("csv-time", "csv"),
    ("by-host", "csv"),
    ("text-time", "text"),
    ("text-time", "text-same"),
    ("text-400mb", "text"),
)
"""Goals stated against ogive's own plain scan: (case, its base)."""


def ours_argv(files: dict[str, Path], c: Case) -> list[str]:
    return [sys.executable, "-m", "ogive", "scan", str(files[c.file]), *c.ours, "--quiet"]


def load() -> str:
    one, five, _ = os.getloadavg()
    return f"load {one:.2f}/{five:.2f}"


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--size", type=int, default=1000, help="MB per generated file (default 1000)")
    ap.add_argument("--rounds", type=int, default=3, help="A B rounds per case (default 3)")
    ap.add_argument("--cases", default="", help="comma-separated case names (default: all; see --list)")
    ap.add_argument("--dir", type=Path, default=Path("/var/tmp/ogive-bench"), help="cache of generated files")
    ap.add_argument("--list", action="store_true", help="list the cases and their goals, then stop")
    ap.add_argument("--ogive", default="", help="PYTHONPATH for ogive (default: as run)")
    args = ap.parse_args()
    todo = cases()
    if args.list:
        for c in todo:
            print(f"{c.name:10s} vs {c.counterpart:38s} goal: {c.goal}")
        return 0
    if args.cases:
        want = set(args.cases.split(","))
        unknown = want - {c.name for c in todo}
        if unknown:
            raise SystemExit(f"unknown case(s): {', '.join(sorted(unknown))} (see --list)")
        todo = [c for c in todo if c.name in want]
    args.dir.mkdir(parents=True, exist_ok=True)
    print(f"generating {args.size} MB files in {args.dir} (cached) ...", flush=True)
    files = generate(args.dir, args.size)
    split_at = split_moment(files["csv"])
    todo = [c for c in cases(split_at) if c.name in {t.name for t in todo}]
    env = dict(os.environ)
    if args.ogive:
        env["PYTHONPATH"] = args.ogive
    import ogive  # only to say which copy runs

    where = args.ogive or os.path.dirname(os.path.dirname(ogive.__file__))
    # An installed ogive has its bytecode compiled; a source checkout run with
    # PYTHONDONTWRITEBYTECODE=1 would recompile every module in every run (~0.1-0.2 s
    # measured), a cost polars, installed with its bytecode, does not pay. Compile once.
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    package = os.path.join(where, "ogive") if args.ogive else os.path.dirname(ogive.__file__)
    subprocess.run([sys.executable, "-m", "compileall", "-q", package], env=env, check=False)
    now = time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime())
    print(f"ogive from {where}; {os.cpu_count()} cores; --split-at {split_at}; {now}")
    head = (
        f"{'case':10s} {'side':6s} {'MB':>6s} {'best s':>7s} {'med s':>7s} {'CPU-s':>6s} {'MB/s':>6s} "
        f"{'RSS MB':>6s} {'anon':>5s}  {'wall x':>6s} {'CPU x':>6s}  load"
    )
    print(head)
    print("-" * len(head))
    for c in todo:
        path = files[c.file]
        # MB of text read: for gzip, the CSV inside (decompressed bytes are the work).
        mb = (files["csv"] if c.file == "gz" else path).stat().st_size / 1e6
        a_argv = ours_argv(files, c)
        b_argv = [str(path) if a == "FILE" else a for a in c.theirs]
        runs: dict[str, list[Run]] = {"ogive": [], "theirs": []}
        loads = []
        for _ in range(args.rounds):
            loads.append(os.getloadavg()[0])
            runs["ogive"].append(measure(a_argv, env))
            runs["theirs"].append(measure(b_argv, env))
        stats = {}
        for side, rs in runs.items():
            stats[side] = (
                min(r.wall for r in rs),
                statistics.median(r.wall for r in rs),
                statistics.median(r.cpu for r in rs),
                max(r.rss_mb for r in rs),
                max(r.anon_mb for r in rs),
            )
        a, b = stats["ogive"], stats["theirs"]
        for side, s in (("ogive", a), ("theirs", b)):
            ratio = f"{a[0] / b[0]:6.2f} {a[2] / b[2]:6.2f}" if side == "ogive" else f"{'':6s} {'':6s}"
            print(
                f"{c.name:10s} {side:6s} {mb:6.0f} {s[0]:7.2f} {s[1]:7.2f} {s[2]:6.2f} {mb / s[0]:6.0f} "
                f"{s[3]:6.0f} {s[4]:5.0f}  {ratio}  {min(loads):.1f}-{max(loads):.1f}"
                + (f"   ({c.counterpart})" if side == "theirs" else ""),
                flush=True,
            )
    print()
    print("wall x: ogive's best wall / theirs; CPU x: medians (< 1: ogive faster, cheaper).")
    # The goals that compare ogive with itself are measured side by side too: two cases
    # from different minutes of a shared machine differed by up to a third on their own.
    by_name = {c.name: c for c in todo}
    pairs = [(a, b) for a, b in OWN_PAIRS if a in by_name and b in by_name]
    if pairs:
        print(f"\nogive against itself, alternating, {args.rounds} rounds (median wall, median CPU):")
    for name, base in pairs:
        own: dict[str, list[Run]] = {name: [], base: []}
        for _ in range(args.rounds):
            for which in (name, base):
                own[which].append(measure(ours_argv(files, by_name[which]), env))
        wall = statistics.median(r.wall for r in own[name]) / statistics.median(r.wall for r in own[base])
        cpu = statistics.median(r.cpu for r in own[name]) / statistics.median(r.cpu for r in own[base])
        print(f"  {name} / our {base}: {wall:.2f}x wall, {cpu:.2f}x CPU", flush=True)
    print(f"goals: see --list. {load()} at the end.")
    return 0


if __name__ == "__main__":
    sys.exit(main())
