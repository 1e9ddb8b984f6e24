"""The workspace driven headlessly at 80×24: load, pick roles, switch views, write, export.

Numbers on screen are checked against numpy on the raw values (numpy.quantile, default
linear method, Hyndman & Fan type 7) and against calling the comparison directly, which
is what ``ogive compare --json`` prints.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest
from textual.widgets import Input

from ogive.store import load_sketches
from ogive.ui import OgiveApp
from ogive.ui.ask_path import AskPath
from ogive.ui.fit_panel import ModelRanking
from ogive.ui.help_overlay import KeyHelp
from ogive.ui.open_prompt import OpenPrompt
from ogive.ui.path_input import PathInput, complete_path
from ogive.ui.plot_panel import PlotPanel
from ogive.ui.screen_text import screen_text
from ogive.ui.shelf import DistributionShelf
from ogive.ui.workspace import partner
from ui_pilot import save_each, until_idle

FAST = ("lognormal", "gamma")
"""Two families keep each fit well under a second; the ranking itself is the fit tests' job."""

os.environ.setdefault("NO_COLOR", "1")


def _raw(seed: int, scale: float, n: int = 20_000) -> np.ndarray:
    return np.random.default_rng(seed).lognormal(3.0, 0.5, n) * scale


@pytest.fixture()
def pair(tmp_path: Path) -> tuple[Path, Path, np.ndarray, np.ndarray]:
    """Two saved sketches: 'after' is 'before' slowed by 30 % (a clear change)."""
    a, b = _raw(1, 1.0), _raw(2, 1.3)
    before, after = save_each(tmp_path, {"before": a, "after": b})
    return before, after, a, b


async def test_roles_shelf_and_ladder(pair: tuple[Path, Path, np.ndarray, np.ndarray]) -> None:
    before, after, _, b = pair
    app = OgiveApp(families=FAST, sources=[str(before), str(after)])
    async with app.run_test(size=(80, 24)) as pilot:
        await until_idle(app, pilot)
        # last given is the subject, first the reference ("after against before")
        assert app.ws.subject == "after"
        assert app.ws.reference is not None and app.ws.reference.name == "before"
        text = screen_text(app)
        assert "subject: after · reference: before" in text
        # p50 on the shelf against numpy.quantile of the raw values; 4 significant
        # digits are shown and the sketch's median error is far below that at n=20k.
        p50 = float(np.quantile(b, 0.5))
        shown = next(line for line in text.splitlines() if " after " in line and "ms" in line)
        assert f"{p50:.2f}" in shown or f"{p50:.1f}" in shown
        await pilot.press("c")
        await pilot.pause(0.2)
        text = screen_text(app)
        assert "Quantile ladder" in text
        p50_line = next(line for line in text.splitlines() if line.strip("│ ").startswith("p50"))
        assert "higher" in p50_line
        # the screen holds exactly what the shared comparison returns (what --json prints)
        from ogive.fit.compare import compare_sketches

        direct = compare_sketches(
            app.ws.dists["before"].sketch, app.ws.dists["after"].sketch, labels=("before", "after")
        )
        assert app.ws.comparison.to_dict() == direct.to_dict()


async def test_swap_roles_and_refuse_same(pair: tuple[Path, Path, np.ndarray, np.ndarray]) -> None:
    before, after, _, _ = pair
    app = OgiveApp(families=FAST, sources=[str(before), str(after)])
    async with app.run_test(size=(80, 24)) as pilot:
        await until_idle(app, pilot)
        shelf = app.query_one(DistributionShelf)
        assert shelf.has_focus
        shelf.move_cursor(row=0)
        await pilot.press("1")  # 'before' becomes the subject; 'after' takes the reference
        await until_idle(app, pilot)
        assert app.ws.subject == "before"
        assert app.ws.reference is not None and app.ws.reference.name == "after"
        await pilot.press("2")  # same row as reference: refused with a message
        await pilot.pause(0.1)
        assert app.ws.reference.name == "after"
        assert "must differ" in screen_text(app)
        await pilot.press("c")
        await until_idle(app, pilot)
        p50_line = next(ln for ln in screen_text(app).splitlines() if ln.strip("│ ").startswith("p50"))
        assert "lower" in p50_line


async def test_picture_modes_and_axes(pair: tuple[Path, Path, np.ndarray, np.ndarray]) -> None:
    before, after, _, _ = pair
    app = OgiveApp(families=FAST, sources=[str(before), str(after)])
    async with app.run_test(size=(80, 24)) as pilot:
        await until_idle(app, pilot)
        seen = [app.ws.kind]
        for _ in range(5):
            await pilot.press("v")
            seen.append(app.ws.kind)
        assert seen == ["qq", "detrended", "pp", "cdf", "shift", "qq"]
        await pilot.press("V")
        assert app.ws.kind == "shift"
        assert app.ws.axes == "auto"
        await pilot.press("l")
        await pilot.pause(0.1)
        assert app.ws.axes == "log" and app.ws.log_axes is True
        assert "Picture: shift function (log axes)" in screen_text(app)
        await pilot.press("l")
        assert app.ws.axes == "linear" and app.ws.log_axes is False


async def test_write_and_export(pair: tuple[Path, Path, np.ndarray, np.ndarray], tmp_path: Path) -> None:
    before, after, _, b = pair
    app = OgiveApp(families=FAST, sources=[str(before), str(after)], save_dir=tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await until_idle(app, pilot)
        await pilot.press("w")
        await pilot.pause(0.1)
        assert isinstance(app.screen, AskPath)
        target = tmp_path / "both.ogive"
        app.screen.query_one(PathInput).value = str(target)
        await pilot.press("enter")
        await pilot.pause(0.1)
        saved = load_sketches(target)
        assert sorted(saved.names()) == ["after", "before"]
        assert saved["after"].count == b.size
        await pilot.press("e")
        await pilot.pause(0.1)
        app.screen.query_one(PathInput).value = str(tmp_path / "report")
        await pilot.press("enter")
        await pilot.pause(0.1)
        md = (tmp_path / "report.md").read_text()
        js = json.loads((tmp_path / "report.json").read_text())
        assert "Subject: **after**" in md and "| p50 |" in md
        assert "## Picture: Q-Q (auto axes)" in md and js["picture"]["axes"] == "auto"
        assert js["picture"]["lines"] == list(app.query_one(PlotPanel).lines)
        assert app.ws.fit is not None and f"| 1 | {app.ws.fit.ranked[0].label} |" in md
        assert js["subject"] == "after" and js["reference"] == {"kind": "sketch", "name": "before"}
        assert js["comparison"]["ladder"][0]["verdict"] == "higher"
        assert [d["summary"]["n"] for d in js["distributions"]] == [20_000, 20_000]
        assert "exported" in screen_text(app)


async def test_help_lists_every_key(pair: tuple[Path, Path, np.ndarray, np.ndarray]) -> None:
    before, after, _, _ = pair
    app = OgiveApp(families=FAST, sources=[str(before), str(after)])
    async with app.run_test(size=(80, 24)) as pilot:
        await until_idle(app, pilot)
        await pilot.press("question_mark")
        await pilot.pause(0.2)
        assert isinstance(app.screen, KeyHelp)
        keys = [k for _, rows in app.screen.groups for k, _ in rows]
        for binding in OgiveApp.BINDINGS:
            key = binding.key if hasattr(binding, "key") else binding[0]  # type: ignore[index]
            shown = {"question_mark": "?", "exclamation_mark": "!"}.get(key, key)
            assert any(shown in k for k in keys), key
        await pilot.press("escape")
        await pilot.pause(0.1)
        assert not isinstance(app.screen, KeyHelp)


async def test_open_prompt_previews_and_opens(pair: tuple[Path, Path, np.ndarray, np.ndarray]) -> None:
    before, after, _, _ = pair
    app = OgiveApp(families=FAST, sources=[str(before)])
    async with app.run_test(size=(80, 24)) as pilot:
        await until_idle(app, pilot)
        # one distribution alone: nothing to compare against yet
        assert app.ws.reference is None or app.ws.reference.kind == "model"
        await pilot.press("o")
        await pilot.pause(0.1)
        assert isinstance(app.screen, OpenPrompt)
        app.screen.query_one("#open-path", PathInput).value = str(after)
        await pilot.pause(0.6)  # the preview waits 0.3 s for typing to stop
        await until_idle(app, pilot, settle_s=0)
        await pilot.pause(0.1)
        assert "sketch file with 1 sketch" in screen_text(app)
        await pilot.press("enter")
        await until_idle(app, pilot)
        assert list(app.ws.dists) == ["before", "after"]


async def test_models_rank_and_a_model_becomes_the_reference(
    pair: tuple[Path, Path, np.ndarray, np.ndarray],
) -> None:
    before, after, _, _ = pair
    app = OgiveApp(families=FAST, sources=[str(before), str(after)])
    async with app.run_test(size=(80, 24)) as pilot:
        await until_idle(app, pilot)
        await pilot.press("f")
        await until_idle(app, pilot)
        models = app.query_one(ModelRanking)
        assert models.has_focus
        assert app.ws.fit is not None, app.ws.fit_note
        # the table lists the fit package's ranking in its order (lognormal data: scipy's
        # lognorm family must be among the fitted, both families fitted here)
        labels = [c.label for c in app.ws.fit.ranked]
        assert models.row_count == len(labels) == 2
        text = screen_text(app)
        assert all(label in text for label in labels)
        models.move_cursor(row=1)
        await pilot.press("2")
        await until_idle(app, pilot)
        assert app.ws.reference is not None and app.ws.reference.kind == "model"
        assert app.ws.reference.name == labels[1]
        # the ladder compares sketches only, and says so
        await pilot.press("c")
        await pilot.pause(0.1)
        assert "the reference is a model" in screen_text(app)
        # Q-Q against the model is drawn from the model's own quantile function
        await pilot.press("g")
        await pilot.pause(0.2)
        assert "Picture: Q-Q" in screen_text(app)
        assert app.query_one(PlotPanel).lines  # drawn, not a notice


def test_complete_path(tmp_path: Path) -> None:
    (tmp_path / "access-2026.log.gz").write_bytes(b"")
    (tmp_path / "access-2027.log.gz").write_bytes(b"")
    (tmp_path / "sketches").mkdir()
    assert complete_path(str(tmp_path / "acc")) == str(tmp_path / "access-202")
    assert complete_path(str(tmp_path / "sk")) == str(tmp_path / "sketches") + os.sep
    assert complete_path(str(tmp_path / "zz")) is None


async def test_fits_in_80x24_and_scales(pair: tuple[Path, Path, np.ndarray, np.ndarray]) -> None:
    before, after, _, _ = pair
    for size in ((80, 24), (160, 48)):
        app = OgiveApp(families=FAST, sources=[str(before), str(after)])
        async with app.run_test(size=size) as pilot:
            await until_idle(app, pilot)
            lines = screen_text(app).splitlines()
            assert len(lines) == size[1]
            assert max(len(line) for line in lines) <= size[0]
            text = "\n".join(lines)
            assert "Distributions" in text
            if size == (160, 48):  # wide and tall: every pane at once
                assert "Picture" in text and "Models" in text and "Quantile ladder" in text


def test_view_refuses_bad_arguments_in_one_line(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    from ogive.cli import main

    assert main(["view", str(tmp_path / "missing.log")]) == 3
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "no such file" in err[0]
    (tmp_path / "x.log").write_text("1\n")
    assert main(["view", "--families", "nosuch", str(tmp_path / "x.log")]) == 3
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "unknown family 'nosuch'" in err[0]


async def test_lone_subject_gets_best_model_until_a_sketch_arrives(
    pair: tuple[Path, Path, np.ndarray, np.ndarray],
) -> None:
    """Regression: a fit finishing before the second file arrived kept the model as reference."""
    before, after, _, _ = pair
    app = OgiveApp(families=FAST, sources=[str(after)])
    async with app.run_test(size=(80, 24)) as pilot:
        await until_idle(app, pilot)
        assert app.ws.reference is not None and app.ws.reference.kind == "model"
        assert app.ws.reference.name == app.ws.fit.ranked[0].label
        app.open(str(before), app.options)
        await until_idle(app, pilot)
        assert app.ws.reference is not None and app.ws.reference.kind == "sketch"
        assert (app.ws.subject, app.ws.reference.name) == ("before", "after")


async def test_open_dialog_splits_by_time_and_groups(tmp_path: Path) -> None:
    """Issue 15: the Open dialog sets split-at and by (it used to need the CLI flags)."""
    log = tmp_path / "svc.csv"
    rows = ["ts,route,ms"] + [
        f"2026-05-01T{10 + i // 600:02d}:{(i // 10) % 60:02d}:{i % 10:02d}Z,{'ab'[i % 2]},{1 + i % 7}"
        for i in range(2400)
    ]
    log.write_text("\n".join(rows) + "\n")
    # One family: the subject's 600 values get bootstrap p-values, which the test waits for
    # and never reads (half the wait of two families).
    app = OgiveApp(families=FAST[:1])
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("o")
        await pilot.pause(0.1)
        screen = app.screen
        assert isinstance(screen, OpenPrompt)
        values = {"open-path": str(log), "open-column": "ms", "open-unit": "ms", "open-by": "route"}
        values |= {"open-time-field": "ts", "open-split-at": "2026-05-01T12:00:00Z"}
        for key, value in values.items():
            screen.query_one(f"#{key}", Input).value = value
        await pilot.pause(0.5)
        screen.query_one("#open-path", PathInput).focus()
        await pilot.press("enter")
        await until_idle(app, pilot)
        names = sorted(app.ws.dists)
        assert names == ["svc:after/route=a", "svc:after/route=b", "svc:before/route=a", "svc:before/route=b"]
        # Counted by hand from the rows written: hours 10 and 11 are before 12:00.
        assert app.ws.dists["svc:before/route=a"].sketch.count == 600
        assert app.ws.reference is not None and app.ws.reference.name == partner(app.ws.subject or "")
