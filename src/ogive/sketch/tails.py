"""Exact tails of merged sketches: what is known exact, and no more."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]

Side = tuple[FloatArray, bool]
"""A buffer of one tail and whether it holds every value of its sketch."""


def fold_tails(low: Sequence[Side], high: Sequence[Side], k: int) -> tuple[FloatArray, FloatArray]:
    """The ``k`` smallest and largest values of several sketches, as far as they are known.

    A buffer that does not hold all of its sketch's values says nothing about values
    beyond its innermost entry: the merged low tail is exact only up to the smallest
    such entry (values equal to it are real copies, so they may stay), and may come
    out shorter than ``k``. Taking the ``k`` smallest of the union instead (the old
    way) claimed values exact that were missing: merging a sketch with a 10-value tail
    into one with a 100-value tail put the 11th smallest of the first sketch nowhere.
    """
    return _fold_one(low, k, low=True), _fold_one(high, k, low=False)


def _fold_one(sides: Sequence[Side], k: int, *, low: bool) -> FloatArray:
    cut: float | None = None
    for buf, complete in sides:
        if complete:
            continue
        if buf.size == 0:
            return np.empty(0)
        edge = float(buf[-1] if low else buf[0])
        cut = edge if cut is None else (min(cut, edge) if low else max(cut, edge))
    parts = [buf for buf, _ in sides if buf.size]
    if not parts:
        return np.empty(0)
    if cut is not None:
        parts = [b[b <= cut] if low else b[b >= cut] for b in parts]
    vals = np.concatenate(parts) if len(parts) > 1 else parts[0]
    if vals.size > k:
        vals = np.partition(vals, k - 1)[:k] if low else np.partition(vals, vals.size - k)[vals.size - k :]
    return np.sort(vals)
