"""What the workspace's background threads run: the CLI's own scan, follow, fit and compare.

These functions know nothing of textual: the app runs them in thread workers and hands
them callbacks that post messages. The heavy libraries (polars for reading, scipy for
fitting and comparing) are imported here, inside the functions, so the import happens
on the worker's thread: importing scipy on the screen's thread froze the keys for
about 2.5 s.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

from ..errors import OgiveError
from ..read.options import ScanProgress
from ..sketch import Binned, Sketch
from .state import ScanJob

if TYPE_CHECKING:
    from ..fit.compare import Comparison
    from ..fit.models import FitReport
    from ..fit.timeline import Timeline

REFRESH_S = 0.5
"""Screen refresh while data streams: about twice a second."""
FOLLOW_POLL_S = 0.1
"""How often a followed file is asked for new lines when it has none."""
IDLE_TICK_S = 2.0
"""A follow with nothing new still refreshes the screen this often (so its rate can fall to 0/s)."""
WINDOWS_TICK_S = 5.0
"""A timeline's window sketches are copied for the screen at most this often while a scan
runs (a merge into a fresh sketch cost ~3 ms a window, a day of minutes 4 s of the scan's
thread; ``Sketch.copy`` costs ~20 us, 30 ms for that day, but a day of seconds still adds up)."""


def snapshot(sketch: Sketch | Binned) -> Sketch | Binned:
    """An independent copy, so the screen and the fit never read a sketch a scan is still filling."""
    return sketch.copy()


@dataclass(frozen=True)
class ScanEnd:
    """How a scan or follow ended: its sketches, what to tell the user, and its last figures."""

    sketches: dict[str, Sketch | Binned]
    note: str
    failed: bool
    bytes_read: int = 0
    elapsed_s: float = 0.0
    rotations: int = 0


def failure(what: str, exc: BaseException) -> ScanEnd:
    """A scan that ended on an exception the reader did not turn into a sentence: one line saying so.

    The workspace keeps running and marks the scan's rows (``!``); the kind of error is
    named so the line can be reported, and no traceback reaches the screen.
    """
    text = " ".join(str(exc).split())[:200] or "no detail"
    return ScanEnd({}, f"{what} stopped on an unexpected {type(exc).__name__}: {text}", failed=True)


Tick = Callable[[ScanProgress, dict[str, Sketch | Binned]], None]


def run_scan(
    job: ScanJob, *, tick: Tick, cancelled: Callable[[], bool], clock: Callable[[], float]
) -> ScanEnd:
    """Read ``job.source`` once (``ogive scan``) or follow it (``scan --follow``) until cancelled.

    ``tick`` gets copies of the sketches about twice a second, and only when something
    changed (values, the recent window, rotations, catching up) or IDLE_TICK_S passed:
    a quiet followed log would otherwise cost a third of a core in redraws.
    """
    from ..read import scan
    from ..read.follow import FollowProgress, follow, recent_window
    from ..sketch import timekeys

    window_name: str | None = None
    last_at = 0.0
    last_seen: tuple[object, ...] = ()
    windows_at = 0.0

    def progress(p: ScanProgress) -> None:
        nonlocal last_at, last_seen, windows_at
        now = time.monotonic()
        if now - last_at < 0.8 * REFRESH_S:  # a follow calls every REFRESH_S: allow its jitter
            return
        window = p.sketches.sketches.get(window_name or "")
        follow_state = (p.rotations, p.caught_up) if isinstance(p, FollowProgress) else ()
        seen = (p.rows, p.values, window.count if window is not None else -1, *follow_state)
        seen += (int(p.elapsed_s // IDLE_TICK_S),)
        if seen == last_seen:
            return
        last_at, last_seen = now, seen
        sketches = p.sketches.sketches
        if job.options.timeline and now - windows_at < WINDOWS_TICK_S:
            sketches = {n: s for n, s in sketches.items() if timekeys.parse_key(n) is None}
        elif job.options.timeline:
            windows_at = now
        # The recent window's sketch is made afresh for every update: no copy needed.
        tick(p, {n: s if n == window_name else snapshot(s) for n, s in sketches.items()})

    try:
        if job.follow:
            window = recent_window(job.recent, job.options, clock=clock) if job.recent else None
            window_name = window.name if window is not None else None
            result, rotations = follow(
                job.source,
                job.options,
                cancel=cancelled,
                on_update=progress,
                poll_s=FOLLOW_POLL_S,
                update_s=REFRESH_S,
                recent=window,
            )
        elif job.cluster is not None:
            from ..cluster import scan as cluster_scan

            result = cluster_scan(
                [job.source], job.options, cluster=job.cluster, progress=progress, cancel=cancelled
            )
            rotations = 0
        else:
            result, rotations = scan([job.source], job.options, progress=progress, cancel=cancelled), 0
    except (OgiveError, ValueError) as exc:
        return ScanEnd({}, str(exc), failed=True)
    except Exception as exc:  # any other: the workspace must outlive it (a marked row, one line)
        return failure("the scan", exc)
    notes = list(result.warnings)
    if result.partial:
        notes.insert(0, f"partial: {result.partial}")
    if rotations:
        notes.append(f"the file was rotated or truncated {rotations} time(s) while followed")
    return ScanEnd(
        dict(result.sketches.sketches),
        " ".join(n if n.endswith(".") else f"{n}." for n in notes),  # sentences, not ".;"
        failed=False,
        bytes_read=result.bytes_read,
        elapsed_s=result.elapsed_s,
        rotations=rotations,
    )


def run_fit(
    sketch: Sketch | Binned, families: Sequence[str] | None, name: str
) -> tuple[FitReport | None, str]:
    """``ogive fit``'s ``fit_sketch`` on a copy of the subject; a failure becomes a note."""
    from ..fit.models import fit_sketch

    try:
        return fit_sketch(sketch, list(families) if families else None), ""
    except Exception as exc:  # the fit package reports its own problems; show them, keep going
        return None, f"fitting {name} failed: {exc}"


def run_compare(
    reference: Sketch | Binned, subject: Sketch | Binned, labels: tuple[str, str]
) -> tuple[Comparison | None, str]:
    """``ogive compare``'s ``compare_sketches``: the subject read against the reference (in the
    reference's unit when both are durations, as the CLI reads B in A's unit)."""
    from ..fit.compare import compare_sketches
    from ..sketch.units import duration_factor, in_unit

    try:
        if subject.unit != reference.unit and duration_factor(subject.unit, reference.unit) is not None:
            subject = in_unit(subject, reference.unit)
        return compare_sketches(reference, subject, labels=labels), ""
    except Exception as exc:  # shown in the ladder pane, never swallowed
        return None, f"comparison failed: {exc}"


def run_timeline(sketches: dict[str, Sketch]) -> tuple[Timeline | None, str]:
    """``ogive timeline``'s analysis of window sketches (quantiles, change points, what moved)."""
    from ..fit.timeline import build_timeline, read_windows
    from ..sketch import SketchSet

    try:
        return build_timeline(read_windows(SketchSet(dict(sketches))), table="none"), ""
    except Exception as exc:  # shown in the Timeline pane, never swallowed
        return None, f"the timeline could not be made: {exc}"
