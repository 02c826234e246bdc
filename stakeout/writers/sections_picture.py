"""``sections.svg``: the cross-sections of a job with ``[slope_stakes]``, written directly as SVG.

One panel per staked station with both catch points (station order, two
panels a row): the ground line along the section (brown), the design
template from catch to catch (black), the hinges (squares), the catch
stakes (filled circles) and the reference stakes (open circles), with the
station, the cut and fill areas and the vertical exaggeration written.
Stations without both catch points are counted at the top, not drawn.
The same design gives the same bytes.
"""

from __future__ import annotations

from html import escape

import numpy as np

from ..design import Design
from ..numbers import fixed_strings

__all__ = ["sections_svg"]

_PW, _PH = 640, 300  # one panel, pixels
_PAD_L, _PAD_R, _PAD_T, _PAD_B = 50, 20, 40, 30
_COLS = 2
_TOP = 50  # title band


def _f(v: float) -> str:
    return f"{v:.2f}"


def _pts(x: np.ndarray, z: np.ndarray, frame: tuple[float, float, float, float, float, float]) -> str:
    """Section points (offset, elevation) as SVG points of the panel ``frame`` (ox, oy, x0, z0, sx, sy)."""
    ox, oy, x0, z0, sx, sy = frame
    px = ox + _PAD_L + (x - x0) * sx
    py = oy + _PH - _PAD_B - (z - z0) * sy
    return " ".join(f"{_f(a)},{_f(b)}" for a, b in zip(px.tolist(), py.tolist()))


def sections_svg(d: Design) -> bytes:
    """Render ``sections.svg`` (the job must have ``[slope_stakes]`` on both sides for sections)."""
    ew = d.earthwork
    assert ew is not None and ew.slopes is not None
    cs = ew.sections
    labels = d.stakes.labels
    drawn = ew.volume_stations
    k = d.stakes.stations.size
    rows_n = max(1, -(-drawn.size // _COLS))
    width, height = _COLS * _PW, _TOP + rows_n * _PH
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
           f'viewBox="0 0 {width} {height}" font-family="sans-serif" font-size="12">',
           f'<rect width="{width}" height="{height}" fill="white"/>',
           f'<text x="10" y="20" font-size="16">Cross-sections: {escape(d.job.info.name)}</text>',
           f'<text x="10" y="40">{drawn.size} of {k} staked stations have both catch points and are drawn; '
           f'offsets and elevations in {escape(d.unit.label)} units; ground brown, design black</text>']
    r = ew.slopes
    for p, i in enumerate(drawn.tolist()):
        assert cs is not None
        ox, oy = (p % _COLS) * _PW, _TOP + (p // _COLS) * _PH
        g = slice(int(cs.ground_first[i]), int(cs.ground_first[i + 1]))
        t = slice(int(cs.design_first[i]), int(cs.design_first[i + 1]))
        rows = np.flatnonzero(r.station == i)
        res = r.result
        xs = np.concatenate([cs.ground_offset[g], cs.design_offset[t], r.reference_offset[rows]])
        zs = np.concatenate([cs.ground_z[g], cs.design_z[t], res.ref_ground[rows]])
        ok = ~np.isnan(xs) & ~np.isnan(zs)
        x0, x1 = float(xs[ok].min()), float(xs[ok].max())
        z0, z1 = float(zs[ok].min()), float(zs[ok].max())
        pad = max(0.1 * (z1 - z0), 0.5)
        z0, z1 = z0 - pad, z1 + pad
        sx = (_PW - _PAD_L - _PAD_R) / max(x1 - x0, 1e-9)
        sy = (_PH - _PAD_T - _PAD_B) / max(z1 - z0, 1e-9)
        frame = (float(ox), float(oy), x0, z0, sx, sy)

        ca, fa = fixed_strings([cs.cut_area[i], cs.fill_area[i]], 2)
        out.append(f'<g><rect x="{ox + 2}" y="{oy + 2}" width="{_PW - 4}" height="{_PH - 4}" fill="none" '
                   f'stroke="#999"/><text x="{ox + 10}" y="{oy + 20}">{escape(labels[i])}   cut area {ca}   '
                   f'fill area {fa}   vertical exaggeration {sy / sx:.1f}</text>')
        out.append(f'<polyline points="{_pts(cs.ground_offset[g], cs.ground_z[g], frame)}" fill="none" '
                   'stroke="#8b5a2b" stroke-width="1.5"/>')
        out.append(f'<polyline points="{_pts(cs.design_offset[t], cs.design_z[t], frame)}" fill="none" '
                   'stroke="black" stroke-width="1.5"/>')
        for j in rows.tolist():
            marks = ((r.hinge_offset[j], res.lines.z[j], "hinge"), (r.catch_offset[j], res.catch_z[j], "catch"),
                     (r.reference_offset[j], res.ref_ground[j], "ref"))
            for x, z, mark in marks:
                if np.isnan(x) or np.isnan(z):
                    continue
                c = _pts(np.array([x]), np.array([z]), frame).split(",")
                if mark == "hinge":
                    out.append(f'<rect x="{_f(float(c[0]) - 3)}" y="{_f(float(c[1]) - 3)}" width="6" height="6" '
                               'fill="black"/>')
                else:
                    fill = "black" if mark == "catch" else "white"
                    out.append(f'<circle cx="{c[0]}" cy="{c[1]}" r="4" fill="{fill}" stroke="black"/>')
        out.append("</g>")
    out.append("</svg>\n")
    return "\n".join(out).encode("utf-8")
