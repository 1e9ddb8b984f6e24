"""The records the workspace is made of: a row (distribution), a running scan, a reference.

Plain records, no statistics: every number the screen shows is asked of a
:class:`~ogive.sketch.Sketch` or of the fit/compare functions the CLI also calls, so the
screen and ``--json`` agree. :mod:`.workspace` holds them together with the rules.
"""

from __future__ import annotations

import threading
from collections import deque
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Literal

from ..read.options import ScanOptions
from ..sketch import Binned, Sketch

if TYPE_CHECKING:
    from ..fit.models import Candidate

RATE_MARKS = 10
"""Ticks the follow rate is measured over: ~5 s at two ticks a second."""


@dataclass
class Distribution:
    """One row of the distributions list: a sketch and where it came from."""

    name: str
    sketch: Sketch | Binned
    origin: str
    """The file the sketch was read or scanned from."""
    state: str = "ready"
    """'scanning', 'following', 'ready', 'partial', 'failed'."""
    note: str = ""
    """Why a scan stopped early, or a warning the reader raised."""
    job: ScanJob | None = None
    """The scan filling this sketch, if it came from one."""
    seq: tuple[int, int] = (0, 0)
    """Where the row goes: the order files were opened in, then the group's order."""


@dataclass
class ScanJob:
    """A running scan of one source, so the user can stop it and the status line can show it."""

    source: str
    options: ScanOptions
    seq: int = 0
    cancel: threading.Event = field(default_factory=threading.Event)
    bytes_read: int = 0
    bytes_total: int | None = None
    rows: int = 0
    values: int = 0
    elapsed_s: float = 0.0
    done: bool = False
    names: dict[str, str] = field(default_factory=dict)
    """Distribution name given to each group of this scan, so every tick updates the same row."""
    follow: bool = False
    """The job follows a growing file until stopped, instead of reading it once."""
    cluster: str | None = None
    """The Dask cluster the scan runs on (``--cluster``), or None: here."""
    recent: str | None = None
    """``--recent`` span of a follow (``5m``): its window sketch gets a row of its own."""
    rotations: int = 0
    """Rotations or truncations a follow has lived through."""
    caught_up: bool = False
    """A follow has read what was in the file when it began; now it waits for new lines."""
    rate: float = 0.0
    """Values per second over the last few seconds of a follow (what arrives now, not the backlog)."""
    _marks: deque[tuple[float, int]] = field(default_factory=lambda: deque(maxlen=RATE_MARKS))

    def restart_rate(self) -> None:
        """Forget the ticks so far (the backlog's read rate is not what arrives now)."""
        self._marks.clear()
        self.rate = 0.0

    def mark(self, elapsed_s: float, values: int) -> None:
        """Record a tick; the rate is taken over the oldest of the last few ticks (bounded)."""
        self._marks.append((elapsed_s, values))
        t0, v0 = self._marks[0]
        self.rate = (values - v0) / (elapsed_s - t0) if elapsed_s > t0 else 0.0

    @property
    def rows_per_s(self) -> float:
        return self.rows / self.elapsed_s if self.elapsed_s > 0 else 0.0

    @property
    def eta_s(self) -> float | None:
        """Seconds left at the average byte rate so far; None when the size is unknown."""
        if not self.bytes_total or self.bytes_read <= 0 or self.elapsed_s <= 0:
            return None
        rate = self.bytes_read / self.elapsed_s
        return max(self.bytes_total - self.bytes_read, 0) / rate


@dataclass(frozen=True)
class ReferenceChoice:
    """What the subject is held against: another loaded sketch, or a fitted model of the subject."""

    kind: Literal["sketch", "model"]
    name: str
    """The distribution's name, or the model's label."""
    model: Candidate | None = None
    """The fitted model when ``kind == 'model'`` (it has ``ppf`` and ``cdf``, as the plots need)."""

    @property
    def label(self) -> str:
        return self.name if self.kind == "sketch" else f"model {self.name}"
