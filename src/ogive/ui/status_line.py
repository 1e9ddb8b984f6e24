"""The one-line status at the bottom: scan or follow progress (bytes, rows/s, ETA) or the last event."""

from __future__ import annotations

from textual.reactive import reactive
from textual.widgets import Static

from ..numbers import count, duration, size
from .state import ScanJob


class FeedStatus(Static):
    """Shows the running scans, else the last thing that happened (saved, exported, failed)."""

    message: reactive[str] = reactive("")
    """The last event, shown when no scan is running."""
    _shown: str | None = None
    """The text on screen now (an update with the same text is skipped: it costs a redraw)."""

    def show_jobs(self, jobs: list[ScanJob]) -> None:
        running = [j for j in jobs if not j.done]
        if not running:
            self._show(self.message or "ready")
            return
        parts = [self.describe(j) for j in running[:2]]
        if len(running) > 2:
            parts.append(f"+{len(running) - 2} more")
        self._show(" | ".join(parts))

    def _show(self, text: str) -> None:
        if text != self._shown:
            self._shown = text
            self.update(text)

    @staticmethod
    def describe(job: ScanJob) -> str:
        name = job.source.rsplit("/", 1)[-1]
        if job.follow:
            return FeedStatus.describe_follow(job, name)
        if job.bytes_total:
            pct = 100.0 * job.bytes_read / job.bytes_total
            done = f"{size(job.bytes_read)}/{size(job.bytes_total)} {pct:.0f}%"
        else:
            done = size(job.bytes_read)
        eta = job.eta_s
        tail = f" ETA {duration(eta)}" if eta is not None else ""
        return f"scanning {name}: {done}, {count(job.rows_per_s)} rows/s{tail}"

    @staticmethod
    def describe_follow(job: ScanJob, name: str) -> str:
        """Values, what arrives now (a rate over the last seconds), rotations, the stop key."""
        if not job.caught_up:
            return f"following {name}: reading what is already there, {size(job.bytes_read)}… (s stops)"
        turns = f", {job.rotations} rotation{'s' if job.rotations != 1 else ''}" if job.rotations else ""
        return f"following {name}: {count(job.values)} values, {count(job.rate)}/s now{turns} (s stops)"

    def watch_message(self, value: str) -> None:
        self._show(value or "ready")


def headline(subject: str | None, reference: str | None, width: int) -> str:
    """``subject: X · reference: Y`` in ``width`` cells; long names lose their middles, never their ends.

    The part two long names share (``day:after/route=`` and ``day:before/route=``) is
    what goes first, so the end that tells them apart stays readable.
    """
    subj, ref = subject or "—", reference or "—"
    text = f"subject: {subj} · reference: {ref}"
    if len(text) <= width:
        return text
    room = max(width - len("S  · R "), 8)
    half = room // 2
    s_room = len(subj) if len(subj) <= half else max(half, room - len(ref))
    return f"S {_shorten(subj, s_room)} · R {_shorten(ref, room - min(s_room, len(subj)))}"[:width]


def _shorten(name: str, room: int) -> str:
    """``checkout-day:after/route=/api/cart`` -> ``check…oute=/api/cart`` in ``room`` cells."""
    if len(name) <= room:
        return name
    if room < 4:
        return name[:room]
    head = max((room - 1) // 3, 1)
    return name[:head] + "…" + name[len(name) - (room - 1 - head) :]
