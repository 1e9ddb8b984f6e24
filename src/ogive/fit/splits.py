"""The distance behind the change-point search: counts at a grid, and every split of a
run of windows scored from prefix sums (numpy only).

*Counts on a grid.* Every window is reduced to its counts at a fixed grid of values
x_1 < … < x_G (the pooled distribution's quantiles at probabilities spread over the
body and the tail, :data:`GRID_QS`): ``C[t, g]`` = values of window t that are
<= x_g, read from its sketch. Merging windows adds counts, so the CDF of any run of
windows at the grid is a difference of prefix sums, and every split of a run is scored
in O(G).

*The distance.* A split of a run into "before" (n_b values) and "after" (n_a values)
scores

    D = max_g |F_b(x_g) - F_a(x_g)| / sqrt(F(x_g) (1 - F(x_g)) (1/n_b + 1/n_a))

with F the pooled CDF of the run: the two-sample Kolmogorov–Smirnov gap read at the
grid, each point standardised by its binomial spread, i.e. the sup-norm statistic
with the weight 1/sqrt(F(1-F)) of T. W. Anderson and D. A. Darling, "Asymptotic theory
of certain goodness of fit criteria based on stochastic processes", *Ann. Math.
Statist.* 23 (1952) 193–212. Unweighted, a change confined to the slowest 1 % moves
the CDF by under 0.01 and goes unseen; weighted, it counts as much as a body shift.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

GRID_QS: tuple[float, ...] = (
    0.01, 0.03, 0.06, 0.1, 0.16, 0.23, 0.31, 0.4, 0.5, 0.6, 0.68, 0.75, 0.83, 0.9,
    0.95, 0.97, 0.98, 0.99, 0.995, 0.998, 0.999,
)  # fmt: skip
"""Probabilities of the pooled distribution where windows are counted: denser in the
tail, where latency changes that matter often live, and holding every quantile of the
ladder up to p99.9 (so a change can say which of them moved)."""
MIN_WINDOWS = 2
"""Windows on each side of a split, at least."""
MIN_VALUES = 20
"""Values on each side of a split, at least."""
MIN_TAIL_COUNT = 10.0
"""A grid point is used for a run only where at least this many values are expected on
its thinner side: beyond that the binomial standardisation means nothing."""


def run_weights(total: FloatArray, n: float) -> FloatArray:
    """1 / sqrt(F (1 - F)) per grid point for a run of ``n`` values, 0 where too thin."""
    f = total / n if n > 0 else np.zeros_like(total)
    thin = np.minimum(f, 1.0 - f) * n < MIN_TAIL_COUNT
    with np.errstate(divide="ignore", invalid="ignore"):
        w = 1.0 / np.sqrt(f * (1.0 - f))
    return np.where(thin | ~np.isfinite(w), 0.0, w)


class RunScores:
    """The split profile of one run of windows, under any order of its windows.

    What does not depend on the order is worked out once (the pooled CDF, the weights,
    the grid points that can count), so a permutation test pays only for a cumulative
    sum and a few passes over windows × grid per order.
    """

    def __init__(self, counts: FloatArray, sizes: FloatArray) -> None:
        self.sizes = np.asarray(sizes, dtype=np.float64)
        self.n = float(self.sizes.sum())
        total = np.asarray(counts, dtype=np.float64).sum(axis=0)
        w = run_weights(total, self.n)
        keep = np.flatnonzero(w > 0)
        # Weighted counts of the grid points that can count at all, grid × windows: z is
        # linear in them, and every pass below then runs along contiguous memory (the
        # largest |z| over a few grid points per window is 80x slower the other way).
        self.weighted = np.ascontiguousarray((np.asarray(counts, dtype=np.float64)[:, keep] * w[keep]).T)
        self.total = total[keep] * w[keep]
        f = total[keep] / self.n if self.n > 0 else np.zeros(keep.size)
        self.need = MIN_TAIL_COUNT / np.maximum(np.minimum(f, 1.0 - f), 1e-300)
        """Values a side needs for a grid point to count (its expected count beyond it)."""

    def profile(self, order: IntArray | None = None) -> FloatArray:
        """D for every split (entry k splits before window k; -inf where a side is too thin)."""
        m = self.sizes.size
        out = np.full(m, -np.inf)
        if m < 2 * MIN_WINDOWS or self.total.size == 0:
            return out
        nl = np.cumsum(self.sizes if order is None else self.sizes[order])
        # nb grows and na shrinks with k, so the splits with enough on both sides are one run.
        k0 = max(MIN_WINDOWS, int(np.searchsorted(nl, MIN_VALUES, side="left")) + 1)
        k1 = min(m - MIN_WINDOWS, int(np.searchsorted(nl, self.n - MIN_VALUES, side="right")))
        if k1 < k0:
            return out
        c = self.weighted[:, :k1] if order is None else self.weighted[:, order[:k1]]
        left = np.cumsum(c, axis=1)[:, k0 - 1 : k1]
        nb = nl[k0 - 1 : k1]
        na = self.n - nb
        # F_b - F_a = lb (1/nb + 1/na) - total/na; divided by sqrt(1/nb + 1/na), weighted.
        s = np.sqrt(1.0 / nb + 1.0 / na)
        left *= s[None, :]
        left -= self.total[:, None] * (1.0 / (na * s))[None, :]
        np.abs(left, out=left)
        # A grid point counts for a split only where its smaller side expects MIN_TAIL_COUNT
        # values beyond it: p99.9 says nothing about a side of 300 values.
        side = np.minimum(nb, na)
        thin = np.flatnonzero(self.need > side.min())
        if thin.size:
            left[thin] *= side[None, :] >= self.need[thin][:, None]
        out[k0 : k1 + 1] = left.max(axis=0)
        return out


def split_profile(counts: FloatArray, sizes: FloatArray) -> FloatArray:
    """D for every split of a run: entry k splits before window k (k = 0 and those too
    near an end are -inf). ``counts`` is windows × grid, ``sizes`` the windows' n."""
    return RunScores(counts, sizes).profile()


def best_split(counts: FloatArray, sizes: FloatArray) -> tuple[int, float]:
    prof = split_profile(counts, sizes)
    k = int(np.argmax(prof))
    return k, float(prof[k])
