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


def split_profile(counts: FloatArray, sizes: FloatArray) -> FloatArray:
    """D for every split of a run: entry k splits before window k (k = 0 and those too
    near an end are -inf). ``counts`` is windows × grid, ``sizes`` the windows' n."""
    m = sizes.size
    out = np.full(m, -np.inf)
    if m < 2 * MIN_WINDOWS:
        return out
    left = np.cumsum(counts, axis=0)
    nl = np.cumsum(sizes)
    total, n = left[-1], float(nl[-1])
    w = run_weights(total, n)
    if not w.any():
        return out
    k = np.arange(MIN_WINDOWS, m - MIN_WINDOWS + 1)
    lb, nb = left[k - 1], nl[k - 1]
    na = n - nb
    ok = (nb >= MIN_VALUES) & (na >= MIN_VALUES)
    k, lb, nb, na = k[ok], lb[ok], nb[ok], na[ok]
    if k.size == 0:
        return out
    # F_b - F_a = lb (1/nb + 1/na) - total/na; divided by sqrt(1/nb + 1/na) and times w.
    s = np.sqrt(1.0 / nb + 1.0 / na)
    z = np.abs((lb * s[:, None] - total[None, :] / (na * s)[:, None]) * w[None, :])
    # A grid point counts for a split only where its smaller side expects MIN_TAIL_COUNT
    # values beyond it: p99.9 says nothing about a side of 300 values.
    f = total / n
    need = MIN_TAIL_COUNT / np.maximum(np.minimum(f, 1.0 - f), 1e-300)
    z[np.minimum(nb, na)[:, None] < need[None, :]] = 0.0
    out[k] = z.max(axis=1)
    return out


def best_split(counts: FloatArray, sizes: FloatArray) -> tuple[int, float]:
    prof = split_profile(counts, sizes)
    k = int(np.argmax(prof))
    return k, float(prof[k])
