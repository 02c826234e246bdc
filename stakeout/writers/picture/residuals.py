"""The residual picture of a staked-point check (``check.html``)."""

from __future__ import annotations

import math
from html import escape
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ...design import Design
from .canvas import (AREA, F, FONT_STAKE, LABEL_MAX_STAKES, MARGIN, SHEET_HEIGHT, STATUS_COLOURS, THIN_CELL, View,
                     circles_path, extent, fmt_short, grow_extent, inside_frame, num, short_hash, text_width, thin, to_frame,
                     nice_length)
from .labels import Labeller, PREFILTER_MIN, TextGroup, around_boxes
from .frame import Panel, frame_rect, north_arrow, scale_bar, svg_open, title_block
from .lines import alignment_lines

if TYPE_CHECKING:  # pragma: no cover
    from ...check import CheckResult
    from ...shots import Shots

__all__ = ["TOLERANCE_RADIUS", "ARROW_CAP", "exaggeration", "residual_svg_element"]


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
    job, unit = d.job, d.unit
    # a shot matched to a design or a control point has its residual; the arrow starts at that point
    matched = np.isfinite(r.d_northing) & np.isfinite(r.d_easting)
    de_e = shots.easting - np.where(matched, r.d_easting, 0.0)
    de_n = shots.northing - np.where(matched, r.d_northing, 0.0)
    v = _residual_view(shots, r, matched, de_e, de_n)
    factor = exaggeration(r.horizontal_tolerance, v.scale)
    clip = "so-check-clip"
    lab = Labeller()
    x0, y0, x1, y1 = AREA
    lab.block([[x1 - 34, y0, x1, y0 + 66], [x0, y1 - 34, x0 + 300, y1]])
    body = [frame_rect(), *(alignment_lines(p, v, clip, 1.0) for p in (d.parts or (d,)))]
    # design points: small grey marks
    parts = d.parts or (d,)  # several alignments: the stakes of every one
    dx_all = v.x(np.concatenate([p.stakes.easting for p in parts]))
    dy_all = v.y(np.concatenate([p.stakes.northing for p in parts]))
    inside = (dx_all > x0) & (dx_all < x1) & (dy_all > y0) & (dy_all < y1)
    grey = np.where(inside)[0]
    if grey.size > LABEL_MAX_STAKES:
        grey = grey[thin(dx_all[grey], dy_all[grey], THIN_CELL)]
    body.append(f'<g clip-path="url(#{clip})"><path d="{circles_path(dx_all[grey], dy_all[grey], 1.2)}" fill="#aaa"/>')
    rad = r.horizontal_tolerance * factor * v.scale
    mx, my = v.x(de_e), v.y(de_n)
    ring = np.flatnonzero(matched)
    ring = ring[thin(mx[ring], my[ring], 0.05 if ring.size <= LABEL_MAX_STAKES else THIN_CELL)] if ring.size \
        else ring  # one circle per point shot (thinned at corridor scale)
    body.append(f'<path d="{circles_path(mx[ring], my[ring], rad)}" fill="none" '
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
            sel = sel[thin(mx[sel], my[sel], THIN_CELL)]  # (shots needing attention are all drawn)
        if sel.size == 0:
            continue
        colour = STATUS_COLOURS.get(s, "#000")
        body.append(f'<path class="so-arrow so-status-{escape(s)}" d="{_arrows(mx[sel], my[sel], tx[sel], ty[sel])}" '
                    f'stroke="{colour}" stroke-width="1.1" '
                    f'fill="none"/><path d="{_heads(mx[sel], my[sel], tx[sel], ty[sel])}" fill="{colour}"/>')
    if cut.any():
        c = np.where(cut & matched)[0]
        ux, uy = (tx[c] - mx[c]) / cap, (ty[c] - my[c]) / cap
        marks = "".join(f"M{num(p - 0.55 * cap * a_ + 3 * b_)},{num(q - 0.55 * cap * b_ - 3 * a_)}l{num(-6 * b_)},"
                        f"{num(6 * a_)}" for p, q, a_, b_ in zip(tx[c].tolist(), ty[c].tolist(), ux.tolist(),
                                                                 uy.tolist()))
        body.append(f'<path d="{marks}" stroke="#000" stroke-width="1.2"/>')
    um = np.where(~matched)[0]
    off_sheet: list[tuple[float, float, str]] = []
    if um.size:
        ux_, uy_ = v.x(shots.easting[um]), v.y(shots.northing[um])
        crosses = "".join(f"M{num(p - 4)},{num(q - 4)}l8,8m0,-8l-8,8" for p, q in zip(ux_.tolist(), uy_.tolist()))
        body.append(f'<path d="{crosses}" stroke="{STATUS_COLOURS["unmatched"]}" stroke-width="1.4"/>')
        for k, p, q in zip(um.tolist(), ux_.tolist(), uy_.tolist()):
            if not inside_frame(p, q, 6.0):
                fx, fy = to_frame(v.cx, v.cy, p, q, 12.0)
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
    texts = TextGroup()
    for fx, fy, text in off_sheet:
        w1 = np.array([text_width(text, FONT_STAKE) + 1.5])
        h1 = np.array([FONT_STAKE * 0.78 + 1.5])
        toward = np.array([[v.cx - fx, v.cy - fy]]) / (math.hypot(v.cx - fx, v.cy - fy) or 1.0)
        bx = around_boxes(np.array([fx]), np.array([fy]), w1, h1, 4.0, toward)
        j = lab.place(bx[0])
        if j >= 0:
            b = bx[0, j]
            texts.add((b[0] + b[2]) / 2, b[3] - 1.25, text, extra=f' fill="{STATUS_COLOURS["unmatched"]}"')
    shown = 0
    names = [p if s == "ok" or not matched[i] or not cut[i] else f"{p} ({r.horizontal_error[i]:.3f})"
             for i, (p, s) in enumerate(zip(shots.point, r.status))]
    w = np.array([text_width(t, FONT_STAKE) + 1.5 for t in names])
    hh = np.full(len(shots), FONT_STAKE * 0.78 + 1.5)
    out_dir = np.column_stack([tx - mx, ty - my])
    norm = np.hypot(out_dir[:, 0], out_dir[:, 1])
    out_dir = np.where(norm[:, None] > 0, out_dir / np.maximum(norm, 1e-12)[:, None], np.array([1.0, 0.0]))
    boxes = around_boxes(px, py, w, hh, 2.0, out_dir)
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
    body.append(north_arrow(x1 - 17, y0 + 6))
    bar, _ = scale_bar(x0 + 14, y1 - 8, v, unit.symbol)
    body.append(bar)

    pan, block = _residual_panel(d, r, statuses, factor, v, bool(cut.any()), shown, len(shots), staked_name)
    title = f"Residuals of the staked points: {job.info.name}"
    return svg_open(title, clip) + "".join(body) + pan.svg() + block + "</svg>", factor


def _arrows(x0: F, y0: F, x1: F, y1: F) -> str:
    return "".join(f"M{num(a)},{num(b)}L{num(c)},{num(e)}"
                   for a, b, c, e in zip(x0.tolist(), y0.tolist(), x1.tolist(), y1.tolist()))


def _heads(x0: F, y0: F, x1: F, y1: F, size: float = 4.5) -> str:
    """Arrowheads at (x1, y1) pointing away from (x0, y0) (vectorised; none on zero-length arrows)."""
    dx, dy = x1 - x0, y1 - y0
    ln = np.hypot(dx, dy)
    ok = ln > 0.5
    ux, uy = dx[ok] / ln[ok], dy[ok] / ln[ok]
    bx, by = x1[ok] - ux * size, y1[ok] - uy * size
    w = size * 0.45
    return "".join(f"M{num(p)},{num(q)}L{num(s + w * v_)},{num(t - w * u)}L{num(s - w * v_)},{num(t + w * u)}z"
                   for p, q, s, t, u, v_ in zip(x1[ok].tolist(), y1[ok].tolist(), bx.tolist(), by.tolist(),
                                               ux.tolist(), uy.tolist()))


def _residual_view(shots: "Shots", r: "CheckResult", matched: np.ndarray, de_e: F, de_n: F) -> View:
    """The view of the check: the matched shots and their design points (at least twenty
    tolerances across); an unmatched shot far off is shown at the frame, pointed to.
    """
    # the matched shots and their design points set the view; an unmatched shot far off (a blunder,
    # a point of another job) would shrink it to a speck: it is shown at the frame, pointed to
    if matched.any():
        ext = extent([shots.easting[matched], de_e[matched]], [shots.northing[matched], de_n[matched]])
        ext = grow_extent(ext, shots.easting[~matched], shots.northing[~matched], 0.35)
    else:
        ext = extent([shots.easting], [shots.northing])
    size = max(ext[2] - ext[0], ext[3] - ext[1])
    least = max(20.0 * r.horizontal_tolerance, 1.0)
    if size < least:  # one shot, or a few close together: show some room around them
        ce, cn = (ext[0] + ext[2]) / 2, (ext[1] + ext[3]) / 2
        ext = (ce - least / 2, cn - least / 2, ce + least / 2, cn + least / 2)
    return View.fit(*ext)


def _residual_panel(d: Design, r: "CheckResult", statuses: list[str], factor: float, v: View, any_cut: bool,
                    shown: int, n_shots: int, staked_name: str) -> tuple[Panel, str]:
    """The panel (legend by status, the exaggeration, notes) and the title block of the picture."""
    job, unit = d.job, d.unit
    pan = Panel.opening("STAKED-POINT CHECK", 14.0, job.info.name, f"staked file {staked_name}")
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
               f"tolerance {r.horizontal_tolerance:g} {unit.symbol} (x{fmt_short(factor)})")
    pan.gap()
    pan.heading("EXAGGERATION", 11.0)
    pan.line(f"arrows: design point to staked point, the residual drawn {fmt_short(factor)} times its length "
             f"(x{fmt_short(factor)}); positions of points at the scale of the bar")
    if any_cut:
        pan.line(f"arrows longer than {ARROW_CAP:g} tolerance circles are cut (marked /) and labelled "
                 "with their horizontal error")
    res_len = nice_length(60.0 / (factor * v.scale))
    res_w = res_len * factor * v.scale
    pan.gap(4)
    pan.symbol(f'<path d="M0,3v-6M0,0h{num(res_w)}M{num(res_w)},3v-6" stroke="#222" stroke-width="1"/>', "")
    pan.line(f"residual {fmt_short(res_len)} {unit.symbol} drawn x{fmt_short(factor)}")
    pan.gap()
    pan.heading("NOTES", 11.0)
    pan.line(f"shot numbers: {shown} of {n_shots} shown" + ("" if shown == n_shots else
                                                               " (attention first; the rest would overprint)"))
    pan.line(f"design points not staked: {len(r.not_staked)}")
    verdict = "ALL WITHIN TOLERANCE" if r.all_ok else "NEEDS ATTENTION"
    tol = f"horizontal {r.horizontal_tolerance:g}" + (f", vertical {r.vertical_tolerance:g}"
                                                      if r.vertical_tolerance is not None else "")
    block = title_block([
        ("verdict", verdict),
        ("job", job.info.name),
        ("job file", Path(job.path).name),
        ("sha256", short_hash(job.sha256) + "..."),
        ("staked", staked_name),
        ("tolerance", f"{tol} {unit.symbol}"),
        ("units", unit.label),
        ("CRS", d.crs_label or "none: local grid"),
    ], SHEET_HEIGHT - MARGIN)
    return pan, block
