"""The sheet around a drawing: frame, style, north arrow, scale bar, grid ticks on the
frame, the panel on the right and the title block.
"""

from __future__ import annotations

import math
from html import escape

import numpy as np

from .canvas import (AREA, CHAR_EM, FONT_LABEL, FONT_PANEL, FONT_STAKE, MARGIN, MONO, PANEL_WIDTH, SANS, SHEET_HEIGHT,
                     SHEET_WIDTH, View, fmt_short, num, text_width, wrap_text, nice_length)
from .labels import Labeller, TextGroup

__all__ = [
    "north_arrow", "scale_bar", "Panel", "title_block", "frame_rect", "svg_open", "grid_ticks",
]


def north_arrow(x: float, y: float) -> str:
    """A north arrow whose tip is at (x, y)."""
    return (f'<g class="so-north"><rect x="{num(x - 16)}" y="{num(y - 4)}" width="32" height="58" fill="#fff" '
            f'fill-opacity="0.85"/><path d="M{num(x)},{num(y + 6)} l-9,30 l9,-7 l9,7 z" fill="#222"/>'
            f'<path d="M{num(x)},{num(y + 6)} l9,30 l-9,-7 z" fill="#fff" stroke="#222" stroke-width="0.8"/>'
            f'<text x="{num(x)}" y="{num(y + 50)}" font-family="{SANS}" font-size="11" font-weight="bold" '
            f'text-anchor="middle">N</text></g>')


def scale_bar(x: float, y: float, v: View, symbol: str) -> tuple[str, float]:
    """A scale bar of a round length from (x, y) (its bottom left); returns the SVG and its width."""
    length = nice_length(190.0 / v.scale)
    w = length * v.scale
    half = w / 2
    parts = [f'<g class="so-scale"><rect x="{num(x - 4)}" y="{num(y - 24)}" width="{num(w + 60)}" height="30" '
             f'fill="#fff" fill-opacity="0.85"/>',
             f'<rect x="{num(x)}" y="{num(y - 6)}" width="{num(half)}" height="5" fill="#222" stroke="#222" '
             f'stroke-width="0.6"/>',
             f'<rect x="{num(x + half)}" y="{num(y - 6)}" width="{num(half)}" height="5" fill="#fff" stroke="#222" '
             f'stroke-width="0.6"/>']
    for k, at in enumerate((0.0, half, w)):
        value = fmt_short(length * k / 2)
        parts.append(f'<text x="{num(x + at)}" y="{num(y - 10)}" font-family="{SANS}" font-size="9" '
                     f'text-anchor="middle">{value}{" " + escape(symbol) if k == 2 else ""}</text>')
    parts.append("</g>")
    return "".join(parts), w + 60


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


class Panel:
    """The panel right of the drawing: text lines and legend rows, top down."""

    X0 = SHEET_WIDTH - PANEL_WIDTH
    CHARS = int((PANEL_WIDTH - 2 * MARGIN - 4) / (CHAR_EM * FONT_PANEL))

    def __init__(self) -> None:
        self.y = MARGIN + 6.0
        self.parts: list[str] = []

    @classmethod
    def opening(cls, title: str, size: float, name: str, line: str) -> "Panel":
        """A panel opening with its title, the job's name, one line about the picture and the
        legend's heading.
        """
        pan = cls()
        pan.heading(title, size)
        for t in wrap_text(name, 40):
            pan.line(t)
        pan.line(line)
        pan.gap()
        pan.heading("LEGEND", 11.0)
        return pan

    @property
    def x(self) -> float:
        return self.X0 + 8.0

    def heading(self, text: str, size: float = 12.0) -> None:
        self.y += size + 4
        self.parts.append(f'<text class="h" x="{num(self.x)}" y="{num(self.y)}" font-size="{size}px">'
                          f"{escape(text)}</text>")
        self.y += 3

    def line(self, text: str, indent: int = 0, colour: str = "") -> None:
        for k, t in enumerate(wrap_text(text, self.CHARS - indent - 2)):
            self.y += FONT_PANEL * 1.25
            fill = f' fill="{colour}"' if colour else ""
            pad = indent + (2 if k else 0)
            self.parts.append(f'<text x="{num(self.x + pad * CHAR_EM * FONT_PANEL)}" y="{num(self.y)}"{fill}>'
                              f"{escape(t)}</text>")

    def symbol(self, svg: str, text: str) -> None:
        """A legend row: a symbol drawn in a 28 x 10 box at (0, 0), then its text."""
        self.y += FONT_PANEL * 1.45
        self.parts.append(f'<g transform="translate({num(self.x)},{num(self.y - 3.5)})">{svg}</g>')
        self.parts.append(f'<text x="{num(self.x + 34)}" y="{num(self.y)}">{escape(text)}</text>')

    def gap(self, h: float = 6.0) -> None:
        self.y += h

    def svg(self) -> str:
        return '<g class="so-panel">' + "".join(self.parts) + "</g>"


def title_block(rows: list[tuple[str, str]], bottom: float) -> str:
    """The title block: label / value rows in a ruled box ending at ``bottom``."""
    x0 = SHEET_WIDTH - PANEL_WIDTH
    x1 = SHEET_WIDTH - MARGIN
    chars = int((x1 - x0 - 84) / (CHAR_EM * FONT_PANEL))
    lines: list[tuple[str, list[str]]] = [(k, wrap_text(v, chars)) for k, v in rows]
    h = sum(len(v) * FONT_PANEL * 1.2 + 6 for _, v in lines)
    y = bottom - h
    out = [f'<g class="so-panel"><rect x="{num(x0)}" y="{num(y)}" width="{num(x1 - x0)}" height="{num(h)}" '
           'fill="none" stroke="#222" stroke-width="0.8"/>']
    for k, vals in lines:
        row_h = len(vals) * FONT_PANEL * 1.2 + 6
        out.append(f'<line x1="{num(x0)}" y1="{num(y)}" x2="{num(x1)}" y2="{num(y)}" stroke="#222" stroke-width="0.4"/>')
        out.append(f'<text x="{num(x0 + 5)}" y="{num(y + FONT_PANEL + 2)}" fill="#555">{escape(k)}</text>')
        for j, t in enumerate(vals):
            out.append(f'<text x="{num(x0 + 80)}" y="{num(y + FONT_PANEL + 2 + j * FONT_PANEL * 1.2)}">'
                       f"{escape(t)}</text>")
        y += row_h
    out.append(f'<line x1="{num(x0 + 76)}" y1="{num(bottom - h)}" x2="{num(x0 + 76)}" y2="{num(bottom)}" '
               'stroke="#222" stroke-width="0.4"/></g>')
    return "".join(out)


def frame_rect() -> str:
    x0, y0, x1, y1 = AREA
    return (f'<rect x="0" y="0" width="{num(SHEET_WIDTH)}" height="{num(SHEET_HEIGHT)}" fill="#fff"/>'
            f'<rect x="{num(x0)}" y="{num(y0)}" width="{num(x1 - x0)}" height="{num(y1 - y0)}" fill="none" '
            'stroke="#222" stroke-width="1"/>')


def svg_open(title: str, clip_id: str) -> str:
    x0, y0, x1, y1 = AREA
    return (f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {fmt_short(SHEET_WIDTH)} {fmt_short(SHEET_HEIGHT)}" '
            f'width="{fmt_short(SHEET_WIDTH)}" height="{fmt_short(SHEET_HEIGHT)}" role="img" class="so-sheet">'
            f"<title>{escape(title)}</title>{_style()}"
            f'<defs><clipPath id="{clip_id}"><rect x="{num(x0)}" y="{num(y0)}" width="{num(x1 - x0)}" '
            f'height="{num(y1 - y0)}"/></clipPath></defs>')


def grid_ticks(v: View, lab: Labeller) -> str:
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
    texts = TextGroup()
    size = 7.5
    for e, x in zip(es.tolist(), v.x(es).tolist()):
        if not x0 + 70 < x < x1 - 70:
            continue
        d.append(f"M{num(x)},{num(y0)}v6M{num(x)},{num(y1)}v-6")
        t = f"E {e:,.{_decimals(step)}f}"
        box = (x + 2, y0 + 1, x + 3 + text_width(t, size), y0 + 2 + size)
        if lab.place(np.array([box])) == 0:
            texts.add(box[0], box[3] - 1.5, t, anchor="start")
    for n, y in zip(ns.tolist(), v.y(ns).tolist()):
        if not y0 + 70 < y < y1 - 40:
            continue
        d.append(f"M{num(x0)},{num(y)}h6M{num(x1)},{num(y)}h-6")
        t = f"N {n:,.{_decimals(step)}f}"
        box = (x0 + 2, y - 2 - size, x0 + 3 + text_width(t, size), y - 1)
        if lab.place(np.array([box])) == 0:
            texts.add(box[0] + 0.5, box[3] - 1.5, t, anchor="start")
    return (f'<path d="{"".join(d)}" stroke="#222" stroke-width="0.7"/><g class="so-grid">'
            + "".join(texts.items) + "</g>")


def _decimals(step: float) -> int:
    """Decimals a round step needs (0 for 100, 1 for 0.5)."""
    return max(0, -int(math.floor(math.log10(step) + 1e-9))) if step < 1 else 0
