"""The numbers behind a line-up: one distribution read against several fitted models at once.

Choosing a model is done by eye as much as by score: the data against each candidate's
quantiles, side by side, show which one keeps to the line and where the others bend
away (usually in the tail). A :class:`ModelLineup` holds, for each candidate, the very
object :func:`ogive.fit.curves.plot_inputs` makes for a single plot against that model
(Q-Q pairs with their band, detrended deviations, P-P points or CDF series), plus what
a panel's title names: rank, model, parameters, tail error. The renderer
(:mod:`ogive.render.lineup`) draws them on shared axes; ``--json`` prints
:meth:`ModelLineup.to_dict`; the CLI and the workspace both call :func:`lineup_inputs`.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
from numpy.typing import NDArray

from ..sketch import Binned, Sketch
from .curves import Detrended, PlotData, QuantileCDFModel, plot_inputs

FloatArray = NDArray[np.float64]

LINEUP_KINDS: tuple[str, ...] = ("qq", "detrended", "pp", "cdf")
"""Plots a line-up can hold: every kind that reads one distribution against a model."""


class LinedUpModel(QuantileCDFModel, Protocol):
    """What a line-up needs of a fitted model (``results.Candidate`` has it)."""

    @property
    def rank(self) -> int: ...
    @property
    def label(self) -> str: ...
    @property
    def family(self) -> str: ...
    @property
    def params(self) -> dict[str, float]: ...
    @property
    def tail_error(self) -> float: ...


@dataclass(frozen=True)
class ModelPanel:
    """One model of the line-up: who it is, and the plot input against it."""

    rank: int
    """Place in the ranking the models came from (1 = best)."""
    label: str
    family: str
    params: dict[str, float]
    tail_error: float
    """Largest relative quantile error over p50/p90/p99/p99.9 (``Scores.tail_error``)."""
    data: PlotData
    """What ``plot_inputs`` gives for this model alone: the same object a single plot draws."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "rank": self.rank,
            "label": self.label,
            "family": self.family,
            "params": {k: (v if math.isfinite(v) else None) for k, v in self.params.items()},
            "tail_error": self.tail_error if math.isfinite(self.tail_error) else None,
            "plot": self.data.to_dict(),
        }


@dataclass(frozen=True)
class ModelLineup:
    """The subject against each model, best first; every panel is the same plot kind."""

    kind: str
    subject_label: str
    unit: str
    rank_key: str
    """What the ranks were ordered by (``bic``, ``tail``, ...)."""
    panels: tuple[ModelPanel, ...]

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "subject_label": self.subject_label,
            "unit": self.unit,
            "rank_key": self.rank_key,
            "panels": [p.to_dict() for p in self.panels],
        }


def lineup_inputs(
    kind: str,
    subject: Sketch | Binned,
    models: Sequence[LinedUpModel],
    *,
    subject_label: str = "subject",
    rank_key: str = "",
    band: bool = True,
    confidence: float = 0.95,
) -> ModelLineup:
    """The subject read against each of ``models`` as plot ``kind``, in the order given.

    Each panel's data is exactly ``plot_inputs(kind, subject, model, ...)``, so a panel
    and the single plot of the same model show the same numbers. Raises ValueError (a
    full sentence) for a kind a model cannot be read against, or no models.
    """
    if kind not in LINEUP_KINDS:
        raise ValueError(f"a line-up of models draws one of {', '.join(LINEUP_KINDS)}; got {kind!r}.")
    if not models:
        raise ValueError("a line-up needs at least one fitted model; none was given.")
    panels = tuple(
        ModelPanel(
            rank=m.rank,
            label=m.label,
            family=m.family,
            params=dict(m.params),
            tail_error=float(m.tail_error),
            data=plot_inputs(
                kind,
                subject,
                m,
                subject_label=subject_label,
                reference_label=m.label,
                band=band,
                confidence=confidence,
            ),
        )
        for m in models
    )
    if kind == "detrended" and len({p.data.relative for p in panels if isinstance(p.data, Detrended)}) > 1:
        # One y axis for all: a model whose quantiles reach zero or below (a normal's lower
        # tail) has no relative scale, so every panel shows absolute differences.
        panels = tuple(dataclasses.replace(p, data=as_absolute(p.data)) for p in panels)
    return ModelLineup(kind, subject_label, subject.unit, rank_key, panels)


def as_absolute(d: PlotData) -> PlotData:
    """A relative detrended view as differences in the unit (subject − reference)."""
    if not isinstance(d, Detrended) or not d.relative:
        return d
    ref = d.reference

    def scaled(v: FloatArray | None) -> FloatArray | None:
        return None if v is None else np.asarray(v * ref, dtype=np.float64)

    return dataclasses.replace(
        d,
        relative=False,
        deviation=np.asarray(d.deviation * ref, dtype=np.float64),
        band_low=scaled(d.band_low),
        band_high=scaled(d.band_high),
        marks=tuple(dataclasses.replace(m, subject=m.subject * m.reference) for m in d.marks),
    )
