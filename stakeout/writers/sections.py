"""Cross-section outputs: the superelevation diagram (``superelevation.svg``), the
transitions listed by ``stakeout curve``, and the slope column of the wide setout sheet.

The diagram draws the left and right cross slopes (percent, negative
falling away from the centreline) against station, with the alignment's key
points and every superelevation row (``SE``) marked.  SVG is written
directly; the same design gives the same bytes.
"""

from __future__ import annotations

import math
from html import escape

import numpy as np

from ..crosssection import section
from ..design import Design
from .text import Column

__all__ = ["superelevation_svg", "transition_lines", "slope_column", "slope_texts", "superelevation_table",
           "uses_sections", "widened_traces", "TRACE_TOLERANCE"]

#: Largest distance (job units) between a drawn widened line and its chords.
TRACE_TOLERANCE = 0.0005
_MAX_TRACE_POINTS = 100_000

_W, _H = 1400, 520  # drawing size, pixels
_LEFT, _RIGHT, _TOP, _BOTTOM = 80, 30, 80, 110
_LEFT_COLOUR, _RIGHT_COLOUR = "#1f5fa8", "#b8321f"


def _slopes(d: Design) -> list[str] | None:
    sl = d.stakes.slope
    if sl is None or not np.isfinite(sl).any():
        return None
    return ["" if math.isnan(v) else f"{round(v, 2) + 0.0:.2f}" for v in sl.tolist()]


def uses_sections(d: Design) -> bool:
    """True when the job has a superelevation table or a template line (``from``,
    ``"superelevation"``, ``steepen_with_inner``, ``rollover``, widening).
    """
    plan = d.sections
    return plan is not None and (plan.has_table or any(ol.template for ol in plan.lines))


def slope_column(d: Design) -> Column | None:
    """``slope %``: the cross slope applied to each stake (empty for the centreline and
    ``dz`` lines); None when no stake has one.
    """
    texts = _slopes(d)
    return None if texts is None else Column("slope %", texts)


def slope_texts(d: Design) -> list[str] | None:
    """The slope of each stake (percent, 2 decimals) for the report of a job that uses
    cross-sections; None otherwise (other jobs' reports are unchanged).
    """
    return _slopes(d) if uses_sections(d) else None


def superelevation_table(d: Design) -> list[list[str]]:
    """The superelevation rows: station, left and right slope (percent, 4 decimals)."""
    plan = d.sections
    if plan is None or not plan.has_table:
        return []
    return [[d.stationing.label(s), f"{left:.4f}", f"{right:.4f}"]
            for s, left, right in zip(plan.se_stations.tolist(), plan.se_left.tolist(), plan.se_right.tolist())]


def widened_traces(d: Design) -> list[tuple[str, np.ndarray, np.ndarray]]:
    """Each widened line as a polyline: (code, northing, easting) through every widening row's
    station, every element end and enough stations between for chords within
    :data:`TRACE_TOLERANCE` of the line (the offset is linear between rows).
    """
    plan, a = d.sections, d.alignment
    if plan is None or not plan.widened:
        return []
    k = max([abs(el.curvature_start) for el in a.elements] + [abs(el.curvature_end) for el in a.elements])
    wide = max(abs(o) for off in plan.widen_offsets if off is not None for o in off.tolist())
    k = k / max(1e-9, 1.0 - k * wide)
    step = math.sqrt(8.0 * TRACE_TOLERANCE / k) if k > 0 else a.length
    count = int(min(_MAX_TRACE_POINTS, max(2, math.ceil(a.length / max(step, 1e-12)) + 1)))
    lo, hi = a.start_station, a.end_station
    rows = np.concatenate([s for s in plan.widen_stations if s is not None])
    s = np.unique(np.concatenate([np.linspace(lo, hi, count), [el.start for el in a.elements], [hi],
                                  rows[(rows > lo) & (rows < hi)]]))
    offsets = section(plan, s, None).offset
    out = []
    for j, ol in enumerate(plan.lines):
        if plan.widen_stations[j] is None:
            continue
        n, e, _ = a.evaluate(s, offsets[:, j], miter=False)
        out.append((ol.code, n, e))
    return out


def transition_lines(d: Design) -> list[str]:
    """The superelevation rows and the widening rows, for ``stakeout curve``."""
    plan = d.sections
    if plan is None:
        return []
    label = d.stationing.label
    out: list[str] = []
    if plan.has_table:
        out += ["", "SUPERELEVATION (cross slopes in percent, negative falls away from the centreline)",
                f"{'station':>12}  {'left':>8}  {'right':>8}  transition"]
        prev = None
        for s, left, right in zip(plan.se_stations.tolist(), plan.se_left.tolist(), plan.se_right.tolist()):
            note = ""
            if prev is not None:
                length = s - prev[0]
                change = max(abs(left - prev[1]), abs(right - prev[2]))
                note = f"over {length:.4f} {d.unit.symbol} from the row before"
                if change > 0.0:
                    note += f", {change / length:.5f} % per {d.unit.symbol}"
            out.append(f"{label(s):>12}  {left:8.4f}  {right:8.4f}  {note}".rstrip())
            prev = (s, left, right)
    for ol, st, off in zip(plan.lines, plan.widen_stations, plan.widen_offsets):
        if st is None or off is None:
            continue
        out += ["", f"WIDENING {ol.code} (offset, negative left)", f"{'station':>12}  {'offset':>10}"]
        out += [f"{label(s):>12}  {o:10.4f}" for s, o in zip(st.tolist(), off.tolist())]
    return out


def _f(v: float) -> str:
    return f"{v:.2f}"


def superelevation_svg(d: Design) -> bytes:
    """Render ``superelevation.svg`` (the job must have ``[[superelevation]]`` rows)."""
    plan = d.sections
    assert plan is not None and plan.has_table
    al, label = d.alignment, d.stationing.label
    x0 = min(al.start_station, float(plan.se_stations[0]))
    x1 = max(al.end_station, float(plan.se_stations[-1]))
    xs = np.concatenate([[x0], plan.se_stations, [x1]])
    left = np.concatenate([[plan.se_left[0]], plan.se_left, [plan.se_left[-1]]])
    right = np.concatenate([[plan.se_right[0]], plan.se_right, [plan.se_right[-1]]])
    top = max(2.0, float(np.abs(np.concatenate([left, right])).max()))
    top = math.ceil(top + 0.5)
    step = 1 if top <= 6 else 2
    top += top % step  # grid lines on whole multiples of the step, zero among them
    plot_w, plot_h = _W - _LEFT - _RIGHT, _H - _TOP - _BOTTOM
    sx = plot_w / max(x1 - x0, 1e-9)
    sy = plot_h / (2 * top)

    def px(x: float) -> float:
        return _LEFT + (x - x0) * sx

    def py(y: float) -> float:
        return _TOP + (top - y) * sy

    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{_W}" height="{_H}" viewBox="0 0 {_W} {_H}" '
             'font-family="sans-serif" font-size="12">',
             f'<rect width="{_W}" height="{_H}" fill="white"/>',
             f'<text x="{_LEFT}" y="24" font-size="16">{escape(d.job.info.name)} — superelevation, alignment '
             f'{escape(al.name)}</text>',
             f'<text x="{_LEFT}" y="44">cross slopes in percent, outward from the centreline (negative falls '
             'away from it); linear by distance between rows</text>']
    for k in range(-top, top + 1, step):  # slope grid
        y = py(k)
        parts.append(f'<line x1="{_LEFT}" y1="{_f(y)}" x2="{_W - _RIGHT}" y2="{_f(y)}" stroke="'
                     f'{"#444" if k == 0 else "#ddd"}" stroke-width="{1.2 if k == 0 else 0.6}"/>')
        parts.append(f'<text x="{_LEFT - 8}" y="{_f(y + 4)}" text-anchor="end">{k:+d} %</text>'.replace("+0 %", "0 %"))
    for kp in al.key_points:  # key points of the alignment along the top
        x = px(kp.station)
        parts.append(f'<line x1="{_f(x)}" y1="{_TOP}" x2="{_f(x)}" y2="{_f(_TOP + plot_h)}" stroke="#999" '
                     'stroke-width="0.8"/>')
        parts.append(f'<text x="{_f(x)}" y="{_TOP - 8}" text-anchor="middle">{escape(" ".join(kp.features))}'
                     '</text>')
    base = _TOP + plot_h
    for s in plan.se_stations.tolist():  # SE rows: dashed, labelled along the foot
        x = px(s)
        parts.append(f'<line class="se" x1="{_f(x)}" y1="{_TOP}" x2="{_f(x)}" y2="{_f(base)}" stroke="#2a8a3a" '
                     'stroke-dasharray="4 3" stroke-width="0.8"/>')
        parts.append(f'<text x="{_f(x)}" y="{_f(base + 14)}" transform="rotate(60 {_f(x)} {_f(base + 14)})" '
                     f'fill="#2a8a3a">SE {escape(label(s))}</text>')
    for name, ys, colour in (("left", left, _LEFT_COLOUR), ("right", right, _RIGHT_COLOUR)):
        pts = " ".join(f"{_f(px(x))},{_f(py(y))}" for x, y in zip(xs.tolist(), ys.tolist()))
        parts.append(f'<polyline class="{name}" points="{pts}" fill="none" stroke="{colour}" stroke-width="2"/>')
    lx = _W - _RIGHT - 220
    for i, (name, colour) in enumerate((("left side", _LEFT_COLOUR), ("right side", _RIGHT_COLOUR))):
        y = 24 + 18 * i
        parts.append(f'<line x1="{lx}" y1="{y - 4}" x2="{lx + 30}" y2="{y - 4}" stroke="{colour}" '
                     'stroke-width="2"/>')
        parts.append(f'<text x="{lx + 38}" y="{y}">{name}</text>')
    parts.append(f'<text x="{_LEFT}" y="{_H - 8}">from {escape(label(x0))} to {escape(label(x1))}; SE: a '
                 'superelevation row (staked); grey: key points of the alignment</text>')
    parts.append("</svg>")
    return ("\n".join(parts) + "\n").encode("utf-8")
