"""Quantile sketches: a vectorised merging t-digest with exact tails (numpy only, no I/O)."""

from __future__ import annotations

from collections.abc import Sequence

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
    return merge_all([a, b])


def merge_all(sketches: Sequence[Sketch]) -> Sketch:
    """A new sketch holding all of them, regrouped once (inputs untouched; same unit).

    Why not fold them in one by one: each intermediate regroup sizes its centroids for
    *its* quantiles, and where the inputs' distributions differ (hosts, hours) those
    are not the final ones, so a left fold of eight different hosts left centroids 20
    times the cap around the merged p90 (answer off by 4.8e-4 of n; 4e-5 regrouped
    once, ``tests/test_sketch_merge.py``). Bounds are valid either way.
    """
    if not sketches:
        raise ValueError("nothing to merge: no sketch given.")
    units = {s.unit for s in sketches}
    if len(units) > 1:
        raise ValueError(f"cannot merge sketches in different units ({', '.join(sorted(map(repr, units)))}).")
    first = sketches[0]
    out = Sketch(
        first.unit,
        compression=max(s.compression for s in sketches),
        tail_size=max(s.tail_size for s in sketches),
        scale=first.digest.scale,
    )
    out.merge_many(sketches)
    return out


__all__ += ["merge", "merge_all"]
