"""The curve report printed by ``stakeout curve``: elements, key points and
curve data, with T_A and T_B named by the side they lie on."""

from __future__ import annotations

from ..alignment import Alignment, degree_of_curve_arc
from ..angles import format_azimuth_dms, format_dms
from ..stations import station_text
from ..units import Unit
from .cautions import CAUTION_LINES

__all__ = ["curve_report"]


def curve_report(alignment: Alignment, job_name: str, unit: Unit, station_length: int,
                 crs: str | None, job_file: str = "", job_sha256: str = "") -> str:
    """Render the readable curve report as text (at most 100 columns)."""
    def st(v: float) -> str:
        return station_text(v, station_length, unit.station_decimals)

    out: list[str] = []
    out.append(f"CURVE REPORT  {job_name}".rstrip())
    if job_file:
        out.append(f"job file {job_file}   sha256 {job_sha256[:16]}...")
    out.append(f"alignment {alignment.name}   units: {unit.label}   CRS: {crs or 'local grid (none given)'}")
    out.append(f"from {st(alignment.start_station)} to {st(alignment.end_station)}, "
               f"length {alignment.length:.4f} {unit.symbol}")
    out.append("")
    out.append("ELEMENTS")
    out.append(f"{'#':>3}  {'kind':<4}  {'from':>12}  {'to':>12}  {'length':>11}  {'radius':>10}  "
               f"{'delta':>13}  {'turn':<5}  {'start azimuth':>13}")
    for i, el in enumerate(alignment.elements, start=1):
        radius = f"{el.radius:10.4f}" if el.radius is not None else " " * 10
        delta = f"{format_dms(el.delta, 1):>13}" if el.delta is not None else " " * 13
        turn = ("right" if el.turn > 0 else "left") if el.turn else ""
        out.append(f"{i:>3}  {el.kind:<4}  {st(el.start_station):>12}  {st(el.end_station):>12}  "
                   f"{el.length:11.4f}  {radius}  {delta}  {turn:<5}  "
                   f"{format_azimuth_dms(el.start_azimuth, 1):>13}")
    out.append("")
    out.append("KEY POINTS")
    out.append(f"{'station':>12}  {'feature':<10}  {'northing':>15}  {'easting':>15}")
    for kp in alignment.key_points:
        out.append(f"{st(kp.station):>12}  {' '.join(kp.features):<10}  {kp.northing:15.4f}  {kp.easting:15.4f}")
    for c in alignment.curves:
        out.append("")
        kind = "simple curve" if len(c.elements) == 1 else f"compound curve, {len(c.elements)} arcs"
        out.append(f"CURVE {c.number}  ({kind}, turning {'right' if c.turn > 0 else 'left'})")
        out.append(f"  I (total central angle) = {format_dms(c.delta, 1)}   "
                   f"from {st(c.pc_station)} to {st(c.pt_station)}")
        if c.tangents is None or c.pi_station is None:
            out.append("  I is 180 degrees or more: the end tangents meet behind the curve, no PI")
        else:
            t = c.tangents
            out.append(f"  PI {st(c.pi_station)}   N {c.pi_northing:.4f}  E {c.pi_easting:.4f}")
            back_name = ahead_name = ""
            if t.t_a_side is not None:
                big = max(alignment.elements[i].radius or 0.0 for i in c.elements)
                small = min(alignment.elements[i].radius or 0.0 for i in c.elements)
                if t.t_a_side == "back":
                    back_name = f"  = T_A, larger-radius side (R1 {big:.4f})"
                    ahead_name = f"  = T_B, smaller-radius side (R2 {small:.4f})"
                else:
                    back_name = f"  = T_B, smaller-radius side (R2 {small:.4f})"
                    ahead_name = f"  = T_A, larger-radius side (R1 {big:.4f})"
            out.append(f"  tangent PI to start (back)  {t.back:12.4f}{back_name}")
            out.append(f"  tangent PI to end (ahead)   {t.ahead:12.4f}{ahead_name}")
        for n, i in enumerate(c.elements, start=1):
            el = alignment.elements[i]
            assert el.arc is not None
            p = el.arc
            tan = f"{p.tangent:.4f}" if p.tangent is not None else "-"
            ext = f"{p.external:.4f}" if p.external is not None else "-"
            out.append(f"  arc {n}: {st(el.start_station)} to {st(el.end_station)}   R {p.radius:.4f}   "
                       f"delta {format_dms(p.delta, 1)}   L {p.length:.4f}")
            line = (f"         T {tan}   chord {p.chord:.4f}   E {ext}   M {p.middle_ordinate:.4f}")
            if unit.is_feet:
                line += f"   D (arc, 100 ft) {format_dms(degree_of_curve_arc(p.radius), 1)}"
            out.append(line)
            out.append(f"         centre N {el.center_northing:.4f}  E {el.center_easting:.4f}")
    out.append("")
    out.extend(CAUTION_LINES)
    return "\n".join(out) + "\n"
