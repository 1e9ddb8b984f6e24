"""A real ``dask scheduler`` and two ``dask worker`` processes on 127.0.0.1, started here.

``ogive scan --cluster tcp://127.0.0.1:PORT`` reaches them like any remote cluster;
then one worker is killed (SIGKILL, no goodbye) in the middle of a scan: the scheduler
runs its tasks again on the other worker and recomputes the sketches it held, so the
result is either identical to the single-process scan or flagged partial, and never a
wrong count.
"""

from __future__ import annotations

import io
import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from contextlib import redirect_stdout
from pathlib import Path

import pytest

from cluster_data import assert_same, text_log
from ogive import cluster
from ogive.cli import main
from ogive.read import ScanOptions, scan

pytest.importorskip("distributed", reason="the cluster extra (pip install 'ogive[cluster]') is absent")
DASK = shutil.which("dask", path=os.path.dirname(sys.executable)) or shutil.which("dask")


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def wait_for_workers(address: str, n: int, timeout: float = 60) -> None:
    from distributed import Client

    with Client(address, timeout="20s") as client:
        client.wait_for_workers(n, timeout=timeout)


@pytest.fixture(scope="module")
def dask_cluster(
    tmp_path_factory: pytest.TempPathFactory,
) -> Iterator[tuple[str, list[subprocess.Popen[bytes]]]]:
    if DASK is None:
        pytest.skip("the dask command is not installed")
    port = free_port()
    address = f"tcp://127.0.0.1:{port}"
    logs = tmp_path_factory.mktemp("dask-logs")
    quiet = {"stdout": subprocess.DEVNULL}
    scheduler = subprocess.Popen(
        [DASK, "scheduler", "--host", "127.0.0.1", "--port", str(port), "--no-dashboard"],
        stderr=(logs / "scheduler.txt").open("wb"),
        **quiet,  # type: ignore[arg-type]
    )
    workers = [
        subprocess.Popen(
            [
                DASK,
                "worker",
                address,
                "--nthreads",
                "1",
                "--no-nanny",
                "--no-dashboard",
                "--name",
                f"w{i}",
                "--host",
                "127.0.0.1",
            ],
            stderr=(logs / f"worker{i}.txt").open("wb"),
            cwd=str(logs),  # not this folder: the workers must get absolute paths
            **quiet,  # type: ignore[arg-type]
        )
        for i in range(2)
    ]
    procs = [scheduler, *workers]
    try:
        wait_for_workers(address, 2)
        yield address, workers
    finally:  # the workers first (they would wait for a scheduler that went away)
        for p in reversed(procs):
            if p.poll() is None:
                p.send_signal(signal.SIGTERM if p is scheduler else signal.SIGKILL)
        for p in procs:
            try:
                p.wait(timeout=10)
            except subprocess.TimeoutExpired:
                p.kill()
                p.wait()


@pytest.fixture(scope="module")
def big_log(tmp_path_factory: pytest.TempPathFactory) -> Path:
    d = tmp_path_factory.mktemp("big")
    data, _ = text_log(40_000, 11, "app.log")
    (d / "app.log").write_bytes(data)
    return d / "app.log"


def test_cli_reaches_a_scheduler_by_address(dask_cluster, big_log, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    address, _ = dask_cluster
    monkeypatch.chdir(big_log.parent)  # a relative path here; the workers live elsewhere

    def run(*extra: str) -> dict:  # type: ignore[type-arg]
        out = io.StringIO()
        with redirect_stdout(out):
            assert main(["scan", "app.log", "--pattern", r"dur=(\S+)", "--json", "--quiet", *extra]) == 0
        doc = json.loads(out.getvalue())
        doc.pop("elapsed_s")
        doc["sketches"]["all"].pop("mean")
        return doc

    here = run()
    there = run("--cluster", address, "--part-size", "64k")
    assert {k: v for k, v in there.items() if k != "sketches"} == {
        k: v for k, v in here.items() if k != "sketches"
    }
    assert there["sketches"]["all"]["n"] == here["sketches"]["all"]["n"]
    assert there["sketches"]["all"]["max"] == here["sketches"]["all"]["max"]


def test_killing_a_worker_mid_scan_never_miscounts(dask_cluster, big_log) -> None:  # type: ignore[no-untyped-def]
    address, workers = dask_cluster
    options = ScanOptions(pattern=r"dur=(\S+)", keep_partial=True)
    single = scan([str(big_log)], options)
    victim = workers[0]
    killed_at: list[int] = []

    def progress(p) -> None:  # type: ignore[no-untyped-def]
        done = int(p.source.split("/")[0])
        if not killed_at and done >= 40:
            killed_at.append(done)
            victim.send_signal(signal.SIGKILL)

    started = time.monotonic()
    split = cluster.scan([str(big_log)], options, cluster=address, part_bytes=8 << 10, progress=progress)
    assert killed_at and killed_at[0] < 180, "the worker was not killed in the middle of the scan"
    assert victim.wait(timeout=10) == -signal.SIGKILL
    print("killed after", killed_at, "parts;", "partial:" if split.partial else "complete", split.partial)
    if split.partial is None:
        assert_same(single, split)  # the tasks it held were run again elsewhere
    else:  # flagged, and what is there is counted once
        s = split.sketches["all"]
        assert s.count <= single.sketches["all"].count
        assert s.count + sum(t.count for t in split.skipped.values()) == split.rows_read
    assert time.monotonic() - started < 120
