"""The curve report printed by ``stakeout curve``: elements, key points and
curve data, with T_A and T_B named by the side they lie on.
"""

from __future__ import annotations

from pathlib import Path

from typing import Any

from ..angles import format_azimuth_dms, format_dms
from ..design import Design
from ..presentation import degree_of_curve_arc
from .sections import transition_lines
from .text import CAUTION_LINES, curve_texts, spiral_line, turn_word

__all__ = ["curve_report"]


def curve_report(d: Design) -> str:
    """Render the readable curve report as text (at most 100 columns)."""
    alignment, unit, st = d.alignment, d.unit, d.stationing.label
    job = d.job
    out: list[str] = []
    out.append(f"CURVE REPORT  {job.info.name}".rstrip())
    out.append(f"job file {Path(job.path).name}   sha256 {job.sha256[:16]}...")
    out.append(f"alignment {alignment.name}   units: {unit.label}   CRS: {job.info.crs or 'local grid (none given)'}")
    out.append(f"from {st(alignment.start_station)} to {st(alignment.end_station)}, "
               f"length {alignment.length:.4f} {unit.symbol}")
    for eq in d.stationing.equations:
        out.append(f"station equation  {d.stationing.format_value(eq.back)} BK = "
                   f"{d.stationing.format_value(eq.ahead)} AH  (internal {eq.internal:.4f})")
    out.append("")
    out.append("ELEMENTS")
    kw = max(4, *(len(el.kind) for el in alignment.elements))
    out.append(f"{'#':>3}  {'kind':<{kw}}  {'from':>12}  {'to':>12}  {'length':>11}  {'radius':>10}  "
               f"{'delta':>13}  {'turn':<5}  {'start azimuth':>13}")
    for i, el in enumerate(alignment.elements, start=1):
        r = el.radius_start if el.radius_start == el.radius_end else None
        radius = f"{r:10.4f}" if r is not None else " " * 10
        delta = f"{format_dms(el.central_angle, 1):>13}" if el.turn else " " * 13
        end = d.stationing.format_value(float(d.stationing.station_back(el.end)))
        out.append(f"{i:>3}  {el.kind:<{kw}}  {st(el.start):>12}  {end:>12}  "
                   f"{el.length:11.4f}  {radius}  {delta}  {turn_word(el.turn):<5}  "
                   f"{format_azimuth_dms(el.start_azimuth, 1):>13}")
    out.append("")
    out.append("KEY POINTS")
    out.append(f"{'station':>12}  {'feature':<10}  {'northing':>15}  {'easting':>15}")
    for kp in alignment.key_points:
        out.append(f"{st(kp.station):>12}  {' '.join(kp.features):<10}  {kp.northing:15.4f}  {kp.easting:15.4f}")
    figures = {id(sv.element): sv.figures for sv in d.presentation.spirals}
    for ct in curve_texts(d):
        c = ct.curve
        out.append("")
        out.append(f"CURVE {c.number}  ({ct.kind}, turning {ct.turn})")
        out.append(f"  I (total central angle) = {ct.delta}   "
                   f"from {st(c.pc_station)} to {st(c.pt_station)}")
        if c.tangents is None or c.pi_station is None:
            out.append("  I is 180 degrees or more: the end tangents meet behind the curve, no PI")
        else:
            t = c.tangents
            out.append(f"  PI {ct.pi_label}   N {c.pi_northing:.4f}  E {c.pi_easting:.4f}")
            names = {"T_A": "larger", "T_B": "smaller"}
            back_name = ahead_name = ""
            if ct.back_side is not None and ct.ahead_side is not None:
                b, a = ct.back_side, ct.ahead_side
                back_name = f"  = {b[0]}, {names[b[0]]}-radius side ({b[1]} {b[2]:.4f})"
                ahead_name = f"  = {a[0]}, {names[a[0]]}-radius side ({a[1]} {a[2]:.4f})"
            out.append(f"  tangent PI to start (back)  {t.back:12.4f}{back_name}")
            out.append(f"  tangent PI to end (ahead)   {t.ahead:12.4f}{ahead_name}")
        for n, (arc, a0, a1) in enumerate(ct.arcs, start=1):
            out.extend(_arc_lines(n, arc, a0, a1, unit.is_feet))
        for n, (sp, a0, a1) in enumerate(ct.spirals, start=1):
            out.extend(_spiral_lines(n, sp, figures[id(sp)], a0, a1))
        if ct.external is not None:
            out.append(f"  external (PI to the curve)  {ct.external:.4f}")
    out.extend(transition_lines(d))
    out.append("")
    out.extend(CAUTION_LINES)
    return "\n".join(out) + "\n"


def _arc_lines(n: int, el: Any, a0: str, a1: str, feet: bool) -> list[str]:
    p = el.props
    assert p is not None
    tan = f"{p.tangent:.4f}" if p.tangent is not None else "-"
    ext = f"{p.external:.4f}" if p.external is not None else "-"
    line = f"         T {tan}   chord {p.chord:.4f}   E {ext}   M {p.middle_ordinate:.4f}"
    if feet:
        line += f"   D (arc, 100 ft) {format_dms(degree_of_curve_arc(p.radius), 1)}"
    return [f"  arc {n}: {a0} to {a1}   R {p.radius:.4f}   delta {format_dms(p.delta, 1)}   L {p.length:.4f}",
            line,
            f"         centre N {el.center_northing:.4f}  E {el.center_easting:.4f}"]


def _spiral_lines(n: int, sp: Any, f: Any, a0: str, a1: str) -> list[str]:
    out = [f"  spiral {n}: {spiral_line(sp, a0, a1)}"]
    if f.p is not None and f.k is not None and f.long_tangent is not None and f.short_tangent is not None:
        out.append(f"         X {f.x:.4f}   Y {f.y:.4f}   p {f.p:.4f}   k {f.k:.4f}")
        out.append(f"         long tangent {f.long_tangent:.4f}   short tangent {f.short_tangent:.4f}")
    else:
        out.append(f"         X {f.x:.4f}   Y {f.y:.4f}  (from its start, along its start tangent)")
    return out
