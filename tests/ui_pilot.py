"""Shared pieces for the workspace tests driven through textual's pilot."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from numpy.typing import NDArray
from textual.pilot import Pilot

from ogive.sketch import Sketch, SketchSet
from ogive.store import save_sketches
from ogive.ui import OgiveApp


async def until_idle(app: OgiveApp, pilot: Pilot[int], limit_s: float = 30.0, settle_s: float = 0.2) -> None:
    """Until no worker runs (at most ``limit_s``), with a pause each side for the redraw.
    Polled, not ``wait_for_complete``: exclusive workers may be cancelled."""
    waited = 0.0
    await pilot.pause(settle_s)
    while any(w.is_running for w in app.workers) and waited < limit_s:
        await pilot.pause(0.05)
        waited += 0.05
    await pilot.pause(settle_s)


def pair_file(directory: Path, seed: int, after_mu: float) -> Path:
    """``pair.ogive`` with sketches ``before`` (lognormal(3, 0.5)) and ``after``
    (lognormal(after_mu, 0.5)), 5,000 values each."""
    rng = np.random.default_rng(seed)
    a, b = Sketch("ms"), Sketch("ms")
    a.add(rng.lognormal(3.0, 0.5, 5000))
    b.add(rng.lognormal(after_mu, 0.5, 5000))
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
