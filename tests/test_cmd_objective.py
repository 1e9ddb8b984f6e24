"""``--objective`` on scan, show, compare and timeline, and share limits in ``gate``, from the CLI.

The counts over the threshold are checked against Python's ``csv`` module reading the
same file and ``scipy.stats.binomtest(k, n).proportion_ci(method="exact")`` on them.
"""

from __future__ import annotations

import csv
import datetime as dt
import json
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from ogive.cli import main

SPLIT = "2026-05-01T12:00:00Z"
READ = ["--column", "ms", "--unit", "ms", "--time-field", "ts", "--quiet"]


@pytest.fixture(scope="module")
def log(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """Invented: after 12:00 a share of the requests takes 300-600 ms."""
    rng = np.random.default_rng(11)
    start = dt.datetime(2026, 5, 1, 10, tzinfo=dt.UTC)
    path = tmp_path_factory.mktemp("slo") / "svc.csv"
    with path.open("w", newline="") as fh:
        out = csv.writer(fh)
        out.writerow(["ts", "ms"])
        for i in range(14_400):
            when = start + dt.timedelta(seconds=i)  # 10:00 to 14:00
            slow = when.hour >= 12 and rng.random() < 0.03
            value = rng.uniform(300, 600) if slow else rng.lognormal(3.0, 0.5)
            out.writerow([when.strftime("%Y-%m-%dT%H:%M:%SZ"), f"{value:.3f}"])
    return path


def _values(path: Path, after: bool | None = None) -> np.ndarray:
    with path.open(newline="") as fh:
        rows = list(csv.DictReader(fh))
    keep = [r for r in rows if after is None or (r["ts"] >= SPLIT) == after]
    return np.array([float(r["ms"]) for r in keep])


def test_scan_and_show_objective(log: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "day.ogive"
    assert (
        main(["scan", str(log), *READ, "--split-at", SPLIT, "-o", str(out), "--objective", "250ms@99%"]) == 0
    )
    text = capsys.readouterr().out
    assert "objectives: share of values over the threshold" in text and "missed" in text
    assert main(["show", f"{out}", "--objective", "0.25s@99%", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    checks = {c["name"]: c for c in doc["objectives"]["checks"]}
    for name, after in (("before", False), ("after", True)):
        x = _values(log, after)
        k = int((x > 250).sum())
        share = checks[name]["share"]
        assert share["n"] == x.size and share["over_low"] <= k <= share["over_high"]
        ref = stats.binomtest(k, x.size).proportion_ci(method="exact")
        assert share["low"] <= ref.low + 1e-12 and share["high"] >= ref.high - 1e-12
    assert checks["before"]["status"] == "met" and checks["after"]["status"] == "missed"
    assert main(["show", f"{out}:after", "--objective", "250ms@99%"]) == 0
    line = capsys.readouterr().out
    assert "after   250ms@99%" in line


def test_objective_bad_input_is_one_line(log: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["scan", str(log), *READ, "--objective", "250ms"]) == 3
    assert "THRESHOLD@SHARE%" in capsys.readouterr().err
    assert main(["scan", str(log), *READ, "--objective", "250bytes@99%"]) == 3
    err = capsys.readouterr().err
    assert "'bytes'" in err and "Traceback" not in err


def test_compare_objective(log: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["compare", str(log), *READ, "--split-at", SPLIT, "--objective", "250ms@99%", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert [c["name"] for c in doc["objectives"]["checks"]] == ["before", "after"]
    assert "ladder" in json.dumps(doc)


def test_gate_share_limits(log: Path, capsys: pytest.CaptureFixture[str]) -> None:
    args = ["gate", str(log), *READ, "--split-at", SPLIT]
    assert main([*args, "--limit", "over(250ms)<=1%"]) == 1
    assert "EXCEEDED  over(250ms)<=1%" in capsys.readouterr().out
    assert main([*args, "--limit", "over(250ms)<=10%", "--limit", "p50=+10%"]) == 0
    assert main([*args, "--limit", "over(250ms)<=1"]) == 3
    assert "percentage" in capsys.readouterr().err


def test_gate_share_json(log: Path, capsys: pytest.CaptureFixture[str]) -> None:
    capsys.readouterr()
    assert main(["gate", str(log), *READ, "--split-at", SPLIT, "--limit", "over(250ms)=+20%", "--json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    check = doc["checks"][0]
    assert check["status"] == "exceeded" and check["limit"]["relative"] is True
    assert doc["per_interval_confidence"] == pytest.approx(0.975)


def test_timeline_objective(log: Path, capsys: pytest.CaptureFixture[str]) -> None:
    args = ["timeline", str(log), *READ, "--window", "30m", "--objective", "250ms@99%", "--burn-mark", "2"]
    assert main([*args, "--ascii", "--width", "90"]) == 0
    text = capsys.readouterr().out
    assert "Objective 250ms@99% of all" in text and "burn rate" in text
    assert "first window credibly burning faster than 2x: 12:00" in text
    assert main([*args, "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    series = doc["objectives"][0]
    assert len(series["windows"]) == 8
    x = _values(log)
    k = int((x > 250).sum())
    whole = series["whole"]["share"]
    assert whole["over_low"] <= k <= whole["over_high"]
    lo, hi = series["budget_spent"]
    assert lo <= k / (0.01 * x.size) <= hi
