"""The result tables: one builder per result, one layout for text, one for Markdown.

``ogive compare``, ``fit``, ``gate`` and ``show`` print these tables; the workspace's
panes show the same :class:`Table` objects (as a DataTable or a rich table) and the
exported report writes them as Markdown. Every cell is written by :mod:`ogive.numbers`.
Formatting only: each builder reads fields of a result the ``fit`` package made.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from ..errors import printable
from ..numbers import MISSING, count, number, percent, quantity, signed
from ..sketch import Binned, Sketch, is_binned, quantile_label

if TYPE_CHECKING:
    from rich.table import Table as RichTable

    from ..fit.compare import Comparison, GroupComparison
    from ..fit.group_gate import GroupGate
    from ..fit.ladder import LadderRow
    from ..fit.models import Candidate, FitReport
    from ..fit.shift import ShiftFunction
    from ..fit.windows import WindowSeries


@dataclass(frozen=True)
class Table:
    """Rows of cells, a header, and which columns hold numbers (right-aligned)."""

    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    right: frozenset[int] = field(default_factory=frozenset)
    """Column indexes aligned to the right (numbers)."""


def table(header: Sequence[str], rows: Sequence[Sequence[str]], right: Sequence[int] = ()) -> Table:
    """A table whose cells are safe to print: names from the input (sources, group keys)
    have their terminal controls written as escapes (``errors.printable``) before any
    width is measured, so a key holding ESC can neither act on the terminal nor skew
    the columns. The CLI, the markdown report and the workspace all draw from here."""
    return Table(
        tuple(printable(h) for h in header),
        tuple(tuple(printable(c) for c in r) for r in rows),
        frozenset(right),
    )


def text_lines(t: Table, *, indent: int = 0, header: bool = True) -> list[str]:
    """Columns padded to their widest cell, two spaces apart, no trailing blanks."""
    rows = [t.header, *t.rows] if header else list(t.rows)
    if not rows:
        return []
    widths = [max(len(r[i]) for r in rows) for i in range(len(t.header))]
    out = []
    for r in rows:
        cells = [
            c.rjust(w) if i in t.right else c.ljust(w) for i, (c, w) in enumerate(zip(r, widths, strict=True))
        ]
        out.append(" " * indent + "  ".join(cells).rstrip())
    return out


def markdown_lines(t: Table) -> list[str]:
    """A GitHub-style Markdown table (``|`` in a cell is escaped)."""

    def row(cells: Sequence[str]) -> str:
        return "| " + " | ".join(c.replace("|", "\\|") or " " for c in cells) + " |"

    rule = "|" + "|".join("---:" if i in t.right else "---" for i in range(len(t.header))) + "|"
    return [row(t.header), rule, *(row(r) for r in t.rows)]


def rich_table(t: Table) -> RichTable:
    """The same table as a ``rich`` renderable for the workspace's panes (numbers right-aligned)."""
    from rich.table import Table as RichTable

    out = RichTable(box=None, pad_edge=False, expand=True, show_edge=False)
    for i, title in enumerate(t.header):
        out.add_column(title, justify="right" if i in t.right else "left", no_wrap=True)
    for r in t.rows:
        out.add_row(*r)
    return out


def interval(low: float, high: float, digits: int = 4) -> str:
    """``[3.36, 3.443]``; a side the data cannot bound is ``∞``."""
    return f"[{number(low, digits)}, {number(high, digits)}]"


# ---------------------------------------------------------------- sketches
def distribution_table(
    rows: Sequence[tuple[str, str, Sketch | Binned]], *, first: str = "", compact: bool = False
) -> Table:
    """One row per sketch: a mark (role or state), name, n, p50, p99 and the rows it skipped.

    ``compact`` (the workspace's list): counts shortened (``12k``) and no maximum.
    """
    out = []
    for mark, name, s in rows:
        qs = np.array([0.5, 0.99])
        if s.count:
            p50, p99 = (float(v) for v in s.quantile(qs))
        else:
            p50 = p99 = float("nan")
        unit = s.unit if s.count else ""  # no "– ms" for an empty row
        cells = [mark, name, count(s.count) if compact else f"{s.count:,}"]
        if is_binned(s) and s.count:  # every quantile of a binned distribution shows its bucket
            lo, hi = s.quantile_bounds(qs)
            pairs = zip((p50, p99), lo, hi, strict=True)
            cells += [bucketed(v, a, b, unit, compact=compact) for v, a, b in pairs]
        else:
            cells += [quantity(p50, unit, digits=4), quantity(p99, unit, digits=4)]
        if not compact:
            cells.append(quantity(s.max, unit, digits=4))
        skipped = s.provenance.skipped_total
        cells.append(count(skipped) if compact else f"{skipped:,}")
        out.append(cells)
    header = [
        first,
        "name",
        "n",
        "p50",
        "p99",
        *([] if compact else ["max"]),
        "bad" if compact else "bad rows",
    ]
    return table(header, out, range(2, len(header)))


def bucketed(value: float, low: float, high: float, unit: str, *, compact: bool = False) -> str:
    """A binned distribution's quantile with the range sure to hold it: ``233 ms [100ms, 250ms]``."""
    ends = ", ".join(quantity(x, unit, compact=True) if math.isfinite(x) else number(x) for x in (low, high))
    return f"{quantity(value, unit, digits=3 if compact else 4)} [{ends}]"


# ---------------------------------------------------------------- comparison
def ladder_table(c: Comparison, *, narrow: bool = False) -> Table:
    """The quantile ladder. Wide (the CLI): both sides with their intervals, the change
    and its relative size. Narrow (the workspace at 80 columns): the reference R and
    subject S, the relative change, the interval of S − R, the verdict."""
    a_lab, b_lab = c.labels
    if narrow:
        rows = [
            (
                r.label,
                number(r.a_value),
                number(r.b_value),
                percent(r.relative_change, signed=True),
                interval(r.change_low, r.change_high, 3) if r.q is not None else "",  # max: no interval
                r.verdict,
            )
            for r in c.ladder
        ]
        return table(
            ("q", "R", "S", "change", f"S−R, {c.confidence:.0%} interval", "verdict"), rows, (1, 2, 3, 4)
        )
    binned = [any(getattr(r, side) and getattr(r, side).bucket for r in c.ladder) for side in ("a", "b")]

    def side(r: LadderRow, which: str) -> tuple[str, ...]:
        iv = getattr(r, which)
        value = number(getattr(r, f"{which}_value"))
        cells: tuple[str, ...] = (value, interval(iv.low, iv.high) if iv else "")
        if binned[which == "b"]:
            cells += (interval(*iv.bucket) if iv and iv.bucket else "",)
        return cells

    wide = [
        (
            r.label,
            *side(r, "a"),
            *side(r, "b"),
            signed(r.change),
            percent(r.relative_change, signed=True),
            r.verdict,
        )
        for r in c.ladder
    ]
    unit = f" ({c.unit})" if c.unit else ""
    cols_a = (a_lab + unit, "interval", *(("bucket",) if binned[0] else ()))
    cols_b = (b_lab + unit, "interval", *(("bucket",) if binned[1] else ()))
    header = ("", *cols_a, *cols_b, "change", "relative", "verdict")
    nb = len(cols_b)
    right = (1, len(cols_a) + 1, len(cols_a) + nb + 1, len(cols_a) + nb + 2)
    return table(header, wide, right)


def shift_table(sh: ShiftFunction) -> Table:
    a_lab, b_lab = sh.labels
    rows = [
        (
            quantile_label(float(p)),
            number(float(sh.a_values[k])),
            number(float(sh.b_values[k])),
            signed(float(sh.delta[k])),
            interval(float(sh.delta_low[k]), float(sh.delta_high[k])),
            sh.direction[k],
        )
        for k, p in enumerate(sh.probs)
    ]
    return table(("", a_lab, b_lab, f"{b_lab} - {a_lab}", "band", ""), rows, (1, 2, 3))


def _p99_change(r: LadderRow) -> str:
    return percent(r.relative_change, signed=True)


def groups_table(g: GroupComparison) -> Table:
    a_lab, b_lab = g.labels
    header = ("group", f"n {a_lab}", f"n {b_lab}", f"p50 {a_lab}", f"p50 {b_lab}", "p50",
              f"p99 {a_lab}", f"p99 {b_lab}", "p99 change", "p99")  # fmt: skip
    rows = [
        (
            r.group,
            f"{r.n[0]:,}",
            f"{r.n[1]:,}",
            number(r.p50.a_value),
            number(r.p50.b_value),
            r.p50.verdict,
            number(r.p99.a_value),
            number(r.p99.b_value),
            _p99_change(r.p99),
            r.p99.verdict,
        )
        for r in g.rows
    ]
    return table(header, rows, (1, 2, 3, 4, 6, 7, 8))


def windows_table(s: WindowSeries) -> Table:
    rows = [
        (
            r.name,
            f"{r.n:,}",
            number(r.p50.b_value),
            number(r.p99.b_value),
            r.p50.verdict if r.name != s.baseline else "(baseline)",
            r.p99.verdict if r.name != s.baseline else "",
            "<- differs" if r.flagged else "",
        )
        for r in s.rows
    ]
    return table(("window", "n", "p50", "p99", "p50 vs first", "p99 vs first", ""), rows, (1, 2, 3))


# ---------------------------------------------------------------- fit
def params_text(c: Candidate) -> str:
    """``median=4.1, sigma=1.186``: a model's parameters in the sketch's unit."""
    return ", ".join(f"{k}={number(v)}" for k, v in c.params.items())


SCORE_HEADER = ("tail error", "KS", "AD", "CvM", "AIC", "BIC")
"""The scores of every model, in the order the default ranking reads them."""


def score_cells(c: Candidate) -> tuple[str, ...]:
    s = c.scores
    return (percent(s.tail_error), number(s.ks), number(s.ad), number(s.cvm), _ic(s.aic), _ic(s.bic))


def _ic(x: float) -> str:
    """AIC/BIC: only differences matter, so one decimal whatever the size."""
    return f"{x:.1f}" if math.isfinite(x) else number(x)


def ranking_table(report: FitReport, *, chosen: str | None = None) -> Table:
    """Fitted models best first, then tail-only models and the families not fitted (with why).

    ``chosen`` marks the model that is the reference (``R``) in the workspace.
    """
    rows: list[tuple[str, ...]] = []
    for c in report.models:
        mark = "R " if c.label == chosen else ""
        rows.append((f"{mark}{c.rank}", c.label, *score_cells(c), params_text(c)))
    for c in report.tail_models:
        rows.append(("tail", c.label, *score_cells(c), params_text(c)))
    blank = (MISSING,) * len(SCORE_HEADER)
    for nf in report.not_fitted:
        rows.append(("–", nf.label, *blank, f"not fitted: {nf.reason}"))
    return table(("#", "model", *SCORE_HEADER, "parameters"), rows, range(2, 2 + len(SCORE_HEADER)))


# ---------------------------------------------------------------- gate
def group_gate_table(g: GroupGate) -> Table:
    """One row per group: n on each side, each limit's state, and the group's outcome."""
    first = g.groups[0][1]
    header = ("group", f"n {g.labels[0]}", f"n {g.labels[1]}", *(c.limit.text for c in first.checks), "gate")
    rows = [
        (name, f"{r.checks[0].a.n:,}", f"{r.checks[0].b.n:,}", *(c.status for c in r.checks), r.outcome)
        for name, r in g.groups
    ]
    return table(header, rows, (1, 2))
