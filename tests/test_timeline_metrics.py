"""``ogive timeline`` on telemetry histograms: windows of bucket counts, not raw values.

The truth is the raw sample behind each DELTA point (written by ``metrics_files`` from
the OTLP JSON encoding, independently of ogive's reader): each window's buckets must
equal ``numpy.searchsorted`` hand counts of the values that fell in it, and a change
planted at a known window must be found there, as for logs.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import metrics_files as mf
from ogive.read import ScanOptions, scan
from ogive.sketch import Binned, timekeys

MINUTE_NS = 60 * 10**9


def _day(
    tmp: Path, *, change_at: int = 40, windows: int = 72, groups: bool = False
) -> tuple[Path, list[np.ndarray]]:
    """One DELTA point a minute (two routes with ``groups``); the tail heavier from ``change_at``."""
    rng = np.random.default_rng(7)
    raw: list[np.ndarray] = []
    lines = []
    for k in range(windows):
        start, end = mf.T0 + k * MINUTE_NS, mf.T0 + (k + 1) * MINUTE_NS
        sigma = 1.4 if k >= change_at else 0.8
        values = rng.lognormal(2.0, sigma, 1500)
        raw.append(values)
        if groups:
            half = values.size // 2
            pts = [
                mf.hist_point(mf.explicit(values[:half]), start, end, {"route": "/a"}),
                mf.hist_point(mf.explicit(values[half:]), start, end, {"route": "/b"}),
            ]
        else:
            pts = [mf.hist_point(mf.explicit(values), start, end)]
        lines.append(mf.line(pts, temporality=1))  # 1: AGGREGATION_TEMPORALITY_DELTA (metrics.proto)
    path = tmp / "day.otlp.jsonl"
    path.write_text("\n".join(lines) + "\n")
    return path, raw


def test_windows_hold_the_hand_counted_buckets(tmp_path: Path) -> None:
    path, raw = _day(tmp_path, windows=6)
    sset = scan([str(path)], ScanOptions(window="1m", timeline=True)).sketches
    whole = sset[timekeys.WHOLE]
    assert isinstance(whole, Binned) and whole.count == sum(v.size for v in raw)
    for k, values in enumerate(raw):
        # A point's interval is (start, end]: it belongs to the window holding its end.
        key = timekeys.window_key((mf.T0 + (k + 1) * MINUTE_NS - 1) // MINUTE_NS * 60e6, 60e6)
        b = sset[key]
        assert isinstance(b, Binned)
        np.testing.assert_array_equal(b.parts[0].counts, mf.explicit(values))


def test_a_planted_change_is_found_at_its_window(tmp_path: Path) -> None:
    path, _ = _day(tmp_path)
    out = subprocess.run(
        [sys.executable, "-m", "ogive", "timeline", str(path), "--window", "1m", "--json"],
        capture_output=True,
        text=True,
        check=False,
    )
    assert out.returncode == 0, out.stderr
    doc = json.loads(out.stdout)
    changes = doc["streams"][0]["changes"]
    assert changes, "the planted change was not found"
    # The first point of the heavier tail ends at minute 41 and lies in the window that
    # starts at 00:40: the change is there, before and after split by whole windows.
    first = changes[0]
    assert first["split_at"] == "2026-03-04T00:40:00Z", first
    assert first["before_windows"] == [0, 40] and "p99" in first["moved"]


def test_groups_and_several_metrics(tmp_path: Path) -> None:
    path, raw = _day(tmp_path, windows=4, groups=True)
    sset = scan([str(path)], ScanOptions(window="1m", timeline=True, by="route")).sketches
    assert {"route=/a", "route=/b", timekeys.WHOLE} <= set(sset.names())
    key = timekeys.window_key(mf.T0 // 1000, 60e6)
    a, b = sset[f"route=/a@{key}"], sset[f"route=/b@{key}"]
    assert a.count + b.count == raw[0].size == sset[key].count
    # Two metrics in one file: a timeline follows one, and says how to choose it.
    other = mf.line(
        [mf.hist_point(mf.explicit(raw[0]), mf.T0, mf.T0 + MINUTE_NS)], name="other", temporality=1
    )
    path.write_text(path.read_text() + other + "\n")
    with pytest.raises(Exception, match="--metric"):
        scan([str(path)], ScanOptions(window="1m", timeline=True))
