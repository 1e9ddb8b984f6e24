"""Quantile pairs: the data behind every Q-Q view (sketch vs model, sketch vs sketch).

Produced here, drawn by ``ogive.render``, shown by the UI. The probability grid is
dense in the body and stretched into the tails (on the logit scale), because the tail
is what an engineer acts on and a uniform grid would spend almost every point on the
body.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
from numpy.typing import NDArray

from ..sketch import Sketch

FloatArray = NDArray[np.float64]


class QuantileModel(Protocol):
    """Anything with a quantile function: a fitted family, a frozen scipy distribution."""

    def ppf(self, q: FloatArray) -> FloatArray: ...


@dataclass(frozen=True)
class QuantilePairs:
    probs: FloatArray
    reference: FloatArray
    """Reference quantiles (model or baseline sketch), in ``unit``."""
    subject: FloatArray
    """Subject quantiles (the sketch under study), in ``unit``."""
    unit: str
    reference_label: str
    subject_label: str
    band_low: FloatArray | None = None
    """Optional interval for the subject quantile at each probability (same unit)."""
    band_high: FloatArray | None = None
    band_label: str = ""

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "unit": self.unit,
            "reference_label": self.reference_label,
            "subject_label": self.subject_label,
            "probs": self.probs.tolist(),
            "reference": self.reference.tolist(),
            "subject": self.subject.tolist(),
        }
        if self.band_low is not None and self.band_high is not None:
            out.update(
                band_low=self.band_low.tolist(), band_high=self.band_high.tolist(), band_label=self.band_label
            )
        return out


def probability_grid(n: int, points: int = 200) -> FloatArray:
    """Probabilities evenly spaced in logit(q), from about 1/n to 1 - 1/n.

    The ends stop where the data stop having information: with n values there is no
    empirical quantile beyond the (n-1)/n level. Capped at 1e-6 / 1 - 1e-6.
    """
    edge = max(1.0 / max(n, 2), 1e-6)
    lo, hi = np.log(edge / (1 - edge)), np.log((1 - edge) / edge)
    t = np.linspace(lo, hi, points)
    return np.asarray(1.0 / (1.0 + np.exp(-t)), dtype=np.float64)


def pairs_from_sketches(
    subject: Sketch,
    reference: Sketch,
    *,
    subject_label: str = "subject",
    reference_label: str = "reference",
    probs: FloatArray | None = None,
) -> QuantilePairs:
    p = probability_grid(min(subject.count, reference.count)) if probs is None else probs
    return QuantilePairs(
        probs=p,
        reference=reference.quantile(p),
        subject=subject.quantile(p),
        unit=subject.unit,
        reference_label=reference_label,
        subject_label=subject_label,
    )


def pairs_from_model(
    subject: Sketch,
    model: QuantileModel,
    *,
    subject_label: str = "subject",
    reference_label: str = "model",
    probs: FloatArray | None = None,
) -> QuantilePairs:
    p = probability_grid(subject.count) if probs is None else probs
    return QuantilePairs(
        probs=p,
        reference=np.asarray(model.ppf(p), dtype=np.float64),
        subject=subject.quantile(p),
        unit=subject.unit,
        reference_label=reference_label,
        subject_label=subject_label,
    )
