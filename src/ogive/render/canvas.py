"""A dot canvas drawn as Unicode braille (2×4 dots per cell) or as plain ASCII.

Each series is a layer with a role and its own glyphs. Braille layers combine dot by
dot (a thin line and a dashed band share a cell without hiding each other); marker
layers stamp one glyph per cell and win over braille, so two series stay apart without
colour. In ASCII mode every layer has a character of its own.

Cost depends only on the canvas size and the number of points handed in (a few
hundred from a sketch), never on how many values the sketch summarises.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

BRAILLE_BASE = 0x2800
# Bit for the dot at (column dx, row dy) inside a braille cell (Unicode braille patterns).
_BITS = np.array([[0x01, 0x02, 0x04, 0x40], [0x08, 0x10, 0x20, 0x80]], dtype=np.int64)


@dataclass(frozen=True)
class Layer:
    role: str
    """What the layer shows ('reference', 'band', 'subject', ...); also the colour key."""
    braille: str | None
    """Unicode mode: None draws braille dots, a character stamps that glyph per cell."""
    ascii: str
    """ASCII mode: the character for every cell the layer touches."""
    priority: int = 0
    """Higher wins a cell; ties go to the layer added later."""
    every: int = 1
    """A marker layer stamps only cells with (row + col) divisible by this: a dotted
    line, one glyph every few cells along it whatever its slope."""


class Canvas:
    """``cols`` × ``rows`` cells; dot coordinates run 0..2*cols-1 across, 0..4*rows-1 down."""

    def __init__(self, cols: int, rows: int, *, ascii_only: bool = False) -> None:
        self.cols, self.rows = int(cols), int(rows)
        self.ascii_only = ascii_only
        self.layers: list[Layer] = []
        self._bits: list[NDArray[np.int64]] = []
        self._cells: tuple[list[list[str]], list[list[str]]] | None = None

    @property
    def dot_width(self) -> int:
        return 2 * self.cols

    @property
    def dot_height(self) -> int:
        return 4 * self.rows

    def layer(self, layer: Layer) -> int:
        self.layers.append(layer)
        self._bits.append(np.zeros((self.rows, self.cols), dtype=np.int64))
        self._cells = None
        return len(self.layers) - 1

    # ------------------------------------------------------------ drawing
    def dots(self, index: int, xd: NDArray[np.float64], yd: NDArray[np.float64]) -> None:
        """Set dots at fractional dot coordinates; those outside the canvas are dropped."""
        x = np.rint(np.asarray(xd, dtype=np.float64))
        y = np.rint(np.asarray(yd, dtype=np.float64))
        ok = (
            np.isfinite(x)
            & np.isfinite(y)
            & (x >= 0)
            & (x < self.dot_width)
            & (y >= 0)
            & (y < self.dot_height)
        )
        xi, yi = x[ok].astype(np.int64), y[ok].astype(np.int64)
        self._cells = None
        np.bitwise_or.at(self._bits[index], (yi // 4, xi // 2), _BITS[xi % 2, yi % 4])

    def polyline(
        self,
        index: int,
        xd: NDArray[np.float64],
        yd: NDArray[np.float64],
        *,
        dash: tuple[int, int] | None = None,
    ) -> None:
        """Join consecutive points with straight dot runs; NaN breaks the line.

        Segments are clipped to the canvas first so that a point far outside (an
        unbounded band edge) costs no more than one crossing the canvas. ``dash`` =
        (on, off) in dots along the line.
        """
        x = np.asarray(xd, dtype=np.float64)
        y = np.asarray(yd, dtype=np.float64)
        if x.size == 1:
            self.dots(index, x, y)
            return
        x0, y0, x1, y1 = x[:-1], y[:-1], x[1:], y[1:]
        ok = np.isfinite(x0) & np.isfinite(y0) & np.isfinite(x1) & np.isfinite(y1)
        x0, y0, x1, y1 = _clip(x0[ok], y0[ok], x1[ok], y1[ok], self.dot_width - 1, self.dot_height - 1)
        steps = np.ceil(np.maximum(np.abs(x1 - x0), np.abs(y1 - y0))).astype(np.int64) + 1
        if steps.size == 0:
            return
        seg = np.repeat(np.arange(steps.size), steps)
        start = np.repeat(np.cumsum(steps) - steps, steps)
        k = np.arange(seg.size) - start
        t = k / np.maximum(steps[seg] - 1, 1)
        px = x0[seg] + (x1[seg] - x0[seg]) * t
        py = y0[seg] + (y1[seg] - y0[seg]) * t
        if dash is not None:
            on, off = dash
            keep = (np.arange(px.size) % (on + off)) < on
            px, py = px[keep], py[keep]
        self.dots(index, px, py)

    def occupied(self, index: int) -> NDArray[np.bool_]:
        return self._bits[index] != 0

    # ------------------------------------------------------------ output
    def cells(self) -> tuple[list[list[str]], list[list[str]]]:
        """(glyphs, roles) per cell; role '' where the cell is empty (fresh lists, cached work)."""
        if self._cells is None:
            self._cells = self._compose()
        glyphs, roles = self._cells
        return [row[:] for row in glyphs], [row[:] for row in roles]

    def _compose(self) -> tuple[list[list[str]], list[list[str]]]:
        glyphs = [[" "] * self.cols for _ in range(self.rows)]
        roles = [[""] * self.cols for _ in range(self.rows)]
        best = np.full((self.rows, self.cols), -1, dtype=np.int64)
        winner = np.full((self.rows, self.cols), -1, dtype=np.int64)
        for i, layer in enumerate(self.layers):
            hit = self._bits[i] != 0
            if layer.every > 1 and (layer.braille is not None or self.ascii_only):
                rows, cols = np.indices(hit.shape)
                hit &= (rows + cols) % layer.every == 0
            # A marker beats braille at equal priority: it carries the series identity.
            rank = layer.priority * 2 + (1 if (layer.braille is not None or self.ascii_only) else 0)
            take = hit & (rank >= best)
            best[take] = rank
            winner[take] = i
        braille_bits = np.zeros((self.rows, self.cols), dtype=np.int64)
        for i, layer in enumerate(self.layers):
            if layer.braille is None:
                braille_bits |= self._bits[i]
        for r, c in zip(*np.nonzero(winner >= 0), strict=True):
            layer = self.layers[int(winner[r, c])]
            if self.ascii_only:
                glyph = layer.ascii
            elif layer.braille is None:
                glyph = chr(BRAILLE_BASE + int(braille_bits[r, c]))
            else:
                glyph = layer.braille
            glyphs[r][c] = glyph
            roles[r][c] = layer.role
        return glyphs, roles


def _clip(
    x0: NDArray[np.float64],
    y0: NDArray[np.float64],
    x1: NDArray[np.float64],
    y1: NDArray[np.float64],
    xmax: float,
    ymax: float,
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Liang–Barsky clipping of segments to [0, xmax] × [0, ymax]; outside ones vanish.

    Method: Y.-D. Liang and B. A. Barsky, "A new concept and method for line clipping",
    ACM Transactions on Graphics 3 (1984) 1–22.
    """
    dx, dy = x1 - x0, y1 - y0
    t0 = np.zeros_like(x0)
    t1 = np.ones_like(x0)
    keep = np.ones(x0.shape, dtype=bool)
    pad = 0.49  # dots within half a dot of the edge still round onto the canvas
    for p, q in ((-dx, x0 + pad), (dx, xmax + pad - x0), (-dy, y0 + pad), (dy, ymax + pad - y0)):
        with np.errstate(divide="ignore", invalid="ignore"):
            r = q / p
        parallel = p == 0
        keep &= ~(parallel & (q < 0))
        neg = (p < 0) & ~parallel
        pos = (p > 0) & ~parallel
        t0 = np.where(neg, np.maximum(t0, r), t0)
        t1 = np.where(pos, np.minimum(t1, r), t1)
    keep &= t0 <= t1
    nx0, ny0 = x0 + t0 * dx, y0 + t0 * dy
    nx1, ny1 = x0 + t1 * dx, y0 + t1 * dy
    return nx0[keep], ny0[keep], nx1[keep], ny1[keep]
