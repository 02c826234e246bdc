"""Printable sheets: the setout sheet (``setout.txt``) and the deflection
sheet for curves (``deflections.txt``).

Plain text, at most 100 characters a line, pages separated by a form feed,
the column header repeated at the top of every page of 50 rows, the
cautions at the foot.  Nothing time-dependent is printed, so the same job
gives the same bytes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..alignment import Alignment
from ..angles import format_azimuth_dms, format_dms
from ..jobfile import Job
from ..setout import ScaleInfo, Setout
from ..staking import StakePoints
from ..stations import format_station, station_text
from .cautions import CAUTION_LINES
from .numbers import fixed

__all__ = ["ROWS_PER_PAGE", "SheetHeader", "curve_lines", "setout_sheet", "deflection_sheet", "deflection_rows"]

ROWS_PER_PAGE = 50
WIDTH = 100


@dataclass(frozen=True)
class SheetHeader:
    """What every sheet says about the job before its table."""

    title: str
    job: Job
    alignment_name: str
    crs_label: str | None

    def lines(self) -> list[str]:
        unit = self.job.info.unit
        return [
            f"{self.title}   {self.job.info.name}".rstrip(),
            f"job file  {Path(self.job.path).name}",
            f"          sha256 {self.job.sha256}",
            f"alignment {self.alignment_name}   units {unit.label}",
            f"CRS       {self.crs_label or 'none: local grid'}",
        ]


def curve_lines(alignment: Alignment, station_length: int, decimals: int) -> list[str]:
    """Curve data for the foot of a sheet: per curve its PI and whole tangents
    (T_A / T_B named by side for two-centred curves), then one line per arc."""
    def st(v: float) -> str:
        return station_text(v, station_length, decimals)

    out = ["CURVE DATA"]
    if not alignment.curves:
        out.append("  (no curves)")
    for c in alignment.curves:
        t = c.tangents
        head = f"  curve {c.number}  {'right' if c.turn > 0 else 'left'}  I {format_dms(c.delta, 1)}"
        if c.pi_station is None or t is None:
            out.append(head + "  (I of 180 deg or more: no PI)")
        else:
            out.append(head + f"  PI {st(c.pi_station)}  N {c.pi_northing:.4f}  E {c.pi_easting:.4f}")
            radii = [alignment.elements[i].radius or 0.0 for i in c.elements]
            side_b = side_a = ""
            if t.t_a_side == "back":
                side_b, side_a = f" = T_A (R1 {max(radii):.4f} side)", f" = T_B (R2 {min(radii):.4f} side)"
            elif t.t_a_side == "ahead":
                side_b, side_a = f" = T_B (R2 {min(radii):.4f} side)", f" = T_A (R1 {max(radii):.4f} side)"
            out.append(f"    tangent PI to start (back)  {t.back:.4f}{side_b}")
            out.append(f"    tangent PI to end (ahead)   {t.ahead:.4f}{side_a}")
        for k, i in enumerate(c.elements, start=1):
            el = alignment.elements[i]
            assert el.arc is not None
            out.append(f"    arc {k}  {st(el.start_station)} to {st(el.end_station)}  R {el.arc.radius:.4f}  "
                       f"delta {format_dms(el.arc.delta, 1)}  L {el.arc.length:.4f}  chord {el.arc.chord:.4f}")
    return out


def _paged(head: list[str], columns: list[str], rows: list[str], title: str, foot: list[str]) -> str:
    pages = max(1, math.ceil(len(rows) / ROWS_PER_PAGE))
    rule = "-" * max(len(c) for c in columns)
    out: list[str] = []
    for p in range(pages):
        if p == 0:
            out.extend(head)
        else:
            out.append("\f" + f"{title}   page {p + 1} of {pages}")
        out.append(f"page {p + 1} of {pages}" if p == 0 else "")
        out.append(rule)
        out.extend(columns)
        out.append(rule)
        out.extend(rows[p * ROWS_PER_PAGE:(p + 1) * ROWS_PER_PAGE])
        out.append(rule)
    out.append("")
    out.extend(foot)
    out.append("")
    out.extend(CAUTION_LINES)
    text = "\n".join(out) + "\n"
    assert all(len(line.lstrip("\f")) <= WIDTH for line in text.splitlines()), "sheet line over 100 characters"
    return text


def setout_sheet(job: Job, alignment: Alignment, stakes: StakePoints, so: Setout, scale: ScaleInfo,
                 crs_label: str | None) -> str:
    """Render ``setout.txt``."""
    setup = job.setup
    assert setup is not None
    unit = job.info.unit
    occ = setup.occupied
    title = "SETOUT SHEET"
    head = SheetHeader(title, job, alignment.name, crs_label).lines()
    occ_line = f"occupied  {occ.id}   N {occ.northing:.4f}   E {occ.easting:.4f}"
    if occ.elevation is not None:
        occ_line += f"   elev {occ.elevation:.3f}"
    if setup.instrument_height is not None:
        occ_line += f"   inst ht {setup.instrument_height:.3f}"
    head.append(occ_line)
    if setup.backsight is not None:
        bs = setup.backsight
        dist = math.hypot(bs.northing - occ.northing, bs.easting - occ.easting)
        head.append(f"backsight {bs.id}   N {bs.northing:.4f}   E {bs.easting:.4f}")
        head.append(f"          grid azimuth {format_azimuth_dms(so.backsight_azimuth, 1)}   "
                    f"grid distance {dist:.4f}   ground {dist / scale.combined_factor:.4f}")
    elif setup.azimuth_reference == "geodetic":
        assert setup.backsight_azimuth is not None and scale.convergence is not None
        head.append(f"backsight geodetic azimuth {format_azimuth_dms(setup.backsight_azimuth, 1)} (given)")
        head.append(f"          minus convergence {format_dms(scale.convergence, 1)} at the occupied point")
        head.append(f"          = grid azimuth {format_azimuth_dms(so.backsight_azimuth, 1)}")
    else:
        head.append(f"backsight grid azimuth {format_azimuth_dms(so.backsight_azimuth, 1)} (given)")
    if scale.scale_factor is not None and scale.elevation_factor is not None:
        head.append(f"combined factor {scale.combined_factor:.8f} = grid scale factor k {scale.scale_factor:.8f} "
                    "at the occupied point")
        head.append(f"                x elevation factor R/(R+h) {scale.elevation_factor:.8f} "
                    f"(h {scale.height:.3f} {unit.symbol} ellipsoid height, R {scale.radius_m:.0f} m)")
    else:
        head.append(f"combined factor {scale.combined_factor:.8f}   {scale.how}")
    if scale.convergence is not None and setup.azimuth_reference != "geodetic":
        head.append(f"convergence at the occupied point {format_dms(scale.convergence, 1)} (not applied: "
                    "grid backsight)")
    head.append("ground distance = grid distance / combined factor; angle right = clockwise from the backsight")
    if setup.target_height is not None:
        head.append(f"target height {setup.target_height:.3f}")
    sd = unit.station_decimals
    with_zenith = so.zenith is not None and so.slope_distance is not None
    cols = (f"{'point':<10} {'station':>11} {'offset':>8} {'code':<6} {'feature':<7} {'ang right':>10} "
            f"{'grid dist':>10} {'grnd dist':>10}")
    if with_zenith:
        cols += f" {'zenith':>9} {'slope dist':>10}"
    angles = format_azimuth_dms(so.angle_right, 0)
    offs = fixed(stakes.offset, sd)
    grid = fixed(so.grid_distance, 3)
    ground = fixed(so.ground_distance, 3)
    rows = []
    zen = format_dms(so.zenith, 0) if so.zenith is not None else None
    slope = fixed(so.slope_distance, 3) if so.slope_distance is not None else None
    for i in range(len(stakes)):
        row = (f"{stakes.point[i]:<10} {stakes.station_label[i]:>11} {offs[i]:>8} {stakes.code[i]:<6} "
               f"{stakes.feature[i]:<7} {angles[i]:>10} {grid[i]:>10} {ground[i]:>10}")
        if zen is not None and slope is not None:
            row += f" {zen[i]:>9} {slope[i]:>10}"
        rows.append(row.rstrip())
    foot = [f"{len(stakes)} points; angles to 1 second, distances in {unit.plural}", ""]
    foot += curve_lines(alignment, job.info.station_length, sd)
    return _paged(head, [cols], rows, f"{title}   {job.info.name}", foot)


def deflection_rows(alignment: Alignment, stations: np.ndarray) -> list[tuple[int, int, list[tuple[float, float, float, float, float]]]]:
    """Deflections from each arc's start to the staked stations on it.

    Returns, per arc, ``(curve number, element index, rows)`` with each row
    ``(station, arc length from the arc's start, deflection in degrees from
    the tangent there, chord from the start, chord from the previous row)``.
    Deflection = s / 2R (radians); chord = 2R sin(s / 2R).
    """
    out = []
    for c in alignment.curves:
        for i in c.elements:
            el = alignment.elements[i]
            r = float(el.radius or 0.0)
            on = stations[(stations >= el.start_station - 1e-9) & (stations <= el.end_station + 1e-9)]
            s = np.concatenate([[el.start_station], on, [el.end_station]])
            s = np.unique(np.clip(s, el.start_station, el.end_station))
            arc = np.maximum(s - el.start_station, 0.0)
            defl = np.degrees(arc / (2.0 * r))
            chord = 2.0 * r * np.sin(arc / (2.0 * r))
            inc = np.concatenate([[0.0], 2.0 * r * np.sin(np.diff(arc) / (2.0 * r))])
            out.append((c.number, i, list(zip(s.tolist(), arc.tolist(), defl.tolist(), chord.tolist(), inc.tolist()))))
    return out


def deflection_sheet(job: Job, alignment: Alignment, stations: np.ndarray, crs_label: str | None) -> str:
    """Render ``deflections.txt``: deflection angles and chords from the curve points."""
    unit = job.info.unit
    sl, sd = job.info.station_length, unit.station_decimals
    title = "CURVE DEFLECTIONS"
    head = SheetHeader(title, job, alignment.name, crs_label).lines()
    head.append("Occupy the start of each arc (PC, PCC or PRC), sight along its tangent (zero on the PI")
    head.append("or the back tangent), turn the deflection toward the curve and tape the chord.")
    cols = f"{'station':>11} {'arc from start':>15} {'deflection':>12} {'chord from start':>17} " \
           f"{'chord from prev':>16}"
    rows: list[str] = []
    kp = {round(k.station, 6): " ".join(k.features) for k in alignment.key_points}
    for curve_no, i, data in deflection_rows(alignment, stations):
        el = alignment.elements[i]
        start_name = kp.get(round(el.start_station, 6), "")
        rows.append(f"curve {curve_no}, arc from {start_name} {format_station(el.start_station, sl, sd)}: "
                    f"R {el.radius:.4f}, delta {format_dms(el.delta or 0.0, 1)}, deflect "
                    f"{'right' if el.turn > 0 else 'left'}")
        for st, arc, defl, chord, inc in data:
            rows.append(f"{format_station(st, sl, sd):>11} {arc:15.4f} {format_dms(defl, 0):>12} "
                        f"{chord:17.4f} {inc:16.4f}")
    if not rows:
        rows.append("(the alignment has no curves)")
    foot = ["deflection = arc length / 2R from the tangent at the arc's start; chord = 2R sin(s / 2R)", ""]
    foot += curve_lines(alignment, sl, sd)
    return _paged(head, [cols], rows, f"{title}   {job.info.name}", foot)
