"""`fit --plot` and `compare --plot` print the same plot `ogive plot` draws, after the table."""

from __future__ import annotations

from pathlib import Path

import pytest

from ogive.cli import main

DEMO = Path(__file__).resolve().parents[1] / "demo_logs"
PATTERN = ["--pattern", r"dur=(\S+)", "--quiet"]


def test_compare_plot_draws_the_shift_function(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("COLUMNS", "72")
    monkeypatch.setenv("LINES", "21")
    a, b = str(DEMO / "checkout-before.log"), str(DEMO / "checkout-after.log.gz")
    assert main(["compare", a, b, *PATTERN, "--plot", "--ascii"]) == 0
    out = capsys.readouterr().out.splitlines()
    plot = out[-20:]
    assert "checkout-after - checkout-before" in plot[0] and "p99" in plot[-1]  # names, not A/B
    assert all(len(line) <= 72 for line in plot)


def test_fit_plot_draws_sketch_against_the_best_model(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("COLUMNS", "72")
    monkeypatch.setenv("LINES", "21")
    src = str(DEMO / "checkout-before.log")
    assert (
        main(["fit", src, *PATTERN, "--families", "lognormal,gamma", "--plot", "qq", "--top", "1", "--ascii"])
        == 0
    )
    out = capsys.readouterr().out
    head = out.splitlines()[-20]
    assert "lognormal" in head or "gamma" in head
    assert "p99" in out.split("\n\n")[-1]
