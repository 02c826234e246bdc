"""``profile.svg``: a picture of the profile, written directly as SVG.

Grades (dashed, PVI to PVI, each written in percent), the finished grade
with its vertical curves, each PVI labelled with its station and elevation
and its curve's length L and K, PVC, PVT and high or low points marked,
station equations marked, the grid at round stations of each region's own
stationing, and every staked station ticked along the foot.  Elevations
are exaggerated by a stated factor.  The same design gives the same bytes.
"""

from __future__ import annotations

import math
from html import escape

import numpy as np

from ..design import Design

__all__ = ["profile_svg", "TICK_MAX_STATIONS", "TICK_CELL"]

_W, _H = 1400, 700  # drawing size, pixels
_LEFT, _RIGHT, _TOP, _BOTTOM = 90, 30, 70, 90

#: Over this many staked stations in the profile's range, those along the foot are thinned to
#: one tick a :data:`TICK_CELL` of the drawing (every station is in stations.csv): the file stays
#: the same size (under 1 MB for a few PVIs) however many stations the job stakes.
TICK_MAX_STATIONS = 5000

#: Thinned ticks: at most one per this many pixels along the foot.
TICK_CELL = 2.0


def _nice(span: float, count: int) -> float:
    """A round step (1, 2 or 5 times a power of ten) giving about ``count`` steps over ``span``."""
    raw = max(span, 1e-9) / max(count, 1)
    power = 10.0 ** math.floor(math.log10(raw))
    for m in (1.0, 2.0, 5.0, 10.0):
        if m * power >= raw:
            return m * power
    return 10.0 * power


def _f(v: float) -> str:
    return f"{v:.2f}"


def profile_svg(d: Design) -> bytes:
    """Render ``profile.svg`` of the design's profile (the job must have one)."""
    prof = d.profile
    assert prof is not None
    st = d.stationing
    x0, x1 = prof.start, prof.end
    xs = np.linspace(x0, x1, 1200)
    ys = prof.elevation(xs)
    rows = d.presentation.profile_rows
    pvi_x = np.array([r.station for r in rows])
    pvi_y = np.array([r.elevation for r in rows])
    lo = float(min(ys.min(), pvi_y.min()))
    hi = float(max(ys.max(), pvi_y.max()))
    pad = max(0.05 * (hi - lo), 0.5)
    lo, hi = lo - pad, hi + pad
    plot_w, plot_h = _W - _LEFT - _RIGHT, _H - _TOP - _BOTTOM
    sx = plot_w / max(x1 - x0, 1e-9)
    sy = plot_h / max(hi - lo, 1e-9)
    exaggeration = sy / sx

    def px(x: np.ndarray | float) -> np.ndarray:
        return _LEFT + (np.asarray(x, dtype=float) - x0) * sx

    def py(y: np.ndarray | float) -> np.ndarray:
        return _TOP + (hi - np.asarray(y, dtype=float)) * sy

    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{_W}" height="{_H}" viewBox="0 0 {_W} {_H}" '
           'font-family="DejaVu Sans, Arial, sans-serif" font-size="12">',
           f'<rect x="0" y="0" width="{_W}" height="{_H}" fill="white"/>']
    # elevation grid and axis labels
    step_y = _nice(hi - lo, 8)
    for v in np.arange(math.ceil(lo / step_y) * step_y, hi, step_y).tolist():
        y = float(py(v))
        out.append(f'<line x1="{_LEFT}" y1="{_f(y)}" x2="{_W - _RIGHT}" y2="{_f(y)}" stroke="#ddd"/>')
        out.append(f'<text x="{_LEFT - 6}" y="{_f(y + 4)}" text-anchor="end">{v:.2f}</text>')
    # station grid at round stations of each region's own stationing (past an equation, of the
    # stationing in force there), labelled with those stations
    step_x = _nice(x1 - x0, 10)
    grid = st.interval_stations(step_x)
    grid = grid[(grid >= x0 - 1e-9) & (grid <= x1 + 1e-9)]
    for v in grid.tolist():
        x = float(px(v))
        out.append(f'<line x1="{_f(x)}" y1="{_TOP}" x2="{_f(x)}" y2="{_H - _BOTTOM}" stroke="#eee"/>')
        out.append(f'<text x="{_f(x)}" y="{_H - _BOTTOM + 34}" text-anchor="middle">{escape(st.label(v))}</text>')
    # station equations: a dashed line and the equation
    for eq in st.equations:
        if not x0 - 1e-9 <= eq.internal <= x1 + 1e-9:
            continue
        x = float(px(eq.internal))
        out.append(f'<line x1="{_f(x)}" y1="{_TOP}" x2="{_f(x)}" y2="{_H - _BOTTOM}" stroke="#7b3294" '
                   'stroke-dasharray="4 3"/>')
        out.append(f'<text x="{_f(x + 4)}" y="{_TOP + 14}" fill="#7b3294" font-size="11">'
                   f'{escape(st.format_value(eq.back))} BK = {escape(st.format_value(eq.ahead))} AH</text>')
    # grades, PVI to PVI
    pts = " ".join(f"{_f(a)},{_f(b)}" for a, b in zip(px(pvi_x).tolist(), py(pvi_y).tolist()))
    out.append(f'<polyline points="{pts}" fill="none" stroke="#888" stroke-dasharray="6 4"/>')
    # finished grade
    pts = " ".join(f"{_f(a)},{_f(b)}" for a, b in zip(px(xs).tolist(), py(ys).tolist()))
    out.append(f'<polyline points="{pts}" fill="none" stroke="#c00" stroke-width="2"/>')
    # each grade (percent) at the middle of its tangent, PVI to PVI
    for a_, b_ in zip(rows[:-1], rows[1:]):
        if a_.grade_out is None:
            continue
        xm, ym = float(px(0.5 * (a_.station + b_.station))), float(py(0.5 * (a_.elevation + b_.elevation)))
        out.append(f'<text x="{_f(xm)}" y="{_f(ym - 8)}" text-anchor="middle" font-size="11">'
                   f'{100.0 * a_.grade_out:+.4f} %</text>')
    # PVIs, PVC / PVT and high / low points
    for i, r in enumerate(rows):
        x, y = float(px(r.station)), float(py(r.elevation))
        anchor = "start" if i == 0 else ("end" if i == len(rows) - 1 else "middle")
        out.append(f'<circle cx="{_f(x)}" cy="{_f(y)}" r="4" fill="none" stroke="#333"/>')
        out.append(f'<text x="{_f(x)}" y="{_f(y - 10)}" text-anchor="{anchor}">'
                   f'PVI {escape(st.label(r.station))} el {r.elevation:.3f}</text>')
        whole = (r.curve_length_back or 0.0) + (r.curve_length_ahead or 0.0)
        if whole > 0.0:  # the vertical curve's length and K under the PVI
            k_text = f"  K {r.k_value:.4f}" if r.k_value is not None else ""
            out.append(f'<text x="{_f(x)}" y="{_f(y + 40)}" text-anchor="{anchor}" font-size="11">'
                       f'L {whole:.4f}{k_text}</text>')
        for name, sta, el in (("PVC", r.pvc_station, r.pvc_elevation), ("PVT", r.pvt_station, r.pvt_elevation),
                              (r.high_low_kind or "", r.high_low_station, r.high_low_elevation)):
            if sta is None or el is None:
                continue
            a, b = float(px(sta)), float(py(el))
            out.append(f'<line x1="{_f(a)}" y1="{_f(b - 8)}" x2="{_f(a)}" y2="{_f(b + 8)}" stroke="#333"/>')
            out.append(f'<text x="{_f(a)}" y="{_f(b + 22)}" text-anchor="middle" font-size="10">{name}</text>')
    # staked stations ticked along the foot
    staked = d.stakes.stations[(d.stakes.stations >= x0) & (d.stakes.stations <= x1)]
    foot = _H - _BOTTOM
    ticks = px(staked)
    thinned = ""
    if staked.size > TICK_MAX_STATIONS:  # the first stake of each cell, in station order
        _, first = np.unique(np.floor(ticks / TICK_CELL), return_index=True)
        ticks = ticks[first]
        thinned = f" (thinned to one a {TICK_CELL:g} px: {ticks.size:,} ticks for {staked.size:,} staked stations)"
    for x in ticks.tolist():
        out.append(f'<line x1="{_f(x)}" y1="{foot}" x2="{_f(x)}" y2="{foot + 8}" stroke="#06c"/>')
    out.append(f'<line x1="{_LEFT}" y1="{foot}" x2="{_W - _RIGHT}" y2="{foot}" stroke="#333"/>')
    title = escape(f"PROFILE  {d.job.info.name}  ({prof.name})" if prof.name else f"PROFILE  {d.job.info.name}")
    out.append(f'<text x="{_LEFT}" y="28" font-size="16" font-weight="bold">{title}</text>')
    out.append(f'<text x="{_LEFT}" y="48">job file sha256 {d.job.sha256[:16]}...   units {escape(d.unit.label)}   '
               f'vertical exaggeration {exaggeration:.1f}x   blue ticks: staked stations{thinned}</text>')
    out.append(f'<text x="{_LEFT}" y="{_H - 20}" font-size="11">CAUTION: check every value independently before '
               "staking; local codes and a licensed surveyor's judgement govern.</text>")
    out.append("</svg>")
    return ("\n".join(out) + "\n").encode("utf-8")
