"""Pure functions from results to text: the braille/ASCII plots the CLI and the workspace share.

Each ``*_plot`` takes a result object (quantile pairs, curves, a shift function) and
``width``/``height`` and returns exactly ``height`` lines of at most ``width`` cells.
"""

from __future__ import annotations

from .frame import MIN_HEIGHT, MIN_WIDTH, Figure, PlotLines
from .plots import (
    cdf_figure,
    cdf_plot,
    detrended_figure,
    detrended_plot,
    draw,
    pp_figure,
    pp_plot,
    qq_figure,
    qq_plot,
    shift_figure,
    shift_plot,
)
from .style import ROLE_STYLES, ansi_lines, color_allowed, rich_text

__all__ = [
    "MIN_HEIGHT",
    "MIN_WIDTH",
    "ROLE_STYLES",
    "Figure",
    "PlotLines",
    "ansi_lines",
    "cdf_figure",
    "cdf_plot",
    "color_allowed",
    "detrended_figure",
    "detrended_plot",
    "draw",
    "pp_figure",
    "pp_plot",
    "qq_figure",
    "qq_plot",
    "rich_text",
    "shift_figure",
    "shift_plot",
]
