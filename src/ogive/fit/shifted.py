"""Three-parameter (shifted) families: a two-parameter family moved to a location floor.

Estimating the floor is where maximum likelihood fails: as the floor approaches the
smallest value, the density there (of a Weibull or gamma with shape below one, or a
lognormal of small sigma) grows without bound and so does the likelihood (Smith 1985,
"Maximum likelihood estimation in a class of nonregular cases", *Biometrika* 72).
``estimate.fit_family`` therefore fits these by maximum product of spacings (Cheng &
Amin 1983, "Estimating parameters in continuous univariate distributions with a shifted
origin", *JRSS B* 45), whose objective is bounded, and reports the ordinary likelihood at
that estimate; ``boundary_note`` says when the floor still ran to the minimum.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .family import DataSummary, Family, FloatArray


def _shift_start(s: DataSummary) -> float:
    """log of the distance from a location floor to the minimum: a tenth of min-to-p5."""
    gap = max(s.q(0.05) - s.minimum, 1e-9 * max(abs(s.q(0.5)), 1.0))
    return math.log(gap * 0.5 + 1e-12)


def _loc(theta: FloatArray, s_min: float) -> float:
    return s_min - math.exp(float(theta[-1]))


def shifted(base: Family, name: str, title: str, minimum: float) -> Family:
    """The base family moved to a location floor ``loc = minimum - exp(theta[-1])``.

    The floor stays strictly below the smallest value seen: at ``loc == min`` the
    likelihood of some families (Weibull and gamma with shape < 1) is unbounded, the
    known degeneracy of three-parameter maximum likelihood (Smith 1985, "Maximum
    likelihood estimation in a class of nonregular cases"). ``minimum`` is the data's
    smallest value, so a family is bound to the data it is fitted to.
    """

    def loc_of(t: FloatArray) -> float:
        return _loc(t, minimum)

    def logpdf(x: FloatArray, t: FloatArray) -> FloatArray:
        return base.logpdf(x - loc_of(t), t[:-1])

    def cdfs(x: FloatArray, t: FloatArray) -> tuple[FloatArray, FloatArray]:
        return base.logcdf_pair(x - loc_of(t), t[:-1])

    def natural(t: FloatArray) -> dict[str, float]:
        out = base.natural(t[:-1])
        out["location"] = loc_of(t)
        return out

    def freeze(t: FloatArray) -> Any:
        return base.freeze(t[:-1], loc_of(t))  # type: ignore[call-arg]

    def moved(s: DataSummary, lt: float) -> DataSummary:
        loc = _loc(np.array([lt]), s.minimum)
        return DataSummary(s.probs, s.quantiles - loc, s.mean - loc, s.minimum - loc, s.maximum - loc)

    def start(s: DataSummary) -> list[FloatArray]:
        near = _shift_start(s)
        # A second start with the floor far below lets the fit fall back to ~two parameters.
        far = math.log(max(s.q(0.5) - s.minimum, 1e-12) * 2 + max(s.minimum, 0.0))
        return [np.append(b, lt) for lt in (near, far) for b in base.start(moved(s, lt))]

    return Family(
        name=name,
        title=title,
        scipy_name=base.scipy_name,
        param_names=(*base.param_names, "location"),
        positive=False,
        shifted=True,
        logpdf=logpdf,
        logcdf_pair=cdfs,
        natural=natural,
        freeze=freeze,
        start=start,
    )




def boundary_note(family: Family, theta: FloatArray, minimum: float, n: int) -> str | None:
    """A sentence when the fitted floor sits at the smallest value, else None.

    Under a fitted continuous model the chance of a value at or below the sample
    minimum is about 1 / (n + 1); far less than that (a tenth) means the floor ran to
    the minimum, where the fit describes the smallest value more than the distribution.
    """
    lc, _ = family.logcdf_pair(np.array([minimum]), theta)
    p = float(np.exp(lc[0]))
    expected = 1.0 / (n + 1)
    if p < 0.1 * expected:
        return (
            f"at the boundary: the location ran to the smallest value (P(X <= min) = {p:.2g} "
            f"against about {expected:.2g} expected)"
        )
    return None
