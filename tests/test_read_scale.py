"""Scale limits that keep memory bounded: ``--by`` over far more keys than the cap.

Outside reference: the per-group and overflow counts are checked against a plain
Python ``collections.Counter`` of the generated keys.
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import numpy as np

from ogive.read import ScanOptions, scan


def test_by_with_200k_distinct_keys_stays_capped(tmp_path: Path) -> None:
    rows = 200_000
    rng = np.random.default_rng(9)
    keys = [f"tenant-{i:06d}" for i in rng.permutation(rows)]  # every key distinct
    path = tmp_path / "keys.csv"
    path.write_text("key,latency_ms\n" + "".join(f"{k},{i % 500}\n" for i, k in enumerate(keys)))
    r = scan([str(path)], ScanOptions(column="latency_ms", by="key", chunk_bytes=1 << 18))
    names = r.sketches.names()
    assert len(names) == 1000 + 1  # the cap, plus the shared overflow group
    counts = {n: r.sketches[n].count for n in names}
    assert sum(counts.values()) == rows  # nothing dropped
    # The first 1000 keys met, in file order, keep their own sketch.
    first = Counter(keys[:1000])
    assert all(counts[f"key={k}"] == first[k] for k in first)
    assert counts["key=(other)"] == rows - 1000
    (note,) = [w for w in r.warnings if "more than 1000 distinct" in w]
    assert "100000+" in note  # the remembered overflow keys are capped too
