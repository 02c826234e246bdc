"""Printable sheets: the setout sheet (``setout.txt``) and the deflection
sheet for curves (``deflections.txt``).

Plain text, at most 100 characters a line, pages separated by a form feed,
the column header repeated at the top of every page of 50 rows, the
cautions at the foot.  Nothing time-dependent is printed, so the same job
gives the same bytes.
"""

from __future__ import annotations

import math

import numpy as np

from ..alignment import Alignment, Arc, Element, Spiral
from ..alignment.clothoid import clothoid_xy
from ..angles import format_azimuth_dms, format_dms
from ..design import Design
from ..setout import DEFAULT_FACTOR_NOTE
from .text import WIDTH, curve_lines, fixed, header_lines, paged, turn_word

__all__ = ["setout_sheet", "deflection_sheet", "deflection_rows"]


def setout_sheet(d: Design) -> str:
    """Render ``setout.txt``."""
    assert d.setup is not None
    job, stakes = d.job, d.stakes
    setup, so, scale = d.setup.setup, d.setup.setout, d.setup.scale
    unit = job.info.unit
    occ = setup.occupied
    title = "SETOUT SHEET"
    head = header_lines(title, d)
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
        if d.crs_label is not None and scale.how == DEFAULT_FACTOR_NOTE:
            head.append("WARNING   ground distances equal grid distances: no combined factor was given for")
            head.append('          this CRS; set [scale] combined_factor = "auto" to use its factor')
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
    elev = stakes.elevation
    if elev is not None:
        cols += f" {'design el':>9}"
    if with_zenith:
        cols += f" {'zenith':>9} {'slope dist':>10}"
    angles = format_azimuth_dms(so.angle_right, 0)
    offs = fixed(stakes.offset, sd)
    grid = fixed(so.grid_distance, 3)
    ground = fixed(so.ground_distance, 3)
    rows = []
    zen = format_dms(so.zenith, 0) if so.zenith is not None else None
    slope = fixed(so.slope_distance, 3) if so.slope_distance is not None else None
    el_text = fixed(elev, 3) if elev is not None else None
    for i in range(len(stakes)):
        row = (f"{stakes.point[i]:<10} {stakes.station_label[i]:>11} {offs[i]:>8} {stakes.code[i]:<6} "
               f"{stakes.feature[i]:<7} {angles[i]:>10} {grid[i]:>10} {ground[i]:>10}")
        if el_text is not None:
            row += f" {el_text[i]:>9}"
        if zen is not None and slope is not None:
            row += f" {zen[i]:>9} {slope[i]:>10}"
        rows.append(row.rstrip())
    foot = [f"{len(stakes)} points; angles to 1 second, distances in {unit.plural}"
            + ("; design el = design elevation of the stake" if elev is not None else ""), ""]
    foot += curve_lines(d)
    return paged(head, [cols], rows, f"{title}   {job.info.name}", foot, width=max(WIDTH, len(cols)))


DeflectionRow = tuple[float, float, float, float, float]


def deflection_rows(alignment: Alignment, stations: np.ndarray) -> list[tuple[int, int, list[DeflectionRow]]]:
    """Deflections from each arc's start to the staked stations on it.

    Returns, per arc or spiral, ``(curve number, element index, rows)`` with
    each row ``(internal station, length from the element's start, deflection
    in degrees from the tangent there, chord from the start, chord from the
    previous row)``.  On an arc, deflection = s / 2R (radians) and chord =
    2R sin(s / 2R); on a spiral, from its start (the TS, or the CS of an exit
    spiral) along its start tangent: the point's position (x, y) there gives
    deflection = atan(y / x) and chord = hypot(x, y).
    """
    out = []
    for c in alignment.curves:
        for i in c.elements:
            el = alignment.elements[i]
            on = stations[(stations >= el.start - 1e-9) & (stations <= el.end + 1e-9)]
            s = np.concatenate([[el.start], on, [el.end]])
            s = np.unique(np.clip(s, el.start, el.end))
            if isinstance(el, Spiral):
                out.append((c.number, i, _spiral_rows(el, s)))
                continue
            if not isinstance(el, Arc):
                continue
            r = float(el.radius)
            arc = np.maximum(s - el.start, 0.0)
            defl = np.degrees(arc / (2.0 * r))
            chord = 2.0 * r * np.sin(arc / (2.0 * r))
            inc = np.concatenate([[0.0], 2.0 * r * np.sin(np.diff(arc) / (2.0 * r))])
            out.append((c.number, i, list(zip(s.tolist(), arc.tolist(), defl.tolist(), chord.tolist(), inc.tolist()))))
    return out


def _spiral_rows(el: Spiral, s: np.ndarray) -> list[DeflectionRow]:
    """Deflection rows of a spiral from its start (see :func:`deflection_rows`)."""
    along = np.maximum(s - el.start, 0.0)
    x, y, _ = clothoid_xy(along, el.k_start, el.k_end, el.length)
    y = np.abs(y)
    defl = np.degrees(np.arctan2(y, x))
    chord = np.hypot(x, y)
    inc = np.concatenate([[0.0], np.hypot(np.diff(x), np.diff(y))])
    return list(zip(s.tolist(), along.tolist(), defl.tolist(), chord.tolist(), inc.tolist()))


def _reading(defl: float, turn: int) -> str:
    """The circle reading for a left deflection (360 - d), blank for a right one."""
    if turn >= 0 or defl == 0.0:
        return ""
    return f" {format_dms(360.0 - defl, 0):>9}"


def _side(o: float) -> str:
    return f"{abs(o):.2f} {'LT' if o < 0 else 'RT'}"


def _offset_rows(alignment: Alignment, el: Element, stations: np.ndarray, o: float) -> list[DeflectionRow]:
    """Deflections on an offset line, from the offset point at the element's start along the
    offset line's tangent there: the chord's direction minus that tangent, from the points.
    """
    n, e, az = alignment.evaluate(stations, o, miter=False)
    dn, de = n - n[0], e - e[0]
    chord = np.hypot(dn, de)
    chord_az = np.degrees(np.arctan2(de, dn))
    defl = np.abs((chord_az - az[0] + 180.0) % 360.0 - 180.0)
    defl[chord == 0.0] = 0.0
    inc = np.concatenate([[0.0], np.hypot(np.diff(n), np.diff(e))])
    # length along the offset line: the centreline length scaled by the radius there (exact on arcs)
    along = _offset_length(el, stations - el.start, o)
    return list(zip(stations.tolist(), along.tolist(), defl.tolist(), chord.tolist(), inc.tolist()))


def _offset_length(el: Element, s: np.ndarray, o: float) -> np.ndarray:
    """Length along an offset line from the element's start: integral of (1 - k(s) o) ds."""
    k0, k1 = el.curvature_start, el.curvature_end
    return s - o * (k0 * s + (k1 - k0) * s * s / (2.0 * el.length))


def deflection_sheet(d: Design) -> str:
    """Render ``deflections.txt``: deflection angles and chords from the curve points."""
    job, alignment, lab = d.job, d.alignment, d.stationing.label
    title = "CURVE DEFLECTIONS"
    head = header_lines(title, d)
    head.append("Occupy the start of each arc (PC, PCC or PRC), sight along its tangent (zero on the PI")
    head.append("or the back tangent), turn the deflection toward the curve and tape the chord.")
    cols = f"{'station':>11} {'arc from start':>15} {'deflection':>12} {'chord from start':>17} " \
           f"{'chord from prev':>16} {'reading':>9}"
    rows: list[str] = []
    offsets = [(ol.offset, ol.code) for ol in job.staking.offsets if ol.offset != 0.0]
    kp = {round(k.station, 6): " ".join(k.features) for k in alignment.key_points}
    spirals = False
    for curve_no, i, data in deflection_rows(alignment, d.stakes.stations):
        el = alignment.elements[i]
        start_name = kp.get(round(el.start, 6), "")
        if isinstance(el, Spiral):
            spirals = True
            r0, r1 = (f"{r:.4f}" if r is not None else "inf" for r in (el.radius_start, el.radius_end))
            rows.append(f"curve {curve_no}, spiral from {start_name} {lab(el.start)}: L {el.length:.4f}, "
                        f"R {r0} to {r1}, theta {format_dms(el.central_angle, 1)}, {turn_word(el.turn)}")
        else:
            assert isinstance(el, Arc)
            rows.append(f"curve {curve_no}, arc from {start_name} {lab(el.start)}: "
                        f"R {el.radius:.4f}, delta {format_dms(el.delta, 1)}, deflect {turn_word(el.turn)}")
        for st, arc, defl, chord, inc in data:
            rows.append(f"{lab(st):>11} {arc:15.4f} {format_dms(defl, 0):>12} "
                        f"{chord:17.4f} {inc:16.4f}{_reading(defl, el.turn)}")
        stations = np.array([row[0] for row in data])
        for o, code in offsets:  # the offset line from its own start point, along its own start tangent
            rows.append(f"  offset line {code} {_side(o)}: from its point opposite {start_name} {lab(el.start)}")
            for st, along, defl, chord, inc in _offset_rows(alignment, el, stations, o):
                rows.append(f"{lab(st):>11} {along:15.4f} {format_dms(defl, 0):>12} "
                            f"{chord:17.4f} {inc:16.4f}{_reading(defl, el.turn)}")
    if not rows:
        rows.append("(the alignment has no curves)")
    foot = ["deflection = arc length / 2R from the tangent at the arc's start; chord = 2R sin(s / 2R);",
            "reading: the horizontal circle reading for a left deflection (360 - d) with zero on the tangent;",
            "offset lines: the same from the offset point opposite the curve point, the length along the offset"]
    if spirals:
        foot.append("spirals: occupy the TS (the CS for an exit spiral), sight along its tangent; deflection =")
        foot.append("atan(y / x) and chord = hypot(x, y) from the point's position (x, y) on the clothoid")
    foot.append("")
    foot += curve_lines(d)
    return paged(head, [cols], rows, f"{title}   {job.info.name}", foot)
