"""The tail budget: how much of B lies above a cut taken from A, with a G test.

How much of B lies above A's p99 (or p99.9): "1 % may exceed this" is the usual reading
of an SLO budget, and the ratio says how fast B spends it.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..sketch import Sketch, quantile_label
from .distances import num_or_none


@dataclass(frozen=True)
class TailBudget:
    """How much of B lies above a cut taken from A (A's p99, A's p99.9).

    Test: the likelihood-ratio (G) test of equal proportions in a 2×2 table, G = 2 Σ O
    ln(O/E), referred to χ² with 1 degree of freedom (R. R. Sokal and F. J. Rohlf,
    *Biometry*, 3rd ed., 1995, section 17.4; A. Agresti, *Categorical Data Analysis*,
    2002, section 3.2). The cut is A's own estimate and is treated as fixed, the usual
    reading of a budget ("1 % may exceed this"). Counts read from a sketch carry its
    rank error; G and the p-value are computed at the end of that range nearest to no
    change, so sketch error never manufactures significance.
    """

    label: str
    q: float
    cut: float
    a_share: float
    """Share of A above the cut (about 1 - q)."""
    b_share: float
    b_count: float
    b_count_low: float
    b_count_high: float
    ratio: float
    """``b_share / a_share``: 2.0 means B spends the tail budget twice as fast."""
    g: float
    """NaN when the table is too thin for the test (``verdict`` 'too few values')."""
    p_value: float
    verdict: str
    """'more above the cut', 'less above the cut', 'no clear change' (B against A), or 'too
    few values' when an expected count is below ``MIN_EXPECTED`` and χ² does not apply."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "label": self.label,
            "q": self.q,
            "cut": num_or_none(self.cut),
            "a_share": self.a_share,
            "b_share": self.b_share,
            "b_count": self.b_count,
            "b_count_low": self.b_count_low,
            "b_count_high": self.b_count_high,
            "ratio": num_or_none(self.ratio),
            "g": num_or_none(self.g),
            "p_value": num_or_none(self.p_value),
            "verdict": self.verdict,
            "method": "G test (likelihood ratio) of equal proportions above A's cut",
        }


def g_test_2x2(k1: float, n1: float, k2: float, n2: float) -> tuple[float, float]:
    """G statistic and χ²(1) p-value for k1/n1 against k2/n2 (no continuity correction)."""
    from scipy import stats

    obs = np.array([[k1, n1 - k1], [k2, n2 - k2]], dtype=np.float64)
    exp = obs.sum(axis=1, keepdims=True) * obs.sum(axis=0, keepdims=True) / obs.sum()
    with np.errstate(divide="ignore", invalid="ignore"):
        terms = np.where(obs > 0, obs * np.log(obs / exp), 0.0)
    g = float(max(2.0 * terms.sum(), 0.0))
    return g, float(stats.chi2.sf(g, 1))


MIN_EXPECTED = 5.0
"""Smallest expected count for the χ² reference of the G test (common practice)."""


def tail_budget(a: Sketch, b: Sketch, q: float, *, confidence: float = 0.95) -> TailBudget:
    na, nb = a.count, b.count
    cut = float(a.quantile(np.array(q)))
    ka = float(na - a.rank(np.array(cut)))
    kb = float(nb - b.rank(np.array(cut)))
    # Counts above the cut, bounded by the sketches (exact where they hold the values).
    a_le_lo, a_le_hi = (float(v) for v in a.count_bounds(np.array(cut)))
    b_le_lo, b_le_hi = (float(v) for v in b.count_bounds(np.array(cut)))
    ka_lo, ka_hi = na - a_le_hi, na - a_le_lo
    kb_lo, kb_hi = nb - b_le_hi, nb - b_le_lo
    pa, pb = ka / na, kb / nb
    # Move both counts, within their bounds, towards each other before testing.
    if kb_lo / nb > ka_hi / na:
        ta, tb = ka_hi, kb_lo
    elif kb_hi / nb < ka_lo / na:
        ta, tb = ka_lo, kb_hi
    else:
        ta, tb = None, None
    alpha = 1.0 - confidence
    above = ka + kb
    fewest = min(above, na + nb - above) * min(na, nb) / (na + nb)  # smallest expected cell
    if fewest < MIN_EXPECTED:
        g, p, verdict = float("nan"), float("nan"), "too few values"
    elif ta is None or tb is None:
        g, p, verdict = 0.0, 1.0, "no clear change"
    else:
        g, p = g_test_2x2(ta, na, tb, nb)
        verdict = "no clear change"
        if p < alpha:
            verdict = "more above the cut" if pb > pa else "less above the cut"
    return TailBudget(
        label=f"above A {quantile_label(q)}",
        q=q,
        cut=cut,
        a_share=pa,
        b_share=pb,
        b_count=kb,
        b_count_low=kb_lo,
        b_count_high=kb_hi,
        ratio=pb / pa if pa > 0 else float("inf"),
        g=g,
        p_value=p,
        verdict=verdict,
    )
