"""The rank error of a quantile answer, from sure count bounds (shared by both kinds of distribution)."""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray


def quantile_rank_error(d: Any, q: ArrayLike) -> NDArray[np.float64]:
    """Largest possible rank error / n of ``d``'s quantile answer at each q.

    The answer v at position ``q (n - 1)`` is right when that position lies in v's rank
    interval [#(x < v) - 1, #(x <= v)]; ``d.count_bounds`` bounds both ends, so the bound
    holds whatever ``d`` is (a sketch's centroids, a binned distribution's buckets).
    """
    qa = np.asarray(q, dtype=np.float64)
    n = d.count
    if n == 0 or d.exact:
        return np.zeros(qa.shape)
    pos = qa * (n - 1)
    v = d.value_at(pos)
    _, below_most = d.count_bounds(np.nextafter(v, -np.inf))
    at_least, _ = d.count_bounds(v)
    err = np.maximum(0.0, np.maximum(below_most - 1.0 - pos, pos - at_least))
    return np.asarray(err / n, dtype=np.float64)
