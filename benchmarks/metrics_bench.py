"""Scan speed of a ~300 MB OTLP JSON metrics file (issue 17): wall, CPU-seconds, peak RSS.

Writes the demo scenario's metrics export repeated with shifted days (the same series and
bucket layouts, more exports) up to the size asked, then runs ``ogive scan`` on it in a
fresh process, several times, and prints the best and median wall time, the CPU seconds
(user + system of the child, from ``resource.getrusage``) and the peak RSS. Beside it,
the same file's bytes through ``json.loads`` line by line (the floor any pure-Python
reader of this format pays) measured in the same way.

    python benchmarks/metrics_bench.py --size 300 --runs 3
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from ogive import demo_metrics

DAY_NS = 86_400 * 10**9


def build(path: Path, megabytes: float) -> int:
    lines = list(demo_metrics.otlp_lines(demo_metrics.day_requests()))
    written, day = 0, 0
    with open(path, "w", encoding="utf-8") as out:
        while written < megabytes * 1e6:
            shift = day * DAY_NS
            for line in lines:
                if day:
                    doc = json.loads(line)
                    for rm in doc["resourceMetrics"]:
                        for sm in rm["scopeMetrics"]:
                            for m in sm["metrics"]:
                                body = m.get("histogram") or m["exponentialHistogram"]
                                for dp in body["dataPoints"]:
                                    dp["startTimeUnixNano"] = str(int(dp["startTimeUnixNano"]) + shift)
                                    dp["timeUnixNano"] = str(int(dp["timeUnixNano"]) + shift)
                    line = json.dumps(doc, separators=(",", ":"))
                out.write(line + "\n")
                written += len(line) + 1
            day += 1
    return written


WRAP = (
    "import resource,subprocess,sys\n"
    "subprocess.run(sys.argv[1:], check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)\n"
    "u = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
    "print(u.ru_utime + u.ru_stime, u.ru_maxrss)\n"
)
"""Runs one command in its own wrapper, so its CPU time and peak RSS are its own."""


def child(argv: list[str]) -> tuple[float, float, int]:
    t = time.perf_counter()
    out = subprocess.run([sys.executable, "-c", WRAP, *argv], check=True, capture_output=True, text=True)
    wall = time.perf_counter() - t
    cpu, rss = out.stdout.split()
    return wall, float(cpu), int(rss)


FLOOR = "import json,sys\nfor line in open(sys.argv[1], 'rb'):\n    json.loads(line)\n"


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--size", type=float, default=300.0, help="MB of OTLP JSON to scan")
    ap.add_argument("--runs", type=int, default=3)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "metrics.otlp.jsonl"
        size = build(path, args.size)
        with open(path, "rb") as fh:
            print(f"file: {size / 1e6:.0f} MB, {sum(1 for _ in fh):,} lines")
        for label, argv in (
            ("ogive scan --metric http.server.request.duration",
             ["ogive", "scan", str(path), "--metric", "http.server.request.duration", "--quiet"]),
            ("ogive scan (both metrics) --by http.route",
             ["ogive", "scan", str(path), "--by", "http.route", "--quiet"]),
            ("json.loads per line (floor)", [sys.executable, "-c", FLOOR, str(path)]),
        ):  # fmt: skip
            walls, cpus, rss = [], [], 0
            for _ in range(args.runs):
                w, c, r = child(argv)
                walls.append(w)
                cpus.append(c)
                rss = max(rss, r)
            mbps = size / 1e6 / min(walls)
            print(
                f"{label}: wall best {min(walls):.2f} s, median {statistics.median(walls):.2f} s "
                f"({mbps:.0f} MB/s); CPU {min(cpus):.2f}-{max(cpus):.2f} s; peak RSS {rss / 1024:.0f} MB"
            )


if __name__ == "__main__":
    main()
