"""Time windows in the reader: one sketch per window, aligned to the epoch."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from ogive.errors import OgiveError
from ogive.read import ScanOptions, scan

T0 = 1_772_582_400  # 2026-03-04T00:00:00Z


def _write(path: Path, seconds: np.ndarray, values: np.ndarray) -> None:
    lines = ["ts,latency_ms"] + [f"{int(t)},{v:.3f}" for t, v in zip(seconds, values, strict=True)]
    lines.insert(40, "not-a-time,5.0")
    path.write_text("\n".join(lines) + "\n")


def test_each_window_matches_numpy_on_its_rows(tmp_path: Path) -> None:
    rng = np.random.default_rng(7)
    secs = np.sort(rng.uniform(T0, T0 + 3 * 600, 3000))
    vals = np.round(rng.lognormal(2, 0.5, secs.size), 3)  # as written to the file
    f = tmp_path / "w.csv"
    _write(f, secs, vals)
    res = scan([str(f)], ScanOptions(column="latency_ms", time_field="ts", window="10m"))
    names = res.sketches.names()
    assert names == ["2026-03-04T00:00:00Z", "2026-03-04T00:10:00Z", "2026-03-04T00:20:00Z"]
    for i, name in enumerate(names):
        sel = vals[(secs >= T0 + i * 600) & (secs < T0 + (i + 1) * 600)]
        s = res.sketches[name]
        assert s.count == sel.size
        # Reference: numpy.quantile on the window's raw values (windows this small are exact).
        np.testing.assert_allclose(s.quantile([0.5, 0.99]), np.quantile(sel, [0.5, 0.99]), rtol=0, atol=1e-9)
    # The unreadable timestamp belongs to no window: counted, not dropped silently.
    assert res.skipped["bad_timestamp"].count == 1


def test_window_needs_a_time_field_and_stands_alone(tmp_path: Path) -> None:
    f = tmp_path / "w.csv"
    _write(f, np.array([T0, T0 + 1.0] * 30), np.ones(60))
    with pytest.raises(OgiveError, match="--window needs each record's time"):
        scan([str(f)], ScanOptions(column="latency_ms", window="10m"))
    with pytest.raises(OgiveError, match="cannot be combined"):
        scan([str(f)], ScanOptions(column="latency_ms", time_field="ts", window="10m", by="ts"))
    with pytest.raises(OgiveError, match="window width"):
        scan([str(f)], ScanOptions(column="latency_ms", time_field="ts", window="ten minutes"))


def test_compare_window_on_a_source(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    import json

    from ogive.cli import main

    rng = np.random.default_rng(3)
    secs = np.sort(rng.uniform(T0, T0 + 3 * 600, 3000))
    vals = np.round(rng.lognormal(2, 0.5, secs.size) * np.where(secs >= T0 + 1200, 3.0, 1.0), 3)
    f = tmp_path / "w.csv"
    _write(f, secs, vals)
    args = ["compare", str(f), "--column", "latency_ms", "--time-field", "ts", "--window", "10m"]
    assert main([*args, "--json", "--quiet"]) == 0
    text = json.dumps(json.loads(capsys.readouterr().out))
    # The third window is three times slower: it must be flagged, the second not.
    assert "2026-03-04T00:20:00Z" in text and "2026-03-04T00:10:00Z" in text
    assert main([*args, "--quiet"]) == 0
    lines = capsys.readouterr().out.splitlines()
    flagged = [line for line in lines if "<- differs" in line]
    assert len(flagged) == 1 and flagged[0].startswith("  2026-03-04T00:20:00Z")
