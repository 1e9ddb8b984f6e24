"""The frame around a canvas: tick labels, axis lines, header legend, point labels.

Layout of a ``width`` × ``height`` plot (every line at most ``width`` cells, exactly
``height`` lines)::

    header (1 line below 13 rows, 2 from 13): y-axis name, legend, x-axis name if it
    did not fit below
    y tick labels │ canvas rows
                  └──┬───────┬──  (axis line with tick marks)
                     10ms    100ms   x name →

Point labels (p50, p99, …) are placed beside their marks at the first free spot of a
few candidates; a label that finds none is left out rather than drawn over another.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from .canvas import Canvas, Layer
from .ticks import Scale, Tick, choose_ticks

MIN_WIDTH, MIN_HEIGHT = 40, 12
"""The smallest plot that stays readable; smaller requests are refused, not squeezed."""

Span = tuple[int, int, str]
"""(start, end, role) of a run of cells in one line; the role names its colour."""


class PlotLines(list[str]):
    """The plot's lines, with optional colour spans per line (``spans[i]`` for line i).

    A plain ``list[str]`` to everything that only prints; the spans let a caller add
    colour when it wants to (never needed to tell series apart).
    """

    spans: list[list[Span]]


@dataclass(frozen=True)
class LegendItem:
    glyph: str
    text: str
    role: str


@dataclass
class PlacedLabel:
    """A text label on the plot area (0-based row/col inside the canvas)."""

    text: str
    row: int
    col: int
    anchor: tuple[int, int]
    """The (row, col) of the mark it names."""


@dataclass
class Figure:
    """One plot being assembled; ``lines()`` gives the finished text."""

    width: int
    height: int
    xscale: Scale
    yscale: Scale
    xfmt: Callable[[float, int], str]
    yfmt: Callable[[float, int], str]
    ascii_only: bool = False
    x_title: str = ""
    y_title: str = ""
    legend: list[LegendItem] = field(default_factory=list)
    legend_in_order: bool = False
    """Legend items keep their order across header lines (see :func:`header_cells`)."""
    header_rows: int = 0
    """Lines above the plot for axis names and legend; 0 picks 1 below 13 rows, else 2."""
    ylabel_width: int = 0
    canvas: Canvas = field(init=False)
    xticks: list[Tick] = field(init=False)
    yticks: list[Tick] = field(init=False)
    overlay: dict[tuple[int, int], tuple[str, str]] = field(default_factory=dict)
    labels: list[PlacedLabel] = field(default_factory=list)
    marks: dict[str, tuple[int, int]] = field(default_factory=dict)
    """Mark name -> (row, col) inside the canvas."""
    _pending: list[tuple[str, int, int, tuple[float, float]]] = field(default_factory=list)
    bare: bool = False
    """A panel of a line-up: ``width`` × ``height`` is the canvas alone, with no header
    and no frame of its own (the line-up draws those around it, shared)."""

    def __post_init__(self) -> None:
        if self.bare:
            rows, self.header_rows = self.height, 0
        else:
            if self.width < MIN_WIDTH or self.height < MIN_HEIGHT:
                raise ValueError(
                    f"a plot needs at least {MIN_WIDTH}×{MIN_HEIGHT} cells; got {self.width}×{self.height}."
                )
            if not self.header_rows:  # from 13 rows a legend may take a second line
                self.header_rows = 1 if self.height < 13 else 2
            rows = self.height - self.header_rows - 2
        self.yticks = [t for t in choose_ticks(self.yscale, rows, self.yfmt, horizontal=False) if t.major]
        self.ylabel_width = max([len(t.label) for t in self.yticks] + [1])
        cols = self.width if self.bare else self.width - self.ylabel_width - 1
        self.xticks = choose_ticks(self.xscale, cols, self.xfmt, horizontal=True, min_gap=2)
        self.canvas = Canvas(cols, rows, ascii_only=self.ascii_only)

    # ------------------------------------------------------------ coordinates
    def to_dots(
        self, x: NDArray[np.float64], y: NDArray[np.float64]
    ) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        xd = self.xscale.forward(np.asarray(x, dtype=np.float64)) * (self.canvas.dot_width - 1)
        yd = (1 - self.yscale.forward(np.asarray(y, dtype=np.float64))) * (self.canvas.dot_height - 1)
        return xd, yd

    def to_cell(self, x: float, y: float) -> tuple[int, int] | None:
        xd, yd = self.to_dots(np.array([x]), np.array([y]))
        if not (np.isfinite(xd[0]) and np.isfinite(yd[0])):
            return None
        c, r = int(np.rint(xd[0])) // 2, int(np.rint(yd[0])) // 4
        if 0 <= c < self.canvas.cols and 0 <= r < self.canvas.rows:
            return r, c
        return None

    def glyph(self, unicode_glyph: str, ascii_glyph: str) -> str:
        return ascii_glyph if self.ascii_only else unicode_glyph

    # ------------------------------------------------------------ series
    def line(
        self,
        layer: Layer,
        x: NDArray[np.float64],
        y: NDArray[np.float64],
        *,
        dash: tuple[int, int] | None = None,
    ) -> None:
        idx = self.canvas.layer(layer)
        xd, yd = self.to_dots(x, y)
        self.canvas.polyline(idx, xd, yd, dash=dash)

    def line_dots(
        self,
        layer: Layer,
        xd: NDArray[np.float64],
        yd: NDArray[np.float64],
        *,
        dash: tuple[int, int] | None = None,
    ) -> None:
        idx = self.canvas.layer(layer)
        self.canvas.polyline(idx, xd, yd, dash=dash)

    def put(self, row: int, col: int, text: str, role: str) -> None:
        for i, ch in enumerate(text):
            if 0 <= col + i < self.canvas.cols and 0 <= row < self.canvas.rows:
                self.overlay[(row, col + i)] = (ch, role)

    def mark(self, name: str, x: float, y: float, glyph: str, *, label: str | None = None) -> None:
        """A named point drawn with ``glyph`` and labelled where the label fits."""
        cell = self.to_cell(x, y)
        if cell is None:
            return
        r, c = cell
        self.marks[name] = cell
        self.put(r, c, glyph, "mark")
        if label:
            self._pending.append((label, r, c, (x, y)))

    def finish(self) -> Figure:
        """Place the pending labels, after every mark is down (so none lands under one)."""
        pending, self._pending = self._pending, []
        # Marks at the same point (a step-shaped quantile function: p90 = p99 = 10 ms)
        # share one label, "p90/p99", which says they are equal. Marks that only share a
        # cell keep a label each: different quantiles never read as one.
        # Only where the plot has no room for a label each do they share one ("p99/p99.9"),
        # rather than one of them going unnamed.
        by_cell: dict[tuple[int, int], dict[tuple[float, float], list[str]]] = {}
        for label, r, c, point in pending:
            by_cell.setdefault((r, c), {}).setdefault(point, []).append(label)
        for (r, c), points in by_cell.items():
            texts = ["/".join(names) for names in points.values()]
            if len(texts) > 1:
                kept = (len(self.labels), dict(self.overlay))
                if all(self._place_label(text, r, c) for text in texts):
                    continue
                del self.labels[kept[0] :]
                self.overlay = kept[1]
            names = [n for group in points.values() for n in group]
            text = "/".join(names)
            if len(names) > 2 and not self._fits_somewhere(text, r, c):
                text = f"{names[0]}-{names[-1]}"
            self._place_label(text, r, c)
        return self

    def _fits_somewhere(self, text: str, r: int, c: int) -> bool:
        n = len(text)
        return any(not self._taken(row, col, n) for row, col in self._candidates(n, r, c))

    def _taken(self, row: int, col: int, length: int) -> bool:
        if row < 0 or row >= self.canvas.rows or col < 0 or col + length > self.canvas.cols:
            return True
        for lab in self.labels:
            if lab.row == row and col < lab.col + len(lab.text) + 1 and lab.col < col + length + 1:
                return True
        return any(mr == row and col <= mc < col + length for mr, mc in self.marks.values())

    def _place_label(self, text: str, r: int, c: int) -> bool:
        """Beside the mark if possible; never nearer to another mark than to its own.

        Cost: rows away from the mark weigh most (a label on its mark's row cannot be
        misread), then hidden data cells, then hidden lines and bands. False when no
        place was free.
        """
        n = len(text)
        candidates = self._candidates(n, r, c)
        glyphs, roles = self.canvas.cells()
        best: tuple[int, int] | None = None
        best_cost = float("inf")
        for row, col in candidates:
            if self._taken(row, col, n) or not self._nearest_is_own(row, col, n, (r, c)):
                continue
            cost = 4.0 * abs(row - r)
            for k in range(col, col + n):
                if (row, k) in self.overlay:
                    cost += 3.0
                elif roles[row][k] in ("subject", "second"):
                    cost += 2.0
                elif glyphs[row][k] != " ":
                    cost += 0.5
            if cost < best_cost:
                best, best_cost = (row, col), cost
        if best is None:
            return False
        self.labels.append(PlacedLabel(text, best[0], best[1], (r, c)))
        self.put(best[0], best[1], text, "label")
        return True

    @staticmethod
    def _candidates(n: int, r: int, c: int) -> list[tuple[int, int]]:
        return [
            (r, c + 2), (r, c - n - 1), (r, c + 1), (r, c - n),
            (r - 1, c + 1), (r + 1, c + 1), (r - 1, c - n), (r + 1, c - n),
            (r - 1, c - n // 2), (r + 1, c - n // 2),
        ]  # fmt: skip

    def _nearest_is_own(self, row: int, col: int, n: int, own: tuple[int, int]) -> bool:
        def dist(cell: tuple[int, int]) -> float:
            mr, mc = cell
            gap = max(col - mc, mc - (col + n - 1), 0)
            return abs(mr - row) * 2.0 + gap

        mine = dist(own)
        return all(dist(m) > mine for m in self.marks.values() if m != own)

    # ------------------------------------------------------------ output
    def plot_cells(self) -> tuple[list[list[str]], list[list[str]]]:
        """(glyphs, roles) of the canvas with marks and labels on top (fresh lists)."""
        self.finish()
        glyphs, roles = self.canvas.cells()
        for (r, c), (ch, role) in self.overlay.items():
            glyphs[r][c] = ch
            roles[r][c] = role
        return glyphs, roles

    def ytick_rows(self) -> dict[int, str]:
        """Canvas row -> y tick label (the first tick to land on a row keeps it)."""
        out: dict[int, str] = {}
        for t in self.yticks:
            out.setdefault(int(np.rint((1 - t.position) * (self.canvas.dot_height - 1))) // 4, t.label)
        return out

    def x_axis_cells(self) -> list[tuple[str, str]]:
        """The horizontal axis under the canvas, tick marks included (canvas columns only)."""
        a = self.ascii_only
        h_axis, h_tick, h_minor = ("-", "+", "-") if a else ("─", "┬", "┴")
        marks = [h_axis] * self.canvas.cols
        for t in self.xticks:
            c = int(np.rint(t.position * (self.canvas.dot_width - 1))) // 2
            if 0 <= c < self.canvas.cols:
                if t.major:
                    marks[c] = h_tick
                elif not a and marks[c] == h_axis:
                    marks[c] = h_minor
        return [(m, "axis") for m in marks]

    def lines(self) -> PlotLines:
        W = self.width
        glyphs, roles = self.plot_cells()
        a = self.ascii_only
        v_axis, v_tick = ("|", "+") if a else ("│", "┤")
        rows: list[list[tuple[str, str]]] = []

        # Header: axis names first (a plot without them cannot be read), then legend
        # items; each goes on the first header line with room, or is left out.
        x_label_cells, x_title_placed = self.x_label_cells(self.ylabel_width + 1, W, self.x_title)
        y_name = (("^ " if a else "↑ ") + self.y_title) if self.y_title else ""
        x_name = (("-> " if a else "→ ") + self.x_title) if self.x_title and not x_title_placed else ""
        rows.extend(
            header_cells(y_name, x_name, self.legend, self.header_rows, W, a, in_order=self.legend_in_order)
        )

        ytick_rows = self.ytick_rows()
        for r in range(self.canvas.rows):
            label = ytick_rows.get(r)
            cells = [(ch, "axis") for ch in (label or "").rjust(self.ylabel_width)]
            cells.append((v_tick if label is not None else v_axis, "axis"))
            cells.extend((glyphs[r][c], roles[r][c]) for c in range(self.canvas.cols))
            rows.append(cells)
        rows.append([(" ", "")] * self.ylabel_width + [("+" if a else "└", "axis")] + self.x_axis_cells())
        rows.append(x_label_cells)
        out = plot_lines(rows, W)
        assert len(out) == self.height
        return out

    def x_label_cells(self, left: int, width: int, title: str = "") -> tuple[list[tuple[str, str]], bool]:
        """A ``width``-cell line with the x tick labels under a canvas starting at column
        ``left``, and ``title`` at its right end when it fits (True if it was placed)."""
        W = width
        cells: list[tuple[str, str]] = [(" ", "")] * W
        last_end = -1
        for t in self.xticks:
            if not t.major:
                continue
            c = left + int(np.rint(t.position * (self.canvas.dot_width - 1))) // 2
            start = max(min(c - (len(t.label) - 1) // 2, W - len(t.label)), 0)
            if start <= last_end + 1:
                continue
            for i, ch in enumerate(t.label):
                cells[start + i] = (ch, "axis")
            last_end = start + len(t.label) - 1
        placed = False
        if title:
            title = title + (" ->" if self.ascii_only else " →")
            start = W - len(title)
            if start > last_end + 2:
                for i, ch in enumerate(title):
                    cells[start + i] = (ch, "title")
                placed = True
        return cells, placed


def header_cells(
    y_name: str,
    x_name: str,
    legend: list[LegendItem],
    rows: int,
    width: int,
    ascii_only: bool,
    *,
    in_order: bool = False,
) -> list[list[tuple[str, str]]]:
    """``rows`` header lines: the axis names first, then legend items, each on the first
    line with room (a legend item with none is left out; an axis name never is).
    ``in_order``: never on a line above the item before it (a legend read as a ranking)."""
    W, a = width, ascii_only
    if rows == 1 and y_name and x_name and len(y_name) + 2 + len(x_name) > W and W >= 42:
        # One header line and two long axis names: both shortened in the middle, so
        # neither is lost (a plot without its axis names cannot be read); below ~20
        # cells a name is no longer readable, and the y name alone is kept.
        room = W - 2
        y_room = max(room - len(x_name), room // 2) if len(y_name) > room // 2 else len(y_name)
        y_name, x_name = _middle(y_name, y_room, a), _middle(x_name, room - min(y_room, len(y_name)), a)
    tokens: list[list[tuple[str, str]]] = []
    if y_name:
        tokens.append([(y_name, "title")])
    if x_name:
        tokens.append([(x_name, "title")])
    for item in legend:
        tokens.append([(item.glyph, item.role), (" " + item.text, "legend")])
    head: list[list[tuple[str, str]]] = [[] for _ in range(rows)]
    first = 0
    for n, tok in enumerate(tokens):
        tok_len = sum(len(t) for t, _ in tok)
        for k, line in enumerate(head[first:], start=first):
            used = sum(len(t) for t, _ in line)
            gap = 2 if line else 0
            if used + gap + tok_len <= W:
                if line:
                    line.append(("  ", ""))
                line.extend(tok)
                first = k if in_order else 0
                break
            if not line and n < 2:
                # An axis name longer than the whole width: shortened, never dropped.
                text = "".join(t for t, _ in tok)
                line.append((text[: W - 1] + ("~" if a else "…"), tok[0][1]))
                break
    out = []
    for h in head:
        cells: list[tuple[str, str]] = []
        for text, role in h:
            cells.extend((ch, role) for ch in text)
        out.append(cells[:W])
    return out


def plot_lines(rows: list[list[tuple[str, str]]], width: int) -> PlotLines:
    """Lines of (glyph, role) cells as text, trailing blanks cut, with their colour spans."""
    out = PlotLines()
    out.spans = []
    for cells in rows:
        cells = cells[:width]
        text = "".join(ch for ch, _ in cells).rstrip()
        out.append(text)
        spans: list[Span] = []
        for i, (_, role) in enumerate(cells[: len(text)]):
            if not role:
                continue
            if spans and spans[-1][2] == role and spans[-1][1] == i:
                spans[-1] = (spans[-1][0], i + 1, role)
            else:
                spans.append((i, i + 1, role))
        out.spans.append(spans)
    return out


def _middle(text: str, room: int, ascii_only: bool) -> str:
    """``text`` in ``room`` cells, shortened in the middle (both ends tell the most)."""
    if len(text) <= room:
        return text
    if room < 5:
        return text[:room]
    head = (room - 1) // 2
    return text[:head] + ("~" if ascii_only else "…") + text[len(text) - (room - 1 - head) :]
