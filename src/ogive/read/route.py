"""Which sketch each row of a chunk goes to: ``all``, ``FIELD=VALUE`` groups (capped),
``before``/``after`` a moment, or consecutive time windows.

Kept apart from the scan loop because it holds the one piece of state that grows
with the data (the groups met so far), and that growth is what the caps bound.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import polars as pl
from numpy.typing import NDArray

from ..errors import OgiveError
from ..sketch import timekeys
from . import times
from .options import ScanOptions

OTHER = "(other)"
MISSING = "(missing)"
OVERFLOW_KEPT = 100_000
"""Distinct values beyond the group cap remembered, only to say how many there were."""


NAMED_KEYS = 4096
"""Chunks with at most this many distinct ``--by`` values are coded in the parser threads."""


@dataclass(frozen=True)
class Keys:
    """A chunk's ``--by`` values, as prepared in the parser threads (:func:`code_keys`)."""

    values: pl.Series
    """Each row's value (String; a missing one as ``MISSING``)."""
    names: list[str] | None = None
    """The distinct values in order of first appearance, when there are at most
    ``NAMED_KEYS`` (None: too many to name in Python; the commit maps the rows in polars)."""
    local: NDArray[np.integer] | None = None
    """With ``names``: each row's index into them."""


def code_keys(g: pl.Series) -> Keys:
    """The chunk's group values, coded when they are few.

    Why here and not in :meth:`Router.route`: coding touches every row and needs nothing
    from earlier chunks, so it runs in the parser threads, in parallel; the ordered
    commit then only names the few distinct values, in Python: a polars call there,
    however small, waits for polars' threads, busy parsing the next chunks. Measured
    with 12 hosts on 1 GB: per-row lookups in the commit thread cost 1.3 s of a 2 s
    scan, and polars calls on the 12 distinct values still 0.7 s. With many distinct
    values (10^5 clients: ~4*10^4 a chunk) coding them here cost more (10 ms a chunk)
    than one polars mapping of the rows at commit against the at most ``max_groups``
    groups (~1 ms), so those chunks are left as they are.
    """
    values = g.cast(pl.String).fill_null(MISSING)
    if values.head(2 * NAMED_KEYS).n_unique() > NAMED_KEYS:
        return Keys(values)  # many: told by the chunk's head, without the whole unique
    distinct = values.unique(maintain_order=True)
    if distinct.len() > NAMED_KEYS:
        return Keys(values)
    # An Enum of the chunk's own values: its physical codes are the indices into them.
    local = values.cast(pl.Enum(distinct)).to_physical().to_numpy()
    return Keys(values, distinct.to_list(), local)


class Router:
    """Names and row indices per sketch, chunk by chunk, in source order."""

    def __init__(self, options: ScanOptions) -> None:
        self.options = options
        self.split_us = None if options.split_at is None else times.parse_moment(options.split_at)
        self.window_us = options.window_us
        self.by_time = self.split_us is not None or self.window_us is not None
        """Rows without a readable time belong to no sketch."""
        self.groups: dict[str, str] = {}
        self._overflow = np.empty(0, dtype=np.uint64)
        """Sorted 64-bit hashes of the values that got no sketch of their own (at most
        ``OVERFLOW_KEPT``, only to count them): a sorted array is searched per chunk,
        where ``is_in`` against a Series rebuilt its hash table of up to 10^5 values
        every chunk (4 of 6.4 ms a chunk with 10^5 keys)."""
        self._codes: dict[str, int] = {}
        """Each grouped value's index among ``groups``."""
        self._known = pl.Series([], dtype=pl.String)
        self._keys: dict[float, str] = {}
        """Timeline: window start -> its ``START/DURATION`` name."""
        self._window_sketches: dict[str, float] = {}
        """Timeline: every window sketch made so far, by name, with its window's start."""
        self._also: list[tuple[str, NDArray[np.int64] | None]] = []
        self.rolling = False
        """Past ``max_windows``, drop the oldest windows instead of stopping (following a
        log: the whole keeps every value, the windows the latest stretch)."""
        self._dropped: list[str] = []

    def route(
        self, n: int, g: Keys | None, tus: NDArray[np.float64] | None
    ) -> str | list[tuple[str, NDArray[np.int64]]]:
        """``"all"`` when every row goes to one sketch, else (name, row indices) pairs."""
        o = self.options
        if self.window_us is not None and tus is not None:
            if o.timeline:
                return self._route_timeline(g, tus, self.window_us)
            return _route_windows(tus, self.window_us)
        halves: NDArray[np.bool_] | None = None
        if self.split_us is not None and tus is not None:
            halves = tus >= self.split_us  # NaN compares False; such rows are already skipped
        if not o.by and halves is None:
            return "all"
        if o.by and g is not None:
            labels, codes = self._group_codes(g)
        else:
            labels = [""]
            codes = np.zeros(n, dtype=np.int64)
        if halves is not None:
            codes = codes * 2 + halves.astype(np.int64)
            names = []
            for lab in labels:
                for half in ("before", "after"):
                    names.append(f"{half}/{lab}" if lab else half)
        else:
            names = labels
        return _split_codes(names, codes)

    def also(self) -> list[tuple[str, NDArray[np.int64] | None]]:
        """The sketches the rows of the last :meth:`route` go to besides their own
        (a timeline's whole and groups; rows None: every row). Their bad rows were
        counted scan-wide with the rows' own window, so they count in provenance only."""
        out, self._also = self._also, []
        return out

    def _route_timeline(
        self, g: Keys | None, tus: NDArray[np.float64], width_us: float
    ) -> list[tuple[str, NDArray[np.int64]]]:
        """Each timed row to its window (``START/DURATION``); the whole (``all``) and,
        with ``by``, the row's group and the group's window, to :meth:`also`."""
        good, starts, parts = _window_parts(tus, width_us)
        keys = [self._key(float(s), width_us) for s in starts]
        out = list(zip(keys, parts, strict=True))
        also: list[tuple[str, NDArray[np.int64] | None]] = [
            (timekeys.WHOLE, None if good.size == tus.size else good)
        ]
        windows: list[tuple[str, NDArray[np.int64] | None]] = []
        made = {key: float(s) for key, s in zip(keys, starts, strict=True)}
        if self.options.by and g is not None and good.size:
            labels, codes = self._group_codes(g)
            also += _split_by(labels, codes, good)
            for key, part in out:
                pairs = _split_by(labels, codes, part)
                windows += [(f"{label}@{key}", rows) for label, rows in pairs]
                made.update({f"{label}@{key}": made[key] for label, _ in pairs})
        self._count_windows(made)
        self._also = also + windows
        return out

    def dropped(self) -> list[str]:
        """Window sketches to let go of (``rolling``), oldest first; each is named once."""
        out, self._dropped = self._dropped, []
        return out

    def _key(self, start_us: float, width_us: float) -> str:
        key = self._keys.get(start_us)
        if key is None:
            key = self._keys[start_us] = timekeys.window_key(start_us, width_us)
        return key

    def _count_windows(self, made: dict[str, float]) -> None:
        self._window_sketches.update(made)
        if len(self._window_sketches) > self.options.max_windows and self.rolling:
            by_age = sorted(self._window_sketches, key=self._window_sketches.__getitem__)
            extra = by_age[: len(by_age) - self.options.max_windows]
            # A window of this very chunk is never dropped: its rows are being added now.
            extra = [n for n in extra if n not in made]
            for name in extra:
                del self._window_sketches[name]
            self._dropped += extra
        if len(self._window_sketches) > self.options.max_windows:
            o = self.options
            raise OgiveError(
                f"more than {o.max_windows:,} window sketches ({o.window} windows"
                + (f" times the groups of --by {o.by}" if o.by else "")
                + "); that would outgrow the memory a scan may use. Choose a wider --window"
                + (" or fewer groups (--max-groups)." if o.by else ".")
            )

    def _group_codes(self, g: Keys) -> tuple[list[str], NDArray[np.int64]]:
        """Sketch names and each row's index into them, for ``--by``.

        The first ``max_groups`` distinct values met (in file order) get a sketch each;
        later ones share ``FIELD=(other)``. A chunk of few distinct values comes coded
        (:func:`code_keys`): only those values are looked up, in a dict. Otherwise polars
        maps the rows; Python touches each distinct value only until the groups are full
        (a Python loop over a chunk's 10^5 values made ``--by`` run at 12 MB/s).
        """
        o = self.options
        codes = self._codes
        if len(self.groups) < o.max_groups:
            before = len(self.groups)
            distinct = g.names if g.names is not None else g.values.unique(maintain_order=True).to_list()
            for key in distinct:
                if key not in codes and len(self.groups) < o.max_groups:
                    codes[key] = len(self.groups)
                    self.groups[key] = f"{o.by}={key}"
            if len(self.groups) > before:
                self._known = pl.Series(list(self.groups), dtype=pl.String)
        labels = [*self.groups.values(), f"{o.by}={OTHER}"]
        other = len(labels) - 1
        if g.names is not None and g.local is not None:
            mapped = np.fromiter((codes.get(k, other) for k in g.names), dtype=np.int64, count=len(g.names))
            rows = mapped[g.local]
            past = (mapped == other).any()
        else:
            rows = g.values.replace_strict(
                self._known, pl.Series(np.arange(other, dtype=np.int64)), default=other, return_dtype=pl.Int64
            ).to_numpy()
            past = (rows == other).any()
        if self._overflow.size < OVERFLOW_KEPT and past:
            # Counted by hash: two distinct values sharing a 64-bit hash (odds ~10^-9 at
            # 10^5 values) would be counted once. Made distinct by polars, sorted so that
            # the search walks the known hashes in order.
            rest = np.sort(g.values.filter(pl.Series(rows == other)).unique().hash(seed=0).to_numpy())
            known = self._overflow
            at = np.searchsorted(known, rest)
            unseen = rest[known[np.minimum(at, max(known.size - 1, 0))] != rest] if known.size else rest
            unseen = unseen[: OVERFLOW_KEPT - known.size]
            if unseen.size:
                self._overflow = np.sort(np.concatenate((known, unseen)))
        return labels, rows

    def missing_warning(self) -> str | None:
        """When no row had a ``--by`` value: every row went to ``FIELD=(missing)``, which
        a user asking for per-host sketches must hear, not find in the table."""
        if list(self.groups) != [MISSING]:
            return None
        by = self.options.by
        return (
            f"--by {by}: no record had a {by} value, so every row is in {by}={MISSING}; in free text "
            f"--by reads {by}=VALUE pairs or a named group (?P<{by}>...) of --pattern."
        )

    def overflow_warning(self) -> str | None:
        if not self._overflow.size:
            return None
        o = self.options
        more = "+" if self._overflow.size >= OVERFLOW_KEPT else ""
        return (
            f"--by {o.by}: more than {o.max_groups} distinct values; {self._overflow.size}{more} further "
            f"values share the group {o.by}={OTHER} (raise --max-groups to keep them apart)."
        )


def _route_windows(tus: NDArray[np.float64], width_us: float) -> list[tuple[str, NDArray[np.int64]]]:
    """One sketch per time window, named by the window's start (ISO 8601 UTC).

    Rows without a readable time were already marked bad; they land in no window.
    """
    _, starts, parts = _window_parts(tus, width_us)
    return [(times.iso(float(start)), part) for start, part in zip(starts, parts, strict=True)]


def _window_parts(
    tus: NDArray[np.float64], width_us: float
) -> tuple[NDArray[np.int64], NDArray[np.float64], list[NDArray[np.int64]]]:
    """(timed rows, window starts, the rows of each window) of one chunk.

    A log is written in time order, so a chunk's windows are usually runs: cut where
    the window changes, in one pass. Out-of-order rows (merged logs) take a sort.
    """
    good = np.flatnonzero(np.isfinite(tus))
    ws = times.window_starts(tus[good], width_us)
    if ws.size == 0:
        return good, ws, []
    if bool(np.all(ws[1:] >= ws[:-1])):
        bounds = np.flatnonzero(ws[1:] != ws[:-1]) + 1
        return good, ws[np.concatenate(([0], bounds))], np.split(good, bounds)
    starts, inverse = np.unique(ws, return_inverse=True)
    order = np.argsort(inverse, kind="stable")
    bounds = np.flatnonzero(np.diff(inverse[order])) + 1
    return good, starts, [good[part] for part in np.split(order, bounds)]


def _split_by(
    labels: list[str], codes: NDArray[np.int64], rows: NDArray[np.int64]
) -> list[tuple[str, NDArray[np.int64]]]:
    """``rows`` split by their group code, as (group name, rows) pairs."""
    return [(name, rows[part]) for name, part in _split_codes(labels, codes[rows])]


def _split_codes(names: list[str], codes: NDArray[np.int64]) -> list[tuple[str, NDArray[np.int64]]]:
    """Row indices per code, in row order within each, as (name, rows) pairs by code.

    Why not one stable argsort of int64 codes (a merge sort, ~60 ms for a chunk of 10^6
    rows): two codes (before/after) are two ``flatnonzero`` passes, and up to 2^16
    codes fit ``uint16``, which numpy sorts stably by radix in one linear pass.
    """
    if codes.size == 0:
        return []
    top = int(codes.max())
    if top <= 1:
        return [(names[c], part) for c in (0, 1) if (part := np.flatnonzero(codes == c)).size]
    small = codes.astype(np.uint16) if top < 1 << 16 else codes
    order = np.argsort(small, kind="stable")
    bounds = np.flatnonzero(np.diff(small[order])) + 1
    return [(names[int(codes[part[0]])], part) for part in np.split(order, bounds) if part.size]
