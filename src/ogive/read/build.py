"""Building the sketches: each batch's good values go to the sketch its rows were routed
to, held in one buffer and added in large batches, with digest memory kept flat
however many sketches there are.

Also here, because they follow the same committed rows: each sketch's first and last
timestamp, and the count of rows whose time steps back.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from ..sketch import Binned, Sketch, SketchSet, SkipTally, timekeys
from . import times
from .decode import Batch
from .options import ScanOptions
from .route import OTHER
from .skips import BAD_TIMESTAMP, Skips

BATCH_VALUES = 500_000
"""Values held (over all sketches) before they are added: 4 MB (8 MB over 64 sketches, below)."""
CHECK_VALUES = 500_000
"""The digests' memory is checked after every this many good values, counted in source
order (``Builder.end_batch``)."""
MANY_SKETCHES = 64
BATCH_VALUES_MANY = 1_000_000
"""Held values when there are more than ``MANY_SKETCHES`` sketches (8 MB): with 1000 groups
a batch of 500k gave each sketch ~500 values, and the fixed cost of ``Sketch.add`` on
such small arrays was a quarter of the ordered thread's time (10^5 keys, 300 MB)."""
DIGEST_BUDGET = 4_000_000
"""Values buffered in all digests together before the fullest are compressed (32 MB)."""


class Builder:
    """The sketches under construction, by name."""

    def __init__(self, options: ScanOptions, source_names: list[str], skips: Skips) -> None:
        self.options = options
        self.source_names = source_names
        self.skips = skips
        self.unit = ""
        """The sketch unit, set once decided (before any sketch is made)."""
        self.field = ""
        """How the value is found, for provenance (``column latency_ms``)."""
        self.sketches: dict[str, Sketch] = {}
        self.values = 0
        """Good values given to the sketches (held ones included)."""
        self.by_time = options.split_at is not None or options.window is not None
        """Sketches are cut by time: a row without a readable time belongs to none."""
        self._held: dict[str, list[NDArray[np.float64]]] = {}
        self._held_n = 0
        self._pending: list[tuple[str, NDArray[np.float64], NDArray[np.int64] | None, NDArray[np.bool_]]] = []
        """This batch's good values by sketch, with what places their rows: (name,
        values, the rows given or None for all, which of those were good)."""
        self._pending_n = 0
        self._buffered = 0
        """Values buffered in the digests, over all sketches (kept as they change, so that
        a check under budget needs no walk over 10^5 sketches)."""
        self._since_check = 0
        """Good values given since the digests' memory was last checked (counted, not
        held: a progress report adding the held values early must not move the check)."""
        self._spans: dict[str, list[float]] = {}

    def sketch(self, name: str) -> Sketch:
        s = self.sketches.get(name)
        if s is None:
            o = self.options
            window = o.window_us is not None and (not o.timeline or timekeys.parse_key(name) is not None)
            compression = (o.window_compression if window else None) or o.compression
            tail = (o.window_tail if window else None) or o.tail_size
            s = Sketch(self.unit, compression=compression, tail_size=tail)
            s.provenance.sources = list(self.source_names)
            s.provenance.field = self.field
            self.sketches[name] = s
        return s

    def add(self, name: str, batch: Batch, idx: NDArray[np.int64] | None, *, tally: bool = True) -> None:
        """Rows ``idx`` of ``batch`` (all when None) to sketch ``name``: good values to its
        buffer, bad rows counted (scan-wide unless ``tally`` is off, because the rows
        were counted with another sketch, and in its provenance), its time span widened.
        The values are held once the batch ends (:meth:`end_batch`)."""
        s = self.sketch(name)
        prov = s.provenance
        vals, ok = batch.values, batch.ok
        if idx is None:
            sel_ok = ok
            good = vals if ok.all() else vals[ok]
            rows = vals.size
        else:
            sel_ok = ok[idx]
            good = vals[idx][sel_ok]
            rows = idx.size
        prov.rows_read += rows
        if good.size:
            self._pending.append((name, good, idx, sel_ok))
            self._pending_n += good.size
        if tally:
            self.values += good.size
        for reason, count, examples in self.skips.found(batch, idx):
            if tally:
                self.skips.count(reason, count, examples)
            if reason != BAD_TIMESTAMP or not self.by_time:  # cut by time: in no sketch
                prov.skip(reason, count, examples)
            else:
                prov.rows_read -= count  # counted in the set's unassigned rows instead
        if batch.tus is not None:
            t = batch.tus if idx is None else batch.tus[idx]
            t = t[np.isfinite(t) & sel_ok] if sel_ok.size else t[:0]
            if t.size:
                lo, hi = float(t.min()), float(t.max())
                span = self._spans.setdefault(name, [lo, hi])
                span[0], span[1] = min(span[0], lo), max(span[1], hi)

    def drop(self, name: str) -> None:
        """Let go of a sketch and whatever of it is still held (an old window of a followed timeline)."""
        self.end_batch()
        gone = self.sketches.pop(name, None)
        if gone is not None:
            self._buffered -= gone.digest.buffered
        self._spans.pop(name, None)
        held = self._held.pop(name, [])
        self._held_n -= sum(part.size for part in held)

    def end_batch(self) -> None:
        """Hold the batch's values, checking the digests' memory at every ``CHECK_VALUES``-th
        good value in source order, wherever the batches begin and end.

        Why at a row and not at the batch's end: the check compresses the fullest digests
        early, which shapes them, so where it falls must not depend on the chunk size (a
        memory grant, a larger chunk for a CSV read with a group) or on how many rows a
        chunk held; otherwise ``--by`` sketches differed in their last digits between
        chunk sizes. A batch that crosses a check is split at the row where the count
        reaches it: the values up to that row are held, the check runs, then the rest.
        """
        pending, n = self._pending, self._pending_n
        self._pending, self._pending_n = [], 0
        # Rows matter only in a batch that crosses a check among two or more sketches (one
        # sketch alone, each row once: the check could compress nothing; it needs two).
        left: list[tuple[str, NDArray[np.float64]]]
        if self._since_check + n >= CHECK_VALUES and not (len(pending) == 1 and len(self.sketches) == 1):
            placed = [
                (name, vals, np.flatnonzero(ok) if idx is None else idx[ok])
                for name, vals, idx, ok in pending
            ]
            while n and self._since_check + n >= CHECK_VALUES:
                need = CHECK_VALUES - self._since_check
                last = np.partition(np.concatenate([at for _, _, at in placed]), need - 1)[need - 1]
                rest = []
                for name, vals, at in placed:
                    early = at <= last  # up to the row reaching the count
                    self._hold(name, vals[early])
                    if not early.all():
                        rest.append((name, vals[~early], at[~early]))
                self._check()
                self._since_check = 0
                placed, n = rest, sum(vals.size for _, vals, _ in rest)
            left = [(name, vals) for name, vals, _ in placed]
        else:
            left = [(name, vals) for name, vals, _, _ in pending]
        for name, vals in left:
            self._hold(name, vals)
        self._since_check = (self._since_check + n) % CHECK_VALUES
        batch_values = BATCH_VALUES if len(self.sketches) <= MANY_SKETCHES else BATCH_VALUES_MANY
        if self._held_n >= batch_values:
            self._add_held()  # when held values are added changes no digest, only memory

    def _hold(self, name: str, vals: NDArray[np.float64]) -> None:
        if vals.size:
            self._held.setdefault(name, []).append(vals)
            self._held_n += vals.size

    def _add_held(self) -> None:
        """Add the held values: one batch per sketch of ~BATCH_VALUES costs less per value
        than one per chunk (fewer tail merges). When they are added does not change the
        sketches (``TDigest.add`` merges at fixed counts), only when memory is freed."""
        for name, parts in self._held.items():
            self._add(self.sketches[name], parts)
        self._held.clear()
        self._held_n = 0

    def _add(self, s: Sketch, parts: list[NDArray[np.float64]]) -> None:
        before = s.digest.buffered
        s.add(parts[0] if len(parts) == 1 else np.concatenate(parts))
        self._buffered += s.digest.buffered - before

    def _check(self) -> None:
        """Keep the digests' unmerged values within the budget (at fixed counts of values,
        :meth:`end_batch`, and at the end; never by the clock).

        Each digest buffers up to ~10^6 values before it compresses them: alone that is
        8 MB, but over 24 hosts it was 88 MB, and over 1000 groups it could grow to
        gigabytes. Once the unmerged values of two or more sketches together pass the
        budget, the fullest are compressed; memory then no longer grows with the number
        of groups. Unmerged = buffered in the digest or still held here; only the
        compressed sketches' held values are added first, so this costs nothing when
        under budget.
        """
        # A timeline's window digests are small (compression ~200): compressing them
        # often costs little, and closed windows stop holding raw values (a week of
        # 1-minute windows, 2.3 GB of CSV: 212 MB peak against 182 MB without windows).
        budget = DIGEST_BUDGET // 8 if self.options.timeline else DIGEST_BUDGET
        total = self._buffered + self._held_n
        if total <= budget:
            return
        unmerged = []
        for name, s in self.sketches.items():
            n = s.digest.buffered + sum(part.size for part in self._held.get(name, ()))
            if n:
                unmerged.append((n, name, s))
        if len(unmerged) < 2:
            return
        for n, name, s in sorted(unmerged, key=lambda t: -t[0]):
            parts = self._held.pop(name, [])
            if parts:
                self._held_n -= sum(part.size for part in parts)
                self._add(s, parts)
            self._buffered -= s.digest.buffered
            s.digest.flush()
            total -= n
            if total <= budget // 2:
                break

    def sset(self) -> SketchSet:
        """The sketches as they stand, every held value added (for progress reports:
        reading them changes nothing that the finished sketches will hold)."""
        self._add_held()
        return SketchSet(dict(self.sketches))

    def finish(self, *, lines: int, partial: str | None, halves: bool) -> SketchSet:
        """The finished set, in a stable order (before, after; ``(other)`` groups last).

        A scan that met no row still answers with the sketches it was asked for, empty.
        """
        self.end_batch()
        self._check()
        self._add_held()
        if not self.sketches:
            if halves:
                for half in ("before", "after"):
                    self.sketch(half)
            elif not self.options.by:
                self.sketch("all")
        for name, s in self.sketches.items():
            s.provenance.lines_read = lines
            s.provenance.partial = partial
            span = self._spans.get(name)
            if span:
                s.provenance.time_first, s.provenance.time_last = times.iso(span[0]), times.iso(span[1])
        ordered: dict[str, Sketch | Binned] = dict(
            sorted(self.sketches.items(), key=lambda kv: _sort_key(kv[0]))
        )
        return SketchSet(ordered, unassigned=self._unassigned())

    def _unassigned(self) -> dict[str, SkipTally]:
        """Skipped rows of the scan that no sketch's provenance holds (counted scan-wide
        minus the sketches' shares): rows that belonged to no sketch."""
        out: dict[str, SkipTally] = {}
        for reason, tally in self.skips.skipped.items():
            have = [s for s in self.sketches.values() if reason in s.provenance.skipped]
            owned = [s.provenance.skipped[reason] for s in have]
            left = tally.count - sum(t.count for t in owned)
            if left > 0:
                seen = {e for t in owned for e in t.examples}
                out[reason] = SkipTally(left, [e for e in tally.examples if e not in seen])
        return out


def _sort_key(name: str) -> tuple[int, int, str]:
    half = 0 if name.startswith("before") else (1 if name.startswith("after") else 0)
    other = 1 if name.endswith(f"={OTHER}") else 0
    return (half, other, name)


class TimeOrder:
    """Counts rows whose time is earlier than a row before them (clock steps, merged or
    shuffled logs): harmless to the sketches, which place rows by their own time, but
    a sign the file is not the time-ordered log the user may think it is."""

    def __init__(self) -> None:
        self._t_max = -np.inf
        self.count = 0
        self.most = 0.0
        """Microseconds: the largest step back in time seen."""
        self.first = ""

    def watch(self, batch: Batch) -> None:
        if batch.tus is None:
            return
        t = batch.tus
        # The usual log: every time read and none earlier than the one before it. One
        # comparison pass settles it (NaN compares False, so a missing time goes the long way).
        if t.size and t[0] >= self._t_max and bool(np.all(t[1:] >= t[:-1])):
            self._t_max = float(t[-1])
            return
        rows = np.flatnonzero(np.isfinite(batch.tus))
        if not rows.size:
            return
        t = batch.tus[rows]
        before = np.maximum.accumulate(np.concatenate(([self._t_max], t[:-1])))
        back = before - t
        late = np.flatnonzero(back > 0)
        if late.size:
            if not self.count:
                self.first = batch.where(int(rows[late[0]]))
            self.count += late.size
            self.most = max(self.most, float(back[late].max()))
        self._t_max = max(self._t_max, float(before[-1]), float(t[-1]))

    def warning(self) -> str | None:
        if not self.count:
            return None
        rows, them = ("row", "it") if self.count == 1 else ("rows", "them")
        return (
            f"{self.count:,} {rows} had a timestamp earlier than a row before {them} (first at "
            f"{self.first}, at most {self.most / 1e6:g} s earlier); each row still counts "
            "by its own time."
        )
