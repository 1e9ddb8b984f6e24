"""The comparison ladder: quantiles of reference and subject, intervals, verdicts, tail budget."""

from __future__ import annotations

import math
from typing import Any

from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text
from textual.widgets import Static

from ..sketch import quantile_label
from . import fmt
from .placeholder import notice


def _interval(low: float, high: float) -> str:
    lo = "-∞" if math.isinf(low) else fmt.num(low, 3)
    hi = "∞" if math.isinf(high) else fmt.num(high, 3)
    return f"[{lo}, {hi}]"


def _pct(x: float | None) -> str:
    if x is None or math.isnan(x):
        return "—"
    pct = x * 100
    return f"{pct:+.0f}%" if abs(pct) >= 100 else f"{pct:+.1f}%"


def confidence_of(comparison: Any) -> str:
    level = getattr(comparison, "confidence", None)
    return f"{level:.0%} interval" if isinstance(level, float) else "interval"


def ladder_rows(comparison: Any) -> list[Any]:
    rows = getattr(comparison, "ladder", None)
    if rows is None:
        rows = getattr(comparison, "rows", None)
    return list(rows or [])


def comparison_renderable(comparison: Any, ref_label: str, subj_label: str) -> RenderableType:
    """The ladder as a table, then whatever summary lines the comparison offers."""
    table = Table(box=None, pad_edge=False, expand=True, show_edge=False)
    # Short headers: the headline names subject (S) and reference (R); 80 columns must hold it all.
    table.add_column("q", no_wrap=True, min_width=6)
    table.add_column("R", justify="right", no_wrap=True)
    table.add_column("S", justify="right", no_wrap=True)
    table.add_column("change", justify="right", no_wrap=True)
    table.add_column(f"S−R, {confidence_of(comparison)}", justify="right", no_wrap=True)
    table.add_column("verdict", no_wrap=True, min_width=14)
    for row in ladder_rows(comparison):
        verdict = str(getattr(row, "verdict", ""))
        style = "bold" if verdict in ("higher", "lower") else ""
        table.add_row(
            str(getattr(row, "label", "")),
            fmt.num(getattr(row, "a_value", None)),
            fmt.num(getattr(row, "b_value", None)),
            _pct(getattr(row, "relative_change", None)),
            _interval(getattr(row, "change_low", -math.inf), getattr(row, "change_high", math.inf)),
            Text(verdict, style=style),
        )
    unit = getattr(comparison, "unit", "") or ""
    head = f"S = {subj_label} against R = {ref_label}" + (f", in {unit}" if unit else "")
    parts: list[RenderableType] = [Text(head, style="bold"), table]
    parts.extend(Text(line) for line in summary_lines(comparison))
    return Group(*parts)


def summary_lines(comparison: Any) -> list[str]:
    """Distances and the tail-budget test, in the comparison's own words."""
    lines: list[str] = []
    ks = getattr(comparison, "ks", None)
    if ks is not None:
        called = "beyond" if ks.differs else "within"
        p = fmt.num(ks.p_value, 2)
        lines.append(f"KS distance {fmt.num(ks.distance, 3)} ({called} noise + sketch error, p {p})")
    w1 = getattr(comparison, "wasserstein", None)
    if w1 is not None:
        lines.append(f"Wasserstein-1 {fmt.num(w1.distance, 3)} {w1.unit}".rstrip())
    tail = getattr(comparison, "tail", None)
    if tail is None:
        lines.append("tail-budget test: not offered by this comparison")
    for t in tail or ():
        # The comparison reads B (subject) against A (reference); say so in the panel's terms.
        verdict = str(t.verdict).replace("of B", "of subject")
        lines.append(
            f"tail budget above reference {quantile_label(t.q)}: {t.b_share:.2%} of subject vs "
            f"{t.a_share:.2%} (×{fmt.num(t.ratio, 3)}, G-test p {fmt.num(t.p_value, 2)}): {verdict}"
        )
    summary = getattr(comparison, "summary", None)
    if isinstance(summary, str) and summary:
        lines.append(summary)
    lines.extend(str(n) for n in getattr(comparison, "notes", ()) or ())
    return lines


class LadderPanel(Static):
    """Shows the comparison the compare package made, or why there is none (sits in a scroller)."""

    def __init__(self, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.comparison: Any = None

    def show(self, comparison: Any, ref_label: str, subj_label: str) -> None:
        self.comparison = comparison
        self.update(comparison_renderable(comparison, ref_label, subj_label))

    def explain(self, title: str, reason: str) -> None:
        self.comparison = None
        self.update(notice(title, reason))
