"""Zeros and quantised values in plots (issue 11): log axes stay log, zeros sit at the floor, counted.

A web server log whose request time is often ``0.000`` used to get linear axes, which
squeezed p50, p90 and p99 into one corner under one label. The counts below are checked
against numpy on the raw values (``np.count_nonzero(v <= 0)``).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from ogive import render
from ogive.cli import main
from ogive.fit.curves import plot_inputs
from ogive.sketch import Sketch, SketchSet
from ogive.store import save_sketches


def _cached_latencies(seed: int, slow: float) -> np.ndarray:
    """Invented: 55 % of requests answered from cache in 0.000 ms, the rest lognormal."""
    rng = np.random.default_rng(seed)
    v = rng.lognormal(np.log(20.0), 1.0, 20_000) * slow
    v[rng.random(v.size) < 0.55] = 0.0
    return np.round(v, 0)  # whole milliseconds, as such logs print them: quantised too


def _sketch(v: np.ndarray) -> Sketch:
    s = Sketch("ms")
    s.add(v)
    return s


@pytest.fixture()
def pair() -> tuple[Sketch, Sketch, np.ndarray, np.ndarray]:
    a, b = _cached_latencies(1, 1.0), _cached_latencies(2, 1.6)
    return _sketch(a), _sketch(b), a, b


def test_zeros_keep_log_axes_and_are_counted(pair: tuple[Sketch, Sketch, np.ndarray, np.ndarray]) -> None:
    before, after, a, b = pair
    data = plot_inputs("qq", after, before, subject_label="after", reference_label="before")
    assert dict(data.at_or_below_zero) == {
        "after": np.count_nonzero(b <= 0),
        "before": np.count_nonzero(a <= 0),
    }
    fig = render.qq_figure(data, width=80, height=24)
    assert fig.xscale.kind == "log" and fig.yscale.kind == "log"
    head = "\n".join(fig.lines()[:2])
    assert "≤0 at floor: after 1" in head and "before 1" in head  # 11k of 20k each
    # p50 is 0 on both sides (55 % zeros): drawn on the floor, in the bottom-left cell.
    assert fig.marks["p50"] == (fig.canvas.rows - 1, 0)
    # p50, p90 and p99 differ, so each keeps a label of its own.
    texts = {lab.text for lab in fig.labels}
    assert {"p50", "p90", "p99"} <= texts


def test_the_cdf_starts_at_the_share_of_zeros(pair: tuple[Sketch, Sketch, np.ndarray, np.ndarray]) -> None:
    before, after, a, _ = pair
    data = plot_inputs("cdf", after, before, subject_label="after", reference_label="before")
    fig = render.cdf_figure(data, width=80, height=20)
    assert fig.xscale.kind == "log"
    # The reference's curve is drawn from the floor at P = share of zeros (numpy count).
    share = np.count_nonzero(a <= 0) / a.size
    ref = next(s for s in data.series if s.label == "before")
    assert ref.values[np.searchsorted(ref.probs, share) - 1] == 0.0


def test_linear_and_log_are_forced_from_the_command_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    rng = np.random.default_rng(3)
    values = rng.normal(5.0, 3.0, 5000)  # some negative: auto gives a linear axis
    path = tmp_path / "n.ogive"
    save_sketches(path, SketchSet({"x": _sketch(values), "y": _sketch(values + 1.0)}))
    base = ["plot", f"{path}:x", f"{path}:y", "--width", "60", "--height", "16", "--kind", "cdf"]
    assert main(base) == 0
    auto = capsys.readouterr().out
    assert "≤0 at floor" not in auto
    assert main([*base, "--log"]) == 0
    forced = capsys.readouterr().out
    negatives = np.count_nonzero(values <= 0)
    assert f"x {negatives}" in forced or f"x {negatives / 1000:.3g}k" in forced
    with pytest.raises(SystemExit) as refused:  # one or the other (argparse's usage error)
        main([*base, "--log", "--linear"])
    assert refused.value.code == 3
    capsys.readouterr()
