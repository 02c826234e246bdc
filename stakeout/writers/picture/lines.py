"""The alignment and its offset lines as SVG paths, each element drawn by its kind
(a line, an arc, or a polyline within :data:`CHORD_TOLERANCE` of a spiral).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

from ...design import Design
from ...presentation import Element, PerKind
from ..sections import widened_traces
from .canvas import CL_COLOUR, F, OFFSET_COLOUR, View, fmt_short, num

__all__ = [
    "CHORD_TOLERANCE", "SEGMENTS", "alignment_lines", "tick_vertices",
]


Segment = tuple[tuple[float, float], tuple[float, float], str]  # start, end, path command


Ends = tuple[float, float, float, float]  # easting, northing at the start; at the end


def _seg_line(d: Design, el: Element, ends: Ends, offset: float, v: View) -> Segment:
    e0, n0, e1, n1 = ends
    x1, y1 = v.xy1(e1, n1)
    return v.xy1(e0, n0), (x1, y1), f"L{num(x1)},{num(y1)}"


def _seg_arc(d: Design, el: Any, ends: Ends, offset: float, v: View) -> Segment:
    e0, n0, e1, n1 = ends
    r = (el.radius - el.turn * offset) * v.scale
    x1, y1 = v.xy1(e1, n1)
    if r <= 1e-6:
        return v.xy1(e0, n0), (x1, y1), f"L{num(x1)},{num(y1)}"
    large = 1 if el.delta > 180.0 else 0
    sweep = 1 if el.turn > 0 else 0  # a right turn runs clockwise on the canvas (SVG's positive sweep)
    return v.xy1(e0, n0), (x1, y1), f"A{num(r)},{num(r)} 0 {large} {sweep} {num(x1)},{num(y1)}"


#: Sagitta allowed between a curve and the chords drawn for it (canvas units).
CHORD_TOLERANCE = 0.25


def _seg_sampled(d: Design, el: Element, ends: Ends, offset: float, v: View) -> Segment:
    """Any element (spirals): a polyline whose chords stay within :data:`CHORD_TOLERANCE` of it."""
    k = max(abs(el.curvature_start), abs(el.curvature_end))
    k = k / max(1e-9, 1.0 - abs(k * offset))  # curvature of the offset line
    tol = CHORD_TOLERANCE / v.scale
    step = math.sqrt(8.0 * tol / k) if k > 0 else el.length
    count = int(min(20000, max(2, math.ceil(el.length / max(step, 1e-12)) + 1)))
    n, e, _ = d.presentation.element_samples(el, count, offset)
    x, y = v.x(e), v.y(n)
    return ((float(x[0]), float(y[0])), (float(x[-1]), float(y[-1])),
            "L" + " ".join(f"{num(p)},{num(q)}" for p, q in zip(x[1:].tolist(), y[1:].tolist())))


#: How each kind of element is drawn: a line, an arc, or a polyline of samples.
SEGMENTS: PerKind[Callable[[Design, Any, Ends, float, View], Segment]] = PerKind(
    "SVG path segment", {"line": _seg_line, "arc": _seg_arc, "spiral": _seg_sampled})


def _path_d(d: Design, offset: float, v: View) -> str:
    """SVG path data of the centreline (offset 0) or an offset line."""
    parts: list[str] = []
    last: tuple[float, float] | None = None
    n0, e0, n1, e1 = (x.tolist() for x in d.presentation.element_ends(offset))
    for k, el in enumerate(d.alignment.elements):
        (x0, y0), end, cmd = SEGMENTS[el](d, el, (e0[k], n0[k], e1[k], n1[k]), offset, v)
        if last is None or abs(last[0] - x0) > 0.01 or abs(last[1] - y0) > 0.01:
            parts.append(f"M{num(x0)},{num(y0)}")
        parts.append(cmd)
        last = end
    return "".join(parts)


def alignment_lines(d: Design, v: View, clip_id: str, width_cl: float = 1.6) -> str:
    parts = [f'<g clip-path="url(#{clip_id})" fill="none" stroke-linejoin="round">']
    for ol in d.job.staking.offsets:
        if ol.offset != 0.0 and not ol.widening:
            parts.append(f'<path class="so-offset" d="{_path_d(d, ol.offset, v)}" stroke="{OFFSET_COLOUR}" '
                         'stroke-width="0.8"/>')
    for _code, tn, te in widened_traces(d):  # a widened line: a polyline along its taper
        xy = " ".join(f"{num(p)},{num(q)}" for p, q in zip(v.x(te).tolist(), v.y(tn).tolist()))
        parts.append(f'<path class="so-offset" d="M{xy}" stroke="{OFFSET_COLOUR}" stroke-width="0.8"/>')
    parts.append(f'<path class="so-cl" d="{_path_d(d, 0.0, v)}" stroke="{CL_COLOUR}" stroke-width="{fmt_short(width_cl)}"/>')
    parts.append("</g>")
    return "".join(parts)


def tick_vertices(x: F, y: F, nx: F, ny: F, lo: float, hi: float) -> tuple[F, F]:
    """Vertices of ticks square to the line (``lo`` to the left, ``hi`` to the right), NaN between them."""
    nan = np.full(x.size, np.nan)
    vx = np.column_stack([x - lo * nx, x + hi * nx, nan]).ravel()
    vy = np.column_stack([y - lo * ny, y + hi * ny, nan]).ravel()
    return vx, vy
