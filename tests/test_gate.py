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


def test_a_straddle_is_unclear_and_prove_withholds_the_pass(
    files: dict[str, str], capsys: pytest.CaptureFixture[str]
) -> None:
    # Same distribution, limit 0 %: the intervals reach both sides. That is its own
    # status (never "holds", which means shown within), passed only without --prove.
    args = ["gate", files["base"], files["same"], "--limit", "p90=+0%"]
    assert main(args) == 0
    assert main([*args, "--prove"]) == 2
    out = capsys.readouterr().out
    assert "UNCLEAR" in out and "HOLDS" not in out


def test_holds_only_when_shown_and_every_line_shows_both_sides() -> None:
    rng = np.random.default_rng(33)
    a, b = Sketch("ms"), Sketch("ms")
    a.add(rng.lognormal(3.0, 0.5, 50_000))
    b.add(rng.lognormal(3.0, 0.5, 50_000))
    result = gate(a, b, [parse_limit("p50=+10%", "ms"), parse_limit("p90=+0%", "ms")])
    shown, unclear = result.checks
    assert shown.status == "holds" and shown.b.high <= shown.allowed_low
    assert unclear.status == "unclear" and unclear.b.high > unclear.allowed_low
    for c in result.checks:
        assert "B " in c.reason and "against A " in c.reason
        assert c.allowed_low <= c.allowed <= c.allowed_high


@pytest.mark.parametrize("q", ["p1", "p10", "p50", "p90", "p99", "p99.9"])
@pytest.mark.parametrize("limit", ["+0%", "+10%", "+250%", "+0", "+1"])
def test_a_sketch_against_itself_never_fails(q: str, limit: str) -> None:
    # Issue: a relative limit on a negative p10 multiplied A by 1.1, lowering the allowance,
    # and a file failed against itself. Data on both sides of zero, and all below it.
    rng = np.random.default_rng(34)
    for x in (rng.normal(0.0, 10.0, 20_000), -rng.lognormal(2.0, 0.5, 20_000)):
        s = Sketch("ms")
        s.add(x)
        result = gate(s, s, [parse_limit(f"{q}={limit}", "ms")])
        assert result.exit_code != 1, (q, limit, result.checks[0].reason)


def test_relative_limit_on_a_negative_quantile_is_taken_of_its_magnitude() -> None:
    rng = np.random.default_rng(35)
    a, b = Sketch("ms"), Sketch("ms")
    a.add(rng.normal(0.0, 10.0, 50_000))  # p10 about -12.8
    b.add(rng.normal(0.0, 10.0, 50_000) - 5.0)  # B better (lower) by 5 ms
    (check,) = gate(a, b, [parse_limit("p10=+10%", "ms")]).checks
    assert check.status == "holds"
    assert check.allowed == pytest.approx(check.a.estimate + 0.1 * abs(check.a.estimate))
    assert "|A|" in check.note and "absolute limit" in check.note


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
