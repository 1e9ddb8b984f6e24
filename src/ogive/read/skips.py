"""Skip accounting: every row read that gave no value is counted by reason, with the
first few places it happened (``file:line``), and ``--strict`` stops at the first.

The scan-wide tally lives here; each sketch's own share is in its provenance, put
there by the builder from the same :meth:`Skips.found` lists, so the two agree.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, NoReturn

import numpy as np
from numpy.typing import NDArray

from ..errors import OgiveError
from ..sketch import SkipTally
from ..sketch.sketch import EXAMPLES_KEPT
from . import layout, values

if TYPE_CHECKING:
    from .decode import Batch

BAD_TIMESTAMP = "bad_timestamp"
TOO_LONG = "too_long"

REASON_TEXT = {
    values.MISSING_FIELD: "the value is missing",
    values.NOT_A_NUMBER: "the value is not a number",
    values.UNKNOWN_UNIT: "the value has a unit suffix ogive does not know",
    values.UNIT_MISMATCH: "the value is a duration but the sketch unit is not a time unit",
    BAD_TIMESTAMP: "the timestamp is missing or unreadable (or out of range)",
    TOO_LONG: "the line is longer than the longest line ogive will hold",
    **layout.REASON_TEXT,  # what the record formats find: not JSON, not a line of the format, ...
}

Found = list[tuple[str, int, list[str]]]
"""(reason, rows, first places) for some rows of a batch."""


class Skips:
    """Rows skipped over the whole scan, by reason; raises at the first under ``strict``."""

    def __init__(self, *, strict: bool) -> None:
        self.strict = strict
        self.skipped: dict[str, SkipTally] = {}

    def count(self, reason: str, rows: int, examples: list[str]) -> None:
        if rows:
            self.skipped.setdefault(reason, SkipTally()).add(rows, examples)

    def check(self, batch: Batch) -> None:
        """Under ``strict``: stop at the batch's first bad row, naming its place and reason."""
        faults = {r: m for r, m in batch.reasons.items() if r not in layout.FORMAT_LINES}
        if self.strict and faults:
            row, reason = min((int(np.argmax(m)), r) for r, m in faults.items())
            stop(reason, batch.where(row))

    def unassigned(self, reason: str, display: str, line_numbers: range) -> list[str]:
        """Lines no sketch can own (too long to parse): counted here; returns their
        first places for the caller to note where a single sketch stands for the scan."""
        examples = [f"{display}:{n}" for n in line_numbers[:EXAMPLES_KEPT]]
        if self.strict and line_numbers:
            stop(reason, examples[0])
        self.count(reason, len(line_numbers), examples)
        return examples

    @staticmethod
    def found(batch: Batch, idx: NDArray[np.int64] | None = None) -> Found:
        """(reason, count, first places) among the rows ``idx`` of a batch (all when None)."""
        out = []
        for reason, mask in batch.reasons.items():
            m = mask if idx is None else mask[idx]
            count = int(m.sum())
            if count:
                where = np.flatnonzero(m)[:EXAMPLES_KEPT]
                rows = where if idx is None else idx[where]
                out.append((reason, count, [batch.where(int(i)) for i in rows]))
        return out


def places(examples: list[str]) -> str:
    """``a.log:3``, ``a.log:9``, ``b.log:4`` as ``a.log:3, 9; b.log:4`` (each file once)."""
    parts: list[tuple[str, list[str]]] = []
    for ex in examples:
        where, _, line = ex.rpartition(":")
        if parts and parts[-1][0] == where:
            parts[-1][1].append(line)
        else:
            parts.append((where, [line]))
    return "; ".join(f"{w}:{', '.join(ls)}" for w, ls in parts)


def stop(reason: str, where: str) -> NoReturn:
    """The ``--strict`` stop: one line naming the place and the reason."""
    raise OgiveError(f"{where}: {REASON_TEXT.get(reason, reason)} ({reason}); stopped because of --strict.")
