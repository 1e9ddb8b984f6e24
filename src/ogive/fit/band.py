"""The simultaneous band on the Q-Q, detrended and P-P plots, from the DKW inequality.

A. Dvoretzky, J. Kiefer and J. Wolfowitz, *Ann. Math. Statist.* 27 (1956)
642–669, with the tight constant of P. Massart, "The tight constant in the
Dvoretzky–Kiefer–Wolfowitz inequality", *Ann. Probab.* 18 (1990) 1269–1283:
P(sup_x |F_n(x) − F(x)| > ε) ≤ 2·exp(−2nε²), so ε = sqrt(ln(2/α) / (2n)) holds for
the whole curve at once at level 1 − α. A sketch's CDF is itself off by at most its
rank error, which is added to ε. For two sketches both empirical CDFs must stay within
their own ε of a common F (α/2 each, Bonferroni), so they differ by at most the sum.
On a Q-Q plot the band is [Q_ref(p − ε), Q_ref(p + ε)] at x = Q_ref(p): if the subject
follows the reference, every subject quantile lies inside it with probability at least
1 − α; where p ± ε leaves [0, 1] the band is unbounded (±inf). Against a model fitted
to the same data the band is conservative (the fit already pulled the model towards
the data, as in Lilliefors' correction to the KS test), so a curve leaving it is all
the stronger evidence of misfit.

A binned distribution's counts are exact at its bucket edges and unknown between them.
That uncertainty is not folded into ε: the Q-Q plot draws it as boxes (``qq.bucket_boxes``)
and a binned reference's band is taken from its bucket bounds, [low of Q_ref(p − ε),
high of Q_ref(p + ε)], so the band stays sure while the boxes show what the buckets
cannot resolve.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable

import numpy as np
from numpy.typing import NDArray

from ..sketch import Distribution, is_binned
from .qq import QuantilePairs

FloatArray = NDArray[np.float64]


def dkw_epsilon(n: int, confidence: float = 0.95) -> float:
    """Half-width of the DKW–Massart band for an empirical CDF of ``n`` values."""
    if n < 1:
        raise ValueError(f"n must be at least 1, got {n!r}.")
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must lie strictly between 0 and 1, got {confidence!r}.")
    return math.sqrt(math.log(2.0 / (1.0 - confidence)) / (2.0 * n))


def _own_error(d: Distribution) -> float:
    """A sketch's rank error; none for a binned distribution, whose boxes carry it (module text)."""
    return 0.0 if is_binned(d) else d.rank_error_bound()


def band_epsilon(
    subject: Distribution, reference: Distribution | None = None, *, confidence: float = 0.95
) -> float:
    """ε for subject vs a model (``reference`` None) or vs a second sketch, sketch error included."""
    if reference is None:
        return dkw_epsilon(subject.count, confidence) + _own_error(subject)
    alpha_each = (1.0 - confidence) / 2.0
    return (
        dkw_epsilon(subject.count, 1.0 - alpha_each)
        + dkw_epsilon(reference.count, 1.0 - alpha_each)
        + _own_error(subject)
        + _own_error(reference)
    )


def with_dkw_band(
    pairs: QuantilePairs,
    reference_ppf: Callable[[FloatArray], FloatArray],
    epsilon: float,
    *,
    confidence: float = 0.95,
    reference_bounds: Callable[[FloatArray], tuple[FloatArray, FloatArray]] | None = None,
) -> QuantilePairs:
    """``pairs`` with band_low/high = Q_ref(p ∓ ε): the simultaneous band of the module text.

    ``reference_ppf`` is the reference's quantile function (``model.ppf`` or
    ``sketch.quantile``); ``epsilon`` from :func:`band_epsilon`. ``reference_bounds`` (a
    binned reference's ``quantile_bounds``) takes the band's ends from the bounds instead.
    """
    p = pairs.probs
    lo_p, hi_p = p - epsilon, p + epsilon
    low = np.full(p.shape, -np.inf)
    high = np.full(p.shape, np.inf)
    inside_lo, inside_hi = lo_p > 0, hi_p < 1
    if inside_lo.any():
        at = lo_p[inside_lo]
        low[inside_lo] = reference_bounds(at)[0] if reference_bounds else np.asarray(reference_ppf(at))
    if inside_hi.any():
        at = hi_p[inside_hi]
        high[inside_hi] = reference_bounds(at)[1] if reference_bounds else np.asarray(reference_ppf(at))
    label = f"{confidence:.0%} simultaneous band (DKW, ε={epsilon:.3g})"
    return dataclasses.replace(pairs, band_low=low, band_high=high, band_label=label)
