"""``sections.svg``: the cross-sections of a job with ``[slope_stakes]``, written directly as SVG.

One panel per section (a staked station with both catch points and the
ground between them), in station order, two panels a row: the cut area
(ground above the design) and the fill area (ground below it) shaded,
the ground line (from each reference stake through the catch points), the
design template from catch to catch, the centreline, the hinges (squares),
the catch stakes (filled circles) and the reference stakes (open circles),
with the station, the cut and fill areas in square job units and the
panel's vertical exaggeration written.  A legend under the title says which
shade is which.

The shaded polygons are those whose areas ``volumes.csv`` lists
(:func:`stakeout.volumes.area_outlines`): drawn in job units, offset and
elevation, inside a group whose ``transform`` places them on the panel.

At most :data:`MAX_DRAWN_SECTIONS` sections are drawn (the first ones); a
longer job's picture says how many more there are and where their numbers
are.  Stations without a section are counted at the top, not drawn.
``report.html`` shows the same panels (:func:`report_pictures`) for a short
job.  The same design gives the same bytes.
"""

from __future__ import annotations

from html import escape

import numpy as np

from ..design import Design
from ..earthwork import ground_beyond_catch
from ..numbers import fixed_strings
from ..volumes import area_outlines

__all__ = ["MAX_DRAWN_SECTIONS", "CUT_COLOUR", "FILL_COLOUR", "sections_svg", "report_pictures"]

#: ``sections.svg`` draws at most this many sections, the first in station order (50 rows of two
#: panels, about 0.7 MB); the others are counted in the title band, which points to volumes.csv and
#: slopestakes.csv. A 10,000-station job's picture stays this size.
MAX_DRAWN_SECTIONS = 100

#: The shade of a cut area (ground above the design: light clay) and of a fill area (light sky blue).
CUT_COLOUR, FILL_COLOUR = "#f2c9a0", "#b7d7ee"
_GROUND, _DESIGN, _CL, _FRAME, _NOTE = "#7b4f2a", "#1a1a1a", "#b2182b", "#999999", "#555555"

_PW, _PH = 640, 300  # one panel, pixels
_PAD_L, _PAD_R, _PAD_T, _PAD_B = 62, 18, 46, 26
_COLS = 2
_TOP = 74  # title band of sections.svg: title, what is drawn, legend


def _f(v: float) -> str:
    return f"{v:.2f}"


def _pts(x: np.ndarray, z: np.ndarray, m: tuple[float, float, float, float]) -> str:
    """Section points (offset, elevation) as panel pixels by the panel's map ``m`` = (sx, sy, tx, ty)."""
    sx, sy, tx, ty = m
    return " ".join(f"{_f(a)},{_f(b)}" for a, b in zip((x * sx + tx).tolist(), (ty - z * sy).tolist()))


def _legend(y: float, width: float) -> tuple[str, float]:
    """The legend from baseline ``y``, its items in rows no wider than ``width``; and its height."""
    items = (  # (width, the item drawn from x = 0 at baseline 0)
        (190, f'<rect x="0" y="-9" width="18" height="11" fill="{CUT_COLOUR}" stroke="{_FRAME}"/>'
              '<text x="23" y="0">cut (ground above design)</text>'),
        (190, f'<rect x="0" y="-9" width="18" height="11" fill="{FILL_COLOUR}" stroke="{_FRAME}"/>'
              '<text x="23" y="0">fill (ground below design)</text>'),
        (80, f'<line x1="0" y1="-4" x2="24" y2="-4" stroke="{_GROUND}" stroke-width="1.5"/><text x="29" y="0">ground</text>'),
        (82, f'<line x1="0" y1="-4" x2="24" y2="-4" stroke="{_DESIGN}" stroke-width="1.5"/><text x="29" y="0">design</text>'),
        (57, f'<rect x="0" y="-7" width="6" height="6" fill="{_DESIGN}"/><text x="10" y="0">hinge</text>'),
        (86, f'<circle cx="4" cy="-4" r="4" fill="{_DESIGN}" stroke="{_DESIGN}"/><text x="12" y="0">catch stake</text>'),
        (110, f'<circle cx="4" cy="-4" r="4" fill="white" stroke="{_DESIGN}"/><text x="12" y="0">reference stake</text>'),
        (80, f'<line x1="0" y1="-9" x2="0" y2="1" stroke="{_CL}" stroke-dasharray="3 2"/><text x="5" y="0">centreline</text>'),
    )
    out, x, row = [], 10.0, 0
    for w, item in items:
        if x + w > width and x > 10.0:
            x, row = 10.0, row + 1
        out.append(f'<g transform="translate({x:g} {y + 18 * row:g})">{item}</g>')
        x += w
    return f'<g class="legend" font-size="11">{"".join(out)}</g>', 18.0 * (row + 1)


def _panels(d: Design, limit: int) -> list[str]:
    """The first ``limit`` sections, each a panel's SVG content in its own pixels (0..640 x 0..300)."""
    ew = d.earthwork
    assert ew is not None and ew.slopes is not None
    cs, r = ew.sections, ew.slopes
    drawn = ew.volume_stations[:limit]
    if cs is None or drawn.size == 0:
        return []
    res = r.result
    labels = d.stakes.labels
    area = f"{d.unit.symbol}\u00b2"
    outline = area_outlines(cs, drawn)
    poly_x, poly_z = fixed_strings(outline.offset, 4), fixed_strings(outline.z, 4)
    poly_of = np.searchsorted(outline.section, np.arange(drawn.size + 1))
    row_lo, row_hi = np.searchsorted(r.station, drawn, "left"), np.searchsorted(r.station, drawn, "right")
    cut_t, fill_t = fixed_strings(cs.cut_area[drawn], 2), fixed_strings(cs.fill_area[drawn], 2)
    # the ground out to the reference stakes: the drawn stations' rows, in order
    assert d.job.ground is not None
    out_rows = np.concatenate([np.arange(a, b) for a, b in zip(row_lo.tolist(), row_hi.tolist())]).astype(np.int64)
    out_first, out_x, out_z = ground_beyond_catch(d.job.ground, r, out_rows)
    out_at = np.r_[0, np.cumsum(row_hi - row_lo)]
    out = []
    for p, i in enumerate(drawn.tolist()):
        g = slice(int(cs.ground_first[i]), int(cs.ground_first[i + 1]))
        t = slice(int(cs.design_first[i]), int(cs.design_first[i + 1]))
        rows = np.arange(row_lo[p], row_hi[p])
        beyond = [slice(int(out_first[q]), int(out_first[q + 1])) for q in range(int(out_at[p]), int(out_at[p + 1]))]
        xs = np.concatenate([cs.ground_offset[g], cs.design_offset[t], r.reference_offset[rows],
                             *(out_x[seg] for seg in beyond)])
        zs = np.concatenate([cs.ground_z[g], cs.design_z[t], res.ref_ground[rows], *(out_z[seg] for seg in beyond)])
        ok = ~np.isnan(xs) & ~np.isnan(zs)
        x0, x1 = float(xs[ok].min()), float(xs[ok].max())
        z0, z1 = float(zs[ok].min()), float(zs[ok].max())
        pad = max(0.1 * (z1 - z0), 0.5)
        z0, z1 = z0 - pad, z1 + pad
        # the map offset, elevation -> pixels, its numbers as printed in the polygons' transform
        sx = float(f"{(_PW - _PAD_L - _PAD_R) / max(x1 - x0, 1e-9):.6f}")
        sy = float(f"{(_PH - _PAD_T - _PAD_B) / max(z1 - z0, 1e-9):.6f}")
        tx, ty = float(f"{_PAD_L - x0 * sx:.4f}"), float(f"{_PH - _PAD_B + z0 * sy:.4f}")
        m = (sx, sy, tx, ty)
        left, right, bottom, top = _PAD_L, _PW - _PAD_R, _PH - _PAD_B, _PAD_T
        part = [f'<rect x="2" y="2" width="{_PW - 4}" height="{_PH - 4}" fill="white" stroke="{_FRAME}"/>',
                f'<text x="10" y="20"><tspan font-weight="bold" font-size="13">{escape(labels[i])}</tspan>'
                f'<tspan dx="14">cut {cut_t[p]} {area}</tspan><tspan dx="14">fill {fill_t[p]} {area}</tspan></text>',
                f'<text x="10" y="36" font-size="10" fill="{_NOTE}">vertical exaggeration {sy / sx:.1f}; offsets '
                f'and elevations in {escape(d.unit.plural)}</text>',
                f'<g class="areas" transform="matrix({sx:.6f} 0 0 {-sy:.6f} {tx:.4f} {ty:.4f})">']
        for q in range(int(poly_of[p]), int(poly_of[p + 1])):
            a, b = int(outline.first[q]), int(outline.first[q + 1])
            kind = "cut" if bool(outline.cut[q]) else "fill"
            pts = " ".join(f"{u},{w}" for u, w in zip(poly_x[a:b], poly_z[a:b]))
            part.append(f'<polygon class="{kind}" points="{pts}" '
                        f'fill="{CUT_COLOUR if kind == "cut" else FILL_COLOUR}"/>')
        part.append("</g>")
        el = fixed_strings([z0, z1, x0, x1], 2)
        part.append(f'<g font-size="10" fill="{_NOTE}"><text x="{left - 4}" y="{bottom}" text-anchor="end">{el[0]}'
                    f'</text><text x="{left - 4}" y="{top + 8}" text-anchor="end">{el[1]}</text>'
                    f'<text x="{left}" y="{bottom + 14}">{el[2]}</text>'
                    f'<text x="{right}" y="{bottom + 14}" text-anchor="end">{el[3]}</text></g>')
        if x0 <= 0.0 <= x1:
            c = _f(tx)
            part.append(f'<line x1="{c}" y1="{top}" x2="{c}" y2="{bottom}" stroke="{_CL}" stroke-dasharray="3 2"/>'
                        f'<text x="{c}" y="{top - 3}" font-size="10" fill="{_CL}" text-anchor="middle">CL</text>')
        part.append(f'<polyline points="{_pts(cs.ground_offset[g], cs.ground_z[g], m)}" fill="none" '
                    f'stroke="{_GROUND}" stroke-width="1.5"/>')
        for seg in beyond:
            if seg.stop - seg.start > 1:
                part.append(f'<polyline class="beyond" points="{_pts(out_x[seg], out_z[seg], m)}" fill="none" '
                            f'stroke="{_GROUND}" stroke-width="1.5"/>')
        part.append(f'<polyline points="{_pts(cs.design_offset[t], cs.design_z[t], m)}" fill="none" '
                    f'stroke="{_DESIGN}" stroke-width="1.5"/>')
        for j in rows.tolist():
            marks = ((r.hinge_offset[j], res.lines.z[j], "hinge"), (r.catch_offset[j], res.catch_z[j], "catch"),
                     (r.reference_offset[j], res.ref_ground[j], "reference"))
            for x, z, mark in marks:
                if np.isnan(x) or np.isnan(z):
                    continue
                px, py = _f(float(x) * sx + tx), _f(ty - float(z) * sy)
                if mark == "hinge":
                    part.append(f'<rect class="hinge" x="{_f(float(px) - 3)}" y="{_f(float(py) - 3)}" width="6" '
                                f'height="6" fill="{_DESIGN}"/>')
                else:
                    fill = _DESIGN if mark == "catch" else "white"
                    part.append(f'<circle class="{mark}" cx="{px}" cy="{py}" r="4" fill="{fill}" '
                                f'stroke="{_DESIGN}"/>')
        out.append("".join(part))
    return out


def _svg_open(width: int, height: int) -> str:
    return (f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
            f'viewBox="0 0 {width} {height}" font-family="sans-serif" font-size="12">')


def sections_svg(d: Design) -> bytes:
    """Render ``sections.svg`` (the job has ``[slope_stakes]``; sections need both sides)."""
    ew = d.earthwork
    assert ew is not None and ew.slopes is not None
    n, k = ew.volume_stations.size, d.stakes.stations.size
    panels = _panels(d, MAX_DRAWN_SECTIONS)
    rows_n = max(1, -(-len(panels) // _COLS))
    width, height = _COLS * _PW, _TOP + rows_n * _PH
    if n > len(panels):
        last = escape(d.stakes.labels[int(ew.volume_stations[len(panels) - 1])])
        drawn = (f"the first {len(panels)} are drawn (to {last}); "
                 f"the other {n - len(panels)} sections' areas are in volumes.csv, their catch and reference "
                 "stakes in slopestakes.csv")
    else:
        drawn = "each is drawn" if n else "nothing to draw"
    out = [_svg_open(width, height),
           f'<rect width="{width}" height="{height}" fill="white"/>',
           f'<text x="10" y="20" font-size="16">Cross-sections: {escape(d.job.info.name)}</text>',
           f'<text x="10" y="40">{n} of {k} staked stations have both catch points and the ground between them: '
           f'{drawn}.</text>',
           _legend(62, width)[0]]
    for p, body in enumerate(panels):
        out.append(f'<g class="section" transform="translate({(p % _COLS) * _PW} {_TOP + (p // _COLS) * _PH})">'
                   f'{body}</g>')
    out.append("</svg>\n")
    return "\n".join(out).encode("utf-8")


def report_pictures(d: Design, limit: int) -> tuple[str, list[str]]:
    """For ``report.html``: the legend and the first ``limit`` section panels, each a standalone
    ``<svg>`` element (the same panels as ``sections.svg``).
    """
    body, h = _legend(16, _PW)
    legend = f"{_svg_open(_PW, int(h) + 6)}{body}</svg>"
    return legend, [f"{_svg_open(_PW, _PH)}{body}</svg>" for body in _panels(d, limit)]
