"""Control and setups on the plan: each setup's occupied point (a triangle), its backsight
(a ring, or a line toward the frame with its distance when it lies off the sheet, or a
direction for a backsight given as an azimuth), each point drawn once, and their labels,
always; the job's other control points inside the view as small open rings, each with its
id up to :data:`CONTROL_LABEL_MAX` of them, above it thinned to one a
:data:`CONTROL_THIN_CELL` cell without ids (a design file can list 200,000 survey points).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ...angles import format_dms
from ...design import Design
from .canvas import (AREA, CONTROL_COLOUR, FONT_LABEL, F, View, circles_path, inside_frame, num, text_width, thin,
                     to_frame)
from .labels import Labeller, Layer, around_boxes, draw_label

__all__ = ["occupations", "control_marks", "place_control_labels", "OtherControl", "other_control_marks",
           "place_other_control_labels", "CONTROL_LABEL_MAX", "CONTROL_THIN_CELL"]

#: Up to this many other control points inside the view each is drawn and labelled with its id
#: (where there is room); above it they are thinned and not labelled.
CONTROL_LABEL_MAX = 200

#: Cell of the thinning of other control points (canvas units, a little more than a ring):
#: at most one ring a cell, so the picture stays bounded (about 27,000 rings at most).
CONTROL_THIN_CELL = 6.0

#: Radius of another control point's ring (canvas units).
CONTROL_RING = 2.6


def occupations(d: Design) -> list[tuple[Any, Any, float]]:
    """(occupied point, backsight point or None, grid backsight azimuth) of every setup."""
    sd = d.setup
    if sd is None:
        return []
    return [(o.occupied, o.backsight, float(o.backsight_azimuth)) for o in sd.occupations]


def control_marks(d: Design, v: View, lab: Labeller) -> tuple[list[str], list[tuple[float, float, str]]]:
    """The backsight lines, then each point once (a point occupied in one setup may be the
    backsight of another): its symbols (blocked for the labels) and the labels to place.
    """
    lines: list[str] = []
    labels: list[tuple[float, float, str]] = []
    points: dict[str, tuple[float, float, list[str]]] = {}
    for occ, bs, bs_az in occupations(d):
        ox, oy = v.xy1(occ.easting, occ.northing)
        points.setdefault(occ.id, (ox, oy, []))[2].append("occupied")
        if bs is not None:
            bx, by = v.xy1(bs.easting, bs.northing)
        else:
            r = math.radians(bs_az)
            bx, by = ox + 120 * math.sin(r), oy - 120 * math.cos(r)
        lines.append(f"M{num(ox)},{num(oy)}L{num(bx)},{num(by)}")
        if bs is not None and inside_frame(bx, by, 6.0):
            points.setdefault(bs.id, (bx, by, []))[2].append("backsight")
        elif bs is not None:  # off the sheet: say where the line goes, where it leaves the frame
            fx, fy = to_frame(ox, oy, bx, by, 10.0)
            dist = math.hypot(bs.easting - occ.easting, bs.northing - occ.northing)
            labels.append((fx, fy, f"to {bs.id} backsight, {dist:,.2f} {d.unit.symbol}"))
        else:
            labels.append((bx, by, f"backsight {format_dms(bs_az, 0)}"))
    ctrl: list[str] = []
    if lines:
        ctrl.append(f'<path class="so-backsight" d="{"".join(lines)}" stroke="{CONTROL_COLOUR}" stroke-width="0.9" '
                    'stroke-dasharray="8,3,2,3" fill="none"/>')
    for pid, (px_, py_, roles) in points.items():
        if "backsight" in roles:
            ctrl.append(f'<circle cx="{num(px_)}" cy="{num(py_)}" r="4" fill="#fff" stroke="{CONTROL_COLOUR}" '
                        f'stroke-width="1.2"/><circle cx="{num(px_)}" cy="{num(py_)}" r="1.2" fill="{CONTROL_COLOUR}"/>')
        if "occupied" in roles:
            ctrl.append(f'<path d="M{num(px_)},{num(py_ - 6)}l5.2,9h-10.4z" fill="{CONTROL_COLOUR}"/>')
        lab.block([[px_ - 6, py_ - 7, px_ + 6, py_ + 5]])
        labels.insert(0, (px_, py_, f"{pid} {', '.join(dict.fromkeys(roles))}"))
    return ctrl, labels


def place_control_labels(v: View, labels: list[tuple[float, float, str]], layer: Layer) -> None:
    """Each control label beside its point, away from the middle of the drawing."""
    centre = (v.cx, v.cy)
    for px_, py_, text in labels:
        dirx, diry = px_ - centre[0], py_ - centre[1]
        norm = math.hypot(dirx, diry) or 1.0
        w = np.array([text_width(text, FONT_LABEL) + 2.0])
        hh = np.array([FONT_LABEL * 1.15 + 1.0])
        boxes = around_boxes(np.array([px_]), np.array([py_]), w, hh, 5.0, np.array([[dirx / norm, diry / norm]]))
        k = layer.lab.place(boxes[0])
        if k >= 0:
            draw_label(layer.texts, boxes[0, k], [text], FONT_LABEL)


@dataclass(frozen=True)
class OtherControl:
    """The other control points drawn: their path, canvas points and ids (the ids empty when
    thinned), how many are drawn, inside the view, and in the job.
    """

    path: str
    x: F
    y: F
    ids: list[str]
    drawn: int
    inside: int
    total: int


def other_control_marks(d: Design, v: View, lab: Labeller) -> OtherControl:
    """A small open ring at each control point no setup uses, inside the view (blocked for the
    labels); thinned over :data:`CONTROL_LABEL_MAX` points.
    """
    ids, n, e = d.presentation.other_control
    x, y = v.x(e), v.y(n)
    x0, y0, x1, y1 = AREA
    r = CONTROL_RING
    at = np.flatnonzero((x >= x0 + r) & (x <= x1 - r) & (y >= y0 + r) & (y <= y1 - r))
    thinned = at.size > CONTROL_LABEL_MAX
    keep = at[thin(x[at], y[at], CONTROL_THIN_CELL)] if thinned else at
    kx, ky = x[keep], y[keep]
    lab.block(np.column_stack([kx - r - 0.3, ky - r - 0.3, kx + r + 0.3, ky + r + 0.3]))
    path = (f'<path class="so-control" d="{circles_path(kx, ky, r)}" fill="#fff" stroke="{CONTROL_COLOUR}" '
            'stroke-width="1"/>') if keep.size else ""
    names = [] if thinned else [ids[i] for i in keep.tolist()]
    return OtherControl(path, kx, ky, names, int(keep.size), int(at.size), len(ids))


def place_other_control_labels(v: View, oc: OtherControl, layer: Layer) -> int:
    """Each other control point's id beside it, away from the middle of the drawing, where there
    is room; how many were placed.
    """
    if not oc.ids:
        return 0
    dirx, diry = oc.x - v.cx, oc.y - v.cy
    norm = np.hypot(dirx, diry)
    norm[norm == 0] = 1.0
    w = np.array([text_width(t, FONT_LABEL) + 2.0 for t in oc.ids])
    hh = np.full(len(oc.ids), FONT_LABEL * 1.15 + 1.0)
    boxes = around_boxes(oc.x, oc.y, w, hh, CONTROL_RING + 1.0, np.column_stack([dirx / norm, diry / norm]))
    shown = 0
    for i, text in enumerate(oc.ids):
        k = layer.lab.place(boxes[i])
        if k >= 0:
            draw_label(layer.texts, boxes[i, k], [text], FONT_LABEL)
            shown += 1
    return shown
