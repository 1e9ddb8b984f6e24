"""The functions the workers run: scan one part (map), merge parts (reduce).

Both take and return plain data: a part's spec and the scan's options and decisions go
in; a :data:`~ogive.cluster.parts.Blob` (the codec's bytes and a JSON tally) comes out.
Each part is scanned by the ordinary reader (:func:`ogive.read.scan`) on a pipeline
that holds the head's decisions, so it reads exactly as the single-process scan would
read the same records.
"""

from __future__ import annotations

import dataclasses
import json
from dataclasses import dataclass
from typing import Any, BinaryIO

from .. import __version__
from ..errors import OgiveError
from ..read import sources, urls
from ..read.options import ScanOptions
from ..read.route import OTHER
from ..read.scan import Pipeline, scan
from ..sketch import SketchSet
from .head import Decisions
from .parts import WIDE, Blob, Part, Tally, merge, token
from .ranges import RangeReader

RANGE, WHOLE, ROWS = "range", "whole", "rows"


@dataclass(frozen=True)
class PartSpec:
    """One map task: which bytes (or Parquet rows) of which source."""

    slot: int
    """Its place in source order among all parts (re-reads keep the slot)."""
    leaf: int
    """Unique per task submitted (a re-read gets a new one): names its places (``token``)."""
    path: str
    """What a worker opens: an absolute local path or a URL."""
    display: str
    """The source as the user named it."""
    kind: str = WHOLE
    start: int = 0
    end: int = 0
    exact: bool = False
    """``start`` is a known record start (a re-read), not a byte to look for one after."""
    rows: tuple[int, int] | None = None
    first_line: int | None = None
    """The number of the part's first line when known before reading (Parquet rows)."""
    nbytes: int = 0
    """The source bytes this part stands for, for progress."""

    def where(self) -> str:
        """The part in words, for a failure: ``app.log bytes 0-67,108,864``."""
        if self.kind == RANGE:
            return f"{self.display} bytes {self.start:,}-{self.end:,}"
        if self.kind == ROWS and self.rows is not None:
            return f"{self.display} rows {self.rows[0] + 1:,}-{self.rows[0] + self.rows[1]:,}"
        return self.display


def open_plain(path: str) -> BinaryIO:
    """The raw bytes of a local file or a URL."""
    if urls.is_url(path):
        return urls.open_url(path)[0]
    try:
        return open(path, "rb")
    except OSError as exc:
        raise OgiveError(f"cannot open {path}: {exc.strerror or exc}.") from None


def scan_part(spec: PartSpec, options: ScanOptions, decisions: Decisions) -> Blob:
    """Map: one part scanned into a sketch set and a tally (see :mod:`.parts`).

    Problems with the input (damaged compression, an unreadable file, ``--strict``)
    come back in the tally's ``errors``, with what was read before them; anything else
    raised is a failed task, and the client names the part.
    """
    if options.by:  # a part keeps more groups than the scan (see parts.WIDE); the root cuts them
        options = dataclasses.replace(options, max_groups=WIDE * options.max_groups)
    run = Pipeline([spec.display], options)
    decisions.apply(run)
    reader: RangeReader | None = None

    def opener(_name: str) -> sources.Opened:
        nonlocal reader
        if spec.kind == RANGE:
            hold = sources.hold_limit(run.feed.chunk_size(), options.max_line_bytes)
            raw = open_plain(spec.path)
            reader = RangeReader(raw, spec.start, spec.end, exact=spec.exact, csv=decisions.csv, hold=hold)
            src = sources.Opened(spec.path, fileobj=reader, at_start=reader.first == 0)  # type: ignore[arg-type]
        else:
            src = sources.Opened(spec.path)
            src.rows = spec.rows
        src.display = token(spec.leaf)
        return src

    tally = Tally(leaves=[spec.leaf], unit=decisions.unit, time_format=decisions.time_format)
    try:
        keep = dataclasses.replace(options, keep_partial=True)
        result = scan([spec.path], keep, run=run, open_source=opener)
    except OgiveError as exc:  # --strict names its place; anything else gets the part's bytes or rows
        tally.errors.append(str(exc) if options.strict or spec.kind == WHOLE else f"{spec.where()}: {exc}")
        tally.reach = [spec.start, spec.start, 0]
        return Part(SketchSet(), tally).dump()
    d, sketches = run.decoder, result.sketches
    tally.lines, tally.rows, tally.nbytes = result.lines_read, result.rows_read, result.bytes_read
    tally.values = run.values
    tally.skipped, tally.fixed = result.skipped, run.fixed
    tally.notes, tally.warnings = list(run.feed.notes), list(run.warnings)
    tally.suffixed, tally.unsuffixed, tally.other_epoch = d.suffixed, d.unsuffixed, d.other_epoch
    tally.years = sorted(d.years)
    tally.order = [run.order.count, run.order.most, run.order.first]
    tally.quote_chunks = run.feed.quote_chunks
    tally.groups = list(run.router.groups.values())
    tally.crowded = bool(options.by) and any(n.endswith(f"={OTHER}") for n in sketches.sketches)
    tally.unit, tally.time_format = d.unit, d.time_format
    if result.error:
        tally.errors.append(result.error)
    unbalanced = reader is not None and reader.unbalanced
    tally.reach = [reader.first, reader.pos, int(unbalanced)] if reader is not None else [0, 0, 0]
    return Part(sketches, tally).dump()


def combine(blobs: list[Blob | None], by: str | None, max_groups: int) -> Blob | None:
    """Reduce: parts in source order merged into one (None stands for a part not there)."""
    parts = [Part.load(b) for b in blobs if b is not None]
    if not parts:
        return None
    out = merge(parts, by=by, max_groups=max_groups)
    out.tally.reach = []
    return out.dump()


def reach(blob: Blob) -> dict[str, Any]:
    """The few numbers of a map task the client checks (a few hundred bytes, not the sketches)."""
    doc = json.loads(blob[1])
    return {k: doc[k] for k in ("reach", "lines", "rows", "nbytes", "quote_chunks", "errors")}


def version() -> str:
    """This worker's ogive version (the client refuses workers that run another)."""
    return __version__
