"""The timeline as text: the headline, the change list, the window table, one line per
group, the ``ogive gate`` command that checks each change, and all of them together
with the pictures (formatting only).

``ogive timeline`` prints :func:`report_lines` and the workspace's Timeline pane shows
the same pieces, so both say the same thing about the same result.
"""

from __future__ import annotations

import math
import shlex
import textwrap
from collections.abc import Sequence

import numpy as np

from ..fit.ladder import QuantileInterval
from ..fit.moves import ChangeReport
from ..fit.timeline import TABLE_QS, StreamTimeline, Timeline
from ..numbers import number, percent, quantity
from ..sketch import quantile_label, timekeys
from .frame import PlotLines
from .style import ansi_lines
from .tables import table, text_lines
from .timeline import chart_figure, span_text, sparkline, strip_lines, when

GATE_LIMITS = 3
"""Quantiles the suggested gate command checks, at most (the largest moves)."""
CHART_HEIGHT = 16
SHORT_KIND = {"body": "body", "tail": "tail", "body and tail": "body and tail", "shape": "shape only"}
KIND_TEXT = {
    "body": "the body moved",
    "tail": "the tail moved",
    "body and tail": "body and tail moved",
    "shape": "the shape moved; no single quantile moved clearly",
}


class _Marks:
    """The few non-ASCII signs of the text, and their ASCII stand-ins."""

    def __init__(self, ascii_only: bool) -> None:
        self.to = "->" if ascii_only else "→"
        self.pm = "+/-" if ascii_only else "±"
        self.dash = "-" if ascii_only else "–"
        self.inf = "inf" if ascii_only else "∞"


def _num(x: float, marks: _Marks, digits: int = 3) -> str:
    """A cell in the header's unit (``3.4``, ``1234``); ``inf`` in ASCII for an unbounded side."""
    text = number(x, digits)
    return text.replace("∞", marks.inf).replace("–", marks.dash)


def _pct(x: float) -> str:
    return percent(x, signed=True) if math.isfinite(x) else "n/a"


def _days(t: Timeline) -> bool:
    """True when the timeline reaches past one calendar day (times then carry the date)."""
    return timekeys.start_text(t.first_us)[:10] != timekeys.start_text(t.start(t.count) - 1)[:10]


days_of = _days
"""Public name for other timeline views (the budget burn) that write window times."""


def _wrap(text: str, width: int, indent: str = "") -> list[str]:
    return textwrap.wrap(text, width=max(width, 20), initial_indent=indent, subsequent_indent=indent + "  ")


# ---------------------------------------------------------------- headline
def headline(t: Timeline, source: str, *, width: int = 100, ascii_only: bool = False) -> list[str]:
    whole = t.streams[0]
    first, last = when(t.first_us, days=True), when(t.start(t.count), days=True)
    unit = f" [{t.unit}]" if t.unit else ""
    head = f"timeline of {source}{unit}:"
    windows = f"{t.count:,} window{'s' if t.count != 1 else ''}"
    tail = f"{whole.n:,} values in {windows} of {span_text(t.width_us / 1e6)}, {first} to {last} UTC"
    lines = [f"{head} {tail}"] if len(head) + 1 + len(tail) <= width else [*_wrap(head, width), f"  {tail}"]
    return lines + [line for n in t.notes for line in _wrap(f"note: {n}", width)]


# ---------------------------------------------------------------- changes
def change_lines(
    t: Timeline, stream: StreamTimeline, gate_base: str | None, *, width: int = 100, ascii_only: bool = False
) -> list[str]:
    """The numbered change points of one stream: when, what moved, and the gate to check it."""
    mk = _Marks(ascii_only)
    s = stream.search
    days = _days(t)
    out = _wrap(
        f"Change points in {stream.name} (false-alarm rate {s.alpha:.0%} on a steady timeline, "
        f"calibrated by {s.permutations} random orders of the windows)",
        width,
    )
    if not stream.changes:
        return out + _wrap(
            "none found: no split of the windows stands out from random orders of them.", width, "  "
        )
    for k, c in enumerate(stream.changes, 1):
        moment = _moment(t, c, mk, days)
        out += _wrap(f"{k}. {moment}  {KIND_TEXT[c.kind]}  (p = {c.change.p_value:.2g})", width, "  ")
        out += _wrap(moves(c, t.unit, mk), width, "     ")
        if c.kind != "shape" and gate_base is not None:
            out.append(f"     check it: {gate_command(gate_base, c)}")
    return out


def _moment(t: Timeline, c: ChangeReport, mk: _Marks, days: bool) -> str:
    """``13:00 ± 5m``, or ``13:00 → 13:40 (gradual, ± 5m each end)``."""
    if c.gradual:
        w = span_text(t.width_us / 1e6)
        a, b = when(c.start_us, days=days), when(c.end_us, days=days)
        return f"{a} {mk.to} {b} (gradual, {mk.pm} {w} each end)"
    half = max(c.high_us - c.start_us, c.start_us - c.low_us)
    return f"{when(c.start_us, days=days)} {mk.pm} {span_text(half / 1e6)}"


def change_summary(t: Timeline, k: int, *, ascii_only: bool = False) -> str:
    """Change ``k`` (0-based) of the whole on one line: ``1. 13:00 ± 5m  body and tail moved:
    p90 +445%, p99 +144%`` (the workspace's list)."""
    mk = _Marks(ascii_only)
    c = t.streams[0].changes[k]
    days = _days(t)
    if c.gradual:
        moment = f"{when(c.start_us, days=days)} {mk.to} {when(c.end_us, days=days)}, gradual"
    else:
        moment = _moment(t, c, mk, days)
    top = [m for m in (c.move(q) for q in c.moved[:2]) if m is not None]
    shown = ", ".join(f"{m.label} {_pct(m.relative)}" for m in top)
    return f"{k + 1}. {moment}: {SHORT_KIND[c.kind]}" + (f" ({shown})" if shown else "")


def moves(c: ChangeReport, unit: str, mk: _Marks | None = None) -> str:
    """``p90 9.70 ms → 52.9 ms (+446%)`` for each moved quantile, the largest first."""
    to = (mk or _Marks(False)).to
    parts = []
    for label in c.moved[:4]:
        m = c.move(label)
        if m is not None:
            a, b = quantity(m.before, unit), quantity(m.after, unit)
            parts.append(f"{label} {a} {to} {b} ({_pct(m.relative)})")
    if not parts:
        m = c.move("p50")
        if m is not None:
            parts.append(f"p50 {quantity(m.before, unit)} {to} {quantity(m.after, unit)}")
    n = f"(n {c.before_n:,} before, {c.after_n:,} after)"
    return "; ".join(parts) + ("  " if parts else "") + n


def gate_command(base: str, c: ChangeReport) -> str:
    """``ogive gate SOURCE ... --split-at TIME --limit pXX=0 ...`` for the quantiles that moved:
    a limit of 0 is exceeded exactly when the rise is credible (from the raw logs this time)."""
    shifts = {m.label: m.after - m.before for m in c.ladder}
    rose = [q for q in c.moved if shifts[q] > 0][:GATE_LIMITS]
    fell = [q for q in c.moved if shifts[q] < 0][:GATE_LIMITS]
    limits = rose or fell or ["p50", "p99"]
    extra = " --prove" if not rose and fell else ""
    split = timekeys.start_text(c.split_us)
    return f"ogive gate {base} --split-at {split} " + " ".join(f"--limit {q}=0" for q in limits) + extra


def quote_args(args: Sequence[str]) -> str:
    return " ".join(shlex.quote(a) for a in args)


# ---------------------------------------------------------------- windows
def window_table(
    t: Timeline, stream: StreamTimeline, *, width: int = 200, ascii_only: bool = False
) -> list[str]:
    """Start, n, p50/p90/p99/p99.9 each with its interval, and bad rows, per window.

    Narrower than the table: p90, then p99.9, are left out (``--json`` has them all).
    """
    if not stream.rows:
        return []
    mk = _Marks(ascii_only)
    days = _days(t)
    unit = f" ({t.unit})" if t.unit else ""
    bad = any(r.skipped for r in stream.rows)
    keep = list(range(len(TABLE_QS)))
    lines: list[str] = []
    for drop in ((), (1,), (1, 3)):
        keep = [i for i in range(len(TABLE_QS)) if i not in drop]
        head = ["window", "n", *(f"{quantile_label(TABLE_QS[i])}{unit}" for i in keep)] + (
            ["bad rows"] if bad else []
        )
        body = [head]
        for r in stream.rows:
            cells = [when(r.start_us, days=days), f"{r.n:,}"]
            cells += [_interval(r.quantiles[i], mk) for i in keep] if r.quantiles else [mk.dash] * len(keep)
            body.append(cells + ([f"{r.skipped:,}" if r.skipped else ""] if bad else []))
        right = [1] + ([len(head) - 1] if bad else [])
        lines = text_lines(table(head, body[1:], right), indent=2)
        if max(len(x) for x in lines) <= width:
            break
    starts = [r.start_us for r in stream.rows]
    for k in reversed(range(1, len(starts))):
        if starts[k] - starts[k - 1] > t.width_us:
            lines.insert(k + 1, "  ...")
    title = f"Windows of {stream.name} ({t.confidence:.0%} interval per quantile, in brackets)"
    return [*_wrap(title, width), *lines]


def _interval(q: QuantileInterval, mk: _Marks) -> str:
    return f"{_num(q.estimate, mk)} [{_num(q.low, mk)}{mk.dash}{_num(q.high, mk)}]"


# ---------------------------------------------------------------- groups
def group_lines(t: Timeline, *, width: int, ascii_only: bool = False) -> list[str]:
    """One line per group, the groups that moved most first: n, its p99 over time as a
    sparkline (one scale for all groups), and its largest change."""
    groups = t.streams[1:]
    if not groups:
        return []
    mk = _Marks(ascii_only)
    k = t.chart_qs.index(0.99) if 0.99 in t.chart_qs else len(t.chart_qs) - 1
    values = np.concatenate([g.chart[:, k] for g in groups])
    values = values[np.isfinite(values) & (values > 0)]
    lo, hi = (float(values.min()), float(values.max())) if values.size else (1.0, 1.0)
    name_w = min(max(len(g.name) for g in groups), 28)
    spark_w = max(min(width - name_w - 36, t.count), 8)
    label = quantile_label(t.chart_qs[k])
    out = _wrap(
        f"Groups, most changed first ({label} over time, one scale for all groups: "
        f"{_num(lo, mk)} to {_num(hi, mk)} {t.unit})",
        width,
    )
    for g in groups:
        top = _largest(g)
        change = "no change" if top is None else f"{when(top.start_us, days=_days(t))} {what_short(top)}"
        spark = sparkline(g.chart[:, k], lo, hi, spark_w, ascii_only=ascii_only)
        out.append(f"  {g.name[:name_w]:<{name_w}}  {g.n:>9,}  {spark:<{spark_w}}  {change}")
    return out


def _largest(g: StreamTimeline) -> ChangeReport | None:
    return max(g.changes, key=lambda c: c.size, default=None)


def what_short(c: ChangeReport) -> str:
    m = c.move(c.moved[0]) if c.moved else None
    return "shape" if m is None else f"{m.label} {_pct(m.relative)}"


# ---------------------------------------------------------------- all together
def report_lines(
    t: Timeline,
    source: str,
    gate_base: str | None,
    *,
    width: int,
    ascii_only: bool = False,
    colour: bool = False,
) -> list[str]:
    """Headline, chart, density strip, changes, window table and groups, in that order."""
    width = max(width, 40)
    whole = t.streams[0]
    out = headline(t, source, width=width)
    if whole.n:
        fig = chart_figure(t, whole, width=width, height=CHART_HEIGHT, ascii_only=ascii_only)
        out += _shown(fig.lines(), colour)
        if t.strip is not None:
            strip = strip_lines(t, t.strip, width=width, label_width=fig.ylabel_width, ascii_only=ascii_only)
            out += ["", *_shown(strip, colour)]
    out += ["", *change_lines(t, whole, gate_base, width=width, ascii_only=ascii_only)]
    table = window_table(t, whole, width=width, ascii_only=ascii_only)
    if table:
        out += ["", *table]
    groups = group_lines(t, width=width, ascii_only=ascii_only)
    if groups:
        out += ["", *groups]
    return out


def _shown(lines: PlotLines, colour: bool) -> list[str]:
    return ansi_lines(lines) if colour else list(lines)
