"""``ogive gate`` on one source split by time, and group by group (``--by``).

The counts are checked against Python's ``csv`` module reading the same file; the
per-group verdicts against calling ``fit.gate.gate`` on each group with the
Bonferroni level the module text states (confidence split over the groups).
"""

from __future__ import annotations

import csv
import datetime as dt
import json
from pathlib import Path

import numpy as np
import pytest

from ogive.cli import main
from ogive.fit.gate import gate, parse_limit
from ogive.store import load_sketches

SPLIT = "2026-05-01T12:00:00Z"


@pytest.fixture(scope="module")
def log(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """Invented: two routes; after the split 'slow' is 60 % slower, 'steady' unchanged."""
    rng = np.random.default_rng(5)
    start = dt.datetime(2026, 5, 1, 10, tzinfo=dt.UTC)
    path = tmp_path_factory.mktemp("gate") / "svc.csv"
    with path.open("w", newline="") as fh:
        out = csv.writer(fh)
        out.writerow(["ts", "route", "ms"])
        for i in range(16_000):
            when = start + dt.timedelta(seconds=i)  # 10:00 to 14:26, the split at 12:00
            route = "slow" if i % 2 else "steady"
            value = rng.lognormal(3.0, 0.4) * (1.6 if route == "slow" and when.hour >= 12 else 1.0)
            out.writerow([when.strftime("%Y-%m-%dT%H:%M:%SZ"), route, f"{value:.3f}"])
        out.writerow(["2026-05-01T12:30:00Z", "lonely", "5.0"])  # a group after the split only
    return path


def _read(path: Path) -> list[dict[str, str]]:
    with path.open(newline="") as fh:
        return list(csv.DictReader(fh))


SPLIT_ARGS = ["--column", "ms", "--unit", "ms", "--time-field", "ts", "--split-at", SPLIT, "--quiet"]


def test_one_source_split_by_time(log: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["gate", str(log), *SPLIT_ARGS, "--limit", "p50=+10%", "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert code == 1 and doc["outcome"] == "fail"  # the slow route drags the whole after-p50 up
    rows = _read(log)
    before = sum(1 for r in rows if r["ts"] < SPLIT)
    assert doc["checks"][0]["a"]["n"] == before
    assert doc["checks"][0]["b"]["n"] == len(rows) - before
    assert doc["labels"] == ["before", "after"]


def test_by_group_worst_group_decides(log: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["gate", str(log), *SPLIT_ARGS, "--by", "route", "--limit", "p50=+10%", "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert code == 1 and doc["outcome"] == "fail"
    groups = doc["groups"]
    assert groups["route=slow"]["outcome"] == "fail"
    assert groups["route=steady"]["outcome"] == "pass"
    assert doc["only_b"] == ["route=lonely"]
    # Bonferroni over the two gated groups, as the module text says.
    assert doc["per_group_confidence"] == pytest.approx(1 - 0.05 / 2)
    rows = _read(log)
    for g in ("slow", "steady"):
        n_before = sum(1 for r in rows if r["route"] == g and r["ts"] < SPLIT)
        assert groups[f"route={g}"]["checks"][0]["a"]["n"] == n_before
    # The same verdicts as gating each group's sketches directly at that level.
    saved = tmp_path / "split.ogive"
    assert main(["scan", str(log), *SPLIT_ARGS, "--by", "route", "-o", str(saved)]) == 0
    capsys.readouterr()
    sset = load_sketches(saved)
    for g in ("slow", "steady"):
        a, b = sset[f"before/route={g}"], sset[f"after/route={g}"]
        direct = gate(a, b, [parse_limit("p50=+10%", "ms")], confidence=1 - 0.05 / 2)
        assert direct.outcome == groups[f"route={g}"]["outcome"]


def test_by_group_text_names_the_sides_and_the_failing_group(
    log: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    assert main(["gate", str(log), *SPLIT_ARGS, "--by", "route", "--limit", "p50=+10%"]) == 1
    out = capsys.readouterr().out
    assert "A = before:" in out and "B = after:" in out
    assert "route=slow: EXCEEDED p50=+10%" in out
    assert "not gated, only in after (1): route=lonely" in out
    assert "gate: fail (exit 1), the worst of the groups" in out


def test_gate_needs_two_sides(log: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["gate", str(log), "--column", "ms", "--limit", "p50=+10%", "--quiet"]) == 3
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "gate needs two sides" in err[0]


def test_a_failing_group_outranks_an_undecided_one() -> None:
    """Exit 1 (a limit credibly exceeded somewhere) wins over 2 (a group the data cannot decide)."""
    from ogive.fit.group_gate import gate_groups
    from ogive.sketch import Sketch, SketchSet

    rng = np.random.default_rng(9)

    def sk(values: np.ndarray) -> Sketch:
        s = Sketch("ms")
        s.add(values)
        return s

    a = SketchSet({"few": sk(rng.lognormal(3, 0.4, 40)), "slow": sk(rng.lognormal(3, 0.4, 20_000))})
    b = SketchSet({"few": sk(rng.lognormal(3, 0.4, 40)), "slow": sk(rng.lognormal(3, 0.4, 20_000) * 1.5)})
    result = gate_groups(a, b, [parse_limit("p99=+5%", "ms")])
    states = {g: r.outcome for g, r in result.groups}
    # p99 of 40 values cannot be bounded at this confidence (40 < values_needed); 1.5x is far beyond +5 %.
    assert states == {"few": "undecided", "slow": "fail"}
    assert (result.exit_code, result.outcome) == (1, "fail")
