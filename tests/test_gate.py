"""The regression gate: limits, exit codes 0/1/2/3, JSON, joint confidence."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from ogive.cli import main
from ogive.fit.gate import gate, parse_limit, values_needed
from ogive.sketch import Sketch, SketchSet
from ogive.store import save_sketches


def _save(path: Path, x: np.ndarray, unit: str = "ms") -> str:
    s = Sketch(unit)
    s.add(x)
    save_sketches(path, SketchSet({path.stem: s}))
    return str(path)


@pytest.fixture(scope="module")
def files(tmp_path_factory: pytest.TempPathFactory) -> dict[str, str]:
    d = tmp_path_factory.mktemp("gate")
    rng = np.random.default_rng(31)
    return {
        "base": _save(d / "base.ogive", rng.lognormal(3.0, 0.5, 100_000)),
        "same": _save(d / "same.ogive", rng.lognormal(3.0, 0.5, 100_000)),
        "slow": _save(d / "slow.ogive", rng.lognormal(3.0, 0.5, 100_000) * 1.25),
        "tiny": _save(d / "tiny.ogive", rng.lognormal(3.0, 0.5, 500)),
        "bytes": _save(d / "bytes.ogive", rng.lognormal(3.0, 0.5, 1000), unit="bytes"),
    }


def test_parse_limits_and_units() -> None:
    assert parse_limit("p99=+5%", "ms").amount == pytest.approx(0.05)
    assert parse_limit("p99=+5%", "ms").relative
    assert parse_limit("p50=+2ms", "s").amount == pytest.approx(0.002)
    assert parse_limit("p99.9=0.3s", "ms").amount == pytest.approx(300.0)
    assert parse_limit("p99.9=0.3s", "ms").q == pytest.approx(0.999)
    assert parse_limit("median=+1", "bytes").amount == 1.0
    with pytest.raises(ValueError, match="maximum has no confidence interval"):
        parse_limit("max=+5%", "ms")
    with pytest.raises(ValueError, match="QUANTILE=CHANGE"):
        parse_limit("p99<5", "ms")
    with pytest.raises(ValueError, match="sketches' unit"):
        parse_limit("p50=+2ms", "bytes")


def test_values_needed_matches_binomial_edge() -> None:
    # Handbook formula: the upper bound of x_q exists once q**n <= (1 - c)/2.
    n = values_needed(0.9999, 0.95)
    assert 0.9999**n <= 0.025 < 0.9999 ** (n - 1)


def test_exit_0_when_nothing_changed(files: dict[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["gate", files["base"], files["same"], "--limit", "p99=+10%", "--limit", "p50=+5%"])
    out = capsys.readouterr().out
    assert code == 0, out
    assert "gate: pass" in out and "not a guarantee" in out


def test_exit_1_when_credibly_exceeded(files: dict[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["gate", files["base"], files["slow"], "--limit", "p99=+5%", "--limit", "p50=+100ms"])
    out = capsys.readouterr().out
    assert code == 1
    assert "EXCEEDED  p99=+5%" in out and "HOLDS" in out


def test_exit_2_when_too_few_values(files: dict[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["gate", files["tiny"], files["tiny"], "--limit", "p99.99=+5%"])
    out = capsys.readouterr().out
    assert code == 2
    assert "too few values" in out


def test_prove_turns_a_straddle_into_undecided(
    files: dict[str, str], capsys: pytest.CaptureFixture[str]
) -> None:
    # Same distribution, limit 0 %: the interval reaches both sides, so only --prove withholds the pass.
    args = ["gate", files["base"], files["same"], "--limit", "p90=+0%"]
    assert main(args) == 0
    assert main([*args, "--prove"]) == 2
    capsys.readouterr()


def test_usage_errors_exit_3(files: dict[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["gate", files["base"], files["same"]]) == 3
    assert main(["gate", files["base"], files["same"], "--limit", "max=+1%"]) == 3
    assert main(["gate", files["base"], files["bytes"], "--limit", "p50=+1%"]) == 3
    assert main(["gate", files["base"], "/nonexistent/x.ogive", "--limit", "p50=+1%"]) == 3
    err = capsys.readouterr().err
    assert "Traceback" not in err


def test_json_parses_and_carries_exit_code(files: dict[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["gate", files["base"], files["slow"], "--limit", "p99=+5%", "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert code == doc["exit_code"] == 1
    assert doc["checks"][0]["status"] == "exceeded"
    assert "not a guarantee" in doc["meaning"]


def test_false_fail_rate_is_below_alpha() -> None:
    # No change, limit exactly 0: a fail is a false alarm. With joint 95 % confidence the
    # rate must stay below 5 % (it is far below: the Bonferroni split is conservative).
    rng = np.random.default_rng(32)
    limits = [parse_limit("p50=0", "ms"), parse_limit("p90=0", "ms"), parse_limit("p99=0", "ms")]
    fails = 0
    reps = 200
    for _ in range(reps):
        a, b = Sketch("ms"), Sketch("ms")
        a.add(rng.exponential(10.0, 3000))
        b.add(rng.exponential(10.0, 3000))
        fails += gate(a, b, limits).exit_code == 1
    assert fails / reps < 0.05
