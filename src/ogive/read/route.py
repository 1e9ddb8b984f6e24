"""Which sketch each row of a chunk goes to: ``all``, ``FIELD=VALUE`` groups (capped),
``before``/``after`` a moment, or consecutive time windows.

Kept apart from the scan loop because it holds the one piece of state that grows
with the data (the groups met so far), and that growth is what the caps bound.
"""

from __future__ import annotations

import numpy as np
import polars as pl
from numpy.typing import NDArray

from . import times
from .options import ScanOptions

OTHER = "(other)"
MISSING = "(missing)"
OVERFLOW_KEPT = 100_000
"""Distinct values beyond the group cap remembered, only to say how many there were."""


class Router:
    """Names and row indices per sketch, chunk by chunk, in source order."""

    def __init__(self, options: ScanOptions) -> None:
        self.options = options
        self.split_us = None if options.split_at is None else times.parse_moment(options.split_at)
        self.window_us = options.window_us
        self.by_time = self.split_us is not None or self.window_us is not None
        """Rows without a readable time belong to no sketch."""
        self.groups: dict[str, str] = {}
        self.overflow = pl.Series([], dtype=pl.String)
        """Values that got no sketch of their own (at most ``OVERFLOW_KEPT``, for the count)."""
        self._known = pl.Series([], dtype=pl.String)

    def route(
        self, n: int, g: pl.Series | None, tus: NDArray[np.float64] | None
    ) -> str | list[tuple[str, NDArray[np.int64]]]:
        """``"all"`` when every row goes to one sketch, else (name, row indices) pairs."""
        o = self.options
        if self.window_us is not None and tus is not None:
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
        order = np.argsort(codes, kind="stable")
        sorted_codes = codes[order]
        bounds = np.flatnonzero(np.diff(sorted_codes)) + 1
        out = []
        for part in np.split(order, bounds):
            if part.size:
                out.append((names[int(codes[part[0]])], part))
        return out

    def _group_codes(self, g: pl.Series) -> tuple[list[str], NDArray[np.int64]]:
        """Sketch names and each row's index into them, for ``--by``.

        The first ``max_groups`` distinct values met (in file order) get a sketch each;
        later ones share ``FIELD=(other)``. Vectorised: with 10^5 distinct keys a chunk
        holds ~10^5 of them, and a Python loop over them per chunk made ``--by`` run
        at 12 MB/s; only the at most ``max_groups`` new groups are touched in Python.
        """
        o = self.options
        keys = g.fill_null(MISSING)
        if len(self.groups) < o.max_groups:
            fresh = keys.unique(maintain_order=True)
            if self.groups:
                fresh = fresh.filter(~fresh.is_in(self._known.implode()))
            for key in fresh.head(o.max_groups - len(self.groups)).to_list():
                self.groups[key] = f"{o.by}={key}"
            self._known = pl.Series(list(self.groups), dtype=pl.String)
        labels = [*self.groups.values(), f"{o.by}={OTHER}"]
        other = len(labels) - 1
        codes = keys.replace_strict(
            self._known, pl.Series(np.arange(other, dtype=np.int64)), default=other, return_dtype=pl.Int64
        ).to_numpy()
        if self.overflow.len() < OVERFLOW_KEPT and (codes == other).any():
            rest = keys.filter(pl.Series(codes == other)).unique()
            rest = rest.filter(~rest.is_in(self.overflow.implode()))
            room = OVERFLOW_KEPT - self.overflow.len()
            self.overflow = pl.concat([self.overflow, rest.head(room)])
        return labels, codes

    def overflow_warning(self) -> str | None:
        if not self.overflow.len():
            return None
        o = self.options
        more = "+" if self.overflow.len() >= OVERFLOW_KEPT else ""
        return (
            f"--by {o.by}: more than {o.max_groups} distinct values; {self.overflow.len()}{more} further "
            f"values share the group {o.by}={OTHER} (raise --max-groups to keep them apart)."
        )


def _route_windows(tus: NDArray[np.float64], width_us: float) -> list[tuple[str, NDArray[np.int64]]]:
    """One sketch per time window, named by the window's start (ISO 8601 UTC).

    Rows without a readable time were already marked bad; they land in no window.
    """
    good = np.flatnonzero(np.isfinite(tus))
    starts, inverse = np.unique(times.window_starts(tus[good], width_us), return_inverse=True)
    order = np.argsort(inverse, kind="stable")
    bounds = np.flatnonzero(np.diff(inverse[order])) + 1
    return [
        (times.iso(float(start)), good[part])
        for start, part in zip(starts, np.split(order, bounds), strict=True)
        if part.size
    ]
