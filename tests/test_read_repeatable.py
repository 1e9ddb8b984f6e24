"""The same file scanned again gives the same sketch file, byte for byte (issue 21).

A scan's parser threads finish in whatever order the machine allows, progress reports
(the workspace's live picture) read the sketches whenever the clock says, and a memory
grant changes the chunk size. None of that may reach the numbers: the digest merges at
fixed counts of values, queries do not merge, and the builder's memory checks fall at
fixed counts too. Each test scans one generated file several ways and compares the
bytes of ``ogive.sketch.dumps`` (the saved file holds no wall-clock time).

Also checked against numpy (outside reference): the repeated sketch's p50/p99 lie
within the sketch's own rank-error bound of ``numpy.quantile`` on the raw values.
"""

from __future__ import annotations

import dataclasses
import random
import sys
import time
from pathlib import Path

import numpy as np
import polars as pl
import pytest

from ogive.read import ScanOptions, ScanProgress, scan
from ogive.sketch import Sketch, dumps
from ogive.sketch.digest import TDigest

SCAN_MODULE = sys.modules["ogive.read.scan"]
ROWS = 1_300_000
"""More than one digest buffer (2^20 values), so the digest merges during the scan."""
READ_PER_REPORT = 8


@pytest.fixture(scope="module")
def table(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, np.ndarray]:
    rng = np.random.default_rng(2026)
    latency = np.round(rng.lognormal(3.0, 0.8, ROWS), 3)
    secs = 1_780_000_000 + np.arange(ROWS) // 50
    df = pl.DataFrame(
        {
            "ts": pl.from_epoch(pl.Series(secs), time_unit="s").dt.strftime("%Y-%m-%dT%H:%M:%SZ"),
            "host": np.char.add("h", rng.integers(0, 5, ROWS).astype(str)),
            "client": np.char.add("c", rng.integers(0, 300, ROWS).astype(str)),
            "latency_ms": latency,
        }
    )
    path = tmp_path_factory.mktemp("repeat") / "requests.csv"
    df.write_csv(path)
    return path, latency


def _jittery(seed: int):  # type: ignore[no-untyped-def]
    """A progress callback that reads the sketches as a screen would, at random moments."""
    rng = random.Random(seed)

    def progress(p: ScanProgress) -> None:
        time.sleep(rng.random() * 0.004)
        # A few sketches a report, chosen at random: reading all 200 groups' after every
        # chunk took 35 s and tests nothing more (each read is of one sketch alone).
        names = sorted(p.sketches.sketches)
        for name in rng.sample(names, min(len(names), READ_PER_REPORT)):
            s = p.sketches.sketches[name]
            if isinstance(s, Sketch) and s.count:
                s.quantile(0.99)
                Sketch(s.unit).merge(s)  # the workspace's snapshot

    return progress


def _scan_bytes(path: Path, options: ScanOptions, *, workers: int, seed: int | None) -> bytes:
    saved = SCAN_MODULE.PARSE_WORKERS
    SCAN_MODULE.PARSE_WORKERS = workers
    try:
        if seed is None:
            result = scan([str(path)], options)
        else:  # a cancel callback makes progress report after every chunk
            result = scan([str(path)], options, progress=_jittery(seed), cancel=lambda: False)
    finally:
        SCAN_MODULE.PARSE_WORKERS = saved
    return dumps(result.sketches)


def test_plain_scan_repeats_byte_for_byte(table: tuple[Path, np.ndarray]) -> None:
    path, raw = table
    first = _scan_bytes(path, ScanOptions(column="latency_ms"), workers=2, seed=None)
    ways = [
        (1, 1, ScanOptions(column="latency_ms")),
        (3, 2, ScanOptions(column="latency_ms")),
        (2, 3, ScanOptions(column="latency_ms", chunk_bytes=1 << 20)),
        (2, None, ScanOptions(column="latency_ms", memory_budget_mb=200)),  # smaller chunks
    ]
    for workers, seed, options in ways:
        again = _scan_bytes(path, options, workers=workers, seed=seed)
        assert again == first, f"workers={workers} progress seed={seed} {options}"
    # The repeated answer is also right: numpy on the raw values, within the sketch's bound.
    from ogive.sketch import loads

    s = loads(first)["all"]
    assert isinstance(s, Sketch)
    qs = np.array([0.5, 0.99])
    ranks = np.searchsorted(np.sort(raw), s.quantile(qs), side="right") / raw.size
    assert np.all(np.abs(ranks - qs) <= s.rank_error_bound() + 1e-6)


@pytest.mark.parametrize(
    "extra",
    [
        {"by": "host"},
        {"by": "client", "max_groups": 200},  # many sketches, and the (other) group
        {"time_field": "ts", "split_at": "2026-05-28T22:00:00Z"},
    ],
)
def test_grouped_and_split_scans_repeat_byte_for_byte(
    table: tuple[Path, np.ndarray], extra: dict[str, object]
) -> None:
    path, _ = table
    options = ScanOptions(column="latency_ms", **extra)  # type: ignore[arg-type]
    first = _scan_bytes(path, options, workers=2, seed=None)
    for workers, seed in ((1, 4), (3, 5)):
        assert _scan_bytes(path, options, workers=workers, seed=seed) == first, (workers, seed)


@pytest.mark.parametrize(
    "extra",
    [
        {"by": "host"},
        {"time_field": "ts", "window": "1h", "timeline": True},
    ],
)
def test_digest_budget_falls_at_the_same_rows_whatever_the_chunks(
    table: tuple[Path, np.ndarray], extra: dict[str, object], monkeypatch: pytest.MonkeyPatch
) -> None:
    """The builder's memory check compresses the fullest digests early, which shapes them:
    it must fall at the same rows whatever the chunk size (a memory grant, a CSV read
    with a group gets larger chunks) or else grouped sketches differ in their last
    digits. A small budget makes the check compress often in a file this size."""
    build = sys.modules["ogive.read.build"]
    monkeypatch.setattr(build, "DIGEST_BUDGET", 80_000)
    monkeypatch.setattr(build, "CHECK_VALUES", 37_000)
    compressed = 0
    flush = TDigest.flush

    def counting(self: TDigest) -> None:
        nonlocal compressed
        compressed += bool(self.buffered)
        flush(self)

    monkeypatch.setattr(TDigest, "flush", counting)
    options = ScanOptions(column="latency_ms", **extra)  # type: ignore[arg-type]
    first = _scan_bytes(path := table[0], options, workers=2, seed=None)
    assert compressed > 20  # the check did compress digests during the scan
    for chunk in (1 << 20, 3_000_001):
        again = _scan_bytes(path, dataclasses.replace(options, chunk_bytes=chunk), workers=2, seed=None)
        assert again == first, chunk
    budgeted = dataclasses.replace(options, memory_budget_mb=1000)
    assert _scan_bytes(path, budgeted, workers=3, seed=7) == first


def test_memory_budget_is_checked_and_sizes_chunks() -> None:
    """A grant below what a scan needs is refused in one sentence; a large one reads text
    lines in larger chunks (8 MB, measured fastest, against 4 MB by default), a tight one
    in smaller chunks, and no grant buys chunks past the fastest size."""
    from ogive.errors import OgiveError

    with pytest.raises(OgiveError, match="--memory-budget must be at least 200 MB"):
        ScanOptions(memory_budget_mb=150)
    lean = ScanOptions()
    kinds = (("csv", 1), ("csv", 2), ("csv", 3), ("text", 2), ("ndjson", 2), ("otlp", 2))
    for fmt, columns in kinds:
        small = ScanOptions(memory_budget_mb=200).chunk_size(fmt, columns=columns)
        big = ScanOptions(memory_budget_mb=1000).chunk_size(fmt, columns=columns)
        default = lean.chunk_size(fmt, columns=columns)
        assert 1 << 20 <= small <= default
        assert big >= default
        assert big <= 8 << 20  # no grant buys chunks past the size measured fastest
    assert ScanOptions(memory_budget_mb=1000).chunk_size("text") == 8 << 20 > ScanOptions().chunk_size("text")
    # More chunks in flight only with a grant that holds them (measured 284-303 MB at 8 MB).
    assert ScanOptions().parse_ahead("text") < ScanOptions(memory_budget_mb=400).parse_ahead("text")
    assert ScanOptions(memory_budget_mb=300).parse_ahead("text") == ScanOptions().parse_ahead("text")
