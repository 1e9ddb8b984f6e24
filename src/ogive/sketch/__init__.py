"""Quantile sketches (a vectorised merging t-digest with exact tails) and binned
distributions from telemetry histograms; numpy only, no I/O."""

from __future__ import annotations

from collections.abc import Sequence

from .binned import Binned
from .codec import SketchFormatError, dumps, from_tdigest_dict, loads
from .digest import DEFAULT_COMPRESSION, TDigest
from .distribution import Distribution, is_binned, is_distribution
from .sketch import DEFAULT_TAIL, Provenance, Sketch, SketchSet, SkipTally, quantile_label

__all__ = [
    "DEFAULT_COMPRESSION",
    "DEFAULT_TAIL",
    "Binned",
    "Distribution",
    "Provenance",
    "Sketch",
    "SketchFormatError",
    "SketchSet",
    "SkipTally",
    "TDigest",
    "dumps",
    "from_tdigest_dict",
    "is_binned",
    "is_distribution",
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


def merge_binned(items: Sequence[Binned]) -> Binned:
    """A new binned distribution holding all of them (same unit, checked by the caller): counts of
    one bucket layout add; different layouts are kept as parts, never re-binned."""
    if not items:
        raise ValueError("nothing to merge: no distribution given.")
    out = Binned(items[0].unit)
    out.merge_many(items)
    return out


__all__ += ["merge_binned"]
