"""Quantile sketches: a vectorised merging t-digest with exact tails (numpy only, no I/O)."""

from __future__ import annotations

from .codec import SketchFormatError, dumps, from_tdigest_dict, loads
from .digest import DEFAULT_COMPRESSION, TDigest
from .sketch import DEFAULT_TAIL, Provenance, Sketch, SketchSet, SkipTally, quantile_label

__all__ = [
    "DEFAULT_COMPRESSION",
    "DEFAULT_TAIL",
    "Provenance",
    "Sketch",
    "SketchFormatError",
    "SketchSet",
    "SkipTally",
    "TDigest",
    "dumps",
    "from_tdigest_dict",
    "loads",
    "quantile_label",
]


def merge(a: Sketch, b: Sketch) -> Sketch:
    """A new sketch holding both (inputs untouched); units must match (checked)."""
    if a.unit != b.unit:
        raise ValueError(f"cannot merge sketches in different units ({a.unit!r} and {b.unit!r}).")
    out = Sketch(
        a.unit,
        compression=max(a.compression, b.compression),
        tail_size=max(a.tail_size, b.tail_size),
        scale=a.digest.scale,
    )
    out.merge(a)
    out.merge(b)
    return out


__all__.append("merge")
