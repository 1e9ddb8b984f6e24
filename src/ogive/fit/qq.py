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

from ..sketch import Binned, Distribution, Sketch, is_binned, is_distribution

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
    subject: Distribution,
    reference: Distribution,
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
    subject: Distribution,
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


# ---------------------------------------------------------------- bucket boxes
@dataclass(frozen=True)
class BucketBox:
    """Where the Q-Q curve must pass for probabilities from ``p_low`` to ``p_high``.

    A binned side's quantiles there are only known to lie in one bucket (or, across
    layouts, one bound): the box spans that range on its axis, and the other side's
    quantiles over the same probabilities on the other axis. The true curve runs
    through every box; a box wholly outside the band is a difference the buckets
    resolve, a box that straddles it one they cannot.
    """

    p_low: float
    p_high: float
    x_low: float
    x_high: float
    y_low: float
    y_high: float

    def to_dict(self) -> dict[str, Any]:
        def num(v: float) -> float | None:
            return float(v) if np.isfinite(v) else None

        return {
            "p_low": self.p_low,
            "p_high": self.p_high,
            "x_low": num(self.x_low),
            "x_high": num(self.x_high),
            "y_low": num(self.y_low),
            "y_high": num(self.y_high),
        }


def _side(
    d: Sketch | Binned | QuantileModel, p: FloatArray, mid: FloatArray
) -> tuple[FloatArray, FloatArray]:
    """A side's range over each probability segment: bucket bounds (binned), else its quantiles
    at the segment's ends."""
    if is_binned(d):
        return d.quantile_bounds(mid)
    if is_distribution(d):
        q = d.quantile(p)
    else:
        with np.errstate(all="ignore"):
            q = np.asarray(d.ppf(p), dtype=np.float64)
    return q[:-1], q[1:]


def bucket_boxes(
    subject: Sketch | Binned, reference: Sketch | Binned | QuantileModel, probs: FloatArray
) -> tuple[BucketBox, ...]:
    """One box per run of probabilities over which the binned side(s) hold one bucket.

    Within ``probs``' range; the runs are cut at every cumulative share where a bucket of
    either binned side begins or ends (``Binned.levels``), so each box is a bucket.
    """
    if probs.size == 0:
        return ()
    cuts = [probs[:1], probs[-1:]]
    for d in (subject, reference):
        if is_binned(d):
            cuts.append(d.levels())
    p = np.unique(np.clip(np.concatenate(cuts), probs[0], probs[-1]))
    if p.size < 2:
        return ()
    mid = 0.5 * (p[:-1] + p[1:])
    y_lo, y_hi = _side(subject, p, mid)
    x_lo, x_hi = _side(reference, p, mid)
    return tuple(
        BucketBox(float(a), float(b), float(xl), float(xh), float(yl), float(yh))
        for a, b, xl, xh, yl, yh in zip(p[:-1], p[1:], x_lo, x_hi, y_lo, y_hi, strict=True)
        if b > a
    )
