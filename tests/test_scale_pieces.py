"""The ``k1-ladder`` scale reads sorted input by binary search (a digest's tie runs come
in rank order); it must give the same numbers, to the bit, as the point-by-point path.

The reference is the scale itself on one point at a time (arrays of one element always
take the plain path), so any difference is the fast path's. Also checked: the scale is
non-decreasing in q, as every t-digest scale function must be (Dunning and Ertl,
"Computing extremely accurate quantiles using t-digests", 2019, section 2.1).
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from ogive.sketch.scale import FOCUS_QS, SCALES

K = SCALES["k1-ladder"]


@st.composite
def stretches(draw: st.DrawFn) -> tuple[np.ndarray, float]:
    """A few ascending stretches of q, crowded around the focus quantiles and their
    windows' edges (where the exact test decides), sometimes with a NaN."""
    n = draw(st.floats(10.0, 1e12))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    parts = []
    for _ in range(draw(st.integers(1, 6))):
        size = draw(st.integers(0, 400))
        sd = np.sqrt(np.array(FOCUS_QS) * (1 - np.array(FOCUS_QS)) / n)
        at = rng.integers(0, len(FOCUS_QS), size)
        near = np.array(FOCUS_QS)[at] + rng.choice([-43.0, -3.0, 0.0, 3.0, 43.0], size) * sd[at]
        q = np.where(rng.random(size) < 0.5, near * (1 + rng.normal(0, 1e-15, size)), rng.random(size))
        parts.append(np.sort(np.clip(q, 0.0, 1.0)))
    q = np.concatenate(parts) if parts else np.empty(0)
    if q.size and draw(st.booleans()):
        q[rng.integers(0, q.size)] = np.nan
    return q, n


@settings(max_examples=150, deadline=None)
@given(stretches())
def test_sorted_stretches_read_as_point_by_point(case: tuple[np.ndarray, float]) -> None:
    q, n = case
    whole = K(q, 1600.0, n)
    one_by_one = np.array([K(q[i : i + 1], 1600.0, n)[0] for i in range(q.size)])
    assert np.array_equal(whole, one_by_one, equal_nan=True)


def test_scale_is_non_decreasing_through_the_focus_windows() -> None:
    n = 4e6
    q = np.sort(np.concatenate([np.linspace(0, 1, 200_001), np.array(FOCUS_QS) + 1e-9]))
    k = K(q, 1600.0, n)
    assert np.all(np.diff(k) >= -1e-9)
    # Far from every window the ladder adds only whole steps to k1 (its steps are flat).
    k1 = 1600.0 / (2 * np.pi) * np.arcsin(2 * q - 1)
    full = (3.0 + 1.0) / 0.15
    far = np.abs(q[:, None] - np.array(FOCUS_QS)[None, :]).min(axis=1) > 0.05
    above = (q[:, None] >= np.array(FOCUS_QS)[None, :]).sum(axis=1)
    assert np.allclose(k[far], k1[far] + (2 * above[far] - len(FOCUS_QS)) * full, rtol=0, atol=1e-9)
