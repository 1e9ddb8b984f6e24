"""The workspace over real scans: live progress, counts against numpy, keys while streaming, demo.

Outside references: numpy.quantile (default linear method, Hyndman & Fan type 7) and
plain counting of the rows written.
"""

from __future__ import annotations

import dataclasses
import os
import threading
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from textual import events

from ogive.commands import demo as demo_cmd
from ogive.read.options import ScanOptions
from ogive.ui import OgiveApp
from ogive.ui.help_overlay import KeyHelp
from ogive.ui.screen_text import screen_text

FAST = ("lognormal", "gamma")
"""Two families keep each fit well under a second; the ranking itself is the fit tests' job."""


def _write_csv(path: Path, values: np.ndarray, bad_every: int) -> int:
    """A CSV of latencies with an unparseable value every ``bad_every`` rows; returns the bad count."""
    lines = ["host,latency_ms"]
    bad = 0
    for i, v in enumerate(values):
        if bad_every and i % bad_every == 0:
            lines.append("web-1,n/a")
            bad += 1
        lines.append(f"web-{i % 3},{v:.3f}")
    path.write_text("\n".join(lines) + "\n")
    return bad


async def _idle(app: OgiveApp, pilot: object, limit_s: float = 30.0) -> None:
    """Until no worker runs (exclusive workers may be cancelled, so no wait_for_complete)."""
    waited = 0.0
    while any(w.is_running for w in app.workers) and waited < limit_s:
        await pilot.pause(0.05)  # type: ignore[attr-defined]
        waited += 0.05


async def _wait_scans(app: OgiveApp, pilot: object, limit_s: float = 20.0) -> None:
    waited = 0.0
    while any(not j.done for j in app.ws.jobs) and waited < limit_s:
        await pilot.pause(0.1)  # type: ignore[attr-defined]
        waited += 0.1
    await _idle(app, pilot)
    await pilot.pause(0.2)  # type: ignore[attr-defined]


async def test_scans_fill_the_shelf(tmp_path: Path) -> None:
    rng = np.random.default_rng(11)
    a, b = rng.gamma(2.0, 10.0, 8000), rng.gamma(2.0, 13.0, 8000)
    bad_a = _write_csv(tmp_path / "base.csv", a, 500)
    bad_b = _write_csv(tmp_path / "cand.csv", b, 0)
    app = OgiveApp(
        [str(tmp_path / "base.csv"), str(tmp_path / "cand.csv")],
        ScanOptions(column="latency_ms"),
        families=FAST,
    )
    async with app.run_test(size=(80, 24)) as pilot:
        await _wait_scans(app, pilot)
        assert list(app.ws.dists) == ["base", "cand"]
        assert app.ws.subject == "cand" and app.ws.reference is not None and app.ws.reference.name == "base"
        base = app.ws.dists["base"].sketch
        assert base.count == a.size
        assert base.provenance.skipped_total == bad_a == 16
        assert app.ws.dists["cand"].sketch.provenance.skipped_total == bad_b == 0
        # 8000 values <= 2 * tail_size? no (tail 1024): the digest answers p50; its rank
        # error at n=8000 is well under 1 % of n, so 2 % of the value is a loose bound.
        assert float(base.quantile(0.5)) == pytest.approx(float(np.quantile(a, 0.5)), rel=0.02)
        # The list resizes to its rows when they arrive: wait for that layout to be drawn.
        text = ""
        for _ in range(300):  # up to 30 s: a loaded CI machine draws late
            text = screen_text(app)
            if "base" in text and "8k" in text:
                break
            await pilot.pause(0.1)
        # The whole screen in the message: this failed once in a full CI run (not again in
        # 11 runs alone, 8 of them beside two busy processes) and the cut repr hid why.
        assert "base" in text and "8k" in text and "16" in text, text
        await pilot.press("c")
        await _idle(app, pilot)
        await pilot.pause(0.1)
        assert "higher" in screen_text(app)


async def _tap(app: OgiveApp, pilot: object, key: str, done: Callable[[], bool]) -> None:
    """Send one key the way the terminal driver does and wait until its effect shows.

    ``pilot.press`` waits for the whole process to go idle after each key, which a
    running scan never lets happen; that would measure the test, not the app.
    """
    char = "?" if key == "question_mark" else key if len(key) == 1 else None
    event = events.Key(key, char)
    event.set_sender(app)
    app._driver.send_message(event)  # type: ignore[union-attr]
    waited = 0.0
    while not done() and waited < 10:
        await pilot.pause(0.02)  # type: ignore[attr-defined]
        waited += 0.02
    assert done(), f"key {key!r} had no effect"


def _feed_slowly(fifo: Path, values: np.ndarray, stop: threading.Event, block: int = 2000) -> None:
    """Write CSV rows into a named pipe a block at a time, like a busy log being tailed.

    The text is made before the first write so this thread only sleeps and writes (a
    separate program would not compete with the app for the interpreter).
    """
    blocks = [
        "".join(f"web-1,{v:.3f}\n" for v in values[start : start + block]).encode()
        for start in range(0, values.size, block)
    ]
    try:
        with fifo.open("wb") as out:
            out.write(b"host,latency_ms\n")
            for body in blocks:
                if stop.is_set():
                    return
                out.write(body)
                out.flush()
                time.sleep(0.02)
    except BrokenPipeError:  # the reader stopped first: that is the point of the test
        return


async def test_keys_answer_while_a_large_scan_runs(tmp_path: Path) -> None:
    """Regression test for the 'never block keys' rule.

    The reader is fast enough that no file small enough for a unit test keeps it busy,
    so the scan reads a named pipe fed slowly (about 3 s for 300k rows): the scan is
    certainly still running while the keys are pressed.
    """
    values = np.random.default_rng(5).lognormal(3.0, 0.7, 300_000)
    fifo = tmp_path / "big.csv"
    os.mkfifo(fifo)
    stop = threading.Event()
    feeder = threading.Thread(target=_feed_slowly, args=(fifo, values, stop), daemon=True)
    feeder.start()
    slow = dataclasses.replace(ScanOptions(format="csv", column="latency_ms"), chunk_bytes=16 * 1024)
    app = OgiveApp([str(fifo)], slow, families=FAST)
    try:
        async with app.run_test(size=(80, 24)) as pilot:
            job = app.ws.jobs[0]
            waited = 0.0
            while "big" not in app.ws.dists and waited < 10:
                await pilot.pause(0.05)
                waited += 0.05
            assert not job.done
            await _tap(app, pilot, "v", lambda: app.ws.kind == "detrended")
            await _tap(app, pilot, "l", lambda: app.ws.axes == "log")
            await _tap(app, pilot, "question_mark", lambda: isinstance(app.screen, KeyHelp))
            assert not job.done  # all three answered while the scan was still reading
            await _tap(app, pilot, "escape", lambda: not isinstance(app.screen, KeyHelp))
            n_before = app.ws.dists["big"].sketch.count
            waited = 0.0  # the shelf fills as data streams (ticks ~2x/s)
            while app.ws.dists["big"].sketch.count == n_before and waited < 10:
                await pilot.pause(0.05)
                waited += 0.05
            assert app.ws.dists["big"].sketch.count > n_before
            assert not job.done
            text = screen_text(app)
            assert "scanning big.csv" in text and "rows/s" in text
            await _tap(app, pilot, "x", lambda: job.cancel.is_set())
            await _wait_scans(app, pilot)
            dist = app.ws.dists["big"]
            assert dist.state == "partial"
            assert 0 < dist.sketch.count < values.size
    finally:
        stop.set()
        feeder.join(timeout=5)


async def test_demo_opens_after_against_before(tmp_path: Path) -> None:
    folder = tmp_path / "demo"
    folder.mkdir()
    demo_cmd.generate_small(folder)
    pair = demo_cmd.pick_pair(folder)
    assert pair is not None
    before, after = pair
    app = OgiveApp(
        [str(before), str(after)],
        per_source={str(p): demo_cmd.demo_options(p) for p in pair},
        subject=demo_cmd._stem(after),
        reference=demo_cmd._stem(before),
        families=FAST,
    )
    async with app.run_test(size=(80, 24)) as pilot:
        await _wait_scans(app, pilot)
        assert [p.name for p in pair] == ["checkout-before.log", "checkout-after.log.gz"]
        assert app.ws.subject == "checkout-after"
        assert app.ws.reference is not None and app.ws.reference.name == "checkout-before"
        after_sketch = app.ws.dists["checkout-after"].sketch
        assert after_sketch.unit == "ms"
        # demo_logs/README.md: 12,000 records, 4 spoilt on purpose
        assert after_sketch.count == 12_000 - 4
        assert after_sketch.provenance.skipped_total == 4
        await pilot.press("c")
        await _idle(app, pilot)
        await pilot.pause(0.1)
        # the scenario's release makes the cache-miss tail heavier: p99 must be called higher
        p99 = next(ln for ln in screen_text(app).splitlines() if ln.strip("│ ").startswith("p99 "))
        assert "higher" in p99
