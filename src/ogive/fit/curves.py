"""The numbers behind the plots that :mod:`ogive.fit.qq` does not already give.

P-P points, CDF overlay series, detrended Q-Q series, the points at p50/p90/p99/p99.9 —
all from sketches (or from quantile pairs, which came from sketches), so the renderer only
draws. Every function costs a few hundred sketch queries, whatever n is.

The simultaneous band on the Q-Q, detrended and P-P plots is :mod:`ogive.fit.band`'s.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Protocol, TypeAlias

import numpy as np
from numpy.typing import NDArray

from ..sketch import Binned, Distribution, Sketch, is_binned, is_distribution, quantile_label
from ..sketch.units import duration_factor, in_unit
from .band import band_epsilon, with_dkw_band
from .qq import BucketBox, QuantilePairs, bucket_boxes, probability_grid

if TYPE_CHECKING:
    from .shift import ShiftFunction

FloatArray = NDArray[np.float64]

MARK_QS: tuple[float, ...] = (0.5, 0.9, 0.99, 0.999)
"""The quantiles a plot names: where engineers read a latency distribution."""


class CDFModel(Protocol):
    """A reference with a CDF (a fitted family, a frozen scipy distribution)."""

    def cdf(self, x: FloatArray) -> FloatArray: ...


def _list(a: FloatArray | None) -> list[float | None] | None:
    if a is None:
        return None
    return [float(v) if np.isfinite(v) else None for v in a]


# ---------------------------------------------------------------- marks
@dataclass(frozen=True)
class Mark:
    """One named quantile on a Q-Q curve."""

    q: float
    reference: float
    subject: float

    @property
    def label(self) -> str:
        return quantile_label(self.q)

    def to_dict(self) -> dict[str, Any]:
        return {"q": self.q, "label": self.label, "reference": self.reference, "subject": self.subject}


def _logit(p: FloatArray) -> FloatArray:
    pc = np.clip(p, 1e-300, 1 - 1e-16)
    return np.asarray(np.log(pc / (1 - pc)), dtype=np.float64)


def marks_from_pairs(pairs: QuantilePairs, qs: tuple[float, ...] = MARK_QS) -> tuple[Mark, ...]:
    """The named quantiles inside the pairs' probability range (interpolated in logit p).

    A quantile beyond the grid (p99.9 of 500 values) is left out: the data say nothing there.
    """
    p = pairs.probs
    if p.size == 0:
        return ()
    lp = _logit(p)
    out = []
    for q in qs:
        if p[0] - 1e-12 <= q <= p[-1] + 1e-12:
            lq = float(_logit(np.array([q]))[0])
            out.append(
                Mark(q, float(np.interp(lq, lp, pairs.reference)), float(np.interp(lq, lp, pairs.subject)))
            )
    return tuple(out)


@dataclass(frozen=True)
class QQData:
    """What the Q-Q plot draws: the quantile pairs (with their band) and the named points."""

    pairs: QuantilePairs
    marks: tuple[Mark, ...]
    at_or_below_zero: tuple[tuple[str, int], ...] = ()
    """(label, values <= 0) for each sketch that has any: a log axis draws them at its floor."""
    boxes: tuple[BucketBox, ...] = ()
    """For a binned side: where its quantiles are sure to lie (``qq.bucket_boxes``)."""
    boxes_label: str = ""

    def to_dict(self) -> dict[str, Any]:
        out = {
            **self.pairs.to_dict(),
            "marks": [m.to_dict() for m in self.marks],
            "at_or_below_zero": dict(self.at_or_below_zero),
        }
        if self.boxes:
            out.update(boxes=[b.to_dict() for b in self.boxes], boxes_label=self.boxes_label)
        return out


def qq_from_pairs(pairs: QuantilePairs) -> QQData:
    return QQData(pairs, marks_from_pairs(pairs))


# ---------------------------------------------------------------- detrended
@dataclass(frozen=True)
class Detrended:
    """Deviation of subject from reference at each probability (the detrended Q-Q view)."""

    probs: FloatArray
    reference: FloatArray
    deviation: FloatArray
    """``subject / reference − 1`` when ``relative``, else ``subject − reference`` in ``unit``."""
    relative: bool
    unit: str
    reference_label: str
    subject_label: str
    band_low: FloatArray | None = None
    band_high: FloatArray | None = None
    band_label: str = ""
    marks: tuple[Mark, ...] = ()
    at_or_below_zero: tuple[tuple[str, int], ...] = ()
    """As :class:`QQData`'s: for a log value axis (``x_axis='value'``)."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "unit": self.unit,
            "relative": self.relative,
            "reference_label": self.reference_label,
            "subject_label": self.subject_label,
            "probs": self.probs.tolist(),
            "reference": _list(self.reference),
            "deviation": _list(self.deviation),
            "band_low": _list(self.band_low),
            "band_high": _list(self.band_high),
            "band_label": self.band_label,
            "marks": [m.to_dict() for m in self.marks],
        }


def detrended_from_pairs(pairs: QuantilePairs) -> Detrended:
    """Relative deviation where every reference quantile is positive, absolute otherwise.

    Relative reads best for latency (a 10 % slower tail is 10 % at 5 ms or at 5 s); a
    reference at or below zero (a normal model's lower tail) has no relative scale.
    """
    ref = pairs.reference
    relative = bool(np.all(ref[np.isfinite(ref)] > 0))

    def dev(v: FloatArray) -> FloatArray:
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.asarray(v / ref - 1.0 if relative else v - ref, dtype=np.float64)

    low = dev(pairs.band_low) if pairs.band_low is not None else None
    high = dev(pairs.band_high) if pairs.band_high is not None else None
    marks = tuple(
        dataclasses.replace(
            m, subject=(m.subject / m.reference - 1.0) if relative else m.subject - m.reference
        )
        for m in marks_from_pairs(pairs)
    )
    return Detrended(
        probs=pairs.probs,
        reference=ref,
        deviation=dev(pairs.subject),
        relative=relative,
        unit=pairs.unit,
        reference_label=pairs.reference_label,
        subject_label=pairs.subject_label,
        band_low=low,
        band_high=high,
        band_label=pairs.band_label,
        marks=marks,
    )


# ---------------------------------------------------------------- P-P
@dataclass(frozen=True)
class PPPoints:
    """(F_ref(x), F_subject(x)) along x: both in [0, 1]; the diagonal means agreement."""

    reference_p: FloatArray
    subject_p: FloatArray
    reference_label: str
    subject_label: str
    epsilon: float | None = None
    """Half-width of a simultaneous band around the diagonal, if known."""
    band_label: str = ""
    marks: tuple[Mark, ...] = ()
    """Mark.reference/subject hold probabilities here."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "reference_label": self.reference_label,
            "subject_label": self.subject_label,
            "reference_p": self.reference_p.tolist(),
            "subject_p": self.subject_p.tolist(),
            "epsilon": self.epsilon,
            "band_label": self.band_label,
            "marks": [m.to_dict() for m in self.marks],
        }


def _pp_marks(ref_p: FloatArray, subj_p: FloatArray, qs: tuple[float, ...]) -> tuple[Mark, ...]:
    out = []
    for q in qs:
        if ref_p.size and ref_p[0] <= q <= ref_p[-1]:
            out.append(Mark(q, q, float(np.interp(q, ref_p, subj_p))))
    return tuple(out)


def pp_from_sketches(
    subject: Sketch | Binned,
    reference: Sketch | Binned | CDFModel,
    *,
    subject_label: str = "subject",
    reference_label: str = "reference",
    probs: FloatArray | None = None,
    confidence: float | None = 0.95,
) -> PPPoints:
    """Exact sketch CDFs at the reference's quantiles (x spread evenly in reference p).

    The x grid is the reference quantiles at ``probs`` (default 201 evenly spaced
    probabilities): P-P plots are read on a linear probability scale, so even spacing
    is what shows.
    """
    p = np.linspace(0.0, 1.0, 201) if probs is None else np.asarray(probs, dtype=np.float64)
    if is_distribution(reference):
        x = reference.quantile(p)
        ref_p = reference.cdf(x)
        eps = band_epsilon(subject, reference, confidence=confidence) if confidence else None
    else:
        ppf = getattr(reference, "ppf", None)
        if ppf is None:
            raise ValueError("the reference model needs a ppf (quantile function) for a P-P plot.")
        with np.errstate(all="ignore"):
            x = np.asarray(ppf(p), dtype=np.float64)
        ref_p = np.asarray(reference.cdf(x), dtype=np.float64)
        ref_p = np.where(np.isfinite(x), ref_p, p)
        eps = band_epsilon(subject, None, confidence=confidence) if confidence else None
    subj_p = np.where(
        np.isfinite(x), subject.cdf(np.where(np.isfinite(x), x, 0.0)), np.where(x > 0, 1.0, 0.0)
    )
    label = f"{confidence:.0%} simultaneous band (DKW, ε={eps:.3g})" if eps is not None and confidence else ""
    return PPPoints(
        ref_p, subj_p, reference_label, subject_label, eps, label, _pp_marks(ref_p, subj_p, MARK_QS)
    )


def pp_from_pairs(pairs: QuantilePairs, *, epsilon: float | None = None) -> PPPoints:
    """P-P points from quantile pairs alone: F_subject(Q_ref(p)) by inverting the subject's quantiles.

    An approximation (linear between grid points, clamped beyond the grid) for callers
    that hold only pairs; :func:`pp_from_sketches` is exact.
    """
    subj = np.maximum.accumulate(np.where(np.isfinite(pairs.subject), pairs.subject, -np.inf))
    subj_p = np.interp(pairs.reference, subj, pairs.probs, left=0.0, right=1.0)
    label = f"simultaneous band (DKW, ε={epsilon:.3g})" if epsilon is not None else ""
    return PPPoints(
        pairs.probs,
        np.asarray(subj_p, dtype=np.float64),
        pairs.reference_label,
        pairs.subject_label,
        epsilon,
        label,
        _pp_marks(pairs.probs, np.asarray(subj_p, dtype=np.float64), MARK_QS),
    )


# ---------------------------------------------------------------- CDF overlay
@dataclass(frozen=True)
class CDFSeries:
    values: FloatArray
    probs: FloatArray
    label: str


@dataclass(frozen=True)
class CDFOverlay:
    """Empirical CDFs of two (or more) distributions in one unit, as (value, p) curves."""

    series: tuple[CDFSeries, ...]
    unit: str
    at_or_below_zero: tuple[tuple[str, int], ...] = ()
    """As :class:`QQData`'s."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "at_or_below_zero": dict(self.at_or_below_zero),
            "unit": self.unit,
            "series": [
                {"label": s.label, "values": _list(s.values), "probs": s.probs.tolist()} for s in self.series
            ],
        }


def cdf_probs(points: int = 241, edge: float = 1e-4) -> FloatArray:
    """Even in p through the body plus logit-spaced tails, so both ends of the curve are drawn."""
    body = np.linspace(0.0, 1.0, points)
    t = np.linspace(math.log(edge / (1 - edge)), -math.log(edge / (1 - edge)), 60)
    tails = 1 / (1 + np.exp(-t))
    return np.unique(np.concatenate((body, tails)))


def cdf_from_sketches(sketches: dict[str, Distribution], *, probs: FloatArray | None = None) -> CDFOverlay:
    if not sketches:
        raise ValueError("a CDF overlay needs at least one sketch.")
    units = {s.unit for s in sketches.values()}
    if len(units) > 1:
        raise ValueError(f"sketches in different units ({', '.join(sorted(units))}) cannot share one axis.")
    p = cdf_probs() if probs is None else probs
    series = tuple(CDFSeries(s.quantile(p), p, name) for name, s in sketches.items())
    return CDFOverlay(series, units.pop())


def cdf_from_pairs(pairs: QuantilePairs) -> CDFOverlay:
    """Reference and subject CDFs traced by their quantiles (exact at the grid)."""
    return CDFOverlay(
        (
            CDFSeries(pairs.reference, pairs.probs, pairs.reference_label),
            CDFSeries(pairs.subject, pairs.probs, pairs.subject_label),
        ),
        pairs.unit,
    )


# ---------------------------------------------------------------- one entry for every plot
PLOT_KINDS: tuple[str, ...] = ("qq", "detrended", "pp", "cdf", "shift")

PlotData: TypeAlias = "QQData | Detrended | PPPoints | CDFOverlay | ShiftFunction"
"""What :func:`plot_inputs` returns: the one object each plot kind draws."""


class QuantileCDFModel(Protocol):
    """A fitted model as the plots need it: quantile function and CDF."""

    def ppf(self, q: FloatArray) -> FloatArray: ...
    def cdf(self, x: FloatArray) -> FloatArray: ...


def plot_inputs(
    kind: str,
    subject: Sketch | Binned,
    reference: Sketch | Binned | QuantileCDFModel,
    *,
    subject_label: str = "subject",
    reference_label: str = "reference",
    band: bool = True,
    confidence: float = 0.95,
) -> PlotData:
    """The result object each plot kind draws, with the subject read against the reference.

    ``qq`` -> QQData (the quantile pairs with the DKW band when ``band``, and the named
    points), ``detrended`` -> Detrended, ``pp`` -> PPPoints, ``cdf`` -> CDFOverlay,
    ``shift`` -> ShiftFunction (subject − reference; needs a sketch as reference). The
    CLI and the workspace both call this, so the same inputs give the same picture
    everywhere; the renderer computes nothing. Raises ValueError (a full sentence).
    """
    from .qq import pairs_from_model, pairs_from_sketches

    if kind not in PLOT_KINDS:
        raise ValueError(f"kind must be one of {', '.join(PLOT_KINDS)}; got {kind!r}.")
    if subject.count == 0:
        raise ValueError(f"{subject_label!r} holds no values; there is nothing to plot.")
    is_sketch = is_distribution(reference)
    if is_sketch:
        assert is_distribution(reference)
        if reference.count == 0:
            raise ValueError(f"{reference_label!r} holds no values; there is nothing to plot.")
        if reference.unit != subject.unit:
            if duration_factor(subject.unit, reference.unit) is None:
                raise ValueError(
                    f"{subject_label!r} is in {subject.unit or 'no unit'!r} and {reference_label!r} in "
                    f"{reference.unit or 'no unit'!r}: they measure different things and share no axis."
                )
            subject = in_unit(subject, reference.unit)  # read in the reference's unit, as compare does
    if kind == "shift":
        if not is_distribution(reference):
            raise ValueError(
                "the shift function compares two sketches; a model has no sampling error to show."
            )
        from .shift import shift_function

        return shift_function(
            reference, subject, confidence=confidence, labels=(reference_label, subject_label)
        )
    if kind == "pp":
        return pp_from_sketches(
            subject,
            reference,
            subject_label=subject_label,
            reference_label=reference_label,
            confidence=confidence if band else None,
        )
    floor = at_or_below_zero({subject_label: subject, reference_label: reference})
    if kind == "cdf":
        if is_distribution(reference):
            overlay = cdf_from_sketches({reference_label: reference, subject_label: subject})
            return dataclasses.replace(overlay, at_or_below_zero=floor)
        p = cdf_probs()
        with np.errstate(all="ignore"):
            ref_q = np.asarray(reference.ppf(p), dtype=np.float64)
        return CDFOverlay(
            (CDFSeries(ref_q, p, reference_label), CDFSeries(subject.quantile(p), p, subject_label)),
            subject.unit,
            floor,
        )
    if is_distribution(reference):
        pairs = pairs_from_sketches(
            subject,
            reference,
            subject_label=subject_label,
            reference_label=reference_label,
            probs=resolved_probs(probability_grid(min(subject.count, reference.count)), (subject, reference)),
        )
        if band:
            eps = band_epsilon(subject, reference, confidence=confidence)
            bounds = reference.quantile_bounds if is_binned(reference) else None
            pairs = with_dkw_band(
                pairs, reference.quantile, eps, confidence=confidence, reference_bounds=bounds
            )
    else:
        pairs = pairs_from_model(
            subject,
            reference,
            subject_label=subject_label,
            reference_label=reference_label,
            probs=resolved_probs(probability_grid(subject.count), (subject,)),
        )
        if band:
            eps = band_epsilon(subject, confidence=confidence)
            pairs = with_dkw_band(pairs, reference.ppf, eps, confidence=confidence)
    if kind == "detrended":
        return dataclasses.replace(detrended_from_pairs(pairs), at_or_below_zero=floor)
    qq = dataclasses.replace(qq_from_pairs(pairs), at_or_below_zero=floor)
    if is_binned(subject) or is_binned(reference):
        sides = [lab for lab, d in ((subject_label, subject), (reference_label, reference)) if is_binned(d)]
        n = min(subject.count, reference.count) if is_distribution(reference) else subject.count
        boxes = bucket_boxes(subject, reference, probability_grid(n))
        qq = dataclasses.replace(qq, boxes=boxes, boxes_label=f"buckets of {' and '.join(sides)}")
    return qq


def resolved_probs(probs: FloatArray, sides: tuple[Distribution, ...]) -> FloatArray:
    """The grid without the probabilities a binned side only places in a bucket that starts at
    0 (its first, [0, b]): a point estimate there is an interpolation from 0, which a log axis
    would draw decades below any real value. The bucket itself is still drawn as a box."""
    keep = np.ones(probs.shape, dtype=bool)
    for d in sides:
        if is_binned(d):
            low, _ = d.quantile_bounds(probs)
            keep &= low > 0
    return probs[keep] if keep.sum() >= 2 else probs


def at_or_below_zero(named: dict[str, Sketch | Binned | QuantileCDFModel]) -> tuple[tuple[str, int], ...]:
    """How many values of each sketch are zero or negative (models have no count): a log
    value axis cannot place them, so the plot draws them at its floor and says how many."""
    return tuple(
        (label, s.zero_count + s.negative_count)
        for label, s in named.items()
        if is_distribution(s) and s.zero_count + s.negative_count
    )
