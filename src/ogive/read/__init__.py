"""Reading sources into sketches: open, cut into chunks, parse with polars, account for bad rows."""

from __future__ import annotations

from .options import ScanOptions, ScanProgress, ScanResult

__all__ = ["ScanOptions", "ScanProgress", "ScanResult"]
