"""A one-line scan progress display on stderr, redrawn in place with carriage returns.

Redraws are throttled (at most ``MAX_RATE`` per second) because a terminal over SSH
is slow, and a scan that spends its time printing is a slow scan. Nothing is written
when the stream is not a terminal, so piped or logged stderr stays clean.
"""

from __future__ import annotations

import time
from typing import TYPE_CHECKING, TextIO

from ..errors import printable

if TYPE_CHECKING:
    from ..read.options import ScanProgress

MAX_RATE = 5.0


def _size(n: float) -> str:
    for unit in ("B", "KB", "MB", "GB"):
        if abs(n) < 1000:
            return f"{n:.0f} {unit}" if unit == "B" else f"{n:.1f} {unit}"
        n /= 1000
    return f"{n:.1f} TB"


def _count(n: float) -> str:
    if n >= 1e6:
        return f"{n / 1e6:.1f}M"
    if n >= 1e3:
        return f"{n / 1e3:.1f}k"
    return f"{n:.0f}"


def _duration(seconds: float) -> str:
    s = round(seconds)
    if s >= 3600:
        return f"{s // 3600}h{s % 3600 // 60:02d}m"
    if s >= 60:
        return f"{s // 60}m{s % 60:02d}s"
    return f"{s}s"


def format_progress(p: ScanProgress) -> str:
    """The text of one progress line (kept apart from drawing so it can be tested)."""
    rate = p.bytes_read / p.elapsed_s if p.elapsed_s > 0 else 0.0
    rows = p.rows / p.elapsed_s if p.elapsed_s > 0 else 0.0
    parts = []
    if p.bytes_total:
        frac = min(p.bytes_read / p.bytes_total, 1.0)
        parts.append(f"{frac * 100:5.1f}%")
        parts.append(f"{_size(p.bytes_read)} of {_size(p.bytes_total)}")
    else:
        parts.append(_size(p.bytes_read))
    parts.append(f"{_count(rows)} rows/s")
    parts.append(f"{rate / 1e6:.0f} MB/s")
    if p.bytes_total and rate > 0 and p.bytes_read < p.bytes_total:
        parts.append(f"ETA {_duration((p.bytes_total - p.bytes_read) / rate)}")
    return "scanning " + p.source + "  " + "  ".join(parts)


class ProgressLine:
    """Draws ``format_progress`` on a terminal stream; inert when it is not one."""

    def __init__(self, stream: TextIO, *, width: int | None = None) -> None:
        self.stream = stream
        self.enabled = bool(getattr(stream, "isatty", lambda: False)())
        self._last = 0.0
        self._drawn = 0
        if width is None:
            import shutil

            width = shutil.get_terminal_size((80, 24)).columns
        self.width = max(20, width - 1)

    def update(self, progress: ScanProgress) -> None:
        if not self.enabled:
            return
        now = time.monotonic()
        if now - self._last < 1.0 / MAX_RATE:
            return
        self._last = now
        text = printable(format_progress(progress))[: self.width]  # a source's name may hold ESC
        pad = " " * max(0, self._drawn - len(text))
        self.stream.write("\r" + text + pad)
        self.stream.flush()
        self._drawn = len(text)

    def clear(self) -> None:
        """Erase the line so the summary that follows starts at column 0."""
        if self.enabled and self._drawn:
            self.stream.write("\r" + " " * self._drawn + "\r")
            self.stream.flush()
            self._drawn = 0
