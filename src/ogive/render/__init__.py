"""Pure functions from results to text: the braille/ASCII plots the CLI and the workspace share.

Each ``*_plot`` takes a result object (quantile pairs, curves, a shift function) and
``width``/``height`` and returns exactly ``height`` lines of at most ``width`` cells.
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
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

_HOME = {
    **dict.fromkeys(("MIN_HEIGHT", "MIN_WIDTH", "Figure", "PlotLines"), "frame"),
    **dict.fromkeys(("ROLE_STYLES", "ansi_lines", "color_allowed", "rich_text"), "style"),
}


def __getattr__(name: str) -> Any:
    """The package's names, imported on first use (PEP 562): ``ogive scan`` needs only
    ``render.summary`` and ``render.tables``, and loading the plots (with the fit
    curves and tick modules behind them) cost ~30 ms of every scan's start-up."""
    if name not in __all__:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(import_module(f".{_HOME.get(name, 'plots')}", __name__), name)
    globals()[name] = value
    return value


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
