"""Issue 19 in the workspace: ``m`` shows the subject's best models side by side, then on
one axis, then the usual picture again; the highlighted model's panel is marked.

The line-up on screen is ``ogive fit --plot --top 3``'s (and ``--one-axis``'s) text at
the same size: both call ``fit.lineup.lineup_inputs`` and ``render.lineup``.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest
from textual.pilot import Pilot

from ogive.cli import main
from ogive.ui import OgiveApp
from ogive.ui.plot_panel import PlotPanel
from ui_pilot import save_each

os.environ.setdefault("NO_COLOR", "1")
FAMILIES = ("lognormal", "gamma", "weibull", "exponential", "loglogistic")


@pytest.fixture()
def saved(tmp_path: Path) -> tuple[Path, Path]:
    rng = np.random.default_rng(19)
    named = {"before": rng.gamma(2.0, 6.0, 20_000) * 1.0, "after": rng.gamma(2.0, 6.0, 20_000) * 1.3}
    before, after = save_each(tmp_path, named)
    return before, after


async def _settle(app: OgiveApp, pilot: Pilot[int]) -> None:
    for _ in range(600):
        await pilot.pause(0.05)
        if app.ws.fit is not None and app.ws.comparison is not None:
            await pilot.pause(0.2)
            return
    raise AssertionError("the workspace did not settle")


def _panel(app: OgiveApp) -> tuple[list[str], int, int]:
    panel = app.query_one(PlotPanel)
    return list(panel.lines), panel.content_size.width, panel.content_size.height


def _cli(capsys: pytest.CaptureFixture[str], *args: str) -> list[str]:
    capsys.readouterr()
    assert main(list(args)) == 0
    return capsys.readouterr().out.rstrip("\n").split("\n")


async def test_m_steps_through_the_line_up_and_back(
    saved: tuple[Path, Path], capsys: pytest.CaptureFixture[str]
) -> None:
    before, after = saved
    app = OgiveApp([str(before), str(after)], families=FAMILIES)
    async with app.run_test(size=(100, 36)) as pilot:
        await _settle(app, pilot)
        ordinary = _panel(app)
        await pilot.press("m")
        await pilot.pause(0.2)
        assert app.ws.lineup == "panels"
        assert "models side by side" in str(app.query_one(PlotPanel).border_title)
        app.ws.model_row = None  # nothing highlighted: nothing marked, as on the command line
        app.query_one(PlotPanel).redraw()
        panels = _panel(app)
        await pilot.press("m")
        await pilot.pause(0.2)
        assert app.ws.lineup == "one-axis"
        one_axis = _panel(app)
        await pilot.press("m")
        await pilot.pause(0.2)
        assert app.ws.lineup == ""
        assert _panel(app) == ordinary
    lines, width, height = panels
    size = ("--width", str(width), "--height", str(height))
    fit = ("fit", str(after), "--families", ",".join(FAMILIES), "--plot", "--top", "3", *size)
    assert lines == _cli(capsys, *fit)[-height:]
    assert sum(f"{k}. " in "\n".join(lines[:4]) for k in (1, 2, 3)) == 3
    lines, width, height = one_axis
    size = ("--width", str(width), "--height", str(height))
    fit = ("fit", str(after), "--families", ",".join(FAMILIES), "--one-axis", "--top", "3", *size)
    assert lines == _cli(capsys, *fit)[-height:]
    assert "• 1. " in "\n".join(lines[:3])


async def test_the_highlighted_model_is_marked_and_joins_the_line_up(saved: tuple[Path, Path]) -> None:
    before, after = saved
    app = OgiveApp([str(before), str(after)], families=FAMILIES)
    async with app.run_test(size=(80, 24)) as pilot:
        await _settle(app, pilot)
        await pilot.press("f")
        await pilot.press("m")  # one pane below the rows at 80x24: the picture comes forward
        await pilot.pause(0.2)
        assert app.query_one(PlotPanel).has_class("-current")
        text = "\n".join(_panel(app)[0])
        assert "▶ 1. " in text
        await pilot.press("f", "down", "down", "down", "down")
        await pilot.pause(0.1)
        assert app.ws.model_row == 4
        await pilot.press("g")
        await pilot.pause(0.2)
        lines = _panel(app)[0]
        models, marked = app.ws.lineup_models()
        assert marked == 2 and len(models) == 3 and models[2].rank == 5
        assert "▶ 5. " in "\n".join(lines) and "1. " in "\n".join(lines)
        assert "2. " in "\n".join(lines) and "3. " not in "\n".join(lines)
        app.ws.kind = "shift"
        app.query_one(PlotPanel).redraw()
        await pilot.pause(0.1)
        assert not app.query_one(PlotPanel).lines  # a notice, not a picture: models have no shift
