"""``superelevation.svg``: the superelevation diagram.

The diagram draws the left and right cross slopes (percent, negative
falling away from the centreline) against station, with the alignment's key
points and every superelevation row (``SE``) marked.  SVG is written
directly; the same design gives the same bytes.
"""

from __future__ import annotations

import math
from html import escape

import numpy as np

from ..design import Design

__all__ = ["superelevation_svg"]

_W, _H = 1400, 520  # drawing size, pixels
_LEFT, _RIGHT, _TOP, _BOTTOM = 80, 30, 80, 110
_LEFT_COLOUR, _RIGHT_COLOUR = "#1f5fa8", "#b8321f"


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
