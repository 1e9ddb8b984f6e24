"""What a candidate family is to the fitter, and the numerics every family shares.

A family is a row of closed-form functions in an unconstrained parameter vector
``theta`` (logs of positive parameters, a logit for a weight, a log distance below the
minimum for a location floor), so an unconstrained optimiser cannot step outside the
parameter space; ``natural(theta)`` gives the parameters in the units people talk in.

Why closed forms and not ``scipy.stats`` inside the likelihood: a scipy distribution
method costs a few hundred microseconds of argument checking per call, and a fit makes
hundreds of calls; the formulas (checked against scipy in ``tests/test_fit.py``) cost
a few microseconds on the same arrays. scipy still supplies the frozen distribution of
the result, so quantiles, draws and everything else a caller does with a fitted model
come from the reference library.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
BoolArray = NDArray[np.bool_]
Fn = Callable[[FloatArray, FloatArray], FloatArray]

LOG_2PI = math.log(2 * math.pi)
NEG_INF = -np.inf


@dataclass(frozen=True)
class DataSummary:
    """What the starting values need from the data: a few quantiles, the mean, the minimum."""

    probs: FloatArray
    quantiles: FloatArray
    mean: float
    minimum: float
    maximum: float

    def q(self, p: float) -> float:
        return float(np.interp(p, self.probs, self.quantiles))


@dataclass(frozen=True)
class Family:
    """One row of the registry: how to evaluate, start, name and freeze a family."""

    name: str
    title: str
    """Short label for tables and plots."""
    scipy_name: str
    """The scipy.stats distribution behind the frozen model, or 'custom'."""
    param_names: tuple[str, ...]
    positive: bool
    """Support is x > 0: not applicable when the data hold values below zero."""
    shifted: bool
    """Has a location floor below the minimum (a third parameter)."""
    logpdf: Fn
    logcdf_pair: Callable[[FloatArray, FloatArray], tuple[FloatArray, FloatArray]]
    """(log CDF, log survival) at x for theta; both are needed for accurate bin masses."""
    natural: Callable[[FloatArray], dict[str, float]]
    freeze: Callable[..., Any]
    """theta (and, for shifted families, a location) -> frozen distribution."""
    start: Callable[[DataSummary], list[FloatArray]]
    """Crude starting points; quantile matching refines them before the likelihood."""

    @property
    def n_params(self) -> int:
        return len(self.param_names)


def positive_part(x: FloatArray) -> tuple[FloatArray, BoolArray]:
    """x where positive (1 elsewhere, so logs stay finite) and the mask of where it is."""
    ok = x > 0
    return np.where(ok, x, 1.0), ok


def log1mexp(a: FloatArray) -> FloatArray:
    """log(1 - exp(a)) for a <= 0, accurate at both ends (Mächler 2012)."""
    a = np.minimum(a, 0.0)
    with np.errstate(divide="ignore"):
        return np.asarray(np.where(a > -math.log(2), np.log(-np.expm1(a)), np.log1p(-np.exp(a))))


def from_logsf(logsf: FloatArray, ok: BoolArray) -> tuple[FloatArray, FloatArray]:
    """(log CDF, log survival) from the log survival, outside the support 0 and 1."""
    logcdf = log1mexp(logsf)
    return np.where(ok, logcdf, NEG_INF), np.where(ok, logsf, 0.0)
