"""Which axes a plot gets: scales, tick formats and axis names, for one plot or a line-up.

:func:`plot_axes` takes every data object that will share the axes — one for a single
plot, one per model for a line-up — and covers them all, so a line-up's panels get
exactly the scales the single plot would give the union of their data. Display
choices only (log or linear, how far a band may stretch the range); no statistics.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TypeVar

import numpy as np
from numpy.typing import NDArray

from ..fit.curves import CDFOverlay, Detrended, PlotData, PPPoints, QQData
from ..numbers import percent, quantity
from .ticks import Scale, make_scale

FloatArray = NDArray[np.float64]
Format = Callable[[float, int], str]
T = TypeVar("T")


def value_format(unit: str, ascii_only: bool) -> Format:
    """Tick labels for values in ``unit`` (``250ms``, ``1.5s``)."""
    return lambda v, d: quantity(v, unit, digits=d, compact=True, ascii_only=ascii_only)


def percent_format(v: float, _d: int) -> str:
    return percent(v, signed=True, compact=True)


def prob_format(v: float, d: int) -> str:
    text = f"{v:.{max(d - 1, 1)}f}".rstrip("0").rstrip(".")
    return text if text not in ("", "-0") else "0"


def axis_kind(log: bool | None, *arrays: FloatArray) -> str:
    """'log' when asked, or when not said and no value is negative; 'linear' otherwise.

    Zeros do not make an axis linear: a latency field full of ``0.000`` (an answer from
    cache) on a linear axis squeezes p50 to p99 into one corner. They are drawn at the
    log axis's floor instead (:func:`on_axis`) and the legend says how many there are.
    A log axis needs at least one positive value.
    """
    finite = np.concatenate([a[np.isfinite(a)] for a in arrays]) if arrays else np.empty(0)
    if not bool(np.any(finite > 0)):
        return "linear"
    if log is None:
        return "linear" if bool(np.any(finite < 0)) else "log"
    return "log" if log else "linear"


def on_axis(scale: Scale, values: FloatArray) -> FloatArray:
    """On a log axis, values at or below zero (which it cannot place) at its floor."""
    if scale.kind != "log":
        return values
    return np.where(np.isfinite(values) & (values <= 0), scale.lo, values)


def with_unit(text: str, unit: str) -> str:
    return f"{text} ({unit})" if unit and unit not in text else text


def robust_range(values: list[FloatArray], cap_from: FloatArray, factor: float = 4.0) -> FloatArray:
    """Band values within ``factor`` × the data's own size (a runaway band edge would flatten the data)."""
    data = cap_from[np.isfinite(cap_from)]
    limit = factor * max(float(np.abs(data).max()) if data.size else 0.0, 0.01)
    keep = [v[np.isfinite(v) & (np.abs(v) <= limit)] for v in values]
    return np.concatenate([data, *keep, np.array([0.0])])


@dataclass(frozen=True)
class PlotAxes:
    """Both scales, their tick formats and the axis names."""

    xscale: Scale
    yscale: Scale
    xfmt: Format
    yfmt: Format
    x_title: str
    y_title: str


def plot_axes(
    kind: str,
    datas: Sequence[PlotData],
    *,
    log: bool | None = None,
    x_axis: str = "prob",
    prob_axis: str = "linear",
    ascii_only: bool = False,
    reference_label: str | None = None,
    focus: float | None = None,
) -> PlotAxes:
    """Axes covering every object in ``datas`` (all of plot ``kind``).

    ``reference_label`` names the x axis in place of the data's own reference (a
    line-up's panels each have another model: "each model"). ``x_axis`` is the detrended
    plot's ('prob' or 'value'), ``prob_axis`` the CDF's ('linear' or 'logit').
    ``focus`` makes the axes follow the data (a line-up's, where the worst model would
    otherwise set the range for all): detrended, the y range covers the deviations at
    probabilities from ``focus`` up; Q-Q, it covers the data and the models' quantiles
    within a decade of them (log axes; one data span on linear ones). Points beyond
    are the painter's to mark.
    """
    if not datas:
        raise ValueError("axes need at least one plot's data.")
    if kind == "qq":
        return _qq_axes(_all(datas, QQData), log, ascii_only, reference_label, focus is not None)
    if kind == "detrended":
        return _detrended_axes(_all(datas, Detrended), log, x_axis, ascii_only, reference_label, focus)
    if kind == "pp":
        pp = _all(datas, PPPoints)[0]
        unit = Scale("linear", 0.0, 1.0)
        ref = reference_label or pp.reference_label
        return PlotAxes(unit, unit, prob_format, prob_format, f"F {ref}", f"F {pp.subject_label}")
    if kind == "cdf":
        return _cdf_axes(_all(datas, CDFOverlay), log, prob_axis, ascii_only)
    raise ValueError(f"no shared axes for plot kind {kind!r}.")


def _all(datas: Sequence[PlotData], cls: type[T]) -> list[T]:
    """``datas`` as ``cls`` objects; a stray object of another kind is a caller's mistake."""
    out: list[T] = [d for d in datas if isinstance(d, cls)]
    if len(out) != len(datas):
        raise TypeError(f"every plot's data must be a {cls.__name__} here.")
    return out


def _qq_axes(
    qqs: list[QQData], log: bool | None, ascii_only: bool, ref_label: str | None, focus: bool
) -> PlotAxes:
    arrays = [a for d in qqs for a in (d.pairs.reference, d.pairs.subject)]
    kind = axis_kind(log, *arrays)
    values = np.concatenate(arrays + [_box_values(d) for d in qqs])
    if focus:
        data = np.concatenate([d.pairs.subject for d in qqs])
        data = data[np.isfinite(data) & ((data > 0) if kind == "log" else True)]
        if data.size:
            lo, hi = float(data.min()), float(data.max())
            lo, hi = (lo / 10, hi * 10) if kind == "log" else (2 * lo - hi, 2 * hi - lo)
            values = np.concatenate([data, values[(values >= lo) & (values <= hi)]])
    scale = make_scale(kind, values)
    pairs = qqs[0].pairs
    fmt = value_format(pairs.unit, ascii_only)
    return PlotAxes(
        scale,
        scale,  # the same scale on both axes: y = x runs corner to corner
        fmt,
        fmt,
        ref_label or pairs.reference_label,
        with_unit(pairs.subject_label, pairs.unit),
    )


def _box_values(data: QQData) -> FloatArray:
    """The finite corners of the bucket boxes, so the axes hold every box the buckets give."""
    v = np.array([[b.x_low, b.x_high, b.y_low, b.y_high] for b in data.boxes]).ravel()
    return v[np.isfinite(v) & (v > 0)] if v.size else np.empty(0)  # a 0 end sits at a log axis's floor


def _detrended_axes(
    dets: list[Detrended],
    log: bool | None,
    x_axis: str,
    ascii_only: bool,
    ref_label: str | None,
    focus: float | None,
) -> PlotAxes:
    if x_axis not in ("prob", "value"):
        raise ValueError(f"x_axis must be 'prob' or 'value', got {x_axis!r}.")
    d = dets[0]
    ref = ref_label or d.reference_label
    xfmt: Format
    if x_axis == "prob":
        xscale = make_scale("logit", np.concatenate([e.probs for e in dets]), pad=0.02)
        # In a line-up every panel has its own reference, but p is the same for all.
        xfmt, x_title = prob_format, "probability" if ref_label else f"probability ({ref})"
    else:
        refs = [e.reference for e in dets]
        xscale = make_scale(axis_kind(log, *refs), np.concatenate(refs))
        xfmt, x_title = value_format(d.unit, ascii_only), ref
    spans = []
    for e in dets:
        keep = e.probs >= focus if focus is not None else np.ones(e.probs.shape, dtype=bool)
        bands = [b[keep] for b in (e.band_low, e.band_high) if b is not None]
        spans.append(robust_range(bands, e.deviation[keep]))
    yscale = make_scale("linear", np.concatenate(spans), pad=0.05)
    return PlotAxes(
        xscale,
        yscale,
        xfmt,
        percent_format if d.relative else value_format(d.unit, ascii_only),
        x_title,
        f"{d.subject_label} vs {ref}" + (", relative" if d.relative else f" ({d.unit})"),
    )


def _cdf_axes(ovs: list[CDFOverlay], log: bool | None, prob_axis: str, ascii_only: bool) -> PlotAxes:
    if prob_axis not in ("linear", "logit"):
        raise ValueError(f"prob_axis must be 'linear' or 'logit', got {prob_axis!r}.")
    values = [s.values for ov in ovs for s in ov.series]
    xscale = make_scale(axis_kind(log, *values), np.concatenate(values))
    if prob_axis == "logit":
        probs = np.concatenate([s.probs for ov in ovs for s in ov.series])
        yscale = make_scale("logit", probs, pad=0.02)
    else:
        yscale = Scale("linear", 0.0, 1.0)
    return PlotAxes(
        xscale,
        yscale,
        value_format(ovs[0].unit, ascii_only),
        prob_format,
        "",  # the tick labels carry the unit; the legend needs the room
        "P(X <= x)" if ascii_only else "P(X ≤ x)",
    )
