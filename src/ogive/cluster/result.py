"""The merged parts as the result a single-process scan returns.

The places the parts wrote (``<token>:LINE``, counted from each part's first line) are
rewritten as ``file:LINE`` once the lines of every part before are known, and as
``file@BYTE:LINE`` (LINE counted from byte BYTE of the file) where a part before it is
missing (failed or not read). Then the same pipeline a single-process scan ends with
(:meth:`ogive.read.scan.Pipeline.finish`) is handed the merged counts, so the result
carries the same fields, warnings and sketch order.
"""

from __future__ import annotations

from ..read.options import ScanOptions, ScanResult
from ..read.route import OTHER, OVERFLOW_KEPT
from ..read.scan import Pipeline
from ..sketch import SketchSet
from .head import Decisions
from .parts import WIDE, Part, Tally, cap_groups, raw_sketches, relocate
from .runner import EMPTY, Outcome, Slot
from .tasks import PartSpec

BYTE_PLACES = (
    "places written FILE@BYTE:LINE count lines from byte BYTE of the file, because a part "
    "before it was not read."
)


def first_lines(slots: list[Slot], present: set[int]) -> dict[int, tuple[PartSpec, int | None, int]]:
    """For each map task merged: its spec, the number of its first line in the file (None
    when a part before it is missing) and the byte its first record began at."""
    out: dict[int, tuple[PartSpec, int | None, int]] = {}
    line: dict[str, int | None] = {}
    for slot in slots:
        spec = slot.spec
        if slot.state == EMPTY:
            continue
        at = line.get(spec.path, 1)
        if spec.leaf in present and slot.lines is not None and slot.reach is not None:
            out[spec.leaf] = (spec, spec.first_line or at, slot.reach["reach"][0])
            # a part that stopped early (damage, --strict) leaves the lines after it uncounted
            line[spec.path] = None if at is None or slot.reach["errors"] else at + slot.lines
        else:
            line[spec.path] = None
    return out


def finish(
    root: Part | None,
    slots: list[Slot],
    names: list[str],
    options: ScanOptions,
    decisions: Decisions | None,
    *,
    elapsed: float,
    outcome: Outcome,
) -> ScanResult:
    """The scan result of the merged ``root`` (None: nothing was read).

    Problems are kept as a damaged input is by a single-process scan: ``error`` says
    what could not be read (the first few, with file and range or line), and the
    result and every sketch are flagged ``partial``.
    """
    part = root if root is not None else Part(SketchSet(), Tally())
    if options.by:
        cap_groups(part, options.by, options.max_groups)
    places = first_lines(slots, set(part.tally.leaves))
    by_byte = False

    def place(leaf: int, row: str, line: int | None) -> str:
        nonlocal by_byte
        spec, first, start = places.get(leaf, (None, None, 0))
        display = spec.display if spec is not None else "?"
        if line is None:
            return display
        if first is None:
            by_byte = True
            return f"{display}@{start}{row}:{line}"
        return f"{display}{row}:{first + line - 1}"

    relocate(part, place)
    t = part.tally
    problems = [*t.errors, *outcome.failures]
    error = None
    partial = None
    if outcome.interrupted:
        partial = f"stopped on request with {outcome.done_parts} of {len(slots)} parts read"
    if problems:
        shown = "; ".join(problems[:3]) + ("; ..." if len(problems) > 3 else "")
        many = f"{len(problems)} parts could not be read in full: {shown}"
        error = problems[0] if len(problems) == 1 else many
        partial = f"{partial}; {error}" if partial else f"the input could not all be read: {error}"
    run = Pipeline(names, options)
    if decisions is not None:
        decisions.apply(run)
    run.lines.total, run.rows, run.bytes_seen = t.lines, t.rows, t.nbytes
    run.skips.skipped, run.fixed = t.skipped, t.fixed
    run.feed.notes, run.feed.quote_chunks = t.notes, t.quote_chunks
    run.warnings = [*(decisions.notes if decisions else ()), *t.warnings]
    d = run.decoder
    d.suffixed, d.unsuffixed, d.other_epoch, d.years = t.suffixed, t.unsuffixed, t.other_epoch, set(t.years)
    d.unit = d.unit if d.unit is not None else t.unit
    d.time_format = d.time_format or t.time_format
    run.order.count, run.order.most, run.order.first = t.order
    run.builder.sketches = raw_sketches(part.sketches)
    run.builder.unit = d.unit or ""
    result = run.finish(elapsed, partial=partial, error=error)
    stepped = run.order.warning()
    if stepped in result.warnings:
        at = result.warnings.index(stepped)
        result.warnings[at] += " Each row is held against the earlier rows of its own part: a lower bound."
    for sketch in result.sketches.sketches.values():
        sketch.provenance.sources = list(names)
    if t.overflow and options.by:
        n = len(t.overflow)
        more = "+" if n >= OVERFLOW_KEPT else ""
        result.warnings.append(
            f"--by {options.by}: more than {options.max_groups} distinct values; {n}{more} further values "
            f"share the group {options.by}={OTHER} (raise --max-groups to keep them apart)."
        )
    if t.crowded:
        result.warnings.append(
            f"--by {options.by}: a part of the scan met over {WIDE * options.max_groups} distinct values "
            "by itself, so which values got a sketch of their own may differ from a single-process scan "
            "(every row is still counted once; raise --max-groups to keep them apart)."
        )
    if by_byte:
        result.warnings.append(BYTE_PLACES)
    result.warnings += outcome.notes
    return result
