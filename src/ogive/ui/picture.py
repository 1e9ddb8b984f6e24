"""Feeding the renderer: which shared function draws which picture from which inputs.

The quantile pairs come from :mod:`ogive.fit.qq` and the shift function from the
comparison, exactly as ``ogive plot`` gets them; the drawing is ``ogive.render``'s.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from ..fit.curves import band_epsilon, with_dkw_band
from ..fit.qq import pairs_from_model, pairs_from_sketches
from .capabilities import Unavailable, render_module
from .state import Distribution, ReferenceChoice


def _render(name: str) -> Callable[..., Any]:
    mod = render_module()
    fn = getattr(mod, name, None)
    if not callable(fn):
        raise Unavailable(f"Text plots are not available yet (ogive.render.{name} is missing).")
    return fn  # type: ignore[no-any-return]


def draw(
    kind: str,
    subject: Distribution,
    reference: ReferenceChoice | None,
    reference_dist: Distribution | None,
    comparison: Any,
    *,
    width: int,
    height: int,
    log_axes: bool | None,
) -> list[str]:
    """The plot's lines (a ``PlotLines`` with colour spans when the renderer gives them)."""
    if reference is None:
        raise Unavailable("Pick a reference: highlight a distribution and press 2, or a model in Models.")
    if subject.sketch.count == 0:
        raise Unavailable("The subject has no values yet.")
    if kind == "shift":
        if reference.kind != "sketch":
            raise Unavailable("The shift function compares two sketches; pick a sketch as reference.")
        if comparison is None:
            raise Unavailable("The comparison is not ready yet.")
        fn = _render("shift_plot")
        return fn(comparison, width=width, height=height, log=log_axes)  # type: ignore[no-any-return]
    if reference.kind == "sketch":
        if reference_dist is None or reference_dist.sketch.count == 0:
            raise Unavailable("The reference has no values yet.")
        pairs = pairs_from_sketches(
            subject.sketch,
            reference_dist.sketch,
            subject_label=subject.name,
            reference_label=reference_dist.name,
        )
        eps = band_epsilon(subject.sketch, reference_dist.sketch)
        pairs = with_dkw_band(pairs, reference_dist.sketch.quantile, eps)
    else:
        pairs = pairs_from_model(
            subject.sketch, reference.model, subject_label=subject.name, reference_label=reference.label
        )
        pairs = with_dkw_band(pairs, reference.model.ppf, band_epsilon(subject.sketch))
    fn = _render({"qq": "qq_plot", "detrended": "detrended_plot", "pp": "pp_plot", "cdf": "cdf_plot"}[kind])
    return fn(pairs, width=width, height=height, log=log_axes)  # type: ignore[no-any-return]
