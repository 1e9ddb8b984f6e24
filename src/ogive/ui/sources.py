"""Opening a name in the workspace: a saved sketch becomes rows at once, a log becomes a scan.

Which one a name is, :func:`ogive.store.sketch_ref` decides (from the file's bytes), as
for every sub-command. Rows of a sketch file are named after the file (``before``) or,
when it holds several sketches, ``file:sketch`` (``day:after``); a scan's rows get the
same names from :meth:`.workspace.Workspace.take_scan` as its groups appear. A timeline's
window sketches (``2026-03-04T13:00:00Z/PT5M``) are not rows: they feed the Timeline
pane, and only the wholes beside them (``all``, the groups) are rows.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from ..errors import OgiveError
from ..read.options import ScanOptions
from ..read.urls import has_glob, is_url
from ..sketch import timekeys
from ..sketch.distribution import Dist
from ..store import load_ref, misnamed_sketch, sketch_ref, source_stem
from .state import Distribution, ScanJob


@dataclass(frozen=True)
class Opened:
    """What opening a name gave: rows ready now, a scan to start, and what to tell the user."""

    rows: list[Distribution] = field(default_factory=list)
    job: ScanJob | None = None
    message: str = ""
    windows: dict[str, Dist] = field(default_factory=dict)
    """A saved timeline's sketches, windows and wholes, for the Timeline pane (else empty)."""


def without_windows(sketches: dict[str, Dist]) -> dict[str, Dist]:
    """The sketches that are not a timeline's windows (those become rows)."""
    return {n: s for n, s in sketches.items() if timekeys.parse_key(n) is None}


def not_a_sketch(spec: str, options: ScanOptions) -> str:
    """Why a name that says "saved sketch" (``*.ogive``) cannot be opened as one, or ''.

    The one decision the Open prompt's preview and its enter both ask (they disagreed on an
    empty or cut-short ``.ogive``: the preview refused it, enter scanned it as a log). A
    format chosen in the prompt means "read it as a log", and is obeyed.
    """
    return "" if options.format is not None else misnamed_sketch(spec)


def open_source(
    spec: str,
    options: ScanOptions,
    *,
    order: int,
    follow: bool = False,
    recent: str | None = None,
    cluster: str | None = None,
) -> Opened:
    """Rows for a saved sketch (``PATH`` or ``PATH:GROUP``), or a scan (a follow) for a log.

    A followed log may not exist yet: following waits for it, as ``scan --follow`` does.
    A URL or a glob is left for the scan to open (and to say what is wrong with it).
    """
    refused = not_a_sketch(spec, options)
    if refused:
        return Opened(message=refused)
    ref = sketch_ref(spec)
    if ref is not None:
        try:
            sset = load_ref(ref)
        except OgiveError as exc:
            return Opened(message=str(exc))
        stem = source_stem(ref.path)
        kept = without_windows(sset.sketches)
        windows = dict(sset.sketches) if len(kept) < len(sset.sketches) else {}
        names = list(kept)
        several = ref.group is not None or len(names) > 1
        rows = [
            Distribution(f"{stem}:{name}" if several else stem, sset[name], ref.path, seq=(order, i))
            for i, name in enumerate(names)
        ]
        hint = f" ({len(windows) - len(kept):,} time windows: t shows the timeline)" if windows else ""
        return Opened(rows=rows, message=f"loaded {ref.path}{hint}", windows=windows)
    if follow:
        return Opened(job=ScanJob(spec, options, seq=order, follow=True, recent=recent))
    if spec != "-" and not Path(spec).exists() and not is_url(spec) and not has_glob(spec):
        return Opened(message=f"cannot open {spec}: no such file.")
    return Opened(job=ScanJob(spec, options, seq=order, cluster=cluster))
