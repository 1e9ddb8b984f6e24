"""ogive: stream huge logs once into mergeable quantile sketches; fit and compare them."""

from __future__ import annotations

__version__ = "0.1.0"
