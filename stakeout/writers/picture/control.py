"""Control and setups on the plan: each setup's occupied point (a triangle), its backsight
(a ring, or a line toward the frame with its distance when it lies off the sheet, or a
direction for a backsight given as an azimuth), each point drawn once, and their labels.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ...angles import format_dms
from ...design import Design
from .canvas import CONTROL_COLOUR, FONT_LABEL, View, inside_frame, num, text_width, to_frame
from .labels import Labeller, Layer, around_boxes, draw_label

__all__ = ["occupations", "control_marks", "place_control_labels"]


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
