"""Text snapshots of the workspace states that depend on the UI alone (80×24, no colour).

Numbers and plots come from other packages and are asserted on in test_ui*.py; these
pin the layout: an empty workspace and the key overlay. To accept a deliberate change,
run with OGIVE_UPDATE_SNAPSHOTS=1 and review the diff of tests/ui_snapshots/.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from ogive.ui import OgiveApp
from ogive.ui.screen_text import screen_text

SNAPSHOTS = Path(__file__).parent / "ui_snapshots"


def _check(name: str, text: str) -> None:
    path = SNAPSHOTS / f"{name}.txt"
    if os.environ.get("OGIVE_UPDATE_SNAPSHOTS") or not path.exists():
        SNAPSHOTS.mkdir(exist_ok=True)
        path.write_text(text + "\n")
        if not os.environ.get("OGIVE_UPDATE_SNAPSHOTS"):
            pytest.fail(f"snapshot {path.name} was missing and has been written; review it and rerun.")
    assert text + "\n" == path.read_text()


@pytest.mark.parametrize("state", ["empty", "keys"])
async def test_snapshot(state: str) -> None:
    app = OgiveApp([])
    async with app.run_test(size=(80, 24)) as pilot:
        await _settled(pilot, app)
        if state == "keys":
            await pilot.press("question_mark")
            await _settled(pilot, app)
        _check(f"{state}_80x24", screen_text(app))


@pytest.mark.parametrize(("size", "ascii_only"), [((60, 15), False), ((50, 12), False), ((80, 24), True)])
async def test_snapshot_sizes_and_ascii(size: tuple[int, int], ascii_only: bool) -> None:
    """Issue 21: the compact window (60×15), the sentence below it, and the ASCII screen."""
    app = OgiveApp([], ascii_only=ascii_only)
    async with app.run_test(size=size) as pilot:
        await _settled(pilot, app, footer=size[1] >= 23)
        name = f"empty_{size[0]}x{size[1]}" + ("_ascii" if ascii_only else "")
        _check(name, screen_text(app))


async def _settled(pilot: object, app: OgiveApp, *, footer: bool = True) -> None:
    """Wait until two captures 0.1 s apart agree (up to 5 s): a loaded CI machine can take
    longer than a fixed pause to draw the key bar (seen: the footer missing at 0.2 s)."""
    previous = None
    for _ in range(50):
        await pilot.pause(0.1)  # type: ignore[attr-defined]
        text = screen_text(app)
        if text == previous and (not footer or "Quit" in text.splitlines()[-1]):
            return
        previous = text
