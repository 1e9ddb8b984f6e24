"""Shared pieces for the workspace tests driven through textual's pilot."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from numpy.typing import NDArray
from textual.pilot import Pilot

from ogive.fit.models import BOOTSTRAP_MAX_N
from ogive.sketch import Sketch, SketchSet
from ogive.store import save_sketches
from ogive.ui import OgiveApp
from ogive.ui.screen_text import screen_text

NO_BOOTSTRAP_N = BOOTSTRAP_MAX_N + 1
"""One value more than ``fit_sketch`` gives bootstrap p-values to: the size of the
workspace tests' subjects (each of :func:`pair_file`'s sketches, test_ui_edges.py's log and
CSV groups, test_ui_sizes.py's two large groups), so the fit those tests wait for skips 99
refits per model, which took most of each test's time. None of them reads a p-value; the
bootstrap itself is checked against scipy in test_fit.py."""


async def until_idle(app: OgiveApp, pilot: Pilot[int], limit_s: float = 30.0, settle_s: float = 0.2) -> None:
    """Until no worker runs (at most ``limit_s``), with a pause each side for the redraw.
    Polled, not ``wait_for_complete``: exclusive workers may be cancelled."""
    waited = 0.0
    await pilot.pause(settle_s)
    while any(w.is_running for w in app.workers) and waited < limit_s:
        await pilot.pause(0.05)
        waited += 0.05
    await pilot.pause(settle_s)


async def until_shown(app: OgiveApp, pilot: Pilot[int], text: str, limit_s: float = 10.0) -> str:
    """The screen's words (single-spaced, as a narrow window wraps lines) once they hold
    ``text``, or after ``limit_s``; the caller asserts on what is returned. Polled, where a
    fixed pause waited for a worker (the open prompt's preview) that no flag shows."""
    waited = 0.0
    while True:
        shown = " ".join(screen_text(app).split())
        if text in shown or waited >= limit_s:
            return shown
        await pilot.pause(0.05)
        waited += 0.05


def pair_file(directory: Path, seed: int, after_mu: float, n: int = NO_BOOTSTRAP_N) -> Path:
    """``pair.ogive`` with sketches ``before`` (lognormal(3, 0.5)) and ``after``
    (lognormal(after_mu, 0.5)), ``n`` values each."""
    rng = np.random.default_rng(seed)
    a, b = Sketch("ms"), Sketch("ms")
    a.add(rng.lognormal(3.0, 0.5, n))
    b.add(rng.lognormal(after_mu, 0.5, n))
    path = directory / "pair.ogive"
    save_sketches(path, SketchSet({"before": a, "after": b}))
    return path


def save_each(directory: Path, named: dict[str, NDArray[np.float64]]) -> list[Path]:
    """Each named array of values (ms) as a one-sketch file ``NAME.ogive`` in ``directory``,
    in the order given."""
    out = []
    for name, values in named.items():
        s = Sketch("ms")
        s.add(values)
        path = directory / f"{name}.ogive"
        save_sketches(path, SketchSet({name: s}))
        out.append(path)
    return out
