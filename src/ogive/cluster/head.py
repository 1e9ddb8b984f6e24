"""What every part of a split scan is read against, decided once from the scan's head.

A single-process scan decides the record layout from its first piece, and the sketch
unit, the unit of bare numbers and the time form from its first rows
(:meth:`ogive.read.scan.Pipeline.prepare_here`). Parts read on many workers must all
read against the same decisions, or their sketches would not merge (or would merge
values read differently), so the client reads the head exactly as the single-process
scan would, through the same pipeline, and hands the decisions to every part.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..read import direct, sources
from ..read.layout import Layout
from ..read.options import ScanOptions
from ..read.scan import Pipeline

HEAD_LIMIT = 64 << 20
"""Bytes read on the client at most while looking for the first row; a head without one
leaves the unit to each part (and a merge of parts in different units is refused)."""


@dataclass(frozen=True)
class Decisions:
    """The head's decisions, as plain values (shipped to the workers with each part)."""

    layout: Layout
    unit: str | None
    input_unit: str | None
    time_format: str | None
    by_magnitude: bool
    now_us: float
    """The moment RFC 3164 years are assumed from: the scan's start, the same for all parts."""
    field: str
    notes: tuple[str, ...]
    """What the head's reading told the user (the value found without being named, ...)."""

    @property
    def csv(self) -> bool:
        """Records may hold quoted newlines (see ``ranges``)."""
        return self.layout.format in ("csv", "tsv")

    def apply(self, run: Pipeline) -> None:
        """Make ``run`` read against these decisions, as if it had read the head itself."""
        run.feed.layout = self.layout
        d = run.decoder
        d.unit, d.input_unit, d.time_format = self.unit, self.input_unit, self.time_format
        d.by_magnitude, d.now_us = self.by_magnitude, self.now_us
        run.builder.unit = self.unit or ""
        run.builder.field = self.field


def decide(names: list[str], options: ScanOptions) -> Decisions | None:
    """The decisions a single-process scan of ``names`` would make, from their head.

    None when no source holds a single byte (there is nothing to decide, nor to read).
    Raises what the single-process scan raises on an unusable head (binary data, a
    column that does not exist, a --split-at without a time).
    """
    run = Pipeline(names, options)
    seen = 0
    for name in names:
        src = sources.Opened(name)
        try:
            run.start_source(src.display)
            if src.is_parquet or options.format == "parquet":
                for df in direct.parquet_frames(src, options, run.feed, run.decoder):
                    run.prepare_here(df, src.display)
                    if run.decoder.unit is not None:
                        break
            else:
                for piece in run.feed.pieces(src):
                    if piece.data:
                        run.parse(piece.data, src.display, here=True)
                    seen += piece.nbytes
                    if run.decoder.unit is not None or seen >= HEAD_LIMIT:
                        break
        finally:
            src.close()
        if run.decoder.unit is not None or seen >= HEAD_LIMIT:
            break
    layout = run.feed.layout
    if layout is None:
        return None
    d = run.decoder
    return Decisions(
        layout,
        d.unit,
        d.input_unit,
        d.time_format,
        d.by_magnitude,
        d.now_us,
        layout.description,
        tuple(run.warnings),
    )
