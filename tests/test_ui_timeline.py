"""The Timeline pane at 80×24: a saved timeline and a log with windows, the change points
listed, and a change taken up for study (its after as the subject, its before as the
reference). The truth of the synthetic day is in ``tests/timeline_streams.py``."""

from __future__ import annotations

import datetime as dt
import os
from pathlib import Path

import pytest

from ogive.commands.timeline import scan_options
from ogive.read import ScanOptions
from ogive.sketch import timekeys
from ogive.store import save_sketches
from ogive.ui import OgiveApp
from ogive.ui.screen_text import screen_text
from ogive.ui.timeline_panel import TimelinePanel
from ogive.ui.workspace import Workspace
from timeline_streams import DAY_START_US, day, sketch_set

os.environ.setdefault("NO_COLOR", "1")
FAST = ("lognormal",)


async def _idle(app: OgiveApp, pilot: object, limit_s: float = 40.0) -> None:
    waited = 0.0
    while (
        any(w.is_running for w in app.workers) or not all(j.done for j in app.ws.jobs)
    ) and waited < limit_s:
        await pilot.pause(0.05)  # type: ignore[attr-defined]
        waited += 0.05


def _write_log(path: Path, kind: str, per_window: int, windows: int) -> None:
    rows = []
    for w, x in enumerate(day(kind, 31, per_window=per_window, windows=windows)):
        for k, v in enumerate(x):
            us = DAY_START_US + w * 300e6 + (k + 0.5) * 300e6 / x.size
            rows.append(f"{dt.datetime.fromtimestamp(us / 1e6, dt.UTC).isoformat()},{v}")
    path.write_text("ts,latency_ms\n" + "\n".join(rows) + "\n")


async def test_a_saved_timeline_shows_its_change_and_studies_it(tmp_path: Path) -> None:
    saved = tmp_path / "day.ogive"
    save_sketches(saved, sketch_set(day("body", 5, per_window=300, windows=200)))
    app = OgiveApp([str(saved)], families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _idle(app, pilot)
        # The windows are no rows: only the whole is.
        assert list(app.ws.dists) == ["day"]
        assert app.ws.timeline is not None
        (change,) = app.ws.timeline.streams[0].changes
        assert abs(change.change.first - 156) <= 1  # truth: 13:00
        await pilot.press("t")
        await pilot.pause(0.3)
        text = screen_text(app)
        assert "Timeline: day.ogive" in text and "1. 13:00" in text and "body" in text
        assert app.focused is app.query_one(TimelinePanel)
        await pilot.press("enter")
        await _idle(app, pilot)
        # No log to read again: the windows either side are merged.
        assert app.ws.subject == "day:after 13:00" and app.ws.reference is not None
        assert app.ws.reference.name == "day:before 13:00"
        assert app.ws.comparison is not None
        rows = {r.label: r for r in app.ws.comparison.ladder}
        assert rows["p50"].verdict == "higher"  # the body is 25 % slower after 13:00
        assert "merged" in app.ws.dists["day:after 13:00"].note


async def test_a_log_with_windows_is_read_again_split_at_the_change(tmp_path: Path) -> None:
    log = tmp_path / "svc.csv"
    _write_log(log, "tail", per_window=120, windows=200)
    options = scan_options(ScanOptions(column="latency_ms", time_field="ts", unit="ms"), "5m")
    app = OgiveApp([str(log)], options, families=FAST)
    async with app.run_test(size=(100, 30)) as pilot:
        await _idle(app, pilot)
        t = app.ws.timeline
        assert t is not None and t.streams[0].changes
        await pilot.press("t")
        await pilot.press("enter")
        await _idle(app, pilot)
        job = app.ws.jobs[-1]
        assert job.options.split_at is not None and not job.options.timeline
        assert job.options.split_at == timekeys.start_text(t.streams[0].changes[0].split_us)
        subject, reference = app.ws.subject, app.ws.reference
        assert subject is not None and subject.startswith("svc:after ") and reference is not None
        assert reference.name.startswith("svc:before ")
        # Every value went to one side or the other, as ogive gate --split-at would read it.
        n = sum(app.ws.dists[name].sketch.count for name in (subject, reference.name))
        assert n == app.ws.dists["svc"].sketch.count


def test_the_model_keeps_one_timeline_and_applies_study_roles_when_rows_exist() -> None:
    ws = Workspace()
    assert ws.take_timeline_input("a.log", {"all": sketch_set(day("none", 1, windows=4))["all"]}, live=False)
    assert not ws.take_timeline_input("b.log", {}, live=False)  # the pane shows a.log
    ws.study("x:after", "x:before")
    assert ws.study_roles == ("x:after", "x:before")


@pytest.mark.parametrize("size", [(80, 24), (140, 40)])
async def test_the_pane_fits_and_says_what_is_missing(size: tuple[int, int]) -> None:
    app = OgiveApp([], families=FAST)
    async with app.run_test(size=size) as pilot:
        await pilot.press("t")
        await pilot.pause(0.2)
        text = screen_text(app)
        assert "No timeline" in text and "--window" in text
        await pilot.press("g")
        await pilot.pause(0.2)
        assert "No timeline" not in screen_text(app)
