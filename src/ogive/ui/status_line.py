"""The one-line status at the bottom: scan or follow progress (bytes, rows/s, ETA) or the last event."""

from __future__ import annotations

import textwrap

from textual.reactive import reactive
from textual.widgets import Static

from ..numbers import count, duration, size
from .state import ScanJob
from .terminal import plain

LINES = 2
"""The status line's height at most (CSS ``max-height``): a longer text is cut at a word and
says where the whole of it is (``!``)."""
MORE = " … (! shows all)"


class FeedStatus(Static):
    """Shows the running scans and the last thing that happened (saved, exported, failed), and
    beside them the picture just chosen (``v``, ``l``, ``m``), so choosing a picture never hides
    a scan's ETA or its "scan done"."""

    message: reactive[str] = reactive("")
    """The last event."""
    aside: reactive[str] = reactive("")
    """The picture or axes just chosen (a setting, not an event: not kept in the ``!`` list)."""
    _shown: str | None = None
    """The text on screen now (an update with the same text is skipped: it costs a redraw)."""
    _jobs: list[ScanJob] | None = None
    ascii_only = False
    lines = LINES
    """Lines the status may take (one in a compact window)."""
    """Set by the app on an ASCII terminal: the line's own signs become ASCII."""

    def show_jobs(self, jobs: list[ScanJob]) -> None:
        self._jobs = jobs
        running = [j for j in jobs if not j.done]
        parts = [self.describe(j) for j in running[:2]]
        if len(running) > 2:
            parts.append(f"+{len(running) - 2} more")
        if self.message or not running:
            # Progress and the last event, both; a compact window has no key bar: say the two keys.
            parts.append(self.message or ("ready · d: list · ?: keys" if self.lines == 1 else "ready"))
        self._show(" | ".join(parts), self.aside)

    def _show(self, text: str, aside: str = "") -> None:
        # With a picture named beside it, one line: choosing a picture must not shrink the picture.
        lines = 1 if aside else self.lines
        text = plain(fit_lines(text, aside, max(self.size.width - 2, 20), lines), self.ascii_only)
        if text != self._shown:
            self._shown = text
            self.update(text)

    def on_resize(self) -> None:
        self._shown = None
        if self._jobs is not None:
            self.show_jobs(self._jobs)

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

    def watch_message(self, _value: str) -> None:
        self.show_jobs(self._jobs or [])

    def watch_aside(self, _value: str) -> None:
        self.show_jobs(self._jobs or [])


def fit_lines(text: str, aside: str, width: int, lines: int) -> str:
    """``text · aside`` in ``lines`` lines of ``width`` cells: the aside is kept whole, the text
    loses words from its end and says :data:`MORE` when it does not fit (never cut mid-word,
    unless one word alone is longer than the room)."""
    tail = f" · {aside}" if aside else ""

    def fits(candidate: str) -> bool:
        return len(textwrap.wrap(candidate, width)) <= lines

    if fits(text + tail):
        return text + tail
    words = text.split(" ")
    while len(words) > 1:
        words.pop()
        candidate = " ".join(words).rstrip(" ,;:(") + MORE + tail
        if fits(candidate):
            return candidate
    return text[: max(width * lines - len(MORE) - len(tail) - 1, 1)] + MORE + tail


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
