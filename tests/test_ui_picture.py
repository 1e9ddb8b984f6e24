"""The workspace's picture is ``ogive plot``'s picture: same inputs and size, the same text.

Regression for issue 15: the workspace rebuilt the bands itself and its P-P plot had no
band, so 13 of 16 lines differed from ``ogive plot``. Both now go through
``fit.curves.plot_inputs`` and ``render.draw``; this test holds them equal for every
kind, against a second sketch and against a fitted model.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest

from ogive.cli import main
from ogive.ui import OgiveApp
from ogive.ui.plot_panel import PlotPanel
from ogive.ui.workspace import KINDS
from ui_pilot import save_each

os.environ.setdefault("NO_COLOR", "1")


@pytest.fixture()
def saved(tmp_path: Path) -> tuple[Path, Path]:
    rng = np.random.default_rng(7)
    named = {"before": rng.lognormal(2.0, 0.6, 30_000) * 1.0, "after": rng.lognormal(2.0, 0.6, 30_000) * 1.25}
    before, after = save_each(tmp_path, named)
    return before, after


async def _until(app: OgiveApp, pilot: object, ready: object, limit_s: float = 30.0) -> None:
    waited = 0.0
    while not ready() and waited < limit_s:  # type: ignore[operator]
        await pilot.pause(0.05)  # type: ignore[attr-defined]
        waited += 0.05
    assert ready(), "the workspace did not settle"  # type: ignore[operator]


def _cli(capsys: pytest.CaptureFixture[str], *args: str) -> list[str]:
    """``ogive plot`` run after the app has closed (a running app holds stdout)."""
    capsys.readouterr()
    assert main(["plot", *args]) == 0
    return capsys.readouterr().out.rstrip("\n").split("\n")


async def _pictures(
    app: OgiveApp, pilot: object, kinds: tuple[str, ...]
) -> dict[str, tuple[list[str], int, int]]:
    """Each kind's lines as the picture pane shows them, with the pane's size."""
    panel = app.query_one(PlotPanel)
    out = {}
    for kind in kinds:
        app.ws.kind = kind
        panel.redraw()
        await pilot.pause(0.05)  # type: ignore[attr-defined]
        out[kind] = (list(panel.lines), panel.content_size.width, panel.content_size.height)
    return out


async def test_every_kind_against_a_sketch_equals_ogive_plot(
    saved: tuple[Path, Path], capsys: pytest.CaptureFixture[str]
) -> None:
    before, after = saved
    app = OgiveApp([str(before), str(after)], families=("lognormal",))
    async with app.run_test(size=(100, 40)) as pilot:
        await _until(app, pilot, lambda: app.ws.comparison is not None and app.ws.fit is not None)
        shown = await _pictures(app, pilot, KINDS)
    for kind, (lines, width, height) in shown.items():
        assert lines, kind
        cli = _cli(
            capsys, str(before), str(after), "--kind", kind, "--width", str(width), "--height", str(height)
        )
        assert lines == cli, kind


async def test_every_kind_against_a_model_equals_ogive_plot_model(
    saved: tuple[Path, Path], capsys: pytest.CaptureFixture[str]
) -> None:
    _, after = saved
    app = OgiveApp([str(after)], families=("lognormal",))
    async with app.run_test(size=(100, 40)) as pilot:
        await _until(app, pilot, lambda: app.ws.reference is not None and app.ws.reference.kind == "model")
        shown = await _pictures(app, pilot, ("qq", "detrended", "pp", "cdf"))
    for kind, (lines, width, height) in shown.items():
        assert lines, kind
        args = (
            str(after),
            "--model",
            "lognormal",
            "--kind",
            kind,
            "--width",
            str(width),
            "--height",
            str(height),
        )
        assert lines == _cli(capsys, *args), kind


async def test_linear_axes_at_80x24_equal_plot_linear(
    saved: tuple[Path, Path], capsys: pytest.CaptureFixture[str]
) -> None:
    before, after = saved
    app = OgiveApp([str(before), str(after)], families=("lognormal",))
    async with app.run_test(size=(80, 24)) as pilot:
        await _until(app, pilot, lambda: app.ws.comparison is not None)
        app.ws.axes = "linear"
        lines, width, height = (await _pictures(app, pilot, ("qq",)))["qq"]
    assert lines == _cli(
        capsys, str(before), str(after), "--linear", "--width", str(width), "--height", str(height)
    )
