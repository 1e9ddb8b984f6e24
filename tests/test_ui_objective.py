"""``ogive view --objective``: the Distributions list and the ladder pane show the checks
``ogive show --objective`` prints (the same ``check_objective`` result), at 80×24.

Outside reference: the count over the threshold from the raw values (numpy), and
``scipy.stats.binomtest(k, n).proportion_ci(method="exact")`` through ``test_objective.py``.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest

from ogive.fit.objective import check_objective, parse_objective
from ogive.render.objectives import objective_cell
from ogive.ui import OgiveApp
from ogive.ui.screen_text import screen_text
from ui_pilot import save_each

os.environ.setdefault("NO_COLOR", "1")


@pytest.fixture()
def pair(tmp_path: Path) -> tuple[Path, Path, np.ndarray]:
    """'after' has 3 % of its values at 300-600 ms; 'before' about none over 250 ms."""
    rng = np.random.default_rng(9)
    a = rng.lognormal(3.0, 0.5, 900)  # every value held: exact counts
    b = rng.lognormal(3.0, 0.5, 20_000)
    b[:600] = rng.uniform(300, 600, 600)
    before, after = save_each(tmp_path, {"before": a, "after": b})
    return before, after, b


async def test_objectives_on_the_shelf_and_in_the_ladder(pair: tuple[Path, Path, np.ndarray]) -> None:
    before, after, b = pair
    app = OgiveApp(families=("lognormal",), sources=[str(before), str(after)])
    app.ws.objectives = [parse_objective("250ms@99%")]
    async with app.run_test(size=(80, 24)) as pilot:
        for _ in range(200):  # until the comparison is in (its worker loads the statistics)
            await pilot.pause(0.1)
            if app.ws.comparison is not None:
                break
        await pilot.pause(0.3)
        app.query_one("DistributionShelf").show(app.ws)  # type: ignore[attr-defined]
        await pilot.pause(0.2)
        text = screen_text(app)
        direct = check_objective("after", app.ws.dists["after"].sketch, parse_objective("250ms@99%"))
        assert direct.share.over_low <= int((b > 250).sum()) <= direct.share.over_high
        assert direct.status == "missed"
        assert "250ms@99%" in text
        # The Distributions row of "after" (the picture's legend names it too, beside "95% band").
        rows = [line for line in text.splitlines() if " after " in line and "%" in line]
        row = next(line for line in rows if "band" not in line)
        assert objective_cell(direct) in row
        await pilot.press("c")
        await pilot.pause(0.3)
        text = screen_text(app)
        assert "compliance" in text and "missed" in text
        # The exported report carries the same readings (Markdown table and JSON).
        from ogive.ui.report import markdown, screen_state

        md = markdown(app.ws, [])
        assert "## Objectives" in md and "| after | 250ms@99% |" in md
        state = screen_state(app.ws, [])
        assert [c["name"] for c in state["objectives"]] == ["before", "after"]
        assert state["objectives"][1] == direct.to_dict()
