"""Text that never overprints: :class:`Labeller`, a greedy placement on a grid of
occupied cells, the candidate boxes around a point, and labels placed along a normal.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from html import escape
from typing import Any

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from .canvas import AREA, F, num, text_width

__all__ = [
    "Labeller", "PREFILTER_MIN", "AROUND", "Layer", "around_boxes", "TextGroup", "draw_label", "place_on_normal",
]


class Labeller:
    """Greedy label placement on a grid of occupied cells.

    Boxes are ``(x0, y0, x1, y1)`` in canvas units.  :meth:`block` marks
    what labels must not cover (stake marks, symbols, placed labels);
    :meth:`place` takes the first free candidate box of a label, or none.
    Whole sets of boxes are marked and tested with numpy (a difference
    array for marking, a summed-area table for testing); the greedy pass
    itself goes label by label.

    Parameters
    ----------
    box : tuple of float
        The area labels must stay inside (canvas units).
    cell : float
        Grid cell size (canvas units).
    """

    def __init__(self, box: tuple[float, float, float, float] = AREA, cell: float = 1.0):
        self.box = box
        self.cell = cell
        self.nx = int(math.ceil((box[2] - box[0]) / cell))
        self.ny = int(math.ceil((box[3] - box[1]) / cell))
        self.grid = np.zeros((self.ny, self.nx), dtype=bool)

    def _cells(self, boxes: F) -> tuple[NDArray[np.int64], ...]:
        b = np.asarray(boxes, dtype=float).reshape(-1, 4)
        i0 = np.floor((b[:, 0] - self.box[0]) / self.cell).astype(np.int64)
        j0 = np.floor((b[:, 1] - self.box[1]) / self.cell).astype(np.int64)
        i1 = np.ceil((b[:, 2] - self.box[0]) / self.cell).astype(np.int64)
        j1 = np.ceil((b[:, 3] - self.box[1]) / self.cell).astype(np.int64)
        return i0, j0, i1, j1  # half-open cell ranges

    def block(self, boxes: Any) -> None:
        """Mark boxes as occupied (any number at once)."""
        i0, j0, i1, j1 = self._cells(np.asarray(boxes, dtype=float))
        i0, i1 = np.clip(i0, 0, self.nx), np.clip(i1, 0, self.nx)
        j0, j1 = np.clip(j0, 0, self.ny), np.clip(j1, 0, self.ny)
        keep = (i1 > i0) & (j1 > j0)
        if not keep.any():
            return
        i0, i1, j0, j1 = i0[keep], i1[keep], j0[keep], j1[keep]
        w, h = i1 - i0, j1 - j0
        small = (w <= 4) & (h <= 4)
        for di in range(4):  # small boxes (marks, line samples): cell by cell, 16 vectorised steps
            for dj in range(4):
                sel = small & (di < w) & (dj < h)
                self.grid[j0[sel] + dj, i0[sel] + di] = True
        if small.all():
            return
        big = ~small
        i0, i1, j0, j1 = i0[big], i1[big], j0[big], j1[big]
        if i0.size <= 256:  # a few larger boxes (labels, symbols): slice by slice
            for a, b, p, q in zip(i0.tolist(), j0.tolist(), i1.tolist(), j1.tolist()):
                self.grid[b:q, a:p] = True
            return
        diff = np.zeros((self.ny + 1, self.nx + 1), dtype=np.int32)
        np.add.at(diff, (j0, i0), 1)
        np.add.at(diff, (j0, i1), -1)
        np.add.at(diff, (j1, i0), -1)
        np.add.at(diff, (j1, i1), 1)
        self.grid |= np.cumsum(np.cumsum(diff, axis=0), axis=1)[:-1, :-1] > 0

    def block_polyline(self, x: F, y: F, half: float = 0.6) -> None:
        """Mark the cells a polyline (canvas vertices; NaN breaks it) passes through."""
        x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
        if x.size < 2:
            return
        dx, dy = np.diff(x), np.diff(y)
        ln = np.hypot(dx, dy)
        ok = np.isfinite(ln)
        steps = np.where(ok, np.ceil(ln / (self.cell * 0.5)), 0).astype(np.int64) + 1
        seg = np.repeat(np.arange(ln.size), steps)
        t = (np.arange(seg.size) - np.repeat(np.cumsum(steps) - steps, steps)) / np.repeat(
            np.maximum(steps - 1, 1), steps)
        px = x[:-1][seg] + dx[seg] * t
        py = y[:-1][seg] + dy[seg] * t
        keep = np.isfinite(px) & np.isfinite(py)
        px, py = px[keep], py[keep]
        self.block(np.column_stack([px - half, py - half, px + half, py + half]))

    def free(self, boxes: Any) -> NDArray[np.bool_]:
        """Which boxes lie inside the area on free cells only (any shape ``(..., 4)``)."""
        b = np.asarray(boxes, dtype=float)
        shape = b.shape[:-1]
        i0, j0, i1, j1 = self._cells(b)
        inside = (i0 >= 0) & (j0 >= 0) & (i1 <= self.nx) & (j1 <= self.ny) & (i1 > i0) & (j1 > j0)
        sat = np.zeros((self.ny + 1, self.nx + 1), dtype=np.int32)
        sat[1:, 1:] = np.cumsum(np.cumsum(self.grid, axis=0, dtype=np.int32), axis=1)
        i0, i1 = np.clip(i0, 0, self.nx), np.clip(i1, 0, self.nx)
        j0, j1 = np.clip(j0, 0, self.ny), np.clip(j1, 0, self.ny)
        used = sat[j1, i1] - sat[j0, i1] - sat[j1, i0] + sat[j0, i0]
        free: NDArray[np.bool_] = (inside & (used == 0)).reshape(shape)
        return free

    def place(self, candidates: F, allowed: NDArray[np.bool_] | None = None) -> int:
        """Take the first free candidate box (rows of ``candidates``), mark it and
        return its index; -1 when none is free.
        """
        c = np.asarray(candidates, dtype=float).reshape(-1, 4)
        i0, j0, i1, j1 = self._cells(c)
        for k in range(c.shape[0]):  # the greedy step: earlier labels win
            if allowed is not None and not allowed[k]:
                continue
            a, b, p, q = int(i0[k]), int(j0[k]), int(i1[k]), int(j1[k])
            if a < 0 or b < 0 or p > self.nx or q > self.ny or p <= a or q <= b:
                continue
            if not self.grid[b:q, a:p].any():
                self.grid[b:q, a:p] = True
                return k
        return -1


#: Candidate boxes tested all at once (a summed-area table) before the greedy pass from this many on.
PREFILTER_MIN = 8000


#: The eight places around a mark: (sx, sy) on the canvas.
AROUND = np.array([(1, 0), (-1, 0), (0, -1), (0, 1), (1, -1), (-1, -1), (1, 1), (-1, 1)], dtype=float)


def around_boxes(x: F, y: F, w: F, h: F, r: float, order_dir: F | None = None) -> F:
    """Candidate boxes ``(N, 8, 4)`` of labels of size (w, h) beside marks of radius ``r``
    at (x, y), nearest first to ``order_dir`` (``(N, 2)`` canvas directions) when given.
    """
    diagonal = (AROUND[:, 0] != 0) & (AROUND[:, 1] != 0)
    gap = np.where(diagonal, r + 1.3, r + 1.5)[None, :]  # clear of the mark's own box by a grid cell
    sx = AROUND[None, :, 0]
    sy = AROUND[None, :, 1]
    cx = x[:, None] + sx * (w[:, None] / 2 + gap)
    cy = y[:, None] + sy * (h[:, None] / 2 + gap)
    boxes = np.stack([cx - w[:, None] / 2, cy - h[:, None] / 2, cx + w[:, None] / 2, cy + h[:, None] / 2], axis=-1)
    if order_dir is not None:
        unit = AROUND / np.hypot(AROUND[:, 0], AROUND[:, 1])[:, None]
        score = order_dir @ unit.T  # (N, 8): the side facing away from the alignment first
        order = np.argsort(-score + 1e-9 * np.arange(8)[None, :], axis=1, kind="stable")
        boxes = np.take_along_axis(boxes, order[:, :, None], axis=1)
    return boxes


class TextGroup:
    """Collected text elements of one class, drawn in one group."""

    def __init__(self) -> None:
        self.items: list[str] = []

    def add(self, x: float, y: float, text: str, anchor: str = "middle", extra: str = "") -> None:
        a = "" if anchor == "start" else f' text-anchor="{anchor}"'  # SVG's default anchor is the start
        self.items.append(f'<text x="{num(x)}" y="{num(y)}"{a}{extra}>{escape(text)}</text>')


def draw_label(out: TextGroup, box: Sequence[float], lines: Sequence[str], size: float) -> None:
    """Lines of text centred in a box (baselines from the box's top)."""
    x = (box[0] + box[2]) / 2
    top = box[1] + 0.5
    for k, t in enumerate(lines):
        out.add(x, top + size * (0.86 + 1.15 * k), t)


def place_on_normal(lab: Labeller, x: float, y: float, nx: float, ny: float, lines: list[str], size: float,
                     reach: tuple[float, float], steps: int = 3) -> tuple[tuple[float, ...], tuple[float, float]] | None:
    """Place a label off (x, y) along the canvas direction (nx, ny), its nearest edge or
    corner ``reach[0]`` away, stepping outward, then on the other side past ``reach[1]``.
    Returns the box and the end of its leader (where the ray meets the box), or None.
    """
    w = max(text_width(t, size) for t in lines) + 2.0
    h = len(lines) * size * 1.15 + 1.0
    cands = []
    ends = []
    for sgn, base in ((1.0, reach[0]), (-1.0, reach[1])):
        ux, uy = sgn * nx, sgn * ny
        sx, sy = (1.0 if ux >= 0 else -1.0), (1.0 if uy >= 0 else -1.0)
        # beside, at a corner, or above/below the leader's end, as the direction is more across or up
        shifts = [(sx * w / 2, 0.0), (sx * w / 2, sy * h / 2), (0.0, sy * h / 2)]
        if abs(uy) > abs(ux):
            shifts.reverse()
        for k in range(steps):
            dist = base + k * (h + 3.0)
            qx, qy = x + ux * dist, y + uy * dist
            for dx, dy in shifts:
                cx, cy = qx + dx, qy + dy
                cands.append((cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2))
                ends.append((qx, qy))
    k = lab.place(np.array(cands))
    if k < 0:
        return None
    return cands[k], ends[k]


@dataclass
class Layer:
    """The labels of one picture as they are placed: the labeller, the label texts, the point
    numbers and the leaders from a point to its label.
    """

    lab: Labeller
    texts: TextGroup = field(default_factory=TextGroup)
    numbers: TextGroup = field(default_factory=TextGroup)
    leaders: list[str] = field(default_factory=list)
