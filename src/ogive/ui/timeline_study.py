"""Taking a change point up for study: the period after it as the subject, the period
before it as the reference, so the picture and the ladder show what changed.

Where the log is at hand (a file scanned once), it is read again split at the change,
exactly as the ``ogive gate ... --split-at`` line of ``ogive timeline`` does: the two
sketches are then full scan sketches, and the ladder's intervals are at full precision.
A saved timeline or a followed log has no second reading: the windows either side are
merged instead (the picture is the same; the ladder's intervals carry the merge's rank
error, so they are wider and its calls more cautious).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import Path

from ..fit.moves import Stretch, period_sketch
from ..fit.timeline import read_windows
from ..render.timeline import when
from ..sketch import SketchSet, timekeys
from ..store import source_stem
from .state import Distribution, ScanJob
from .workspace import Workspace


@dataclass(frozen=True)
class Study:
    """What studying a change needs: rows ready now, or a scan that will bring them."""

    roles: tuple[str, str]
    """(subject, reference) row names."""
    message: str
    rows: list[Distribution] = field(default_factory=list)
    job: ScanJob | None = None


def study_change(ws: Workspace, index: int) -> Study:
    """The rows (or the scan) that put change ``index`` of the timeline on screen."""
    t, source = ws.timeline, ws.timeline_source
    assert t is not None and source is not None
    c = t.streams[0].changes[index]
    stem = source_stem(source)
    days = timekeys.start_text(t.first_us)[:10] != timekeys.start_text(t.start(t.count) - 1)[:10]
    job = next((j for j in ws.jobs if j.source == source and j.options.timeline), None)
    if job is not None and not job.follow and Path(source).is_file():
        at = when(c.split_us, days=days)
        names = (f"{stem}:after {at}", f"{stem}:before {at}")
        options = dataclasses.replace(
            job.options,
            window=None,
            timeline=False,
            window_compression=None,
            window_tail=None,
            by=None,
            split_at=timekeys.start_text(c.split_us),
        )
        again = ScanJob(source, options, seq=ws.next_order())
        again.names = {"after": names[0], "before": names[1]}
        return Study(
            names, f"reading {Path(source).name} again, split at {at}: after it the subject", job=again
        )
    data = read_windows(SketchSet(dict(ws.timeline_input)))
    whole = data.streams[next(iter(data.streams))]
    st = Stretch(whole.windows, whole.whole, data.unit, data.start)
    start, end = when(c.start_us, days=days), when(c.end_us, days=days)
    names = (f"{stem}:after {end}", f"{stem}:before {start}")
    note = "windows merged: the ladder's intervals carry the merge's rank error (wider than a scan's)"
    order = ws.next_order()
    rows = [
        Distribution(names[1], period_sketch(st, *c.before_windows, True), source, note=note, seq=(order, 0)),
        Distribution(names[0], period_sketch(st, *c.after_windows, False), source, note=note, seq=(order, 1)),
    ]
    return Study(
        names, f"the windows after {end} are the subject, those before {start} the reference", rows=rows
    )
