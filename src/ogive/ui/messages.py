"""Messages a scan worker posts to the screen (``post_message`` is thread-safe).

Kept apart from the app so that the worker side and the screen side name the same
classes without importing each other.
"""

from __future__ import annotations

from textual.message import Message

from ..read.options import ScanProgress
from ..sketch import Binned, Sketch
from . import workers
from .state import ScanJob


class ScanTick(Message):
    """A scan's progress, with the sketches as they stand (drawn as they form)."""

    def __init__(self, job: ScanJob, progress: ScanProgress, sketches: dict[str, Sketch | Binned]) -> None:
        super().__init__()
        self.job, self.progress, self.sketches = job, progress, sketches


class ScanEnded(Message):
    """A scan's end: its sketches, or why it stopped."""

    def __init__(self, job: ScanJob, end: workers.ScanEnd) -> None:
        super().__init__()
        self.job, self.end = job, end
