"""The workspace at every size and with many rows (issue 21), through the pilot.

Sizes: 60×15 (the smallest drawn), 60×24, 80×24, and below the smallest. Many rows: a
``--by`` scan of 1,001 groups. The quantiles shown are checked against numpy.quantile on
the raw values (Hyndman & Fan type 7), as in test_ui.py.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

import numpy as np
import pytest
from textual.pilot import Pilot

from ogive.read.options import ScanOptions
from ogive.sketch import Sketch, SketchSet
from ogive.store import save_sketches
from ogive.ui import OgiveApp
from ogive.ui.screen_text import screen_text
from ogive.ui.shelf import DistributionShelf
from ogive.ui.terminal import ESCAPE_DELAY_MS, set_escape_delay
from ui_pilot import NO_BOOTSTRAP_N, until_idle

FAST = ("lognormal", "gamma")
os.environ.setdefault("NO_COLOR", "1")


@pytest.fixture()
def pair(tmp_path: Path) -> tuple[Path, np.ndarray]:
    rng = np.random.default_rng(11)
    a, b = rng.lognormal(3.0, 0.5, 20_000), rng.lognormal(4.5, 0.6, 20_000)  # p99 in the hundreds
    sa, sb = Sketch("ms"), Sketch("ms")
    sa.add(a)
    sb.add(b)
    path = tmp_path / "pair.ogive"
    save_sketches(path, SketchSet({"before": sa, "after": sb}))
    return path, b


@pytest.fixture()
def groups(tmp_path: Path) -> Path:
    rng = np.random.default_rng(5)
    path = tmp_path / "groups.csv"
    with path.open("w") as fh:
        fh.write("route,latency_ms\n")
        for i in range(1001):
            # The two large groups just above the bootstrap's size: their fits skip p-values.
            for v in rng.lognormal(3, 0.5, NO_BOOTSTRAP_N if i in (7, 500) else 3):
                fh.write(f"/r{i},{v:.3f}\n")
    return path


async def _quiet(app: OgiveApp, pilot: Pilot[int], limit_s: float = 30.0) -> None:
    await until_idle(app, pilot, limit_s, settle_s=0.3)


@pytest.mark.parametrize("size", [(60, 15), (60, 24), (80, 24)])
async def test_every_pane_has_content_at_small_sizes(
    pair: tuple[Path, np.ndarray], size: tuple[int, int]
) -> None:
    path, after = pair
    app = OgiveApp([str(path)], families=FAST)
    async with app.run_test(size=size) as pilot:
        await _quiet(app, pilot)
        text = screen_text(app)
        assert "reference: pair:before" in text.splitlines()[0] or "R pair:before" in text.splitlines()[0]
        assert "cannot be drawn" not in text
        assert "┤" in text  # the picture's value axis is drawn
        await pilot.press("c")
        await pilot.pause(0.3)
        text = screen_text(app)
        p99 = next(ln for ln in text.splitlines() if ln.strip("│ ").startswith("p99 "))
        assert "…" not in p99  # numbers are never cut
        want = float(np.quantile(after, 0.99))  # numpy, type 7
        shown = [float(x) for x in re.findall(r"(?<![\[\d.,-])(\d+(?:\.\d+)?)(?![\d.,\]])", p99)]
        assert any(abs(v - want) / want < 0.01 for v in shown), (p99, want)  # 4 digits, t-digest tail error
        await pilot.press("f")
        await _quiet(app, pilot)
        if size[0] >= 80:
            assert "BIC" in screen_text(app)  # the ranking key's column stays


async def test_below_the_smallest_size_a_sentence(pair: tuple[Path, np.ndarray]) -> None:
    path, _ = pair
    app = OgiveApp([str(path)], families=FAST)
    async with app.run_test(size=(50, 12)) as pilot:
        await _quiet(app, pilot)
        text = " ".join(screen_text(app).split())
        assert "Make the window at least 60×15 (it is 50×12)" in text
        await pilot.resize_terminal(60, 15)
        await _quiet(app, pilot)
        assert "Make the window" not in screen_text(app)
        assert "┤" in screen_text(app)


async def test_compact_window_shows_the_list_on_d(pair: tuple[Path, np.ndarray]) -> None:
    path, _ = pair
    app = OgiveApp([str(path)], families=FAST)
    async with app.run_test(size=(60, 15)) as pilot:
        await _quiet(app, pilot)
        assert "Distributions" not in screen_text(app)
        await pilot.press("d")
        await pilot.pause(0.3)
        text = screen_text(app)
        assert "Distributions" in text and "pair:before" in text and "pair:after" in text
        await pilot.press("g")
        await pilot.pause(0.3)
        assert "Picture" in screen_text(app)


async def test_many_groups_filter_pages_and_pairing(groups: Path) -> None:
    options = ScanOptions(format="csv", column="latency_ms", by="route", unit="ms")
    # One family: /r421's three values get bootstrap p-values, which the test waits for and
    # never reads (half the wait of two families).
    app = OgiveApp([str(groups)], options, families=FAST[:1])
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        shelf = app.query_one(DistributionShelf)
        assert shelf.row_count >= 1000
        # the two largest groups are the subject and the reference, never '(other)'
        assert app.ws.subject is not None and app.ws.subject.endswith(("/r7", "/r500"))
        assert app.ws.reference is not None and app.ws.reference.name.endswith(("/r7", "/r500"))
        shelf.focus()
        await pilot.press("home")
        assert shelf.cursor_row == 0
        await pilot.press("pagedown")
        in_sight = shelf.scrollable_content_region.height - 1
        assert shelf.cursor_row == in_sight
        await pilot.press("end")
        assert shelf.cursor_row == shelf.row_count - 1
        await pilot.press("slash", "r", "4", "2", "1")
        await pilot.pause(0.3)
        assert shelf.row_count == 1 and shelf.highlighted_name is not None
        assert shelf.highlighted_name.endswith("/r421")
        await pilot.press("enter", "1")
        await _quiet(app, pilot)
        assert app.ws.subject is not None and app.ws.subject.endswith("/r421")
        await pilot.press("slash", "escape")
        await pilot.pause(0.3)
        assert shelf.row_count >= 1000


def test_escape_delay_is_short_unless_escdelay_says() -> None:
    from textual import constants

    before = constants.ESCAPE_DELAY
    try:
        assert set_escape_delay({}) == ESCAPE_DELAY_MS / 1000 < 0.05  # Esc, then a key 50 ms later: two keys
        setattr(constants, "ESCAPE_DELAY", 0.2)  # noqa: B010
        assert set_escape_delay({"ESCDELAY": "200"}) == 0.2
    finally:
        setattr(constants, "ESCAPE_DELAY", before)  # noqa: B010
