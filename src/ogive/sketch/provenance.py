"""Where a distribution's values came from, and the rows that never reached it.

Shared by sketches of raw values and binned distributions (kept apart from both so
neither needs the other).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

EXAMPLES_KEPT = 5
"""How many example locations a skip reason keeps (the first ones seen)."""


@dataclass
class SkipTally:
    """Rows passed over for one reason: how many, and where the first ones were."""

    count: int = 0
    examples: list[str] = dataclasses.field(default_factory=list)

    def add(self, count: int, examples: list[str]) -> None:
        self.count += count
        room = EXAMPLES_KEPT - len(self.examples)
        if room > 0:
            self.examples.extend(examples[:room])


@dataclass
class Provenance:
    """Where the values came from; merged sketches keep every source they saw."""

    sources: list[str] = dataclasses.field(default_factory=list)
    field: str = ""
    lines_read: int = 0
    rows_read: int = 0
    skipped: dict[str, SkipTally] = dataclasses.field(default_factory=dict)
    time_first: str | None = None
    time_last: str | None = None
    partial: str | None = None
    """Why the scan stopped early (interrupted, corrupt input), or None when complete."""

    def skip(self, reason: str, count: int, examples: list[str]) -> None:
        if count:
            self.skipped.setdefault(reason, SkipTally()).add(count, examples)

    @property
    def skipped_total(self) -> int:
        return sum(t.count for t in self.skipped.values())

    def absorb(self, b: Provenance) -> None:
        """Fold in where another sketch's values came from (a merge keeps every source)."""
        self.sources.extend(s for s in b.sources if s not in self.sources)
        self.field = self.field or b.field
        self.lines_read += b.lines_read
        self.rows_read += b.rows_read
        for reason, tally in b.skipped.items():
            self.skip(reason, tally.count, tally.examples)
        firsts = [t for t in (self.time_first, b.time_first) if t]
        lasts = [t for t in (self.time_last, b.time_last) if t]
        self.time_first = min(firsts) if firsts else None
        self.time_last = max(lasts) if lasts else None
        self.partial = "; ".join(p for p in (self.partial, b.partial) if p) or None


def _label(q: float) -> str:
    """0.999 -> 'p99.9'."""
    s = f"{q * 100:.6f}".rstrip("0").rstrip(".")
    return f"p{s}"


def quantile_label(q: float) -> str:
    """The trade's name for a quantile: 0.5 -> 'p50', 0.9999 -> 'p99.99'."""
    return _label(q)
