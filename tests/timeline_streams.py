"""Synthetic latency streams with known change points, for the timeline's tests and benchmarks.

One simulated day of 5-minute windows (288), each a seeded draw from a two-path
latency mixture (a fast path and a 6 % slow path, both lognormal). The truth of each
kind, in windows from midnight (13:00 is window 156):

* ``none``: nothing changes (i.i.d. all day);
* ``wobble``: nothing changes, but each window's latencies are scaled by its own
  random factor (sd 3 %), the window-to-window noise real services show;
* ``tail``: from 13:00 the slowest 1.5 % of requests (those above the old p98.5) take
  three times as long: p99 and p99.9 triple, nothing up to p98.5 moves;
* ``body``: from 13:00 the fast path is 25 % slower: p50 to p90 move, p99.9 barely;
* ``two``: the body change at 09:00 and the tail change at 17:00;
* ``rollout``: the body and tail changes together, switched on for a share of traffic
  rising evenly from 0 at 13:00 to 1 at 13:40 (a gradual rollout).
"""

from __future__ import annotations

import datetime as dt
import math
from statistics import NormalDist

import numpy as np
from numpy.typing import NDArray

from ogive.sketch import Sketch, SketchSet, timekeys

FloatArray = NDArray[np.float64]

SLOWEST = 45.0 * math.exp(0.5 * NormalDist().inv_cdf(0.75))
"""The old p98.5 (about 63 ms): the slow path's p75, as it holds 6 % of requests and the
fast path puts nothing up there."""

DAY_START_US = dt.datetime(2026, 5, 11, tzinfo=dt.UTC).timestamp() * 1e6
WIDTH_US = 300e6
WINDOWS = 288
KINDS = ("none", "wobble", "tail", "body", "two", "rollout")
TRUTH: dict[str, tuple[tuple[float, float], ...]] = {
    "none": (),
    "wobble": (),
    "tail": ((156, 156),),
    "body": ((156, 156),),
    "two": ((108, 108), (204, 204)),
    "rollout": ((156, 164),),
}
"""Per kind, each change as (start, end) in windows; equal for a step."""


def _share(kind: str, t: FloatArray) -> tuple[FloatArray, FloatArray]:
    """(share switched to the body change, share switched to the tail change) at times ``t``
    (in windows, fractional)."""
    zero = np.zeros_like(t)
    if kind == "tail":
        return zero, (t >= 156).astype(float)
    if kind == "body":
        return (t >= 156).astype(float), zero
    if kind == "two":
        return (t >= 108).astype(float), (t >= 204).astype(float)
    if kind == "rollout":
        ramp = np.clip((t - 156) / 8, 0, 1)
        return ramp, ramp
    return zero, zero


def day(kind: str, seed: int, *, per_window: int = 400, windows: int = WINDOWS) -> list[FloatArray]:
    """The raw latencies (ms) of each window, and nothing else: seeded, so the same day twice."""
    rng = np.random.default_rng(seed)
    out = []
    for w in range(windows):
        n = int(rng.poisson(per_window))
        t = w + rng.random(n)  # each request's time, in windows
        body, tail = _share(kind, t)
        slow = rng.random(n) < 0.06
        fast = rng.lognormal(np.log(4.0), 0.4, n) * np.where(rng.random(n) < body, 1.25, 1.0)
        x = np.where(slow, rng.lognormal(np.log(45.0), 0.5, n), fast)
        x = np.where((x > SLOWEST) & (rng.random(n) < tail), x * 3.0, x)
        if kind == "wobble":
            x = x * np.exp(rng.normal(0, 0.03))
        out.append(np.round(x, 3))
    return out


def sketch_set(values: list[FloatArray], *, compression: float = 200.0, tail: int = 128) -> SketchSet:
    """The timeline set a scan would make of these windows: one sketch per window named
    ``START/DURATION``, and the whole as ``all``."""
    sset = SketchSet()
    whole = Sketch("ms")
    for w, x in enumerate(values):
        if x.size == 0:
            continue
        s = Sketch("ms", compression=compression, tail_size=tail)
        s.add(x)
        sset.sketches[timekeys.window_key(DAY_START_US + w * WIDTH_US, WIDTH_US)] = s
        whole.add(x)
    sset.sketches[timekeys.WHOLE] = whole
    return sset
