"""The terminal workspace (textual): thin widgets over the reader, fit, compare and render packages."""

from __future__ import annotations

from .app import OgiveApp

__all__ = ["OgiveApp"]
