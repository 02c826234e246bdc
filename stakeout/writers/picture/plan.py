"""``plan.svg``: the plan picture of a build."""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ...design import Design
from ..stationmarks import labelled_stations
from ..text import curve_texts, turn_word
from .canvas import (AREA, CL_COLOUR, CONTROL_COLOUR, F, FONT_LABEL, LABEL_MAX_STAKES,
                     MARGIN, OFFSET_COLOUR, SHEET_HEIGHT, TANGENT_COLOUR, THIN_CELL, TICK_MAX_STATIONS, View,
                     extent, fmt_short, grow_extent, num, right_normal, round_label, short_hash,
                     text_width, station_spacing)
from .labels import Labeller, Layer, around_boxes, draw_label, place_on_normal
from .frame import Panel, frame_rect, grid_ticks, north_arrow, scale_bar, svg_open, title_block
from .lines import alignment_lines, tick_vertices
from .control import (CONTROL_LABEL_MAX, OtherControl, control_marks, occupations, other_control_marks,
                      place_control_labels, place_other_control_labels)
from .stakes import code_colours, key_points, key_rings, place_key_point_labels, place_stake_numbers, stake_marks

__all__ = ["plan_svg_element", "plan_svg"]


@dataclass(frozen=True)
class _Ticks:
    """Station ticks: the path, the labels to place (stations, text, canvas point, right
    normal), the stations labelled and their spacing, the tick lines for the labeller.
    """

    path: str
    labels: list[tuple[F, list[str], float, float, float, float]]
    labelled: F
    spacing: float
    lines: list[tuple[F, F]]


def plan_svg_element(d: Design) -> str:
    """The plan picture as an ``<svg>`` element (no XML declaration), for the
    file and for inlining into ``report.html``; with several alignments every
    one in the one view (the control and setups once).

    Drawn in this order, each part keeping its marks free of the labels placed after it:
    the tangents and PIs, the alignment and offset lines, the station ticks, the stakes,
    the key points, the control points; then the labels, most important first (control,
    station equations, stations, key points, PIs, point numbers); then the panel.
    """
    parts = d.parts or (d,)
    job, unit = d.job, d.unit
    pis_of = [[c for c in p.alignment.curves if c.pi_northing is not None and c.pi_easting is not None]
              for p in parts]
    v = _plan_view(d, [c for pis in pis_of for c in pis])
    clip = "so-plan-clip"
    layer = Layer(Labeller())
    lab = layer.lab
    body: list[str] = [frame_rect()]
    x0, y0, x1, y1 = AREA
    # corners kept for the north arrow and the scale bar
    lab.block([[x1 - 34, y0, x1, y0 + 66], [x0, y1 - 34, x0 + 300, y1]])

    drawn = []
    for p, pis in zip(parts, pis_of):
        a = p.alignment
        tang, pi_marks, px, py = _tangents(p, v, lab, pis)
        body.append(f'<g clip-path="url(#{clip})">')
        if tang:
            body.append(f'<path class="so-tangent" d="{"".join(tang)}" fill="none" stroke="{TANGENT_COLOUR}" '
                        'stroke-width="0.7" '
                        'stroke-dasharray="6,3"/>')
        body.append("</g>")
        body.append(alignment_lines(p, v, clip))

        offs = np.array([o for ol in p.job.staking.offsets for o in ol.all_offsets()] + [0.0])
        left_px, right_px = max(0.0, -offs.min()) * v.scale, max(0.0, offs.max()) * v.scale
        ticks = _station_ticks(p, v, left_px, right_px)
        body.append(f'<path d="{ticks.path}" stroke="#222" stroke-width="0.7" fill="none"/>')
        # labels keep off the lines and the ticks
        along = np.append(np.arange(a.start_station, a.end_station, 0.8 / v.scale), a.end_station)
        for o in np.unique(offs).tolist():
            ln_, le_, _ = a.evaluate(along, o, miter=False)
            lab.block_polyline(v.x(le_), v.y(ln_))
        for tx_, ty_ in ticks.lines:
            lab.block_polyline(tx_, ty_)
        drawn.append((p, pis, pi_marks, px, py, ticks, left_px, right_px))

    colours = code_colours(d)
    stakes_of = [stake_marks(p, v, lab, colours) for p in parts]
    keys_of = [key_points(p, v, lab) for p in parts]
    ctrl, ctrl_labels = control_marks(d, v, lab)
    others = other_control_marks(d, v, lab)
    body.append(grid_ticks(v, lab))

    # ---- labels, most important first ----
    place_control_labels(v, ctrl_labels, layer)
    body_eq = "".join(_equations(p, v, layer, (rp + 8.0, lp + 8.0)) for p, _, _, _, _, _, lp, rp in drawn)
    st_shown = st_count = 0
    for _, _, _, _, _, ticks, left_px, right_px in drawn:
        st_count += ticks.labelled.size
        for _, lines, px_, py_, u, w_ in ticks.labels:  # on the left of the line, else on the right
            placed = place_on_normal(lab, px_, py_, -u, -w_, lines, FONT_LABEL, (left_px + 6.0, right_px + 6.0),
                                      steps=2)
            if placed is not None:
                draw_label(layer.texts, placed[0], lines, FONT_LABEL)
                st_shown += 1
    kp_shown = sum(place_key_point_labels(p, keys, layer, (rp + 8.0, lp + 8.0))
                   for (p, _, _, _, _, _, lp, rp), keys in zip(drawn, keys_of))
    cts_of = [{ct.curve.number: ct for ct in curve_texts(p)} for p in parts]
    for (p, pis, _, px, py, _, _, _), cts in zip(drawn, cts_of):
        _place_pi_labels(p, v, pis, px, py, cts, layer)
    ctrl_shown = place_other_control_labels(v, others, layer)
    num_shown = sum(place_stake_numbers(p, stakes, layer) for p, stakes in zip(parts, stakes_of))

    body.append('<g clip-path="url(#' + clip + ')">' + "".join(path for st in stakes_of for path in st.paths))
    pi_marks_all = [m for _, _, marks, _, _, _, _, _ in drawn for m in marks]
    if pi_marks_all:
        body.append(f'<path class="so-pi" d="{"".join(pi_marks_all)}" fill="#fff" stroke="{TANGENT_COLOUR}" '
                    'stroke-width="1.1"/>')
    body.append(body_eq)
    body.append("".join(key_rings(keys) for keys in keys_of))
    body.append(others.path + "".join(ctrl) + "</g>")
    if layer.leaders:
        body.append(f'<path d="{"".join(layer.leaders)}" stroke="#444" stroke-width="0.6" fill="none"/>')
    body.append('<g class="so-num">' + "".join(layer.numbers.items) + "</g>")
    body.append('<g class="so-lab">' + "".join(layer.texts.items) + "</g>")
    body.append(north_arrow(x1 - 17, y0 + 6))
    bar, _ = scale_bar(x0 + 14, y1 - 8, v, unit.symbol)
    body.append(bar)

    n_st = sum(len(p.stakes) for p in parts)
    marks = sum(len(st.keep) for st in stakes_of)
    detail = all(st.detail for st in stakes_of)
    kp_count = sum(len(p.alignment.key_points) for p in parts)
    notes = _plan_notes(d, detail, marks, num_shown, kp_shown, kp_count, st_shown, st_count, n_st)
    notes[1:1] = _control_notes(others, ctrl_shown)
    curves = [(f"{p.alignment.name} " if d.parts else "", ct) for p, cts in zip(parts, cts_of) for ct in cts.values()]
    pan = _panel(d, curves, any(pis_of), drawn[0][5].spacing, notes)
    if d.parts:
        stations = f"{len(parts)} alignments, {n_st:,} stakes"
    else:
        stations = f"{d.stationing.label(d.alignment.start_station)} to {d.stationing.label(d.alignment.end_station)}, " \
                   f"{n_st:,} stakes"
    block = title_block([
        ("job", job.info.name),
        ("job file", Path(job.path).name),
        ("sha256", short_hash(job.sha256) + "..."),
        ("units", unit.label),
        ("CRS", d.crs_label or "none: local grid"),
        ("stations", stations),
        ("drawn", (f"{marks:,} marks for {n_st:,} stakes (thinned), no point numbers" if not detail else
                   f"point numbers {num_shown:,} of {n_st:,} (no overprinting)")),
        ("north", "grid north, up the sheet"),
    ], SHEET_HEIGHT - MARGIN)
    title = f"Plan of {', '.join(p.alignment.name for p in parts)}: {job.info.name}"
    return (svg_open(title, clip) + "".join(body) + pan.svg() + block + "</svg>")


def _plan_view(d: Design, pis: list[Any]) -> View:
    """The view of the job (every alignment of it): stakes, elements (with their bulges), occupied
    points and the offsets; PIs and backsights far off are drawn toward the frame instead.
    """
    parts = d.parts or (d,)
    occs = occupations(d)
    xs, ys = [], []
    big_off = 0.0
    for p in parts:
        a, sp = p.alignment, p.stakes
        el_e = np.array([el.start_easting for el in a.elements] + [a.elements[-1].end_easting])
        el_n = np.array([el.start_northing for el in a.elements] + [a.elements[-1].end_northing])
        # the elements' bounding samples (arcs bulge beyond their ends)
        mids = np.array([el.start + el.length * f for el in a.elements for f in (0.25, 0.5, 0.75)])
        mn, me, _ = a.evaluate(mids, 0.0)
        xs += [sp.easting, el_e, me]
        ys += [sp.northing, el_n, mn]
        big_off = max([abs(o) for ol in p.job.staking.offsets for o in ol.all_offsets()] + [big_off])
    ext = extent(xs + [np.array([o[0].easting for o in occs])], ys + [np.array([o[0].northing for o in occs])])
    ext = (ext[0] - big_off, ext[1] - big_off, ext[2] + big_off, ext[3] + big_off)
    pi_e = np.array([c.pi_easting for c in pis], dtype=float)
    pi_n = np.array([c.pi_northing for c in pis], dtype=float)
    bs_e = np.array([o[1].easting for o in occs if o[1] is not None], dtype=float)
    bs_n = np.array([o[1].northing for o in occs if o[1] is not None], dtype=float)
    # PIs and backsights far off (a near-half-turn curve's PI, a backsight kilometres away) would
    # shrink the job to a speck: they are drawn toward the frame, clipped, instead
    ext = grow_extent(ext, np.concatenate([pi_e, bs_e]), np.concatenate([pi_n, bs_n]), 0.35)
    return View.fit(*ext)


def _tangents(d: Design, v: View, lab: Labeller, pis: list[Any]) -> tuple[list[str], list[str], F, F]:
    """The tangents from each curve's ends to its PI, and the PI marks (blocked for the labels)."""
    tang: list[str] = []
    pi_marks: list[str] = []
    px = v.x(np.array([c.pi_easting for c in pis], dtype=float))
    py = v.y(np.array([c.pi_northing for c in pis], dtype=float))
    if pis:
        ends = np.array([[c.pc_station, c.pt_station] for c in pis]).ravel()
        tn, te, _ = d.alignment.evaluate(ends, 0.0)
        tx, ty = v.x(te).reshape(-1, 2), v.y(tn).reshape(-1, 2)
        for k in range(len(pis)):
            tang.append(f"M{num(tx[k, 0])},{num(ty[k, 0])}L{num(px[k])},{num(py[k])}L{num(tx[k, 1])},{num(ty[k, 1])}")
            pi_marks.append(f"M{num(px[k])},{num(py[k] - 5)}l4.5,8h-9z")
        lab.block(np.column_stack([px - 5, py - 6, px + 5, py + 4]))
    return tang, pi_marks, px, py


def _station_ticks(d: Design, v: View, left_px: float, right_px: float) -> _Ticks:
    """Short ticks at the staked stations (up to :data:`TICK_MAX_STATIONS`), long ones across
    the offset lines at round stations, and the labels of those.
    """
    a, sp, stn = d.alignment, d.stakes, d.stationing
    spacing = station_spacing(a.length, v.scale)
    labelled = labelled_stations(d, spacing)
    staked = np.unique(sp.stations)
    minor = staked if staked.size <= TICK_MAX_STATIONS else np.zeros(0)
    ticks: list[str] = []
    tick_lines: list[tuple[F, F]] = []  # vertices with NaN between ticks, for the labeller
    if minor.size:
        mn_, me_, maz = a.evaluate(minor, 0.0)
        nx, ny = right_normal(maz)
        mx, my = v.x(me_), v.y(mn_)
        h = 3.0
        ticks.append("".join(f"M{num(p - h * u)},{num(q - h * w)}l{num(2 * h * u)},{num(2 * h * w)}"
                             for p, q, u, w in zip(mx.tolist(), my.tolist(), nx.tolist(), ny.tolist())))
        tick_lines.append(tick_vertices(mx, my, nx, ny, h, h))
    station_labels: list[tuple[F, list[str], float, float, float, float]] = []
    if labelled.size:
        ln, le, laz = a.evaluate(labelled, 0.0)
        nx, ny = right_normal(laz)
        lx, ly = v.x(le), v.y(ln)
        lo, hi = left_px + 4.0, right_px + 4.0
        ticks.append("".join(f"M{num(p - lo * u)},{num(q - lo * w)}L{num(p + hi * u)},{num(q + hi * w)}"
                             for p, q, u, w in zip(lx.tolist(), ly.tolist(), nx.tolist(), ny.tolist())))
        tick_lines.append(tick_vertices(lx, ly, nx, ny, lo, hi))
        texts = [round_label(t) for t in stn.labels(labelled)]
        for k, t in enumerate(texts):
            station_labels.append((labelled[k:k + 1], [t], float(lx[k]), float(ly[k]), float(nx[k]), float(ny[k])))
    return _Ticks("".join(ticks), station_labels, labelled, spacing, tick_lines)


def _equations(d: Design, v: View, layer: Layer, reach: tuple[float, float]) -> str:
    """Station equations: marked on the centreline, labelled back = ahead with a leader."""
    a, stn, lab = d.alignment, d.stationing, layer.lab
    if not stn.equations:
        return ""
    eq_at = np.array([eq.internal for eq in stn.equations])
    qn, qe, qaz = a.evaluate(eq_at, 0.0)
    eqx, eqy = v.x(qe), v.y(qn)
    qnx, qny = right_normal(qaz)
    lab.block(np.column_stack([eqx - 4, eqy - 4, eqx + 4, eqy + 4]))
    for k, eq in enumerate(stn.equations):
        text = f"EQ {stn.format_value(eq.back)} BK = {stn.format_value(eq.ahead)} AH"
        placed = place_on_normal(lab, float(eqx[k]), float(eqy[k]), float(qnx[k]), float(qny[k]), [text],
                                  FONT_LABEL, reach)
        if placed is not None:
            draw_label(layer.texts, placed[0], [text], FONT_LABEL)
            layer.leaders.append(f"M{num(float(eqx[k]))},{num(float(eqy[k]))}L{num(placed[1][0])},{num(placed[1][1])}")
    eq_marks = "".join(f"M{num(p - 3.5)},{num(q)}l3.5,-3.5l3.5,3.5l-3.5,3.5z" for p, q in zip(eqx.tolist(), eqy.tolist()))
    return f'<path class="so-eq" d="{eq_marks}" fill="#fff" stroke="{CL_COLOUR}" stroke-width="1.1"/>'


def _place_pi_labels(d: Design, v: View, pis: list[Any], px: F, py: F, cts: dict[int, Any], layer: Layer) -> None:
    """Each PI's number, station, total angle and radii, on the side away from its curve."""
    for k, c in enumerate(pis):
        ct = cts[c.number]
        radii = " / ".join(f"{arc.radius:.2f}" for arc, _, _ in ct.arcs)
        lines = [f"PI {c.number}  {round_label(ct.pi_label)}", f"I {ct.delta} {'RT' if c.turn > 0 else 'LT'}"]
        if radii:
            lines.append(f"R {radii}")
        mid = d.alignment.evaluate(np.array([(c.pc_station + c.pt_station) / 2]), 0.0)
        mx_, my_ = float(v.x(mid.easting)[0]), float(v.y(mid.northing)[0])
        dx, dy = float(px[k]) - mx_, float(py[k]) - my_
        norm = math.hypot(dx, dy) or 1.0
        w = np.array([max(text_width(t, FONT_LABEL) for t in lines) + 2.0])
        hh = np.array([len(lines) * FONT_LABEL * 1.15 + 1.0])
        boxes = around_boxes(np.array([float(px[k])]), np.array([float(py[k])]), w, hh, 6.0,
                              np.array([[dx / norm, dy / norm]]))
        j = layer.lab.place(boxes[0])
        if j >= 0:
            draw_label(layer.texts, boxes[0, j], lines, FONT_LABEL)


def _panel(d: Design, curves: list[tuple[str, Any]], has_pis: bool, spacing: float, notes: list[str]) -> Panel:
    """The panel on the right: title, legend, curve data (each curve with its alignment's name
    before it when there are several) and notes.
    """
    job, unit = d.job, d.unit
    parts = d.parts or (d,)
    names = ", ".join(p.alignment.name for p in parts)
    pan = Panel.opening("PLAN", 15.0, job.info.name, f"alignment{'s' if d.parts else ''} {names}")
    pan.symbol(f'<path d="M0,0h28" stroke="{CL_COLOUR}" stroke-width="1.6"/>', "centreline")
    pan.symbol(f'<path d="M0,0h28" stroke="{OFFSET_COLOUR}" stroke-width="0.8"/>', "offset line")
    colours = code_colours(d)
    lines = [(p.stakes, j) for p in parts for j in range(len(p.stakes.codes))]
    shown: set[str] = set()
    for sp, j in lines:  # each code once, where it first appears (several alignments: job order)
        code = sp.codes[j]
        if code in shown:
            continue
        shown.add(code)
        colour = colours[code]
        o = float(sp.offsets[j])
        where = "" if o == 0 else (" LT" if o < 0 else " RT")
        size = f"{abs(o):.2f}"
        if sp.point_offsets is not None:  # a widened line: the range of its offsets
            each = np.abs(sp.point_offsets[sp.code_of == j])
            if each.size and each.min() != each.max():
                size = f"{each.min():.2f}-{each.max():.2f}"
        pan.symbol(f'<circle cx="14" cy="0" r="2.2" fill="{colour}"/>', f"stake {code} {size}{where}")
    more = {f for p in parts if p.stakes.layout is not None for f in p.stakes.layout.more_features}
    if more:  # the stakes beyond the grid, by what they are
        if "CATCH" in more:
            pan.symbol('<circle cx="14" cy="0" r="2.2" fill="#8b5a2b"/>', "catch stake (CATCH)")
        if "REF" in more:
            pan.symbol('<circle cx="14" cy="0" r="2.2" fill="#fff" stroke="#8b5a2b" stroke-width="0.8"/>',
                       "reference stake (REF)")
        if more - {"CATCH", "REF"}:
            pan.symbol('<circle cx="14" cy="0" r="2.2" fill="#6a3d9a"/>', "listed point (staking.points)")
    pan.symbol(f'<circle cx="14" cy="0" r="3.2" fill="none" stroke="{CL_COLOUR}" stroke-width="1.2"/>',
               "key point (feature, station)")
    if has_pis:
        pan.symbol(f'<path d="M0,0h28" stroke="{TANGENT_COLOUR}" stroke-width="0.7" stroke-dasharray="6,3"/>'
                   f'<path d="M14,-5l4.5,8h-9z" fill="#fff" stroke="{TANGENT_COLOUR}"/>', "PI and tangents")
    if any(p.stationing.equations for p in parts):
        pan.symbol(f'<path d="M10.5,0l3.5,-3.5l3.5,3.5l-3.5,3.5z" fill="#fff" stroke="{CL_COLOUR}"/>',
                   "station equation (back = ahead)")
    pan.symbol('<path d="M14,-5v10M8,0h12" stroke="#222" stroke-width="0.7"/>',
               f"station tick; labels every {fmt_short(spacing)} {unit.symbol}")
    if occupations(d):
        pan.symbol(f'<path d="M14,-6l5.2,9h-10.4z" fill="{CONTROL_COLOUR}"/>', "occupied point")
        pan.symbol(f'<path d="M0,0h28" stroke="{CONTROL_COLOUR}" stroke-dasharray="8,3,2,3"/>'
                   f'<circle cx="24" cy="0" r="3.5" fill="#fff" stroke="{CONTROL_COLOUR}"/>', "backsight")
    if d.presentation.other_control[0]:
        pan.symbol(f'<circle cx="14" cy="0" r="2.6" fill="#fff" stroke="{CONTROL_COLOUR}"/>', "other control point")
    pan.gap()
    pan.heading("CURVES", 11.0)
    if not curves:
        pan.line("(no curves)")
    for name, ct in curves[:12]:
        c = ct.curve
        pan.line(f"{name}{c.number}: {turn_word(c.turn)}, I {ct.delta}" + (f", PI {ct.pi_label}"
                                                                              if c.pi_station is not None else ""))
        for arc, _, _ in ct.arcs:
            pan.line(f"R {arc.radius:.3f}  L {arc.length:.3f}", indent=3)
        for spi, s0, s1 in ct.spirals:
            pan.line(f"spiral L {spi.length:.3f}  {s0} to {s1}", indent=3)
    if len(curves) > 12:
        pan.line(f"... {len(curves) - 12} more curves: see curves.csv")
    pan.gap()
    pan.heading("NOTES", 11.0)
    for t in notes:
        pan.line(t)
    return pan


def _plan_notes(d: Design, detail: bool, marks: int, shown: int, kp_shown: int, kp_count: int, st_shown: int,
                st_count: int, n: int) -> list[str]:
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
    if d.parts:  # the job's own warnings, then each alignment's
        out.extend(f"warning: {w}" for w in d.warnings)
    for p in d.parts or (d,):
        named = f"{p.alignment.name}: " if d.parts else ""
        out.extend(f"warning: {named}{w}" for w in p.warnings)
    return out


def _control_notes(oc: OtherControl, shown: int) -> list[str]:
    """What the picture shows of the control points no setup uses (nothing when there are none)."""
    if not oc.total:
        return []
    if not oc.drawn:
        return [f"other control points: none of the {oc.total:,} in the view; every point is in control.csv"]
    outside = f"; {oc.total - oc.inside:,} outside the view" if oc.inside < oc.total else ""
    if oc.drawn < oc.inside:
        return [f"other control points: {oc.drawn:,} rings for {oc.inside:,} in the view (thinned, over "
                f"{CONTROL_LABEL_MAX:,}), no ids{outside}; every point is in control.csv"]
    ids = "all ids shown" if shown == oc.drawn else f"ids {shown:,} of {oc.drawn:,} (no overprinting)"
    return [f"other control points: {oc.drawn:,} drawn, {ids}{outside}"]


def plan_svg(d: Design) -> bytes:
    """Render ``plan.svg``: the plan picture as a standalone SVG file."""
    return ('<?xml version="1.0" encoding="UTF-8"?>\n' + plan_svg_element(d) + "\n").encode("utf-8")
