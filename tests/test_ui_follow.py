"""The workspace following a growing log: rows fill as lines are appended, the recent
window has its own row, rotation is counted, the stop key ends it and keys stay live.

Outside references: numpy.quantile (default linear method, Hyndman & Fan type 7) on
exactly the values the test wrote, and plain counting of the lines appended.
"""

from __future__ import annotations

import os
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import numpy as np
from textual import events

from ogive.read.options import ScanOptions
from ogive.ui import OgiveApp
from ogive.ui.fit_panel import ModelRanking
from ogive.ui.help_overlay import KeyHelp
from ogive.ui.keys import key_groups
from ogive.ui.screen_text import screen_text
from ogive.ui.shelf import DistributionShelf

FAST = ("lognormal",)
"""One family keeps each fit short; the ranking itself is the fit tests' job."""
OPTIONS = ScanOptions(pattern=r"dur=(\S+)")


def _append(path: Path, values: np.ndarray) -> None:
    """Values go in as written by ``repr``, so the numbers read back are the same floats."""
    with open(path, "a") as fh:
        fh.write("".join(f"req dur={float(v)!r}ms\n" for v in values))


async def _until(pilot: object, done: Callable[[], bool], what: str, limit_s: float = 10.0) -> None:
    """Pause the test (never the app) until ``done()``; fails naming what did not happen."""
    waited = 0.0
    while not done() and waited < limit_s:
        await pilot.pause(0.05)  # type: ignore[attr-defined]
        waited += 0.05
    assert done(), f"{what} did not happen within {limit_s} s"


async def _tap(app: OgiveApp, pilot: object, key: str, done: Callable[[], bool]) -> None:
    """Send one key as the terminal driver does (``pilot.press`` waits for an idle app,
    which a follow never is) and wait for its effect."""
    char = "?" if key == "question_mark" else key if len(key) == 1 else None
    event = events.Key(key, char)
    event.set_sender(app)
    app._driver.send_message(event)  # type: ignore[union-attr]
    await _until(pilot, done, f"the effect of key {key!r}")


async def test_following_fills_the_rows_and_the_recent_window(tmp_path: Path) -> None:
    rng = np.random.default_rng(3)
    log = tmp_path / "live.log"
    backlog = rng.lognormal(3.0, 0.5, 400)
    _append(log, backlog)
    app = OgiveApp([str(log)], OPTIONS, follow=True, recent="1m", families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        job = app.ws.jobs[0]
        await _until(pilot, lambda: job.caught_up and "live:all" in app.ws.dists, "reading the backlog")
        assert app.ws.dists["live:all"].sketch.count == backlog.size
        assert app.ws.dists["live:recent-1m"].sketch.count == 0  # the backlog has no arrival time
        assert app.ws.subject == "live:recent-1m" and app.ws.reference is not None
        assert app.ws.reference.name == "live:all"

        fresh: list[np.ndarray] = []
        for _ in range(3):  # three bursts while the app runs, as a busy service would write
            part = rng.lognormal(4.0, 0.3, 150)
            _append(log, part)
            fresh.append(part)
            await pilot.pause(0.15)
        appended = np.concatenate(fresh)
        everything = np.concatenate([backlog, appended])
        await _until(
            pilot,
            lambda: (
                app.ws.dists["live:all"].sketch.count == everything.size
                and app.ws.dists["live:recent-1m"].sketch.count == appended.size
            ),
            "the appended lines reaching both rows",
        )
        qs = np.array([0.0, 0.25, 0.5, 0.9, 0.99, 1.0])
        # numpy.quantile on the values written; under 2 x 1024 values the sketches are exact.
        np.testing.assert_allclose(app.ws.dists["live:all"].sketch.quantile(qs), np.quantile(everything, qs))
        np.testing.assert_allclose(
            app.ws.dists["live:recent-1m"].sketch.quantile(qs), np.quantile(appended, qs)
        )
        assert app.ws.dists["live:all"].state == "following" and not job.done
        await _until(pilot, lambda: "values" in screen_text(app), "the follow status line")
        text = screen_text(app)
        assert "following live.log" in text and "/s now" in text and "(s stops)" in text
        assert "live:recent-1m" in text and "S~" in text and "R~" in text
        assert job.rate > 0

        # Keys stay live while the file is followed.
        await _tap(app, pilot, "v", lambda: app.ws.kind == "detrended")
        await _tap(app, pilot, "question_mark", lambda: isinstance(app.screen, KeyHelp))
        await _tap(app, pilot, "escape", lambda: not isinstance(app.screen, KeyHelp))
        assert not job.done

        await _tap(app, pilot, "s", lambda: job.done)
        await _until(pilot, lambda: app.ws.dists["live:all"].state == "ready", "the rows becoming ready")
        assert app.ws.dists["live:all"].sketch.count == everything.size
        assert app.ws.dists["live:recent-1m"].state == "ready"
        await _until(pilot, lambda: "stopped following" in screen_text(app), "the stop message")


async def test_following_counts_rotation_and_waits_for_a_missing_file(tmp_path: Path) -> None:
    log = tmp_path / "svc.log"  # does not exist yet: the follow waits for it
    app = OgiveApp([str(log)], OPTIONS, follow=True, families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        job = app.ws.jobs[0]
        await _until(pilot, lambda: "Following" in screen_text(app), "the waiting picture")
        first = np.arange(1.0, 51.0)
        _append(log, first)
        await _until(
            pilot, lambda: "svc" in app.ws.dists and app.ws.dists["svc"].sketch.count == 50, "first lines"
        )
        os.rename(log, tmp_path / "svc.log.1")  # rotated away; a new file takes the name
        second = np.arange(1000.0, 1020.0)
        _append(log, second)
        await _until(pilot, lambda: job.rotations == 1 and app.ws.dists["svc"].sketch.count == 70, "rotation")
        await _until(pilot, lambda: "1 rotation" in screen_text(app), "rotation on the status line")
        # numpy.quantile on the 70 values written across both files.
        both = np.concatenate([first, second])
        np.testing.assert_allclose(
            app.ws.dists["svc"].sketch.quantile([0.1, 0.5, 0.9]), np.quantile(both, [0.1, 0.5, 0.9])
        )
        await _tap(app, pilot, "x", lambda: job.done)  # 'stop every scan' stops a follow too
        await _until(pilot, lambda: app.ws.dists["svc"].state == "ready", "the row becoming ready")
        assert "rotated or truncated 1 time(s)" in app.ws.dists["svc"].note


async def test_stop_follow_key_when_nothing_is_followed(tmp_path: Path) -> None:
    app = OgiveApp([], OPTIONS, families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("s")
        await pilot.pause(0.1)
        assert "nothing is being followed" in screen_text(app)


def test_stop_follow_key_is_listed_and_clashes_with_nothing() -> None:
    everywhere = dict(key_groups(OgiveApp)[0][1])
    assert everywhere["s"].startswith("Stop following")
    keys = [b.key for b in OgiveApp.BINDINGS]  # type: ignore[union-attr]
    assert len(keys) == len(set(keys))
    for widget in (DistributionShelf, ModelRanking):
        assert "s" not in {b.key for b in widget.BINDINGS}  # type: ignore[union-attr]


def test_view_follow_arguments_fail_in_one_line(tmp_path: Path) -> None:
    a, b = tmp_path / "a.log", tmp_path / "b.log"
    a.write_text("dur=1ms\n")
    b.write_text("dur=2ms\n")
    cases = [
        (["view", str(a), "--recent", "5m"], "use it with --follow"),
        (["view", "--follow", str(a), str(b)], "name exactly one log file"),
        (["view", "--follow", str(a), "--recent", "5q"], "--recent '5q' is not a positive number"),
    ]
    for argv, message in cases:
        out = subprocess.run([sys.executable, "-m", "ogive", *argv], capture_output=True, text=True)
        assert out.returncode == 3, out.stderr
        assert message in out.stderr and "Traceback" not in out.stderr
        assert len(out.stderr.strip().splitlines()) == 1


class _Clock:
    """Wall-clock seconds the test moves by hand: the window empties with no real waiting."""

    def __init__(self) -> None:
        self.t = 2_000_000_000.0

    def __call__(self) -> float:
        return self.t


async def test_a_quiet_log_empties_the_recent_row_without_stale_numbers(tmp_path: Path) -> None:
    log = tmp_path / "quiet.log"
    log.write_text("")
    clock = _Clock()
    app = OgiveApp([str(log)], OPTIONS, follow=True, recent="1m", families=FAST, clock=clock)
    async with app.run_test(size=(80, 24)) as pilot:
        job = app.ws.jobs[0]
        await _until(pilot, lambda: job.caught_up, "catching up on the empty file")
        _append(log, np.arange(1.0, 201.0))
        await _until(
            pilot,
            lambda: "quiet:recent-1m" in app.ws.dists and app.ws.dists["quiet:recent-1m"].sketch.count == 200,
            "the appended lines in the window",
        )
        await _until(pilot, lambda: app.ws.comparison is not None, "a comparison of window and all-time")
        clock.t += 120  # two quiet minutes
        await _until(pilot, lambda: app.ws.dists["quiet:recent-1m"].sketch.count == 0, "the window emptying")
        assert app.ws.dists["quiet:all"].sketch.count == 200
        await _until(pilot, lambda: app.ws.comparison is None, "the stale comparison going")
        await _until(pilot, lambda: "quiet:recent-1m: no values" in screen_text(app), "the empty notice")
        assert "— ms" not in screen_text(app)
