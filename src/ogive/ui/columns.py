"""Tables that fit a pane's width by dropping whole columns, least needed first; numbers are never cut.

A cell cut short (``21…`` for 214.7) is a wrong number on screen; a column left out is a
question the user can still answer (a wider window, ``e`` exports everything). So a
table too wide for its pane loses columns in a stated order, and the ones a reading
depends on (the quantile, the verdict, the ranking key) are never dropped.
"""

from __future__ import annotations

from collections.abc import Collection, Sequence

from ..render.tables import Table

LADDER_DROP = ("change", "R")
"""The ladder at a narrow width: the relative change goes first (the interval says more), then
the reference's value (the headline names it; the interval of S − R and the verdict stay)."""
MODELS_DROP = ("parameters", "CvM", "AD", "AIC", "KS", "BIC", "tail error")
"""The model ranking at a narrow width: parameters first, then the scores the default ranking
reads last; the column the ranking is by is kept whatever its place here."""


def natural_width(t: Table, column: int) -> int:
    cells = [len(t.header[column]), *(len(r[column]) for r in t.rows)]
    return max(cells)


def fit_columns(
    t: Table, width: int, drop: Sequence[str], *, keep: Collection[str] = (), gap: int = 2
) -> Table:
    """``t`` without the columns of ``drop`` (in that order) that keep it from fitting ``width`` cells.

    ``gap``: cells between columns (padding). Columns named in ``keep`` stay even when listed in
    ``drop``. A table that still does not fit is returned as it is (the pane scrolls sideways or
    the renderer says it is too small), never with cut cells.
    """
    columns = list(range(len(t.header)))

    def total() -> int:
        return sum(natural_width(t, c) for c in columns) + gap * max(len(columns) - 1, 0)

    keep_lower = {k.lower() for k in keep}
    for name in drop:
        if total() <= width:
            break
        if name.lower() in keep_lower:
            continue
        found = [c for c in columns if t.header[c] == name or t.header[c].startswith(name + " ")]
        for c in found[:1]:
            columns.remove(c)
    if len(columns) == len(t.header):
        return t
    header = tuple(t.header[c] for c in columns)
    rows = tuple(tuple(r[c] for c in columns) for r in t.rows)
    right = frozenset(columns.index(c) for c in t.right if c in columns)
    return Table(header, rows, right)
