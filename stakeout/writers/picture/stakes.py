"""Stakes and key points on the plan: a mark per stake coloured by its code (thinned to one
a cell over :data:`LABEL_MAX_STAKES`), a ring per key point, and their labels placed greedily
without overprinting: key points along their normal with a leader, point numbers spread
evenly (coarse-to-fine over stations, outer offsets first).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ...design import Design
from .canvas import (CL_COLOUR, CODE_COLOURS, FONT_LABEL, FONT_STAKE, LABEL_MAX_STAKES, THIN_CELL, F, View, circles_path,
                     num, right_normal, round_label, text_width, thin)
from .labels import PREFILTER_MIN, Labeller, Layer, around_boxes, draw_label, place_on_normal

__all__ = ["StakeMarks", "KeyPoints", "stake_marks", "key_points", "place_key_point_labels", "place_stake_numbers",
           "key_rings"]


@dataclass(frozen=True)
class StakeMarks:
    """The stakes drawn: one path per code, which stakes have a mark, their canvas points."""

    paths: list[str]
    keep: NDArray[np.int64]
    detail: bool
    radius: float
    x: F
    y: F


def code_colours(d: Design) -> dict[str, str]:
    """The colour of each offset line's code: the centreline's black, the others in turn from
    :data:`CODE_COLOURS`, by first appearance over every alignment (the first alignment's lines
    keep the colours they have alone).
    """
    out: dict[str, str] = {}
    for p in d.parts or (d,):
        sp = p.stakes
        for j, code in enumerate(sp.codes):
            if code not in out:
                out[code] = "#111" if sp.offsets[j] == 0.0 else CODE_COLOURS[len(out) % len(CODE_COLOURS)]
    return out


def stake_marks(d: Design, v: View, lab: Labeller, colours: dict[str, str] | None = None) -> StakeMarks:
    """A mark per stake (blocked for the labels), coloured by its code (``colours``: by
    :func:`code_colours` of the job); thinned over :data:`LABEL_MAX_STAKES` stakes.
    """
    sp = d.stakes
    n_st = len(sp)
    sx, sy = v.x(sp.easting), v.y(sp.northing)
    detail = n_st <= LABEL_MAX_STAKES
    r_stake = 1.9 if detail else 1.2
    m = sp.offsets.size
    code_of = sp.code_of
    keep = np.arange(n_st) if detail else thin(sx, sy, THIN_CELL)
    stake_paths = []
    for j in range(m):
        sel = keep[code_of[keep] == j]
        colour = "#111" if sp.offsets[j] == 0.0 else CODE_COLOURS[j % len(CODE_COLOURS)]
        if colours is not None:
            colour = colours[sp.codes[j]]
        stake_paths.append(f'<path class="so-stake" d="{circles_path(sx[sel], sy[sel], r_stake)}" fill="{colour}"/>')
    if sp.layout is not None:  # catch stakes filled, reference stakes open, listed points squared off
        feats = np.array(sp.all_features, dtype=object)[sp.feature_of[keep]]
        more = code_of[keep] >= m
        for cls, sel, paint in (
                ("so-catch", keep[more & (feats == "CATCH")], 'fill="#8b5a2b"'),
                ("so-ref", keep[more & (feats == "REF")], 'fill="#fff" stroke="#8b5a2b" stroke-width="0.8"'),
                ("so-listed", keep[more & (feats != "CATCH") & (feats != "REF")], 'fill="#6a3d9a"')):
            if sel.size:
                stake_paths.append(f'<path class="{cls}" d="{circles_path(sx[sel], sy[sel], r_stake)}" {paint}/>')
    lab.block(np.column_stack([sx[keep] - r_stake - 0.3, sy[keep] - r_stake - 0.3, sx[keep] + r_stake + 0.3,
                               sy[keep] + r_stake + 0.3]))
    return StakeMarks(stake_paths, keep, detail, r_stake, sx, sy)


@dataclass(frozen=True)
class KeyPoints:
    """The key points on the canvas and the right normal of the centreline at each."""

    x: F
    y: F
    nx: F
    ny: F


def key_points(d: Design, v: View, lab: Labeller) -> KeyPoints:
    """Where the key points' rings go (blocked for the labels)."""
    a = d.alignment
    kps = a.key_points
    kx = v.x([kp.easting for kp in kps])
    ky = v.y([kp.northing for kp in kps])
    kaz = a.evaluate(np.array([kp.station for kp in kps]), 0.0).azimuth
    knx, kny = right_normal(kaz)
    lab.block(np.column_stack([kx - 4, ky - 4, kx + 4, ky + 4]))
    return KeyPoints(kx, ky, knx, kny)


def key_rings(k: KeyPoints) -> str:
    """A ring per key point (one where many coincide)."""
    rings = thin(k.x, k.y, 8.0) if k.x.size else np.zeros(0, dtype=np.int64)
    return (f'<path class="so-key" d="{circles_path(k.x[rings], k.y[rings], 3.2)}" fill="none" stroke="{CL_COLOUR}" '
            'stroke-width="1.2"/>')


def place_key_point_labels(d: Design, k: KeyPoints, layer: Layer, reach: tuple[float, float]) -> int:
    """Features and station of each key point along its normal, with a leader; how many were placed."""
    stn = d.stationing
    shown = 0
    for i, kp in enumerate(d.alignment.key_points):
        text = f"{' '.join(kp.features)} {round_label(stn.label(kp.station))}"
        placed = place_on_normal(layer.lab, float(k.x[i]), float(k.y[i]), float(k.nx[i]), float(k.ny[i]), [text],
                                  FONT_LABEL, reach)
        if placed is not None:
            box, (qx, qy) = placed
            draw_label(layer.texts, box, [text], FONT_LABEL)
            layer.leaders.append(f"M{num(float(k.x[i]))},{num(float(k.y[i]))}L{num(qx)},{num(qy)}")
            layer.lab.block_polyline(np.array([float(k.x[i]), qx]), np.array([float(k.y[i]), qy]))
            shown += 1
    return shown


def place_stake_numbers(d: Design, s: StakeMarks, layer: Layer) -> int:
    """Point numbers beside their stakes, spread evenly: coarse-to-fine over stations, outer
    offsets first; how many were placed (none over :data:`LABEL_MAX_STAKES` stakes).
    """
    sp = d.stakes
    n_st = len(sp)
    if not (s.detail and n_st):
        return 0
    shown = 0
    ids = sp.point
    st_idx = sp.station_of
    low = st_idx & -st_idx
    level = np.where(st_idx == 0, 64, np.log2(np.maximum(low, 1)).astype(np.int64))
    order = np.lexsort((np.arange(n_st), -np.abs(sp.offset), -level))
    w = np.array([text_width(t, FONT_STAKE) + 1.5 for t in ids])
    hh = np.full(n_st, FONT_STAKE * 0.78 + 1.5)
    ux, uy = right_normal(d.alignment.evaluate(sp.all_stations, 0.0).azimuth[st_idx])
    side = np.where(sp.offset < 0, -1.0, 1.0)
    boxes = around_boxes(s.x, s.y, w, hh, s.radius, np.column_stack([ux * side, uy * side]))
    ok = layer.lab.free(boxes) if boxes.size > PREFILTER_MIN * 4 else np.ones(boxes.shape[:2], dtype=bool)
    for i in order.tolist():
        if not ok[i].any():
            continue
        k = layer.lab.place(boxes[i], ok[i])
        if k >= 0:
            b = boxes[i, k]
            layer.numbers.add((b[0] + b[2]) / 2, b[3] - 0.75 - 0.5, ids[i])
            shown += 1
    return shown
