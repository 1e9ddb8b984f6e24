"""Reading sources into sketches: open, cut into chunks, parse with polars, account for bad rows.

Importing this package imports polars; command modules import it inside ``run()``.
"""

from __future__ import annotations

from .options import ScanOptions, ScanProgress, ScanResult
from .scan import scan

__all__ = ["ScanOptions", "ScanProgress", "ScanResult", "scan"]
