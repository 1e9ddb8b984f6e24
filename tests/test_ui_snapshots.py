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
        await pilot.pause(0.2)
        if state == "keys":
            await pilot.press("question_mark")
            await pilot.pause(0.2)
        _check(f"{state}_80x24", screen_text(app))
