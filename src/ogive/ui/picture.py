"""The workspace's picture: ``ogive plot``'s own path from the same inputs to the same text.

:func:`ogive.fit.curves.plot_inputs` makes the numbers (quantile pairs with the DKW band,
P-P points, CDF series, the shift function) and :func:`ogive.render.draw` draws them,
exactly as ``ogive plot`` does; a test holds the two pictures equal for every kind.
"""

from __future__ import annotations

from ..errors import printable
from ..fit.curves import plot_inputs
from ..fit.lineup import lineup_inputs
from ..render import PlotLines, draw
from ..render.lineup import lineup_plot, one_axis_plot
from .workspace import Workspace


class NoPicture(Exception):
    """The picture cannot be drawn yet; the message says what is missing, in a sentence."""


def draw_picture(ws: Workspace, *, width: int, height: int) -> PlotLines:
    """The subject against its reference as picture ``ws.kind``, ``width`` × ``height`` cells.

    Raises :class:`NoPicture` when something is missing, and ValueError (the
    renderer's own sentence) when the picture cannot be drawn at this size.
    """
    if ws.lineup:
        return _lineup(ws, width=width, height=height)
    subj, ref = ws.subject_dist, ws.reference
    if subj is None or ref is None:
        raise NoPicture("Pick a reference: highlight a distribution and press 2, or a model in Models.")
    if subj.sketch.count == 0:
        raise NoPicture("The subject has no values yet.")
    if ref.kind == "sketch":
        ref_dist = ws.reference_dist
        if ref_dist is None or ref_dist.sketch.count == 0:
            raise NoPicture("The reference has no values yet.")
        if ws.kind == "shift" and ws.comparison is None:
            # The shift function's intervals need scipy: wait for the comparison worker to
            # have imported it, rather than import it here on the screen's thread.
            raise NoPicture("The comparison is not ready yet.")
        data = plot_inputs(
            ws.kind,
            subj.sketch,
            ref_dist.sketch,
            subject_label=printable(subj.name),
            reference_label=printable(ref_dist.name),
        )
    else:
        if ws.kind == "shift":
            raise NoPicture("The shift function compares two sketches; pick a sketch as reference.")
        assert ref.model is not None
        data = plot_inputs(
            ws.kind,
            subj.sketch,
            ref.model,
            subject_label=printable(subj.name),
            reference_label=printable(ref.name),
        )
    return draw(ws.kind, data, width=width, height=height, log=ws.log_axes, ascii_only=ws.ascii_only)


def _lineup(ws: Workspace, *, width: int, height: int) -> PlotLines:
    """The subject against its best models side by side (or on one axis), as
    ``ogive fit --plot --top 3`` (``--one-axis``) draws them, the highlighted model marked."""
    subj = ws.subject_dist
    if subj is None or subj.sketch.count == 0:
        raise NoPicture("The subject has no values yet.")
    if ws.fit is None or not ws.fit.ranked:
        raise NoPicture(ws.fit_note or "The models are being fitted; the line-up appears when they are.")
    models, marked = ws.lineup_models()
    if ws.lineup == "one-axis":
        lineup = lineup_inputs(
            "detrended", subj.sketch, models, subject_label=printable(subj.name), rank_key=ws.fit.rank_key
        )
        return one_axis_plot(lineup, width=width, height=height, marked=marked, ascii_only=ws.ascii_only)
    if ws.kind == "shift":
        raise NoPicture("A line-up reads the subject against models; the shift function needs two sketches.")
    lineup = lineup_inputs(
        ws.kind, subj.sketch, models, subject_label=printable(subj.name), rank_key=ws.fit.rank_key
    )
    return lineup_plot(
        lineup, width=width, height=height, log=ws.log_axes, marked=marked, ascii_only=ws.ascii_only
    )
