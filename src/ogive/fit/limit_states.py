"""The states a gate limit ends in, shared by quantile limits (``gate.py``) and share limits
(``share_limits.py``) so both speak the same words and map to the same exit status."""

from __future__ import annotations

EXCEEDED, HOLDS, UNCLEAR, TOO_FEW = "exceeded", "holds", "unclear", "too few values"
COARSE = "buckets too coarse"
STATUSES = (EXCEEDED, HOLDS, UNCLEAR, TOO_FEW, COARSE)
