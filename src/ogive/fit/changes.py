"""Change points in a sequence of time windows, found from the window sketches alone.

What it answers: at which window boundaries did the distribution change, how surely
is each one placed, and was it a step or a gradual change (a rollout) spread over
several windows. It works on counts, never on raw values (numpy only).

Method
------

*The search.* Binary segmentation (L. Yu. Vostrikova, "Detecting 'disorder' in
multidimensional random processes", *Soviet Math. Dokl.* 24 (1981) 55–59): the best
split of the whole run is a change if it passes the threshold below; then both
sides are searched the same way, until no side has one (or :data:`MAX_CHANGES`).
Level d of the search (the whole is level 0) holds at most 2^d runs, and each is
tested at ``alpha / 2^d`` (Bonferroni), so at every level the chance of a false split
stays within ``alpha``: a real change does not drag ghosts in beside it. A deeper
run is tested with ``2 / level - 1`` random orders (at least as many as the first
test, at most :data:`MAX_ORDERS`): after the changes already found are held apart,
what is left is usually either far beyond chance or near it, and the cost of the
search stays near that of its first test.

*The threshold.* When nothing changes, the windows are exchangeable: any order of
them is as likely as the one observed. So the largest D over all splits is compared
with the largest D of the same windows in random orders (a permutation test; e.g.
P. Good, *Permutation, Parametric and Bootstrap Tests of Hypotheses*, 3rd ed., 2005,
ch. 3): the split is called a change when at most ``alpha (B + 1) - 1`` of B random
orders reach it. This holds the false-alarm rate at ``alpha`` on stationary data
whatever the window sizes, the shape of the distribution, or window-to-window
wobble beyond pure sampling (overdispersion), which would make a textbook null
distribution of D call changes that are not there. On stationary data the first
test decides whether anything at all is reported, so ``alpha`` is the chance that a
quiet timeline shows one or more changes. It cannot tell a trend or a daily cycle from
a change: those are real movements of the distribution and are reported as such.
Orders that can no longer change the decision are not drawn (the count of orders
reaching the observed split has passed the limit).

The distance is :mod:`ogive.fit.splits`; placing each change and telling a step from a
span is :mod:`ogive.fit.spans`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .spans import Change, describe
from .splits import GRID_QS, RunScores

FloatArray = NDArray[np.float64]

__all__ = [
    "ALPHA",
    "GRID_QS",
    "Change",
    "ChangeSearch",
    "Split",
    "find_changes",
    "permutations_for",
    "test_run",
]

ALPHA = 0.05
"""Default false-alarm rate: the chance that a stationary timeline shows any change."""


def permutations_for(alpha: float) -> int:
    """Random orders per test: ``5 / alpha - 1`` (99 at 5 %, 499 at 1 %), so that the
    test is exact (``alpha (B + 1)`` a whole number) and a change that clears the
    threshold by a little is not lost to the luck of the draw (common practice)."""
    return round(5.0 / alpha) - 1


MAX_CHANGES = 12
MAX_ORDERS = 399
"""Random orders per test at most (deeper levels of the search test at smaller rates)."""


@dataclass(frozen=True)
class Split:
    """One test of a run of windows: where the best split fell and how it scored."""

    start: int
    stop: int
    """The run tested: windows ``start`` to ``stop - 1``."""
    at: int
    """The best split: the first window after it."""
    distance: float
    """D at the best split."""
    threshold: float
    """The (1 - alpha) quantile of the largest D over the random orders drawn (a guide:
    the decision is ``is_change``, from the count of orders beating the split)."""
    p_value: float
    """(1 + orders at least as extreme) / (1 + orders drawn); orders not drawn once the
    decision was settled make this an upper bound."""
    orders: int
    """Random orders drawn."""
    is_change: bool
    """At most ``alpha (orders + 1) - 1`` random orders reached ``distance``."""


@dataclass(frozen=True)
class ChangeSearch:
    """Everything the search found, with how it was calibrated."""

    changes: tuple[Change, ...]
    tests: tuple[Split, ...]
    alpha: float
    permutations: int
    windows: int
    grid: tuple[float, ...]
    """The values where windows were counted."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "method": "binary segmentation over a tail-weighted two-sample KS distance; "
            "permutation-calibrated threshold",
            "false_alarm_rate": self.alpha,
            "permutations": self.permutations,
            "windows": self.windows,
            "grid": list(self.grid),
            "changes": [c.to_dict() for c in self.changes],
            "tests": [
                {
                    "start": t.start,
                    "stop": t.stop,
                    "at": t.at,
                    "distance": t.distance,
                    "threshold": t.threshold,
                    "p_value": t.p_value,
                    "orders": t.orders,
                    "change": t.is_change,
                }
                for t in self.tests
            ],
        }


def test_run(
    counts: FloatArray,
    sizes: FloatArray,
    start: int,
    stop: int,
    *,
    alpha: float,
    permutations: int,
    rng: np.random.Generator,
) -> Split | None:
    """The permutation test of the best split of windows ``start:stop``; None when the
    run is too short to split."""
    scores = RunScores(counts[start:stop], sizes[start:stop])
    prof = scores.profile()
    k = int(np.argmax(prof))
    d = float(prof[k])
    if not np.isfinite(d):
        return None
    limit = int(np.floor(alpha * (permutations + 1) + 1e-9)) - 1
    # At most `limit` random orders may reach the observed D for the split to be a change.
    null: list[float] = []
    beaten = 0
    for _ in range(permutations):
        dp = float(scores.profile(rng.permutation(stop - start)).max())
        null.append(dp)
        beaten += dp >= d
        if beaten > limit:
            break  # can no longer be a change: the remaining orders cannot undo that
    q = float(np.quantile(np.asarray(null), 1.0 - alpha))
    return Split(start, stop, start + k, d, q, (1.0 + beaten) / (1.0 + len(null)), len(null), beaten <= limit)


def find_changes(
    counts: FloatArray,
    sizes: FloatArray,
    *,
    alpha: float = ALPHA,
    permutations: int | None = None,
    seed: int = 0,
    max_changes: int = MAX_CHANGES,
    grid: tuple[float, ...] = (),
) -> ChangeSearch:
    """Binary segmentation with permutation-calibrated tests (see the module notes).

    ``counts[t, g]``: values of window t at or below grid value g; ``sizes[t]``: its n
    (0 for an empty window, which simply contributes nothing). Seeded: the same input
    gives the same answer.
    """
    if not 0 < alpha < 0.5:
        raise ValueError(f"the false-alarm rate must lie strictly between 0 and 0.5, got {alpha!r}.")
    if permutations is None:
        permutations = permutations_for(alpha)
    if permutations < round(1 / alpha) - 1:
        raise ValueError(f"{permutations} random orders cannot decide at a false-alarm rate of {alpha:g}.")
    counts = np.asarray(counts, dtype=np.float64)
    sizes = np.asarray(sizes, dtype=np.float64)
    rng = np.random.default_rng(seed)
    tests: list[Split] = []
    bounds: list[int] = []
    runs = [(0, sizes.size, 0)]
    while runs and len(bounds) < max_changes:
        start, stop, depth = runs.pop(0)
        # Level d of the search holds at most 2^d runs: testing each at alpha / 2^d keeps
        # the chance of any false split at that level within alpha (Bonferroni).
        level = alpha / 2**depth
        # Deeper runs hold the changes already found apart, so what is left is either
        # far beyond chance or near it: enough orders that two may reach the split.
        orders = permutations if depth == 0 else min(max(round(2 / level) - 1, permutations), MAX_ORDERS)
        if level * (orders + 1) < 1:
            continue  # too deep to decide at this level with the orders allowed
        split = test_run(counts, sizes, start, stop, alpha=level, permutations=orders, rng=rng)
        if split is None:
            continue
        tests.append(split)
        if split.is_change:
            bounds.append(split.at)
            runs += [(start, split.at, depth + 1), (split.at, stop, depth + 1)]
    bounds.sort()
    by_at = {t.at: t for t in tests if t.is_change}
    changes = describe(counts, sizes, bounds, by_at, rng)
    return ChangeSearch(tuple(changes), tuple(tests), alpha, permutations, int(sizes.size), tuple(grid))
