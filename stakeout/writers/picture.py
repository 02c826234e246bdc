"""``plan.svg``: the plan picture, and the residual picture of a check, as SVG
written directly (no drawing library: the same design gives the same bytes).

The sheet is :data:`SHEET_WIDTH` x :data:`SHEET_HEIGHT` SVG units (the
proportions of an ISO A sheet in landscape; printed across A4 or US Letter
one unit is about 0.19 mm): the drawing on the left, north up, and a
panel on the right with the legend, the curve data, notes and the title
block.  Canvas ``x`` runs east and ``y`` runs south (SVG's), so a survey
azimuth ``az`` (degrees clockwise from grid north) points along
``(sin az, -cos az)`` on the canvas.

Text never overprints: every label goes through :class:`Labeller`, a
greedy placement on a grid of occupied cells; a label with no free place
is left out and the title block says how many were.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from html import escape
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import NDArray

from ..alignment import Alignment, Arc, Element, Line
from ..angles import format_dms
from ..design import Design
from .sections import widened_traces
from .text import curve_texts, turn_word

if TYPE_CHECKING:  # pragma: no cover
    from ..check import CheckResult
    from ..shots import Shots

__all__ = [
    "SHEET_WIDTH", "SHEET_HEIGHT", "LABEL_MAX_STAKES", "TICK_MAX_STATIONS", "STATUS_COLOURS", "View", "Labeller",
    "nice_length", "station_spacing", "plan_svg", "plan_svg_element", "residual_svg_element", "exaggeration",
]

F = NDArray[np.float64]

#: Sheet size in SVG units.
SHEET_WIDTH = 1400.0
SHEET_HEIGHT = 990.0
MARGIN = 14.0
PANEL_WIDTH = 330.0
#: The drawing area (x0, y0, x1, y1) left of the panel.
AREA = (MARGIN, MARGIN, SHEET_WIDTH - PANEL_WIDTH - MARGIN, SHEET_HEIGHT - MARGIN)
#: Room kept free inside the drawing area around the job, for labels.
PAD = 36.0

#: Over this many stakes the point numbers are not drawn and the stakes are thinned to one mark a cell.
LABEL_MAX_STAKES = 5000
#: Over this many staked stations only the labelled stations get a tick.
TICK_MAX_STATIONS = 2000
#: Thinned stakes: one mark per cell of this size (SVG units).
THIN_CELL = 2.0
#: Smallest gap between two station labels along the centreline (SVG units).
STATION_LABEL_GAP = 60.0

#: Font sizes (SVG units) and the advance of one character of a monospaced font (em).
FONT_STAKE = 8.5
FONT_LABEL = 9.5
FONT_PANEL = 9.5
CHAR_EM = 0.61
MONO = "'DejaVu Sans Mono','Liberation Mono',Menlo,Consolas,monospace"
SANS = "'DejaVu Sans','Liberation Sans',Arial,Helvetica,sans-serif"

#: One colour per offset line, in the job's order (the centreline's stakes are drawn black).
CODE_COLOURS = ("#1f77b4", "#d95f02", "#2ca02c", "#9467bd", "#8c564b", "#e377c2", "#17becf", "#bcbd22")
CL_COLOUR = "#b2182b"
OFFSET_COLOUR = "#7a7a7a"
TANGENT_COLOUR = "#2166ac"
CONTROL_COLOUR = "#8e24aa"
#: Colours of the check statuses (any other status is drawn black).
STATUS_COLOURS = {"ok": "#1a9850", "out": "#d73027", "duplicate": "#f46d43", "unmatched": "#7b3294",
                  "superseded": "#969696", "control": "#2166ac"}


# ---- numbers and text -------------------------------------------------------------------------
def _n(v: float) -> str:
    """One coordinate on the canvas: two decimals, never ``-0.00``."""
    t = f"{v:.2f}"
    return "0.00" if t == "-0.00" else t


def _pts(x: F, y: F) -> str:
    """``x,y x,y ...`` of a polyline."""
    return " ".join(f"{_n(a)},{_n(b)}" for a, b in zip(x.tolist(), y.tolist()))


def _text_width(text: str, size: float) -> float:
    """Width of ``text`` set in the monospaced font at ``size`` (SVG units)."""
    return len(text) * CHAR_EM * size


def _wrap(text: str, chars: int) -> list[str]:
    """``text`` broken at spaces into lines of at most ``chars`` characters."""
    import textwrap

    return textwrap.wrap(text, chars, break_long_words=True, break_on_hyphens=False) or [""]


def nice_length(target: float) -> float:
    """The largest 1, 2 or 5 times a power of ten not above ``target`` (> 0)."""
    if not target > 0 or not math.isfinite(target):
        return 1.0
    p = 10.0 ** math.floor(math.log10(target))
    for m in (5.0, 2.0, 1.0):
        if m * p <= target * (1 + 1e-12):
            return m * p
    return p


def _round_label(label: str) -> str:
    """A station label at a round station without its zero decimals (``15+00.00`` -> ``15+00``)."""
    head, dot, tail = label.partition(".")
    return head if dot and set(tail) <= {"0"} else label


def station_spacing(length: float, scale: float) -> float:
    """Spacing of station labels (job units) on a picture.

    Every 100 units (100 ft, or 100 m), coarser (200, 500, 1000, ...) where
    labels would come closer than :data:`STATION_LABEL_GAP` on the canvas,
    finer (50, 20, 10) on an alignment too short for three labels.

    Parameters
    ----------
    length : float
        Length of the alignment, job units.
    scale : float
        Canvas units per job unit.
    """
    s = 100.0
    while length < 3 * s and s > 10.0 and nice_length(s / 1.99) * scale >= STATION_LABEL_GAP:
        s = nice_length(s / 1.99)  # 100 -> 50 -> 20 -> 10
    while s * scale < STATION_LABEL_GAP:
        s = nice_length(s * 2.5 * (1 + 1e-9))  # 100 -> 200 -> 500 -> 1000
    return s


# ---- the view --------------------------------------------------------------------------------
@dataclass(frozen=True)
class View:
    """World (easting, northing; job units) to canvas (x, y; SVG units), north up.

    Attributes
    ----------
    e0, n0 : float
        The world point drawn at (cx, cy).
    cx, cy : float
        Canvas centre of the drawing.
    scale : float
        Canvas units per job unit.
    """

    e0: float
    n0: float
    cx: float
    cy: float
    scale: float

    @classmethod
    def fit(cls, emin: float, nmin: float, emax: float, nmax: float,
            box: tuple[float, float, float, float] = AREA, pad: float = PAD) -> "View":
        """The largest view showing the world box inside the canvas box with ``pad`` around it."""
        x0, y0, x1, y1 = box
        w, h = max(x1 - x0 - 2 * pad, 1.0), max(y1 - y0 - 2 * pad, 1.0)
        de, dn = max(emax - emin, 1e-9), max(nmax - nmin, 1e-9)
        scale = min(w / de, h / dn)
        if not math.isfinite(scale) or scale <= 0:
            scale = 1.0
        return cls((emin + emax) / 2, (nmin + nmax) / 2, (x0 + x1) / 2, (y0 + y1) / 2, scale)

    def x(self, e: Any) -> F:
        """Canvas x of eastings."""
        return self.cx + (np.asarray(e, dtype=float) - self.e0) * self.scale

    def y(self, n: Any) -> F:
        """Canvas y of northings."""
        return self.cy - (np.asarray(n, dtype=float) - self.n0) * self.scale

    def xy1(self, e: float, n: float) -> tuple[float, float]:
        """One point on the canvas."""
        return float(self.x(e)), float(self.y(n))


# ---- label placement ---------------------------------------------------------------------------
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


def _around_boxes(x: F, y: F, w: F, h: F, r: float, order_dir: F | None = None) -> F:
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


class _Text:
    """Collected text elements of one class, drawn in one group."""

    def __init__(self) -> None:
        self.items: list[str] = []

    def add(self, x: float, y: float, text: str, anchor: str = "middle", extra: str = "") -> None:
        a = "" if anchor == "start" else f' text-anchor="{anchor}"'  # SVG's default anchor is the start
        self.items.append(f'<text x="{_n(x)}" y="{_n(y)}"{a}{extra}>{escape(text)}</text>')


def _label_box(cx: float, cy: float, lines: Sequence[str], size: float) -> tuple[float, float, float, float]:
    w = max(_text_width(t, size) for t in lines) + 2.0
    h = len(lines) * size * 1.15 + 1.0
    return cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2


def _draw_label(out: _Text, box: Sequence[float], lines: Sequence[str], size: float) -> None:
    """Lines of text centred in a box (baselines from the box's top)."""
    x = (box[0] + box[2]) / 2
    top = box[1] + 0.5
    for k, t in enumerate(lines):
        out.add(x, top + size * (0.86 + 1.15 * k), t)


# ---- alignment paths ------------------------------------------------------------------------
def _ends(a: Alignment, el: Element, offset: float) -> tuple[float, float, float, float]:
    (n0, n1), (e0, e1), _ = a.evaluate(np.array([el.start, el.end]), offset)
    return float(e0), float(n0), float(e1), float(n1)


Segment = tuple[tuple[float, float], tuple[float, float], str]  # start, end, path command


def _seg_line(a: Alignment, el: Element, offset: float, v: View) -> Segment:
    e0, n0, e1, n1 = _ends(a, el, offset)
    x1, y1 = v.xy1(e1, n1)
    return v.xy1(e0, n0), (x1, y1), f"L{_n(x1)},{_n(y1)}"


def _seg_arc(a: Alignment, el: Element, offset: float, v: View) -> Segment:
    assert isinstance(el, Arc)
    e0, n0, e1, n1 = _ends(a, el, offset)
    r = (el.radius - el.turn * offset) * v.scale
    x1, y1 = v.xy1(e1, n1)
    if r <= 1e-6:
        return v.xy1(e0, n0), (x1, y1), f"L{_n(x1)},{_n(y1)}"
    large = 1 if el.delta > 180.0 else 0
    sweep = 1 if el.turn > 0 else 0  # a right turn runs clockwise on the canvas (SVG's positive sweep)
    return v.xy1(e0, n0), (x1, y1), f"A{_n(r)},{_n(r)} 0 {large} {sweep} {_n(x1)},{_n(y1)}"


#: Sagitta allowed between a curve and the chords drawn for it (canvas units).
CHORD_TOLERANCE = 0.25


def _seg_sampled(a: Alignment, el: Element, offset: float, v: View) -> Segment:
    """Any element (spirals): a polyline whose chords stay within :data:`CHORD_TOLERANCE` of it."""
    k = max(abs(el.curvature_start), abs(el.curvature_end))
    k = k / max(1e-9, 1.0 - abs(k * offset))  # curvature of the offset line
    tol = CHORD_TOLERANCE / v.scale
    step = math.sqrt(8.0 * tol / k) if k > 0 else el.length
    count = int(min(20000, max(2, math.ceil(el.length / max(step, 1e-12)) + 1)))
    s = np.linspace(el.start, el.end, count)
    n, e, _ = a.evaluate(s, offset, miter=False)
    x, y = v.x(e), v.y(n)
    return ((float(x[0]), float(y[0])), (float(x[-1]), float(y[-1])),
            "L" + " ".join(f"{_n(p)},{_n(q)}" for p, q in zip(x[1:].tolist(), y[1:].tolist())))


#: How each kind of element is drawn (keyed by class; other kinds are sampled).
SEGMENTS: dict[type[Element], Callable[[Alignment, Element, float, View], Segment]] = {
    Line: _seg_line, Arc: _seg_arc,
}


def _path_d(a: Alignment, offset: float, v: View) -> str:
    """SVG path data of the centreline (offset 0) or an offset line."""
    parts: list[str] = []
    last: tuple[float, float] | None = None
    for el in a.elements:
        (x0, y0), end, cmd = SEGMENTS.get(type(el), _seg_sampled)(a, el, offset, v)
        if last is None or abs(last[0] - x0) > 0.01 or abs(last[1] - y0) > 0.01:
            parts.append(f"M{_n(x0)},{_n(y0)}")
        parts.append(cmd)
        last = end
    return "".join(parts)


# ---- shared pieces of the sheet ------------------------------------------------------------------
def _north_arrow(x: float, y: float) -> str:
    """A north arrow whose tip is at (x, y)."""
    return (f'<g class="so-north"><rect x="{_n(x - 16)}" y="{_n(y - 4)}" width="32" height="58" fill="#fff" '
            f'fill-opacity="0.85"/><path d="M{_n(x)},{_n(y + 6)} l-9,30 l9,-7 l9,7 z" fill="#222"/>'
            f'<path d="M{_n(x)},{_n(y + 6)} l9,30 l-9,-7 z" fill="#fff" stroke="#222" stroke-width="0.8"/>'
            f'<text x="{_n(x)}" y="{_n(y + 50)}" font-family="{SANS}" font-size="11" font-weight="bold" '
            f'text-anchor="middle">N</text></g>')


def _scale_bar(x: float, y: float, v: View, symbol: str) -> tuple[str, float]:
    """A scale bar of a round length from (x, y) (its bottom left); returns the SVG and its width."""
    length = nice_length(190.0 / v.scale)
    w = length * v.scale
    half = w / 2
    parts = [f'<g class="so-scale"><rect x="{_n(x - 4)}" y="{_n(y - 24)}" width="{_n(w + 60)}" height="30" '
             f'fill="#fff" fill-opacity="0.85"/>',
             f'<rect x="{_n(x)}" y="{_n(y - 6)}" width="{_n(half)}" height="5" fill="#222" stroke="#222" '
             f'stroke-width="0.6"/>',
             f'<rect x="{_n(x + half)}" y="{_n(y - 6)}" width="{_n(half)}" height="5" fill="#fff" stroke="#222" '
             f'stroke-width="0.6"/>']
    for k, at in enumerate((0.0, half, w)):
        value = _g(length * k / 2)
        parts.append(f'<text x="{_n(x + at)}" y="{_n(y - 10)}" font-family="{SANS}" font-size="9" '
                     f'text-anchor="middle">{value}{" " + escape(symbol) if k == 2 else ""}</text>')
    parts.append("</g>")
    return "".join(parts), w + 60


def _g(v: float) -> str:
    """A round length without needless decimals (``2.5``, ``100``)."""
    t = f"{v:.6f}".rstrip("0").rstrip(".")
    return t or "0"


def _style() -> str:
    return ("<style>"
            f".so-lab text{{font-family:{MONO};font-size:{FONT_LABEL}px;fill:#111;"
            "paint-order:stroke;stroke:#fff;stroke-width:2.6px;stroke-linejoin:round}"
            f".so-num text{{font-family:{MONO};font-size:{FONT_STAKE}px;fill:#333;"
            "paint-order:stroke;stroke:#fff;stroke-width:2.4px;stroke-linejoin:round}"
            f".so-panel text{{font-family:{MONO};font-size:{FONT_PANEL}px;fill:#111}}"
            f".so-grid text{{font-family:{MONO};font-size:7.5px;fill:#555}}"
            f".so-panel .h{{font-family:{SANS};font-weight:bold}}"
            "</style>")


class _Panel:
    """The panel right of the drawing: text lines and legend rows, top down."""

    X0 = SHEET_WIDTH - PANEL_WIDTH
    CHARS = int((PANEL_WIDTH - 2 * MARGIN - 4) / (CHAR_EM * FONT_PANEL))

    def __init__(self) -> None:
        self.y = MARGIN + 6.0
        self.parts: list[str] = []

    @property
    def x(self) -> float:
        return self.X0 + 8.0

    def heading(self, text: str, size: float = 12.0) -> None:
        self.y += size + 4
        self.parts.append(f'<text class="h" x="{_n(self.x)}" y="{_n(self.y)}" font-size="{size}px">'
                          f"{escape(text)}</text>")
        self.y += 3

    def line(self, text: str, indent: int = 0, colour: str = "") -> None:
        for k, t in enumerate(_wrap(text, self.CHARS - indent - 2)):
            self.y += FONT_PANEL * 1.25
            fill = f' fill="{colour}"' if colour else ""
            pad = indent + (2 if k else 0)
            self.parts.append(f'<text x="{_n(self.x + pad * CHAR_EM * FONT_PANEL)}" y="{_n(self.y)}"{fill}>'
                              f"{escape(t)}</text>")

    def symbol(self, svg: str, text: str) -> None:
        """A legend row: a symbol drawn in a 28 x 10 box at (0, 0), then its text."""
        self.y += FONT_PANEL * 1.45
        self.parts.append(f'<g transform="translate({_n(self.x)},{_n(self.y - 3.5)})">{svg}</g>')
        self.parts.append(f'<text x="{_n(self.x + 34)}" y="{_n(self.y)}">{escape(text)}</text>')

    def gap(self, h: float = 6.0) -> None:
        self.y += h

    def svg(self) -> str:
        return '<g class="so-panel">' + "".join(self.parts) + "</g>"


def _title_block(rows: list[tuple[str, str]], bottom: float) -> str:
    """The title block: label / value rows in a ruled box ending at ``bottom``."""
    x0 = SHEET_WIDTH - PANEL_WIDTH
    x1 = SHEET_WIDTH - MARGIN
    chars = int((x1 - x0 - 84) / (CHAR_EM * FONT_PANEL))
    lines: list[tuple[str, list[str]]] = [(k, _wrap(v, chars)) for k, v in rows]
    h = sum(len(v) * FONT_PANEL * 1.2 + 6 for _, v in lines)
    y = bottom - h
    out = [f'<g class="so-panel"><rect x="{_n(x0)}" y="{_n(y)}" width="{_n(x1 - x0)}" height="{_n(h)}" '
           'fill="none" stroke="#222" stroke-width="0.8"/>']
    for k, vals in lines:
        row_h = len(vals) * FONT_PANEL * 1.2 + 6
        out.append(f'<line x1="{_n(x0)}" y1="{_n(y)}" x2="{_n(x1)}" y2="{_n(y)}" stroke="#222" stroke-width="0.4"/>')
        out.append(f'<text x="{_n(x0 + 5)}" y="{_n(y + FONT_PANEL + 2)}" fill="#555">{escape(k)}</text>')
        for j, t in enumerate(vals):
            out.append(f'<text x="{_n(x0 + 80)}" y="{_n(y + FONT_PANEL + 2 + j * FONT_PANEL * 1.2)}">'
                       f"{escape(t)}</text>")
        y += row_h
    out.append(f'<line x1="{_n(x0 + 76)}" y1="{_n(bottom - h)}" x2="{_n(x0 + 76)}" y2="{_n(bottom)}" '
               'stroke="#222" stroke-width="0.4"/></g>')
    return "".join(out)


def _frame() -> str:
    x0, y0, x1, y1 = AREA
    return (f'<rect x="0" y="0" width="{_n(SHEET_WIDTH)}" height="{_n(SHEET_HEIGHT)}" fill="#fff"/>'
            f'<rect x="{_n(x0)}" y="{_n(y0)}" width="{_n(x1 - x0)}" height="{_n(y1 - y0)}" fill="none" '
            'stroke="#222" stroke-width="1"/>')


def _svg_open(title: str, clip_id: str) -> str:
    x0, y0, x1, y1 = AREA
    return (f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {_g(SHEET_WIDTH)} {_g(SHEET_HEIGHT)}" '
            f'width="{_g(SHEET_WIDTH)}" height="{_g(SHEET_HEIGHT)}" role="img" class="so-sheet">'
            f"<title>{escape(title)}</title>{_style()}"
            f'<defs><clipPath id="{clip_id}"><rect x="{_n(x0)}" y="{_n(y0)}" width="{_n(x1 - x0)}" '
            f'height="{_n(y1 - y0)}"/></clipPath></defs>')


def _circles(x: F, y: F, r: float) -> str:
    """Path data of small circles (one subpath each)."""
    d = 2 * r
    return "".join(f"M{_n(p - r)},{_n(q)}a{_n(r)},{_n(r)} 0 1,0 {_n(d)},0a{_n(r)},{_n(r)} 0 1,0 {_n(-d)},0"
                   for p, q in zip(x.tolist(), y.tolist()))


def _thin(x: F, y: F, cell: float) -> NDArray[np.int64]:
    """Indices of the first point in each canvas cell (vectorised), in input order."""
    key = np.floor(x / cell).astype(np.int64) * 1_000_003 + np.floor(y / cell).astype(np.int64)
    _, first = np.unique(key, return_index=True)
    return np.sort(first)


def _right_normal(az: F) -> tuple[F, F]:
    """Canvas direction square to the right of azimuths (degrees)."""
    r = np.radians(az)
    return np.cos(r), np.sin(r)


def _occupations(d: Design) -> list[tuple[Any, Any, float]]:
    """(occupied point, backsight point or None, grid backsight azimuth) of every setup."""
    sd = d.setup
    if sd is None:
        return []
    return [(o.occupied, o.backsight, float(o.backsight_azimuth)) for o in sd.occupations]


def _extent(points_e: list[F], points_n: list[F]) -> tuple[float, float, float, float]:
    e = np.concatenate([np.asarray(p, dtype=float).ravel() for p in points_e])
    n = np.concatenate([np.asarray(p, dtype=float).ravel() for p in points_n])
    e, n = e[np.isfinite(e)], n[np.isfinite(n)]
    if e.size == 0:
        return 0.0, 0.0, 1.0, 1.0
    return float(e.min()), float(n.min()), float(e.max()), float(n.max())


def _grow(ext: tuple[float, float, float, float], e: F, n: F, reach: float) -> tuple[float, float, float, float]:
    """The extent grown to take in points lying within ``reach`` (a fraction of its size) of it."""
    emin, nmin, emax, nmax = ext
    size = max(emax - emin, nmax - nmin, 1e-9)
    near = ((e >= emin - reach * size) & (e <= emax + reach * size) & (n >= nmin - reach * size)
            & (n <= nmax + reach * size))
    if near.any():
        return (min(emin, float(e[near].min())), min(nmin, float(n[near].min())),
                max(emax, float(e[near].max())), max(nmax, float(n[near].max())))
    return ext


def _alignment_lines(d: Design, v: View, clip_id: str, width_cl: float = 1.6) -> str:
    a = d.alignment
    parts = [f'<g clip-path="url(#{clip_id})" fill="none" stroke-linejoin="round">']
    for ol in d.job.staking.offsets:
        if ol.offset != 0.0 and not ol.widening:
            parts.append(f'<path class="so-offset" d="{_path_d(a, ol.offset, v)}" stroke="{OFFSET_COLOUR}" '
                         'stroke-width="0.8"/>')
    for _code, tn, te in widened_traces(d):  # a widened line: a polyline along its taper
        xy = " ".join(f"{_n(p)},{_n(q)}" for p, q in zip(v.x(te).tolist(), v.y(tn).tolist()))
        parts.append(f'<path class="so-offset" d="M{xy}" stroke="{OFFSET_COLOUR}" stroke-width="0.8"/>')
    parts.append(f'<path class="so-cl" d="{_path_d(a, 0.0, v)}" stroke="{CL_COLOUR}" stroke-width="{_g(width_cl)}"/>')
    parts.append("</g>")
    return "".join(parts)


def _short_hash(sha: str) -> str:
    return sha[:16]


# ---- plan.svg ----------------------------------------------------------------------------------
def plan_svg_element(d: Design) -> str:
    """The plan picture as an ``<svg>`` element (no XML declaration), for the
    file and for inlining into ``report.html``.
    """
    job, a, sp, stn = d.job, d.alignment, d.stakes, d.stationing
    unit = d.unit
    occs = _occupations(d)
    cts = {ct.curve.number: ct for ct in curve_texts(a, stn)}
    el_e = np.array([el.start_easting for el in a.elements] + [a.elements[-1].end_easting])
    el_n = np.array([el.start_northing for el in a.elements] + [a.elements[-1].end_northing])
    # the elements' bounding samples (arcs bulge beyond their ends)
    mids = np.array([el.start + el.length * f for el in a.elements for f in (0.25, 0.5, 0.75)])
    mn, me, _ = a.evaluate(mids, 0.0)
    big_off = max([abs(o) for ol in job.staking.offsets for o in ol.all_offsets()] + [0.0])
    ext = _extent([sp.easting, el_e, me, np.array([o[0].easting for o in occs])],
                  [sp.northing, el_n, mn, np.array([o[0].northing for o in occs])])
    ext = (ext[0] - big_off, ext[1] - big_off, ext[2] + big_off, ext[3] + big_off)
    pis = [c for c in a.curves if c.pi_northing is not None and c.pi_easting is not None]
    pi_e = np.array([c.pi_easting for c in pis], dtype=float)
    pi_n = np.array([c.pi_northing for c in pis], dtype=float)
    bs_e = np.array([o[1].easting for o in occs if o[1] is not None], dtype=float)
    bs_n = np.array([o[1].northing for o in occs if o[1] is not None], dtype=float)
    # PIs and backsights far off (a near-half-turn curve's PI, a backsight kilometres away) would
    # shrink the job to a speck: they are drawn toward the frame, clipped, instead
    ext = _grow(ext, np.concatenate([pi_e, bs_e]), np.concatenate([pi_n, bs_n]), 0.35)
    v = View.fit(*ext)
    clip = "so-plan-clip"
    lab = Labeller()
    texts_lab, texts_num = _Text(), _Text()
    body: list[str] = [_frame()]
    x0, y0, x1, y1 = AREA
    # corners kept for the north arrow and the scale bar
    lab.block([[x1 - 34, y0, x1, y0 + 66], [x0, y1 - 34, x0 + 300, y1]])

    # tangents and PIs
    tang: list[str] = []
    pi_marks: list[str] = []
    if pis:
        ends = np.array([[c.pc_station, c.pt_station] for c in pis]).ravel()
        tn, te, _ = a.evaluate(ends, 0.0)
        tx, ty = v.x(te).reshape(-1, 2), v.y(tn).reshape(-1, 2)
        px, py = v.x(pi_e), v.y(pi_n)
        for k in range(len(pis)):
            tang.append(f"M{_n(tx[k, 0])},{_n(ty[k, 0])}L{_n(px[k])},{_n(py[k])}L{_n(tx[k, 1])},{_n(ty[k, 1])}")
            pi_marks.append(f"M{_n(px[k])},{_n(py[k] - 5)}l4.5,8h-9z")
        lab.block(np.column_stack([px - 5, py - 6, px + 5, py + 4]))
    body.append(f'<g clip-path="url(#{clip})">')
    if tang:
        body.append(f'<path class="so-tangent" d="{"".join(tang)}" fill="none" stroke="{TANGENT_COLOUR}" '
                    'stroke-width="0.7" '
                    'stroke-dasharray="6,3"/>')
    body.append("</g>")
    body.append(_alignment_lines(d, v, clip))

    # station ticks and labels
    length = a.length
    spacing = station_spacing(length, v.scale)
    if stn.equations:
        labelled = stn.interval_stations(spacing)
    else:
        k0 = math.ceil(a.start_station / spacing - 1e-9)
        k1 = math.floor(a.end_station / spacing + 1e-9)
        labelled = np.arange(k0, k1 + 1, dtype=float) * spacing
    labelled = labelled[(labelled >= a.start_station - 1e-9) & (labelled <= a.end_station + 1e-9)]
    staked = np.unique(sp.stations)
    minor = staked if staked.size <= TICK_MAX_STATIONS else np.zeros(0)
    offs = np.array([o for ol in job.staking.offsets for o in ol.all_offsets()] + [0.0])
    left_px, right_px = max(0.0, -offs.min()) * v.scale, max(0.0, offs.max()) * v.scale
    ticks: list[str] = []
    tick_lines: list[tuple[F, F]] = []  # vertices with NaN between ticks, for the labeller
    if minor.size:
        mn_, me_, maz = a.evaluate(minor, 0.0)
        nx, ny = _right_normal(maz)
        mx, my = v.x(me_), v.y(mn_)
        h = 3.0
        ticks.append("".join(f"M{_n(p - h * u)},{_n(q - h * w)}l{_n(2 * h * u)},{_n(2 * h * w)}"
                             for p, q, u, w in zip(mx.tolist(), my.tolist(), nx.tolist(), ny.tolist())))
        tick_lines.append(_tick_vertices(mx, my, nx, ny, h, h))
    station_labels: list[tuple[F, list[str], float, float, float, float]] = []
    if labelled.size:
        ln, le, laz = a.evaluate(labelled, 0.0)
        nx, ny = _right_normal(laz)
        lx, ly = v.x(le), v.y(ln)
        lo, hi = left_px + 4.0, right_px + 4.0
        ticks.append("".join(f"M{_n(p - lo * u)},{_n(q - lo * w)}L{_n(p + hi * u)},{_n(q + hi * w)}"
                             for p, q, u, w in zip(lx.tolist(), ly.tolist(), nx.tolist(), ny.tolist())))
        tick_lines.append(_tick_vertices(lx, ly, nx, ny, lo, hi))
        texts = [_round_label(t) for t in stn.labels(labelled)]
        for k, t in enumerate(texts):
            station_labels.append((labelled[k:k + 1], [t], float(lx[k]), float(ly[k]), float(nx[k]), float(ny[k])))
    body.append(f'<path d="{"".join(ticks)}" stroke="#222" stroke-width="0.7" fill="none"/>')
    # labels keep off the lines and the ticks
    along = np.append(np.arange(a.start_station, a.end_station, 0.8 / v.scale), a.end_station)
    for o in np.unique(offs).tolist():
        ln_, le_, _ = a.evaluate(along, o, miter=False)
        lab.block_polyline(v.x(le_), v.y(ln_))
    for tx_, ty_ in tick_lines:
        lab.block_polyline(tx_, ty_)

    # stakes
    n_st = len(sp)
    sx, sy = v.x(sp.easting), v.y(sp.northing)
    detail = n_st <= LABEL_MAX_STAKES
    r_stake = 1.9 if detail else 1.2
    m = sp.offsets.size
    code_of = np.tile(np.arange(m), sp.stations.size) if m else np.zeros(0, dtype=np.int64)
    keep = np.arange(n_st) if detail else _thin(sx, sy, THIN_CELL)
    stake_paths = []
    for j in range(m):
        sel = keep[code_of[keep] == j]
        colour = "#111" if sp.offsets[j] == 0.0 else CODE_COLOURS[j % len(CODE_COLOURS)]
        stake_paths.append(f'<path class="so-stake" d="{_circles(sx[sel], sy[sel], r_stake)}" fill="{colour}"/>')
    lab.block(np.column_stack([sx[keep] - r_stake - 0.3, sy[keep] - r_stake - 0.3, sx[keep] + r_stake + 0.3,
                               sy[keep] + r_stake + 0.3]))

    # key points: a ring on the centreline; label: features and station, with a leader
    kps = a.key_points
    kx = v.x([kp.easting for kp in kps])
    ky = v.y([kp.northing for kp in kps])
    kaz = a.evaluate(np.array([kp.station for kp in kps]), 0.0).azimuth
    knx, kny = _right_normal(kaz)
    lab.block(np.column_stack([kx - 4, ky - 4, kx + 4, ky + 4]))

    # control points: backsight lines, then each point once (a point occupied in one setup may be
    # the backsight of another): a ring for a backsight, a triangle for an occupied point, one label
    lines: list[str] = []
    ctrl_labels: list[tuple[float, float, str]] = []
    points: dict[str, tuple[float, float, list[str]]] = {}
    for occ, bs, bs_az in occs:
        ox, oy = v.xy1(occ.easting, occ.northing)
        points.setdefault(occ.id, (ox, oy, []))[2].append("occupied")
        if bs is not None:
            bx, by = v.xy1(bs.easting, bs.northing)
        else:
            r = math.radians(bs_az)
            bx, by = ox + 120 * math.sin(r), oy - 120 * math.cos(r)
        lines.append(f"M{_n(ox)},{_n(oy)}L{_n(bx)},{_n(by)}")
        if bs is not None and _inside_frame(bx, by, 6.0):
            points.setdefault(bs.id, (bx, by, []))[2].append("backsight")
        elif bs is not None:  # off the sheet: say where the line goes, where it leaves the frame
            fx, fy = _to_frame(ox, oy, bx, by, 10.0)
            dist = math.hypot(bs.easting - occ.easting, bs.northing - occ.northing)
            ctrl_labels.append((fx, fy, f"to {bs.id} backsight, {dist:,.2f} {unit.symbol}"))
        else:
            ctrl_labels.append((bx, by, f"backsight {format_dms(bs_az, 0)}"))
    ctrl: list[str] = []
    if lines:
        ctrl.append(f'<path class="so-backsight" d="{"".join(lines)}" stroke="{CONTROL_COLOUR}" stroke-width="0.9" '
                    'stroke-dasharray="8,3,2,3" fill="none"/>')
    for pid, (px_, py_, roles) in points.items():
        if "backsight" in roles:
            ctrl.append(f'<circle cx="{_n(px_)}" cy="{_n(py_)}" r="4" fill="#fff" stroke="{CONTROL_COLOUR}" '
                        f'stroke-width="1.2"/><circle cx="{_n(px_)}" cy="{_n(py_)}" r="1.2" fill="{CONTROL_COLOUR}"/>')
        if "occupied" in roles:
            ctrl.append(f'<path d="M{_n(px_)},{_n(py_ - 6)}l5.2,9h-10.4z" fill="{CONTROL_COLOUR}"/>')
        lab.block([[px_ - 6, py_ - 7, px_ + 6, py_ + 5]])
        ctrl_labels.insert(0, (px_, py_, f"{pid} {', '.join(dict.fromkeys(roles))}"))

    body.append(_grid_ticks(v, lab))

    # ---- labels, most important first ----
    leaders: list[str] = []
    centre = (v.cx, v.cy)
    for px_, py_, text in ctrl_labels:
        dirx, diry = px_ - centre[0], py_ - centre[1]
        norm = math.hypot(dirx, diry) or 1.0
        w = np.array([_text_width(text, FONT_LABEL) + 2.0])
        hh = np.array([FONT_LABEL * 1.15 + 1.0])
        boxes = _around_boxes(np.array([px_]), np.array([py_]), w, hh, 5.0, np.array([[dirx / norm, diry / norm]]))
        k = lab.place(boxes[0])
        if k >= 0:
            _draw_label(texts_lab, boxes[0, k], [text], FONT_LABEL)
    if stn.equations:  # station equations: marked on the centreline, labelled back = ahead
        eq_at = np.array([eq.internal for eq in stn.equations])
        qn, qe, qaz = a.evaluate(eq_at, 0.0)
        eqx, eqy = v.x(qe), v.y(qn)
        qnx, qny = _right_normal(qaz)
        lab.block(np.column_stack([eqx - 4, eqy - 4, eqx + 4, eqy + 4]))
        for k, eq in enumerate(stn.equations):
            text = f"EQ {stn.format_value(eq.back)} BK = {stn.format_value(eq.ahead)} AH"
            placed = _place_on_normal(lab, float(eqx[k]), float(eqy[k]), float(qnx[k]), float(qny[k]), [text],
                                      FONT_LABEL, (right_px + 8.0, left_px + 8.0))
            if placed is not None:
                _draw_label(texts_lab, placed[0], [text], FONT_LABEL)
                leaders.append(f"M{_n(float(eqx[k]))},{_n(float(eqy[k]))}L{_n(placed[1][0])},{_n(placed[1][1])}")
        eq_marks = "".join(f"M{_n(p - 3.5)},{_n(q)}l3.5,-3.5l3.5,3.5l-3.5,3.5z" for p, q in zip(eqx.tolist(), eqy.tolist()))
        body_eq = f'<path class="so-eq" d="{eq_marks}" fill="#fff" stroke="{CL_COLOUR}" stroke-width="1.1"/>'
    else:
        body_eq = ""
    st_shown = 0
    for _, lines, px_, py_, u, w_ in station_labels:  # on the left of the line, else on the right
        placed = _place_on_normal(lab, px_, py_, -u, -w_, lines, FONT_LABEL, (left_px + 6.0, right_px + 6.0),
                                  steps=2)
        if placed is not None:
            _draw_label(texts_lab, placed[0], lines, FONT_LABEL)
            st_shown += 1

    kp_shown = 0
    for i, kp in enumerate(kps):
        text = f"{' '.join(kp.features)} {_round_label(stn.label(kp.station))}"
        placed = _place_on_normal(lab, float(kx[i]), float(ky[i]), float(knx[i]), float(kny[i]), [text], FONT_LABEL,
                                  (right_px + 8.0, left_px + 8.0))
        if placed is not None:
            box, (qx, qy) = placed
            _draw_label(texts_lab, box, [text], FONT_LABEL)
            leaders.append(f"M{_n(float(kx[i]))},{_n(float(ky[i]))}L{_n(qx)},{_n(qy)}")
            lab.block_polyline(np.array([float(kx[i]), qx]), np.array([float(ky[i]), qy]))
            kp_shown += 1
    for k, c in enumerate(pis):
        ct = cts[c.number]
        radii = " / ".join(f"{arc.radius:.2f}" for arc, _, _ in ct.arcs)
        lines = [f"PI {c.number}  {_round_label(ct.pi_label)}", f"I {ct.delta} {'RT' if c.turn > 0 else 'LT'}"]
        if radii:
            lines.append(f"R {radii}")
        mid = a.evaluate(np.array([(c.pc_station + c.pt_station) / 2]), 0.0)
        mx_, my_ = float(v.x(mid.easting)[0]), float(v.y(mid.northing)[0])
        dx, dy = float(px[k]) - mx_, float(py[k]) - my_
        norm = math.hypot(dx, dy) or 1.0
        w = np.array([max(_text_width(t, FONT_LABEL) for t in lines) + 2.0])
        hh = np.array([len(lines) * FONT_LABEL * 1.15 + 1.0])
        boxes = _around_boxes(np.array([float(px[k])]), np.array([float(py[k])]), w, hh, 6.0,
                              np.array([[dx / norm, dy / norm]]))
        j = lab.place(boxes[0])
        if j >= 0:
            _draw_label(texts_lab, boxes[0, j], lines, FONT_LABEL)
    # stake numbers, spread evenly: coarse-to-fine over stations, outer offsets first
    num_shown = 0
    if detail and n_st:
        ids = sp.point
        st_idx = np.repeat(np.arange(sp.stations.size), m)
        low = st_idx & -st_idx
        level = np.where(st_idx == 0, 64, np.log2(np.maximum(low, 1)).astype(np.int64))
        order = np.lexsort((np.arange(n_st), -np.abs(sp.offset), -level))
        w = np.array([_text_width(t, FONT_STAKE) + 1.5 for t in ids])
        hh = np.full(n_st, FONT_STAKE * 0.78 + 1.5)
        ux, uy = _right_normal(np.repeat(a.evaluate(sp.stations, 0.0).azimuth, m))
        side = np.where(sp.offset < 0, -1.0, 1.0)
        boxes = _around_boxes(sx, sy, w, hh, r_stake, np.column_stack([ux * side, uy * side]))
        ok = lab.free(boxes) if boxes.size > PREFILTER_MIN * 4 else np.ones(boxes.shape[:2], dtype=bool)
        for i in order.tolist():
            if not ok[i].any():
                continue
            k = lab.place(boxes[i], ok[i])
            if k >= 0:
                b = boxes[i, k]
                texts_num.add((b[0] + b[2]) / 2, b[3] - 0.75 - 0.5, ids[i])
                num_shown += 1

    body.append('<g clip-path="url(#' + clip + ')">' + "".join(stake_paths))
    if pi_marks:
        body.append(f'<path class="so-pi" d="{"".join(pi_marks)}" fill="#fff" stroke="{TANGENT_COLOUR}" '
                    'stroke-width="1.1"/>')
    body.append(body_eq)
    rings = _thin(kx, ky, 8.0) if kx.size else np.zeros(0, dtype=np.int64)  # one ring where many coincide
    body.append(f'<path class="so-key" d="{_circles(kx[rings], ky[rings], 3.2)}" fill="none" stroke="{CL_COLOUR}" '
                'stroke-width="1.2"/>')
    body.append("".join(ctrl) + "</g>")
    if leaders:
        body.append(f'<path d="{"".join(leaders)}" stroke="#444" stroke-width="0.6" fill="none"/>')
    body.append('<g class="so-num">' + "".join(texts_num.items) + "</g>")
    body.append('<g class="so-lab">' + "".join(texts_lab.items) + "</g>")
    body.append(_north_arrow(x1 - 17, y0 + 6))
    bar, _ = _scale_bar(x0 + 14, y1 - 8, v, unit.symbol)
    body.append(bar)

    # ---- the panel ----
    pan = _Panel()
    pan.heading("PLAN", 15.0)
    for t in _wrap(job.info.name, 40):
        pan.line(t)
    pan.line(f"alignment {a.name}")
    pan.gap()
    pan.heading("LEGEND", 11.0)
    pan.symbol(f'<path d="M0,0h28" stroke="{CL_COLOUR}" stroke-width="1.6"/>', "centreline")
    pan.symbol(f'<path d="M0,0h28" stroke="{OFFSET_COLOUR}" stroke-width="0.8"/>', "offset line")
    for j, code in enumerate(sp.codes):
        colour = "#111" if sp.offsets[j] == 0.0 else CODE_COLOURS[j % len(CODE_COLOURS)]
        o = float(sp.offsets[j])
        where = "" if o == 0 else (" LT" if o < 0 else " RT")
        size = f"{abs(o):.2f}"
        if sp.point_offsets is not None:  # a widened line: the range of its offsets
            each = np.abs(sp.point_offsets[j::sp.offsets.size])
            if each.size and each.min() != each.max():
                size = f"{each.min():.2f}-{each.max():.2f}"
        pan.symbol(f'<circle cx="14" cy="0" r="2.2" fill="{colour}"/>', f"stake {code} {size}{where}")
    pan.symbol(f'<circle cx="14" cy="0" r="3.2" fill="none" stroke="{CL_COLOUR}" stroke-width="1.2"/>',
               "key point (feature, station)")
    if pis:
        pan.symbol(f'<path d="M0,0h28" stroke="{TANGENT_COLOUR}" stroke-width="0.7" stroke-dasharray="6,3"/>'
                   f'<path d="M14,-5l4.5,8h-9z" fill="#fff" stroke="{TANGENT_COLOUR}"/>', "PI and tangents")
    if stn.equations:
        pan.symbol(f'<path d="M10.5,0l3.5,-3.5l3.5,3.5l-3.5,3.5z" fill="#fff" stroke="{CL_COLOUR}"/>',
                   "station equation (back = ahead)")
    pan.symbol('<path d="M14,-5v10M8,0h12" stroke="#222" stroke-width="0.7"/>',
               f"station tick; labels every {_g(spacing)} {unit.symbol}")
    if occs:
        pan.symbol(f'<path d="M14,-6l5.2,9h-10.4z" fill="{CONTROL_COLOUR}"/>', "occupied point")
        pan.symbol(f'<path d="M0,0h28" stroke="{CONTROL_COLOUR}" stroke-dasharray="8,3,2,3"/>'
                   f'<circle cx="24" cy="0" r="3.5" fill="#fff" stroke="{CONTROL_COLOUR}"/>', "backsight")
    pan.gap()
    pan.heading("CURVES", 11.0)
    if not cts:
        pan.line("(no curves)")
    for ct in list(cts.values())[:12]:
        c = ct.curve
        pan.line(f"{c.number}: {turn_word(c.turn)}, I {ct.delta}" + (f", PI {ct.pi_label}" if c.pi_station is not None
                                                                        else ""))
        for arc, _, _ in ct.arcs:
            pan.line(f"R {arc.radius:.3f}  L {arc.length:.3f}", indent=3)
        for spi, s0, s1 in ct.spirals:
            pan.line(f"spiral L {spi.length:.3f}  {s0} to {s1}", indent=3)
    if len(cts) > 12:
        pan.line(f"... {len(cts) - 12} more curves: see curves.csv")
    pan.gap()
    pan.heading("NOTES", 11.0)
    notes = _plan_notes(d, detail, len(keep), num_shown, kp_shown, len(kps), st_shown, labelled.size)
    for t in notes:
        pan.line(t)
    block = _title_block([
        ("job", job.info.name),
        ("job file", Path(job.path).name),
        ("sha256", _short_hash(job.sha256) + "..."),
        ("units", unit.label),
        ("CRS", d.crs_label or "none: local grid"),
        ("stations", f"{stn.label(a.start_station)} to {stn.label(a.end_station)}, {len(sp):,} stakes"),
        ("drawn", (f"{len(keep):,} marks for {n_st:,} stakes (thinned), no point numbers" if not detail else
                   f"point numbers {num_shown:,} of {n_st:,} (no overprinting)")),
        ("north", "grid north, up the sheet"),
    ], SHEET_HEIGHT - MARGIN)
    title = f"Plan of {a.name}: {job.info.name}"
    return (_svg_open(title, clip) + "".join(body) + pan.svg() + block + "</svg>")


def _place_on_normal(lab: Labeller, x: float, y: float, nx: float, ny: float, lines: list[str], size: float,
                     reach: tuple[float, float], steps: int = 3) -> tuple[tuple[float, ...], tuple[float, float]] | None:
    """Place a label off (x, y) along the canvas direction (nx, ny), its nearest edge or
    corner ``reach[0]`` away, stepping outward, then on the other side past ``reach[1]``.
    Returns the box and the end of its leader (where the ray meets the box), or None.
    """
    w = max(_text_width(t, size) for t in lines) + 2.0
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


def _grid_ticks(v: View, lab: Labeller) -> str:
    """Grid coordinates along the frame: ticks at a round spacing, eastings along the top,
    northings down the left side (the labeller keeps their text free).
    """
    x0, y0, x1, y1 = AREA
    step = nice_length(170.0 / v.scale)
    e_lo, e_hi = v.e0 + (x0 - v.cx) / v.scale, v.e0 + (x1 - v.cx) / v.scale
    n_lo, n_hi = v.n0 - (y1 - v.cy) / v.scale, v.n0 - (y0 - v.cy) / v.scale
    es = np.arange(math.ceil(e_lo / step), math.floor(e_hi / step) + 1) * step
    ns = np.arange(math.ceil(n_lo / step), math.floor(n_hi / step) + 1) * step
    d: list[str] = []
    texts = _Text()
    size = 7.5
    for e, x in zip(es.tolist(), v.x(es).tolist()):
        if not x0 + 70 < x < x1 - 70:
            continue
        d.append(f"M{_n(x)},{_n(y0)}v6M{_n(x)},{_n(y1)}v-6")
        t = f"E {e:,.{_decimals(step)}f}"
        box = (x + 2, y0 + 1, x + 3 + _text_width(t, size), y0 + 2 + size)
        if lab.place(np.array([box])) == 0:
            texts.add(box[0], box[3] - 1.5, t, anchor="start")
    for n, y in zip(ns.tolist(), v.y(ns).tolist()):
        if not y0 + 70 < y < y1 - 40:
            continue
        d.append(f"M{_n(x0)},{_n(y)}h6M{_n(x1)},{_n(y)}h-6")
        t = f"N {n:,.{_decimals(step)}f}"
        box = (x0 + 2, y - 2 - size, x0 + 3 + _text_width(t, size), y - 1)
        if lab.place(np.array([box])) == 0:
            texts.add(box[0] + 0.5, box[3] - 1.5, t, anchor="start")
    return (f'<path d="{"".join(d)}" stroke="#222" stroke-width="0.7"/><g class="so-grid">'
            + "".join(texts.items) + "</g>")


def _decimals(step: float) -> int:
    """Decimals a round step needs (0 for 100, 1 for 0.5)."""
    return max(0, -int(math.floor(math.log10(step) + 1e-9))) if step < 1 else 0


def _tick_vertices(x: F, y: F, nx: F, ny: F, lo: float, hi: float) -> tuple[F, F]:
    """Vertices of ticks square to the line (``lo`` to the left, ``hi`` to the right), NaN between them."""
    nan = np.full(x.size, np.nan)
    vx = np.column_stack([x - lo * nx, x + hi * nx, nan]).ravel()
    vy = np.column_stack([y - lo * ny, y + hi * ny, nan]).ravel()
    return vx, vy


def _inside_frame(x: float, y: float, inset: float) -> bool:
    x0, y0, x1, y1 = AREA
    return x0 + inset <= x <= x1 - inset and y0 + inset <= y <= y1 - inset


def _to_frame(x: float, y: float, x2: float, y2: float, inset: float) -> tuple[float, float]:
    """Where the segment from (x, y) inside the drawing toward (x2, y2) meets the frame (inset)."""
    x0, y0, x1, y1 = AREA
    t = 1.0
    dx, dy = x2 - x, y2 - y
    for lo, hi, p, dp in ((x0 + inset, x1 - inset, x, dx), (y0 + inset, y1 - inset, y, dy)):
        if dp > 0:
            t = min(t, (hi - p) / dp)
        elif dp < 0:
            t = min(t, (lo - p) / dp)
    t = max(t, 0.0)
    return x + t * dx, y + t * dy


def _plan_notes(d: Design, detail: bool, marks: int, shown: int, kp_shown: int, kp_count: int, st_shown: int,
                st_count: int) -> list[str]:
    n = len(d.stakes)
    out = []
    if not detail:
        out.append(f"{n:,} stakes: drawn thinned to {marks:,} marks (one per {THIN_CELL:g} units of the sheet); "
                   f"point numbers are not drawn over {LABEL_MAX_STAKES:,} stakes; every stake is in points.csv")
    elif shown < n:
        out.append(f"point numbers: {shown:,} of {n:,} shown; the others would overprint at this scale "
                   "(every number is in points.csv and the report)")
    else:
        out.append(f"point numbers: all {n:,} shown")
    if kp_shown < kp_count:
        out.append(f"key-point labels: {kp_shown} of {kp_count} shown (no room for the rest)")
    if st_shown < st_count:
        out.append(f"station labels: {st_shown} of {st_count} shown (no room for the rest)")
    for w in d.warnings:
        out.append(f"warning: {w}")
    return out


def plan_svg(d: Design) -> bytes:
    """Render ``plan.svg``: the plan picture as a standalone SVG file."""
    return ('<?xml version="1.0" encoding="UTF-8"?>\n' + plan_svg_element(d) + "\n").encode("utf-8")


# ---- the residual picture of a check ----------------------------------------------------------
#: Radius of the tolerance circle drawn at the exaggeration chosen (canvas units).
TOLERANCE_RADIUS = 16.0
#: Longest residual arrow, in tolerance radii; longer ones are cut and marked.
ARROW_CAP = 4.0


def exaggeration(tolerance: float, scale: float) -> float:
    """A round factor (1, 2 or 5 times a power of ten, at least 1) that draws the
    tolerance about :data:`TOLERANCE_RADIUS` canvas units long.

    Parameters
    ----------
    tolerance : float
        Horizontal tolerance, job units.
    scale : float
        Canvas units per job unit.
    """
    raw = TOLERANCE_RADIUS / max(tolerance * scale, 1e-12)
    return max(1.0, nice_length(raw))


def residual_svg_element(d: Design, shots: "Shots", r: "CheckResult", staked_name: str) -> tuple[str, float]:
    """The residual picture of a check as an ``<svg>`` element, and the exaggeration used.

    Each matched shot is an arrow from its design point (or, for a check shot
    on control, its control point) toward where it was staked, the residual
    drawn ``factor`` times its length, coloured by its status; a light circle
    of the horizontal tolerance (also times ``factor``) rings each point
    shot; an unmatched shot is a cross at its own position.  Arrows are drawn status by status, in file order within
    each; arrows longer than :data:`ARROW_CAP` tolerance circles are cut to
    that length, marked and labelled with their horizontal error.
    """
    job, unit, design = d.job, d.unit, d.stakes
    # a shot matched to a design or a control point has its residual; the arrow starts at that point
    matched = np.isfinite(r.d_northing) & np.isfinite(r.d_easting)
    de_e = shots.easting - np.where(matched, r.d_easting, 0.0)
    de_n = shots.northing - np.where(matched, r.d_northing, 0.0)
    # the matched shots and their design points set the view; an unmatched shot far off (a blunder,
    # a point of another job) would shrink it to a speck: it is shown at the frame, pointed to
    if matched.any():
        ext = _extent([shots.easting[matched], de_e[matched]], [shots.northing[matched], de_n[matched]])
        ext = _grow(ext, shots.easting[~matched], shots.northing[~matched], 0.35)
    else:
        ext = _extent([shots.easting], [shots.northing])
    size = max(ext[2] - ext[0], ext[3] - ext[1])
    least = max(20.0 * r.horizontal_tolerance, 1.0)
    if size < least:  # one shot, or a few close together: show some room around them
        ce, cn = (ext[0] + ext[2]) / 2, (ext[1] + ext[3]) / 2
        ext = (ce - least / 2, cn - least / 2, ce + least / 2, cn + least / 2)
    v = View.fit(*ext)
    factor = exaggeration(r.horizontal_tolerance, v.scale)
    clip = "so-check-clip"
    lab = Labeller()
    x0, y0, x1, y1 = AREA
    lab.block([[x1 - 34, y0, x1, y0 + 66], [x0, y1 - 34, x0 + 300, y1]])
    body = [_frame(), _alignment_lines(d, v, clip, 1.0)]
    # design points: small grey marks
    dx_all, dy_all = v.x(design.easting), v.y(design.northing)
    inside = (dx_all > x0) & (dx_all < x1) & (dy_all > y0) & (dy_all < y1)
    grey = np.where(inside)[0]
    if grey.size > LABEL_MAX_STAKES:
        grey = grey[_thin(dx_all[grey], dy_all[grey], THIN_CELL)]
    body.append(f'<g clip-path="url(#{clip})"><path d="{_circles(dx_all[grey], dy_all[grey], 1.2)}" fill="#aaa"/>')
    rad = r.horizontal_tolerance * factor * v.scale
    mx, my = v.x(de_e), v.y(de_n)
    ring = np.flatnonzero(matched)
    ring = ring[_thin(mx[ring], my[ring], 0.05 if ring.size <= LABEL_MAX_STAKES else THIN_CELL)] if ring.size \
        else ring  # one circle per point shot (thinned at corridor scale)
    body.append(f'<path d="{_circles(mx[ring], my[ring], rad)}" fill="none" '
                'stroke="#9ecae1" stroke-width="0.7"/>')
    status = np.array(r.status, dtype=object)
    dxs = np.where(matched, r.d_easting, 0.0) * factor * v.scale
    dys = -np.where(matched, r.d_northing, 0.0) * factor * v.scale
    length = np.hypot(dxs, dys)
    cap = ARROW_CAP * max(rad, 1.0)
    cut = length > cap
    k = np.where(cut, cap / np.maximum(length, 1e-12), 1.0)
    tx, ty = mx + dxs * k, my + dys * k
    statuses = list(dict.fromkeys(list(STATUS_COLOURS) + sorted(set(r.status))))
    for s in statuses:
        sel = np.where((status == s) & matched)[0]
        if sel.size > LABEL_MAX_STAKES and s not in ("out", "duplicate"):  # corridor scale: thinned, as the plan
            sel = sel[_thin(mx[sel], my[sel], THIN_CELL)]  # (shots needing attention are all drawn)
        if sel.size == 0:
            continue
        colour = STATUS_COLOURS.get(s, "#000")
        body.append(f'<path class="so-arrow so-status-{escape(s)}" d="{_arrows(mx[sel], my[sel], tx[sel], ty[sel])}" '
                    f'stroke="{colour}" stroke-width="1.1" '
                    f'fill="none"/><path d="{_heads(mx[sel], my[sel], tx[sel], ty[sel])}" fill="{colour}"/>')
    if cut.any():
        c = np.where(cut & matched)[0]
        ux, uy = (tx[c] - mx[c]) / cap, (ty[c] - my[c]) / cap
        marks = "".join(f"M{_n(p - 0.55 * cap * a_ + 3 * b_)},{_n(q - 0.55 * cap * b_ - 3 * a_)}l{_n(-6 * b_)},"
                        f"{_n(6 * a_)}" for p, q, a_, b_ in zip(tx[c].tolist(), ty[c].tolist(), ux.tolist(),
                                                                 uy.tolist()))
        body.append(f'<path d="{marks}" stroke="#000" stroke-width="1.2"/>')
    um = np.where(~matched)[0]
    off_sheet: list[tuple[float, float, str]] = []
    if um.size:
        ux_, uy_ = v.x(shots.easting[um]), v.y(shots.northing[um])
        crosses = "".join(f"M{_n(p - 4)},{_n(q - 4)}l8,8m0,-8l-8,8" for p, q in zip(ux_.tolist(), uy_.tolist()))
        body.append(f'<path d="{crosses}" stroke="{STATUS_COLOURS["unmatched"]}" stroke-width="1.4"/>')
        for k, p, q in zip(um.tolist(), ux_.tolist(), uy_.tolist()):
            if not _inside_frame(p, q, 6.0):
                fx, fy = _to_frame(v.cx, v.cy, p, q, 12.0)
                dist = math.hypot(p - fx, q - fy) / v.scale
                off_sheet.append((fx, fy, f"{shots.point[k]} unmatched: {dist:,.1f} {unit.symbol} off the sheet"))
    body.append("</g>")
    for fx, fy, _ in off_sheet:  # an arrowhead at the frame toward each shot off the sheet
        dx, dy = fx - v.cx, fy - v.cy
        far = math.hypot(dx, dy) or 1.0
        head = _heads(np.array([fx - 10 * dx / far]), np.array([fy - 10 * dy / far]), np.array([fx]),
                      np.array([fy]), 7.0)
        body.append(f'<path d="{head}" fill="{STATUS_COLOURS["unmatched"]}"/>')
    # labels: shots needing attention first, then the rest while there is room
    lab.block(np.column_stack([mx[matched] - 2, my[matched] - 2, mx[matched] + 2, my[matched] + 2]))
    lab.block(np.column_stack([np.minimum(mx, tx)[matched] - 1, np.minimum(my, ty)[matched] - 1,
                               np.maximum(mx, tx)[matched] + 1, np.maximum(my, ty)[matched] + 1]))
    px = np.where(matched, tx, v.x(shots.easting))
    py = np.where(matched, ty, v.y(shots.northing))
    rank = np.array([0 if s == "out" else 1 if s in ("duplicate", "unmatched") else 3 if s == "ok" else 2
                     for s in r.status], dtype=np.int64)
    order = np.lexsort((np.arange(len(shots)), rank))
    texts = _Text()
    for fx, fy, text in off_sheet:
        w1 = np.array([_text_width(text, FONT_STAKE) + 1.5])
        h1 = np.array([FONT_STAKE * 0.78 + 1.5])
        toward = np.array([[v.cx - fx, v.cy - fy]]) / (math.hypot(v.cx - fx, v.cy - fy) or 1.0)
        bx = _around_boxes(np.array([fx]), np.array([fy]), w1, h1, 4.0, toward)
        j = lab.place(bx[0])
        if j >= 0:
            b = bx[0, j]
            texts.add((b[0] + b[2]) / 2, b[3] - 1.25, text, extra=f' fill="{STATUS_COLOURS["unmatched"]}"')
    shown = 0
    names = [p if s == "ok" or not matched[i] or not cut[i] else f"{p} ({r.horizontal_error[i]:.3f})"
             for i, (p, s) in enumerate(zip(shots.point, r.status))]
    w = np.array([_text_width(t, FONT_STAKE) + 1.5 for t in names])
    hh = np.full(len(shots), FONT_STAKE * 0.78 + 1.5)
    out_dir = np.column_stack([tx - mx, ty - my])
    norm = np.hypot(out_dir[:, 0], out_dir[:, 1])
    out_dir = np.where(norm[:, None] > 0, out_dir / np.maximum(norm, 1e-12)[:, None], np.array([1.0, 0.0]))
    boxes = _around_boxes(px, py, w, hh, 2.0, out_dir)
    ok = lab.free(boxes) if boxes.size > PREFILTER_MIN * 4 else np.ones(boxes.shape[:2], dtype=bool)
    for i in order.tolist():
        if not ok[i].any():
            continue
        j = lab.place(boxes[i], ok[i])
        if j >= 0:
            b = boxes[i, j]
            colour = STATUS_COLOURS.get(r.status[i], "#000")
            texts.add((b[0] + b[2]) / 2, b[3] - 1.25, names[i], extra=f' fill="{colour}"')
            shown += 1
    body.append('<g class="so-num">' + "".join(texts.items) + "</g>")
    body.append(_north_arrow(x1 - 17, y0 + 6))
    bar, _ = _scale_bar(x0 + 14, y1 - 8, v, unit.symbol)
    body.append(bar)

    pan = _Panel()
    pan.heading("STAKED-POINT CHECK", 14.0)
    for t in _wrap(job.info.name, 40):
        pan.line(t)
    pan.line(f"staked file {staked_name}")
    pan.gap()
    pan.heading("LEGEND", 11.0)
    counts = r.counts()
    for s in statuses:
        n_s = sum(1 for t in r.status if t == s)
        if s not in counts and n_s == 0:
            continue
        colour = STATUS_COLOURS.get(s, "#000")
        sym = (f'<path d="M4,4l8,-8m0,8l-8,-8" stroke="{colour}" stroke-width="1.4" transform="translate(6,0)"/>'
               if s == "unmatched" else f'<path d="M2,3L22,-3" stroke="{colour}" stroke-width="1.1"/>'
               f'<path d="{_heads(np.array([2.0]), np.array([3.0]), np.array([22.0]), np.array([-3.0]))}" '
               f'fill="{colour}"/>')
        pan.symbol(sym, f"{s}: {n_s}")
    pan.symbol('<circle cx="14" cy="0" r="1.2" fill="#aaa"/>', "design point")
    pan.symbol('<circle cx="14" cy="0" r="4.5" fill="none" stroke="#9ecae1"/>',
               f"tolerance {r.horizontal_tolerance:g} {unit.symbol} (x{_g(factor)})")
    pan.gap()
    pan.heading("EXAGGERATION", 11.0)
    pan.line(f"arrows: design point to staked point, the residual drawn {_g(factor)} times its length "
             f"(x{_g(factor)}); positions of points at the scale of the bar")
    if cut.any():
        pan.line(f"arrows longer than {ARROW_CAP:g} tolerance circles are cut (marked /) and labelled "
                 "with their horizontal error")
    res_len = nice_length(60.0 / (factor * v.scale))
    res_w = res_len * factor * v.scale
    pan.gap(4)
    pan.symbol(f'<path d="M0,3v-6M0,0h{_n(res_w)}M{_n(res_w)},3v-6" stroke="#222" stroke-width="1"/>', "")
    pan.line(f"residual {_g(res_len)} {unit.symbol} drawn x{_g(factor)}")
    pan.gap()
    pan.heading("NOTES", 11.0)
    pan.line(f"shot numbers: {shown} of {len(shots)} shown" + ("" if shown == len(shots) else
                                                               " (attention first; the rest would overprint)"))
    pan.line(f"design points not staked: {len(r.not_staked)}")
    verdict = "ALL WITHIN TOLERANCE" if r.all_ok else "NEEDS ATTENTION"
    tol = f"horizontal {r.horizontal_tolerance:g}" + (f", vertical {r.vertical_tolerance:g}"
                                                      if r.vertical_tolerance is not None else "")
    block = _title_block([
        ("verdict", verdict),
        ("job", job.info.name),
        ("job file", Path(job.path).name),
        ("sha256", _short_hash(job.sha256) + "..."),
        ("staked", staked_name),
        ("tolerance", f"{tol} {unit.symbol}"),
        ("units", unit.label),
        ("CRS", d.crs_label or "none: local grid"),
    ], SHEET_HEIGHT - MARGIN)
    title = f"Residuals of the staked points: {job.info.name}"
    return _svg_open(title, clip) + "".join(body) + pan.svg() + block + "</svg>", factor


def _arrows(x0: F, y0: F, x1: F, y1: F) -> str:
    return "".join(f"M{_n(a)},{_n(b)}L{_n(c)},{_n(e)}"
                   for a, b, c, e in zip(x0.tolist(), y0.tolist(), x1.tolist(), y1.tolist()))


def _heads(x0: F, y0: F, x1: F, y1: F, size: float = 4.5) -> str:
    """Arrowheads at (x1, y1) pointing away from (x0, y0) (vectorised; none on zero-length arrows)."""
    dx, dy = x1 - x0, y1 - y0
    ln = np.hypot(dx, dy)
    ok = ln > 0.5
    ux, uy = dx[ok] / ln[ok], dy[ok] / ln[ok]
    bx, by = x1[ok] - ux * size, y1[ok] - uy * size
    w = size * 0.45
    return "".join(f"M{_n(p)},{_n(q)}L{_n(s + w * v_)},{_n(t - w * u)}L{_n(s - w * v_)},{_n(t + w * u)}z"
                   for p, q, s, t, u, v_ in zip(x1[ok].tolist(), y1[ok].tolist(), bx.tolist(), by.tolist(),
                                               ux.tolist(), uy.tolist()))
