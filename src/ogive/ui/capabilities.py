"""Finding the shared functions the workspace calls (reader, fit, compare, plots).

The workspace holds no statistics of its own. When a package it relies on is missing
a function (an older install, a part not built), the matching panel says so plainly
instead of guessing; these look-ups are the one place that knows the names.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from typing import Any


class Unavailable(Exception):
    """A capability is not present in this install; the message says which one."""


def _lookup(module: str, name: str, what: str) -> Callable[..., Any]:
    try:
        mod = importlib.import_module(module)
    except ImportError as exc:
        raise Unavailable(f"{what} is not available yet ({module} cannot be imported: {exc}).") from None
    fn = getattr(mod, name, None)
    if not callable(fn):
        raise Unavailable(f"{what} is not available yet ({module}.{name} is missing).")
    return fn  # type: ignore[no-any-return]


def scan_function() -> Callable[..., Any]:
    """``ogive.read.scan(sources, options, *, progress, cancel) -> ScanResult``."""
    return _lookup("ogive.read", "scan", "Reading logs")


def preview_function() -> Callable[..., Any] | None:
    """The reader's own preview of the first parsed rows, if it has one."""
    try:
        return _lookup("ogive.read", "preview", "Preview")
    except Unavailable:
        return None


def fit_function() -> Callable[..., Any]:
    """``ogive.fit.fit_sketch(sketch, families=None) -> report``."""
    return _lookup("ogive.fit", "fit_sketch", "Model fitting")


def compare_function() -> Callable[..., Any]:
    """``ogive.fit.compare.compare_sketches(a, b, labels=..., confidence=...) -> Comparison``."""
    return _lookup("ogive.fit.compare", "compare_sketches", "The comparison ladder")


def render_module() -> Any:
    """``ogive.render``: the pure text-plot functions."""
    try:
        return importlib.import_module("ogive.render")
    except ImportError as exc:
        raise Unavailable(f"Text plots are not available yet (ogive.render: {exc}).") from None


def demo_module() -> Any:
    """``ogive.demo``: the generator of the invented demo scenario."""
    try:
        return importlib.import_module("ogive.demo")
    except ImportError:
        raise Unavailable("The demo data generator (ogive.demo) is not available yet.") from None
