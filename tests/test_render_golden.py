"""Golden-file tests: every plot kind at 40×12, 80×24 and 120×40, braille and ASCII.

The inputs are closed-form quantiles from scipy.stats (not sketches), so a change in
the sketch cannot move a golden file; only a change in drawing can. To accept a
deliberate change in drawing, regenerate and review the diff:

    OGIVE_UPDATE_GOLDEN=1 /work/venv/bin/pytest tests/test_render_golden.py
    git diff tests/golden/
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import scipy.stats as st

from ogive import render
from ogive.fit.band import dkw_epsilon, with_dkw_band
from ogive.fit.curves import cdf_from_pairs, detrended_from_pairs, pp_from_pairs, qq_from_pairs
from ogive.fit.qq import QuantilePairs, probability_grid
from ogive.fit.shift import ShiftFunction

GOLDEN = Path(__file__).parent / "golden"
UPDATE = os.environ.get("OGIVE_UPDATE_GOLDEN") == "1"
SIZES = ((40, 12), (80, 24), (120, 40))


def _pairs() -> QuantilePairs:
    # Invented scenario: checkout latency whose tail is heavier than the fitted lognormal.
    p = probability_grid(100_000)
    model = st.lognorm(0.45, scale=90.0)
    data = st.lognorm(0.55, scale=92.0)
    pairs = QuantilePairs(p, model.ppf(p), data.ppf(p), "ms", "lognormal fit", "checkout")
    return with_dkw_band(pairs, model.ppf, dkw_epsilon(100_000))


def _shift() -> ShiftFunction:
    probs = np.array([0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 0.99, 0.999])
    delta = np.array([1.0, 1.5, 2.0, 2.0, 3.0, 4.0, 5.0, 8.0, 15.0, 30.0, 90.0, 240.0])
    half = np.array([2.0, 2.0, 2.0, 2.5, 2.5, 3.0, 3.0, 4.0, 6.0, 10.0, 40.0, np.inf])
    return ShiftFunction(
        probs=probs,
        a_values=np.linspace(50, 900, probs.size),
        b_values=np.linspace(50, 900, probs.size) + delta,
        delta=delta,
        delta_low=delta - half,
        delta_high=delta + np.where(np.isfinite(half), half, 60.0),
        confidence=0.95,
        per_interval_confidence=1 - 0.05 / 24,
        unit="ms",
        labels=("before", "after"),
    )


def _draw(kind: str, width: int, height: int, ascii_only: bool) -> list[str]:
    pairs = _pairs()
    opts: dict[str, Any] = {"width": width, "height": height, "ascii_only": ascii_only}
    if kind == "qq":
        return render.qq_plot(qq_from_pairs(pairs), **opts)
    if kind == "detrended":
        return render.detrended_plot(detrended_from_pairs(pairs), **opts)
    if kind == "pp":
        return render.pp_plot(pp_from_pairs(pairs, epsilon=dkw_epsilon(100_000)), **opts)
    if kind == "cdf":
        return render.cdf_plot(cdf_from_pairs(pairs), **opts)
    return render.shift_plot(_shift(), **opts)


@pytest.mark.parametrize("ascii_only", [False, True], ids=["braille", "ascii"])
@pytest.mark.parametrize("size", SIZES, ids=[f"{w}x{h}" for w, h in SIZES])
@pytest.mark.parametrize("kind", ["qq", "detrended", "pp", "cdf", "shift"])
def test_golden(kind: str, size: tuple[int, int], ascii_only: bool) -> None:
    width, height = size
    lines = _draw(kind, width, height, ascii_only)
    assert len(lines) == height
    assert all(len(line) <= width for line in lines)
    if ascii_only:
        assert all(ch.isascii() for line in lines for ch in line)
    path = GOLDEN / f"{kind}_{width}x{height}_{'ascii' if ascii_only else 'braille'}.txt"
    text = "\n".join(lines) + "\n"
    if UPDATE or not path.exists():
        if not UPDATE:
            pytest.fail(f"{path.name} is missing; run with OGIVE_UPDATE_GOLDEN=1 to create it")
        path.write_text(text, encoding="utf-8")
    assert text == path.read_text(encoding="utf-8"), f"{path.name} differs; see the module docstring"
