"""Error-budget burn as text: three strips over time (burn rate, marks, cumulative budget
spent) and a table of windows, from :class:`ogive.fit.burn.BurnSeries` (formatting only).

``ogive timeline --objective`` prints :func:`burn_lines`; ``--json`` carries the same
series' ``to_dict``.
"""

from __future__ import annotations

import itertools
import math
import textwrap
from collections.abc import Sequence

import numpy as np

from ..fit.burn import CREDIBLE, ESTIMATE, BurnSeries, BurnWindow
from ..numbers import number, percent, quantity
from .objectives import objective_sentence
from .tables import table, text_lines
from .timeline import span_text, sparkline, time_ticks, when

LEVELS = {False: " ▁▂▃▄▅▆▇█", True: " .:-=+*#%"}
MARKS = {CREDIBLE: "!", ESTIMATE: "?"}
LABEL_W = 12


def _rate(x: float) -> str:
    return f"{number(x, 3)}x" if math.isfinite(x) else "–"


def rising(values: Sequence[float], cols: int, *, ascii_only: bool = False) -> str:
    """A non-decreasing series from 0 to its last value in ``cols`` cells, linear (nine heights)."""
    marks = LEVELS[ascii_only]
    arr = np.asarray(values, dtype=np.float64)
    top = float(np.nanmax(arr)) if arr.size and np.isfinite(arr).any() else 0.0
    if arr.size == 0 or cols < 1:
        return ""
    cuts = np.linspace(0, arr.size, min(cols, arr.size) + 1).round().astype(int)
    out = []
    for a, b in itertools.pairwise(cuts):
        v = float(np.nanmax(arr[a:b])) if np.isfinite(arr[a:b]).any() else 0.0
        level = v / top if top > 0 else 0.0
        out.append(marks[int(np.clip(math.ceil(level * (len(marks) - 1)), 0, len(marks) - 1))])
    return "".join(out)


def mark_row(windows: Sequence[BurnWindow], cols: int) -> str:
    """``!`` where a stretch holds a credible mark, ``?`` where only an estimate is over, ``.`` else."""
    if not windows or cols < 1:
        return ""
    cuts = np.linspace(0, len(windows), min(cols, len(windows)) + 1).round().astype(int)
    out = []
    for a, b in itertools.pairwise(cuts):
        marks = {w.mark for w in windows[a:b]}
        out.append("!" if CREDIBLE in marks else "?" if ESTIMATE in marks else ".")
    return "".join(out)


def _axis(series: BurnSeries, cols: int) -> str:
    if not series.windows or cols < 2:
        return ""
    lo = series.windows[0].start_us
    hi = series.windows[-1].start_us + (series.width_us if math.isfinite(series.width_us) else 0.0)
    cells = [" "] * cols
    for t in time_ticks(lo, hi, cols):
        start = min(max(round(t.position * (cols - 1) - len(t.label) / 2), 0), cols - len(t.label))
        if all(c == " " for c in cells[max(start - 1, 0) : start + len(t.label) + 1]):
            cells[start : start + len(t.label)] = list(t.label)
    return "".join(cells).rstrip()


def burn_strips(series: BurnSeries, *, width: int, ascii_only: bool = False) -> list[str]:
    """Burn rate (log scale), marks and cumulative budget spent, one column per stretch of windows."""
    cols = max(min(width - LABEL_W - 2, len(series.windows)), 1)
    rates = np.array([w.rate for w in series.windows])
    shown = rates[np.isfinite(rates) & (rates > 0)]
    lo, hi = (float(shown.min()), float(shown.max())) if shown.size else (1.0, 1.0)
    spent = [w.spent_high for w in series.windows]
    pad = " " * (LABEL_W + 2)
    legend = (
        f"burn rate {_rate(lo)} to {_rate(hi)} (log scale, blank: none over); "
        f"! interval above {_rate(series.mark_rate)}, ? estimate only; "
        f"spent so far 0 to {percent(spent[-1] if spent else 0.0)} of the span's budget"
    )
    return [
        f"{'burn rate':<{LABEL_W}}  {sparkline(rates, lo, hi, cols, ascii_only=ascii_only)}",
        f"{f'over {_rate(series.mark_rate)}':<{LABEL_W}}  {mark_row(series.windows, cols)}",
        f"{'spent so far':<{LABEL_W}}  {rising(spent, cols, ascii_only=ascii_only)}",
        pad + _axis(series, cols),
        *textwrap.wrap(legend, width=max(width, 40), initial_indent=pad, subsequent_indent=pad),
    ]


def burn_table(series: BurnSeries, starts: Sequence[float] | None = None, *, days: bool = False) -> list[str]:
    """Per window: n, share over, burn rate with its interval, the mark, cumulative budget spent.

    ``starts`` limits the rows to those windows (the timeline table's choice); all otherwise.
    """
    keep = None if starts is None else set(starts)
    rows = []
    for w in series.windows:
        if keep is not None and w.start_us not in keep:
            continue
        s = w.share
        spent = (
            percent(w.spent_high)
            if w.spent_low == w.spent_high
            else f"{percent(w.spent_low)} to {percent(w.spent_high)}"
        )
        rows.append(
            (
                when(w.start_us, days=days),
                f"{s.n:,}",
                percent(s.estimate) if s.n and math.isfinite(s.estimate) else "–",
                _rate(w.rate),
                f"[{_rate(w.rate_low)}, {_rate(w.rate_high)}]" if s.n else "–",
                MARKS.get(w.mark, ""),
                spent,
            )
        )
    if not rows:
        return []
    head = ("window", "n", "over", "burn rate", "interval", "", "spent so far")
    return text_lines(table(head, rows, (1, 2, 3, 6)), indent=2)


def burn_lines(
    series: BurnSeries,
    *,
    width: int,
    starts: Sequence[float] | None = None,
    days: bool = False,
    ascii_only: bool = False,
) -> list[str]:
    """The whole block for one objective: headline, strips, the first credible window, the table."""
    o = series.objective
    over = quantity(series.threshold, series.unit)
    every = f" per {span_text(series.width_us / 1e6)} window" if math.isfinite(series.width_us) else ""
    first = series.first_credible
    out = [
        f"Objective {o.text} of {series.stream} (at most {percent(o.allowed)} over {over}): "
        f"budget burn{every}",
        f"  the whole span: {objective_sentence(series.whole)}",
        "  first window credibly burning faster than "
        f"{_rate(series.mark_rate)}: {when(first.start_us, days=days) if first else 'none'}",
        *("  " + line for line in burn_strips(series, width=width - 2, ascii_only=ascii_only)),
    ]
    rows = burn_table(series, starts, days=days)
    if rows:
        level = percent(series.confidence, digits=4, compact=True)
        out += ["", f"  Windows ({level} interval of the burn rate per window)", *rows]
    return out
