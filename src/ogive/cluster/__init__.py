"""Scans on a Dask distributed cluster: parts of the sources as map tasks (a byte range,
a compressed file, Parquet row groups -> a sketch set as the ``.ogive`` codec's bytes),
merged in an ordered tree on the workers; the client keeps handles, not data.

The result is the one a single-process scan of the same sources returns: the same
counts, skipped rows by reason, exact tails and min/max; quantiles within the sketch's
own bound (a merged sketch carries its inputs' error, ``merge_slack``). Needs the extra
``ogive[cluster]`` (dask[distributed], fsspec); dask is imported only when a cluster
scan runs.

Layout: :mod:`.plan` lists and cuts the sources, :mod:`.head` decides what every part
reads against, :mod:`.tasks` is what the workers run (:mod:`.ranges`, :mod:`.parts`),
:mod:`.runner` drives the cluster, :mod:`.result` turns the merged parts into a result.
"""

from __future__ import annotations

import contextlib
import logging
import os
import signal
import threading
import time
from collections.abc import Callable, Iterator, Sequence
from typing import Any

from ..errors import OgiveError
from ..read.options import ScanOptions, ScanProgress, ScanResult

EXTRA = "pip install 'ogive[cluster]'"
CONNECT_TIMEOUT_S = 10


def scan(
    sources_: Sequence[str],
    options: ScanOptions,
    *,
    cluster: str,
    part_bytes: int | None = None,
    progress: Callable[[ScanProgress], None] | None = None,
    cancel: Callable[[], bool] | None = None,
    split_every: int | None = None,
) -> ScanResult:
    """``ogive.read.scan`` of ``sources_`` on the Dask cluster at ``cluster``.

    ``cluster`` is a scheduler address (``tcp://10.0.0.5:8786``) or ``local[:N]`` (a
    cluster of N worker processes on this machine, started and stopped here). Every
    source must be readable by every worker under the same name: a URL, or a path on a
    shared file system (relative paths are made absolute here).
    """
    from ..read import metrics
    from ..read import scan as local_scan
    from . import head, plan
    from .parts import Part
    from .result import finish
    from .runner import SPLIT_EVERY, Runner

    started = time.monotonic()
    files = plan.list_sources(list(sources_))
    names = [f.display for f in files]
    if metrics.detect(names, options) is not None:
        raise OgiveError(
            "telemetry histograms (OTLP metrics, OpenMetrics) are read on this machine, not on a "
            "cluster: they are already aggregated and small beside logs; drop --cluster."
        )
    decisions = head.decide(names, options)
    if decisions is None:  # every source is empty: nothing to hand out
        return local_scan(names, options)
    specs = plan.cut(files, decisions, part_bytes or plan.PART_BYTES, named=options.encoding)
    with connect(cluster) as client:
        runner = Runner(
            client, specs, options, decisions,
            progress=progress, cancel=cancel, split_every=split_every or SPLIT_EVERY,
        )  # fmt: skip
        try:
            blob, outcome = runner.run()
        except RuntimeError as exc:
            raise OgiveError(f"the scan on the cluster failed: {exc}.") from None
    root = Part.load(blob) if blob is not None else None
    result = finish(root, runner.slots, names, options, decisions, elapsed=time.monotonic() - started,
                    outcome=outcome)  # fmt: skip
    if result.error is not None and (options.strict or not options.keep_partial):
        problems = [*(root.tally.errors if root else []), *outcome.failures]
        # --strict: the first bad row in source order, as a single-process scan stops at it
        raise OgiveError(problems[0] if options.strict or len(problems) == 1 else result.error)
    return result


def local_workers(address: str) -> int | None:
    """N for ``local`` / ``local:N`` (None: not a local cluster); ``local`` means one per core."""
    if address != "local" and not address.startswith("local:"):
        return None
    text = address.partition(":")[2] or str(os.cpu_count() or 1)
    if not text.isdigit() or int(text) < 1:
        raise OgiveError(f"--cluster {address}: write local:N, N a whole number of workers (local:4).")
    return int(text)


@contextlib.contextmanager
def connect(address: str) -> Iterator[Any]:
    """A client of the scheduler at ``address`` (or of a local cluster started for the scan),
    checked to run this very ogive version on its workers."""
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise OgiveError(f"--cluster needs dask's distributed scheduler, which comes with {EXTRA}.") from None
    n = local_workers(address)
    with contextlib.ExitStack() as stack:
        if n is not None:
            with _workers_ignore_ctrl_c():
                local = LocalCluster(
                    n_workers=n,
                    threads_per_worker=1,
                    processes=True,
                    dashboard_address=":0",
                    silence_logs=logging.ERROR,
                )
            cluster = stack.enter_context(local)
            client = stack.enter_context(Client(cluster))
        else:
            try:
                client = stack.enter_context(Client(address, timeout=f"{CONNECT_TIMEOUT_S}s"))
            except (OSError, TimeoutError, ValueError) as exc:
                raise OgiveError(f"cannot reach the Dask scheduler at {address}: {exc}.") from None
        check_workers(client, address)
        yield client


@contextlib.contextmanager
def _workers_ignore_ctrl_c() -> Iterator[None]:
    """Worker processes started now ignore SIGINT: a Ctrl-C at the terminal reaches the
    whole process group, and the client, not the workers, decides what it means (stop
    and keep what was read). A fresh interpreter keeps an ignored SIGINT ignored."""
    if threading.current_thread() is not threading.main_thread():
        yield  # a background scan (the workspace): no terminal signal to guard against
        return
    previous = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, previous)


def check_workers(client: Any, address: str) -> None:
    """Refuse a cluster whose workers cannot run this ogive (another version, or none)."""
    from .. import __version__
    from . import tasks

    try:
        theirs = client.submit(tasks.version, pure=False).result(timeout=60)
    except Exception as exc:  # a worker that cannot even load the task: ogive is not installed there
        raise OgiveError(
            f"the workers at {address} cannot run ogive's tasks ({type(exc).__name__}: {exc}); "
            f"install ogive {__version__} with the extra [cluster] on every worker."
        ) from None
    if theirs != __version__:
        raise OgiveError(f"the workers at {address} run ogive {theirs}, this is {__version__}; install one.")
