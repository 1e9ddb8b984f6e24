"""Scans on a Dask cluster against the single-process scan, and the costs behind a plan
for 1 TB on 100 workers.

Measured, each in a child process of its own (one after another, so they do not share
the two cores):

1. ``scan``: a 1 GB CSV (``ogive generate``, cached) read for its latency column by
   ``ogive.read.scan`` and by ``ogive.cluster.scan`` on ``local:2`` (64 MB parts); the
   cluster's start (with each worker's first import of polars and ogive) is timed
   apart from the scan. Wall and CPU-s of the scan alone (the
   whole process tree, workers included, from ``psutil``), peak RSS of the client
   (``VmHWM``), its peak anonymous RSS (``RssAnon``, sampled every 20 ms) and the
   largest summed RSS of client + workers.
2. ``tasks``: the fixed cost of a part: 400 parts of 4 KB on ``local:2`` (the bytes are
   nothing, the cost is scheduling, starting a pipeline, encoding a sketch), and 2000
   no-op tasks (the scheduler alone).
3. ``merge``: 10^4 partition sketches (100 distinct ones of 10^5 values each, as the
   codec's bytes, used 100 times over) merged in the ordered tree of ``split_every=8``
   in one process: time, CPU-s, peak RSS; then the same tree on ``local:2`` from
   10^4 tasks, with the client's peak RSS.

    python benchmarks/cluster_bench.py                # all, 3 repeats of the scan
    python benchmarks/cluster_bench.py --only merge
    python benchmarks/cluster_bench.py --size-mb 200 --repeat 1

The machine is shared (2 cores): read CPU-s beside wall, and repeat.
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
from pathlib import Path

PRELUDE = r"""
import json, os, resource, sys, threading, time
import psutil
peak = {"anon": 0, "tree": 0}
stop = threading.Event()
def sample():
    me = psutil.Process()
    while not stop.wait(0.02):
        try:
            with open("/proc/self/status") as fh:
                for ln in fh:
                    if ln.startswith("RssAnon:"):
                        peak["anon"] = max(peak["anon"], int(ln.split()[1]) * 1024)
            tree = [me, *me.children(recursive=True)]
            peak["tree"] = max(peak["tree"], sum(p.memory_info().rss for p in tree if p.is_running()))
        except (psutil.Error, OSError):
            pass
threading.Thread(target=sample, daemon=True).start()
def cpu():
    s, c = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return s.ru_utime + s.ru_stime + c.ru_utime + c.ru_stime
def tree_cpu():
    # CPU-s so far of this process and every live process below it (the workers)
    total = 0.0
    for p in [psutil.Process(), *psutil.Process().children(recursive=True)]:
        try:
            t = p.cpu_times()
            total += t.user + t.system
        except psutil.Error:
            pass
    return total
def report(out):
    stop.set()
    with open("/proc/self/status") as fh:
        hwm = [int(ln.split()[1]) * 1024 for ln in fh if ln.startswith("VmHWM:")][0]
    out.update(rss=hwm, anon=peak["anon"], tree=peak["tree"], cpu=cpu())
    print("RESULT " + json.dumps(out))
"""

SCAN = (
    PRELUDE
    + r"""
from ogive.read import ScanOptions, scan
kind, path = sys.argv[1], sys.argv[2]
opts = ScanOptions(column="latency_ms")
out = {}
if kind == "single":
    t, c = time.perf_counter(), tree_cpu()
    r = scan([path], opts)
    out["wall"], out["scan_cpu"] = time.perf_counter() - t, tree_cpu() - c
else:
    from ogive import cluster
    t = time.perf_counter()
    with cluster.connect("local:2") as client:
        out["start"] = time.perf_counter() - t
        address = client.scheduler.address
        # warm: each worker imports polars and ogive once (timed with the start)
        client.run(lambda: __import__("ogive.cluster.tasks") and __import__("polars"))
        out["start"] = time.perf_counter() - t
        t, c = time.perf_counter(), tree_cpu()
        r = cluster.scan([path], opts, cluster=address, part_bytes=64 << 20)
        out["wall"], out["scan_cpu"] = time.perf_counter() - t, tree_cpu() - c
out["n"] = r.sketches["all"].count
out["p99"] = float(r.sketches["all"].quantile(0.99))
report(out)
"""
)

TASKS = (
    PRELUDE
    + r"""
from ogive.read import ScanOptions
from ogive import cluster
path = sys.argv[1]
out = {}
with cluster.connect("local:2") as client:
    address = client.scheduler.address
    cluster.scan([path], ScanOptions(pattern=r"dur=(\S+)"), cluster=address, part_bytes=4096)  # warm
    t = time.perf_counter()
    r = cluster.scan([path], ScanOptions(pattern=r"dur=(\S+)"), cluster=address, part_bytes=4096)
    out["parts_wall"] = time.perf_counter() - t
    out["parts"] = -(-os.path.getsize(path) // 4096)
    t = time.perf_counter()
    futs = client.map(int, range(2000), pure=False)
    client.gather(futs)
    out["noop_wall"] = time.perf_counter() - t
report(out)
"""
)

MERGE = (
    PRELUDE
    + r"""
import numpy as np
from ogive.cluster import tasks
from ogive.cluster.parts import Part, Tally
from ogive.sketch import Sketch, SketchSet
kind, n = sys.argv[1], int(sys.argv[2])
rng = np.random.default_rng(5)
blobs = []
for i in range(100):
    s = Sketch("ms")
    k = 100_000
    s.add(np.where(rng.random(k) < 0.8, rng.lognormal(1, 0.5, k), rng.lognormal(3.5, 0.7, k)))
    blobs.append(Part(SketchSet({"all": s}), Tally(leaves=[i], rows=100_000)).dump())
out = {"blob_kb": sum(len(a) + len(b) for a, b in blobs) / len(blobs) / 1024}
def tree(level, combine):
    merges = 0
    while len(level) > 1:
        level = [combine(level[i:i + 8]) for i in range(0, len(level), 8)]
        merges += len(level)
    return level[0], merges
t, c = time.perf_counter(), cpu()
if kind == "local":
    root, merges = tree([blobs[i % 100] for i in range(n)], lambda g: tasks.combine(g, None, 1000))
else:
    from ogive import cluster
    with cluster.connect("local:2") as client:
        big = client.scatter(blobs, broadcast=True)
        t, c = time.perf_counter(), cpu()
        leaves = [client.submit(lambda b: b, big[i % 100], pure=False) for i in range(n)]
        top, merges = tree(leaves, lambda g: client.submit(tasks.combine, g, None, 1000, priority=1))
        root = top.result()
        del leaves, top
out["wall"] = time.perf_counter() - t
out["merges"] = merges
got = Part.load(root)
out["n"] = got.sketches["all"].count
out["slack"] = got.sketches["all"].rank_error_bound()
report(out)
"""
)


def child(code: str, *args: str) -> dict[str, float]:
    proc = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True, check=False)
    lines = [ln for ln in proc.stdout.splitlines() if ln.startswith("RESULT ")]
    if proc.returncode != 0 or not lines:
        raise SystemExit(f"child failed:\n{proc.stderr[-3000:]}")
    result: dict[str, float] = json.loads(lines[-1][7:])
    return result


def mb(x: float) -> str:
    return f"{x / 1e6:6.0f} MB"


def bench_scan(folder: Path, size_mb: int, repeat: int) -> None:
    path = folder / f"cluster_bench_{size_mb}mb.csv"
    if not path.exists():
        subprocess.run(
            [
                sys.executable,
                "-m",
                "ogive",
                "generate",
                "--format",
                "csv",
                "--size",
                f"{size_mb}M",
                "-o",
                str(path),
            ],
            check=True,
        )
    size = path.stat().st_size
    runs: dict[str, list[dict[str, float]]] = {"single": [], "cluster": []}
    for _ in range(repeat):
        for kind in runs:
            runs[kind].append(child(SCAN, kind, str(path)))
    print(f"\nscan of {size / 1e9:.2f} GB CSV (latency column), {repeat} run(s); best / median")
    print(
        f"{'':8} {'wall s':>13} {'MB/s':>6} {'CPU-s':>13} {'client RSS':>10} {'anon':>9} "
        f"{'all procs':>9} start s"
    )
    for kind, rs in runs.items():
        walls = sorted(r["wall"] for r in rs)
        cpus = sorted(r["scan_cpu"] for r in rs)
        best = min(rs, key=lambda r: r["wall"])
        start = f"{statistics.median(r['start'] for r in rs):7.1f}" if "start" in best else "      -"
        print(
            f"{kind:8} {walls[0]:6.1f} {statistics.median(walls):6.1f} {size / 1e6 / walls[0]:6.0f} "
            f"{cpus[0]:6.1f} {statistics.median(cpus):6.1f} {mb(best['rss']):>10} {mb(best['anon']):>9} "
            f"{mb(best['tree']):>9} {start}"
        )
    a, b = runs["single"], runs["cluster"]
    ratio = statistics.median(r["wall"] for r in b) / statistics.median(r["wall"] for r in a)
    print(f"cluster/single wall (median, cluster start excluded): {ratio:.2f}")
    print(f"same n: {a[0]['n'] == b[0]['n']}  p99 {a[0]['p99']:.4g} / {b[0]['p99']:.4g}")


def bench_tasks(folder: Path) -> None:
    path = folder / "cluster_bench_tiny.log"
    path.write_text("".join(f"2026-03-04T10:00:{i % 60:02d}Z dur={i % 97 + 0.5}ms\n" for i in range(40_000)))
    r = child(TASKS, str(path))
    per = r["parts_wall"] * 2 / r["parts"]
    print(f"\nfixed cost of a part: {r['parts']:.0f} parts of 4 KB in {r['parts_wall']:.1f} s on 2 workers "
          f"= {per * 1000:.0f} ms of a worker per part")  # fmt: skip
    print(f"scheduler alone: 2000 no-op tasks in {r['noop_wall']:.2f} s = {r['noop_wall'] / 2:.2f} ms a task")


def bench_merge(n: int) -> None:
    print(f"\nmerging {n:,} partition sketches (10^5 values each; ordered tree, split_every=8)")
    for kind in ("local", "cluster"):
        r = child(MERGE, kind, str(n))
        print(
            f"{kind:8} {r['wall']:6.1f} s  CPU {r['cpu']:6.1f} s  {r['merges']:.0f} merges "
            f"({r['wall'] / r['merges'] * 1000:.0f} ms each)  peak RSS {mb(r['rss'])} anon {mb(r['anon'])}  "
            f"all procs {mb(r['tree'])}  blob {r['blob_kb']:.0f} KB  n {r['n']:,.0f}  bound {r['slack']:.2g}"
        )


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--dir", type=Path, default=Path("/tmp"))
    ap.add_argument("--size-mb", type=int, default=1000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--merge-n", type=int, default=10_000)
    ap.add_argument("--only", choices=("scan", "tasks", "merge"), default=None)
    a = ap.parse_args()
    if a.only in (None, "scan"):
        bench_scan(a.dir, a.size_mb, a.repeat)
    if a.only in (None, "tasks"):
        bench_tasks(a.dir)
    if a.only in (None, "merge"):
        bench_merge(a.merge_n)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
