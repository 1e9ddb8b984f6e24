"""Models and comparisons computed from sketches alone (numpy, scipy; no file reading).

``fit_sketch`` (and the result types) load on first use, so that importing a light
module of this package (``ogive.fit.qq``) does not pull in scipy.
"""

from __future__ import annotations

from typing import Any

_LAZY = {
    "fit_sketch": "models",
    "FitReport": "results",
    "FittedModel": "results",
    "Candidate": "results",
    "Scores": "results",
    "NotFitted": "results",
    "RANK_KEYS": "ranking",
}

__all__ = sorted(_LAZY)


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(f"{__name__}.{_LAZY[name]}"), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
