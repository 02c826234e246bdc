"""``plan.svg``: the plan picture of a build."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np

from ...angles import format_dms
from ...design import Design
from ..text import curve_texts, turn_word
from .canvas import (AREA, CL_COLOUR, CODE_COLOURS, CONTROL_COLOUR, F, FONT_LABEL, FONT_STAKE, LABEL_MAX_STAKES,
                     MARGIN, OFFSET_COLOUR, SHEET_HEIGHT, TANGENT_COLOUR, THIN_CELL, TICK_MAX_STATIONS, View,
                     _circles, _extent, _g, _grow, _inside_frame, _n, _right_normal, _round_label, _short_hash,
                     _text_width, _thin, _to_frame, _wrap, station_spacing)
from .labels import Labeller, PREFILTER_MIN, _Text, _around_boxes, _draw_label, _place_on_normal
from .frame import _Panel, _frame, _grid_ticks, _north_arrow, _scale_bar, _svg_open, _title_block
from .lines import _alignment_lines, _tick_vertices

__all__ = ["plan_svg_element", "plan_svg"]


def _occupations(d: Design) -> list[tuple[Any, Any, float]]:
    """(occupied point, backsight point or None, grid backsight azimuth) of every setup."""
    sd = d.setup
    if sd is None:
        return []
    return [(o.occupied, o.backsight, float(o.backsight_azimuth)) for o in sd.occupations]


def plan_svg_element(d: Design) -> str:
    """The plan picture as an ``<svg>`` element (no XML declaration), for the
    file and for inlining into ``report.html``.
    """
    job, a, sp, stn = d.job, d.alignment, d.stakes, d.stationing
    unit = d.unit
    occs = _occupations(d)
    cts = {ct.curve.number: ct for ct in curve_texts(d)}
    el_e = np.array([el.start_easting for el in a.elements] + [a.elements[-1].end_easting])
    el_n = np.array([el.start_northing for el in a.elements] + [a.elements[-1].end_northing])
    # the elements' bounding samples (arcs bulge beyond their ends)
    mids = np.array([el.start + el.length * f for el in a.elements for f in (0.25, 0.5, 0.75)])
    mn, me, _ = a.evaluate(mids, 0.0)
    big_off = max([abs(ol.offset) for ol in job.staking.offsets] + [0.0])
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
    offs = np.array([ol.offset for ol in job.staking.offsets] + [0.0])
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
        pan.symbol(f'<circle cx="14" cy="0" r="2.2" fill="{colour}"/>', f"stake {code} {abs(o):.2f}{where}")
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
