"""What a fit returns: the fitted model, its scores, its place, and the report around them.

Every result is a frozen dataclass with ``to_dict()`` (what ``--json`` prints); the
text views render these, they compute nothing.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .family import FloatArray
from .ranking import RANK_MEANING


@dataclass(frozen=True)
class FittedModel:
    """One family with its fitted parameters, in natural units of the sketch."""

    family: str
    label: str
    """Short name for tables and plot legends."""
    params: dict[str, float]
    unit: str
    n_params: int
    loglik: float
    """Grouped-data log-likelihood at the estimate (tail-only: of the excesses)."""
    success: bool
    message: str
    support: str
    """How the family met the data's support: plain, location shift, tail only."""
    tail_only: bool = False
    threshold: float | None = None
    dist: Any = field(default=None, compare=False, repr=False)
    """scipy frozen distribution (or an object with ppf/cdf/sf) of the fitted model."""
    boundary: str | None = None
    """Why the fit sits at the edge of its parameter space (a floor at the minimum), or
    None. Such a fit is ranked after every ordinary one."""
    zero_share: float = 0.0
    """The point mass at exactly 0 a positive family was given (``atoms.py``), or 0."""

    def ppf(self, q: Any) -> FloatArray:
        return np.asarray(self.dist.ppf(np.asarray(q, dtype=np.float64)), dtype=np.float64)

    def cdf(self, x: Any) -> FloatArray:
        return np.asarray(self.dist.cdf(np.asarray(x, dtype=np.float64)), dtype=np.float64)

    def sf(self, x: Any) -> FloatArray:
        return np.asarray(self.dist.sf(np.asarray(x, dtype=np.float64)), dtype=np.float64)

    def to_dict(self) -> dict[str, Any]:
        return {
            "family": self.family,
            "label": self.label,
            "params": {k: _finite(v) for k, v in self.params.items()},
            "unit": self.unit,
            "n_params": self.n_params,
            "loglik": _finite(self.loglik),
            "success": self.success,
            "message": self.message,
            "support": self.support,
            "tail_only": self.tail_only,
            "threshold": _finite(self.threshold) if self.threshold is not None else None,
            "boundary": self.boundary,
            "zero_share": self.zero_share,
        }


@dataclass(frozen=True)
class Scores:
    """How far a model is from the sketch; smaller is better for every field."""

    ks: float
    ad: float
    cvm: float
    aic: float
    bic: float
    tail_error: float
    """Largest |relative quantile error| over p50, p90, p99, p99.9 (tail-only: those above u)."""
    quantile_errors: dict[str, float]
    n: float
    """Values the statistics were computed on (tail-only: those above the threshold)."""
    p_values: dict[str, float] | None = None
    bootstrap: int = 0

    def to_dict(self) -> dict[str, Any]:
        return {
            "ks": _finite(self.ks),
            "ad": _finite(self.ad),
            "cvm": _finite(self.cvm),
            "aic": _finite(self.aic),
            "bic": _finite(self.bic),
            "tail_error": _finite(self.tail_error),
            "quantile_errors": {k: _finite(v) for k, v in self.quantile_errors.items()},
            "n": self.n,
            "p_values": self.p_values,
            "bootstrap_replicates": self.bootstrap,
        }


@dataclass(frozen=True)
class Candidate:
    """A fitted model in the ranking: the model, its scores, its quantiles."""

    rank: int
    model: FittedModel
    scores: Scores
    quantiles: dict[str, float]
    """Model quantiles at p50 ... p99.99 (compare with FitReport.sketch_quantiles)."""

    @property
    def label(self) -> str:
        return self.model.label

    @property
    def family(self) -> str:
        return self.model.family

    @property
    def ok(self) -> bool:
        """An ordinary fit: converged, and not at the boundary of its parameters."""
        return self.model.success and self.model.boundary is None

    def key_value(self, key: str) -> float:
        """The statistic ``key`` ranks by (smaller is better for every key)."""
        s = self.scores
        return {"tail": s.tail_error, "ks": s.ks, "ad": s.ad, "cvm": s.cvm, "aic": s.aic, "bic": s.bic}[key]

    @property
    def params(self) -> dict[str, float]:
        return self.model.params

    def ppf(self, q: Any) -> FloatArray:
        return self.model.ppf(q)

    def cdf(self, x: Any) -> FloatArray:
        return self.model.cdf(x)

    def to_dict(self) -> dict[str, Any]:
        return {
            "rank": self.rank,
            **self.model.to_dict(),
            "scores": self.scores.to_dict(),
            "quantiles": {k: _finite(v) for k, v in self.quantiles.items()},
        }


@dataclass(frozen=True)
class NotFitted:
    family: str
    label: str
    reason: str
    out_of_support: int = 0

    def to_dict(self) -> dict[str, Any]:
        return {"family": self.family, "label": self.label, "reason": self.reason,
                "out_of_support": self.out_of_support}  # fmt: skip


@dataclass(frozen=True)
class FitReport:
    """Candidates best first by ``rank_key``; tail-only models and refusals kept apart."""

    n: int
    unit: str
    rank_key: str
    """The key the models are ordered by (``auto`` resolved to the one it chose)."""
    models: tuple[Candidate, ...]
    tail_models: tuple[Candidate, ...]
    not_fitted: tuple[NotFitted, ...]
    sketch_quantiles: dict[str, float]
    out_of_support: int
    notes: tuple[str, ...]
    rank_reason: str = ""
    """Why that key: the data's size and kind, when chosen by ``auto``."""
    lattice: float | None = None
    """The step every value lies on (1 for integer ms), read as rounding intervals; or None."""
    zero_count: int = 0
    """Values that are exactly 0."""

    @property
    def ranked(self) -> tuple[Candidate, ...]:
        return self.models

    @property
    def best(self) -> Candidate | None:
        return self.models[0] if self.models else None

    def to_dict(self) -> dict[str, Any]:
        return {
            "n": self.n,
            "unit": self.unit,
            "rank_key": self.rank_key,
            "rank_meaning": RANK_MEANING[self.rank_key],
            "rank_reason": self.rank_reason,
            "lattice": self.lattice,
            "zero_count": self.zero_count,
            "zero_share": self.zero_count / self.n if self.n else 0.0,
            "models": [c.to_dict() for c in self.models],
            "tail_models": [c.to_dict() for c in self.tail_models],
            "not_fitted": [x.to_dict() for x in self.not_fitted],
            "sketch_quantiles": {k: _finite(v) for k, v in self.sketch_quantiles.items()},
            "out_of_support": self.out_of_support,
            "notes": list(self.notes),
        }


def _finite(x: float | None) -> float | None:
    return float(x) if x is not None and math.isfinite(x) else None
