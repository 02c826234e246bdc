"""Printable sheets: the setout sheet (``setout.txt``) and the deflection
sheet for curves (``deflections.txt``).

Plain text, at most 100 characters a line, pages separated by a form feed,
the column header repeated at the top of every page of at most 60 lines, the
cautions at the foot.  Nothing time-dependent is printed, so the same job
gives the same bytes.
"""

from __future__ import annotations

import textwrap

import numpy as np

from ..alignment import Alignment, Arc, Element, Spiral
from ..alignment.clothoid import clothoid_xy
from ..angles import format_azimuth_dms, format_dms
from ..design import Design, Occupation
from ..job import Setup
from ..precision import R95_FACTOR
from ..setout import AT_INSTRUMENT, DEFAULT_FACTOR_NOTE, ScaleInfo
from .text import (WIDTH, SheetPart, curve_lines, end_radii, fixed, header_lines, paged, paged_parts, side_text,
                   turn_word)

__all__ = ["setout_sheet", "deflection_sheet", "deflection_rows", "FLAG", "AT_INSTRUMENT_NOTE"]


def _point_lines(o: Occupation, setup: Setup, scale: ScaleInfo, inst: bool = True) -> list[str]:
    """The occupied point and the backsight of one setup."""
    occ = o.occupied
    occ_line = f"occupied  {occ.id}   N {occ.northing:.4f}   E {occ.easting:.4f}"
    if occ.elevation is not None:
        occ_line += f"   elev {occ.elevation:.3f}"
    if inst and setup.instrument_height is not None:
        occ_line += f"   inst ht {setup.instrument_height:.3f}"
    out = [occ_line]
    if o.backsight is not None:
        bs = o.backsight
        dist = o.backsight_distance
        assert dist is not None
        out.append(f"backsight {bs.id}   N {bs.northing:.4f}   E {bs.easting:.4f}")
        out.append(f"          grid azimuth {format_azimuth_dms(o.backsight_azimuth, 1)}   "
                   f"grid distance {dist:.4f}   ground {dist / scale.combined_factor:.4f}")
    elif setup.azimuth_reference == "geodetic":
        assert o.given_azimuth is not None and scale.convergence is not None
        out.append(f"backsight geodetic azimuth {format_azimuth_dms(o.given_azimuth, 1)} (given)")
        out.append(f"          minus convergence {format_dms(scale.convergence, 1)} at the occupied point")
        out.append(f"          = grid azimuth {format_azimuth_dms(o.backsight_azimuth, 1)}")
    else:
        out.append(f"backsight grid azimuth {format_azimuth_dms(o.backsight_azimuth, 1)} (given)")
    return out


def _factor_lines(d: Design, scale: ScaleInfo) -> list[str]:
    """How the combined factor was found (at one occupied point for ``auto``)."""
    unit = d.unit
    if scale.scale_factor is not None and scale.elevation_factor is not None:
        return [f"combined factor {scale.combined_factor:.8f} = grid scale factor k {scale.scale_factor:.8f} "
                "at the occupied point",
                f"                x elevation factor R/(R+h) {scale.elevation_factor:.8f} "
                f"(h {scale.height:.3f} {unit.symbol} ellipsoid height, R {scale.radius_m:.0f} m)"]
    out = [f"combined factor {scale.combined_factor:.8f}   {scale.how}"]
    if d.crs_label is not None and scale.how == DEFAULT_FACTOR_NOTE:
        out.append("WARNING   ground distances equal grid distances: no combined factor was given for")
        out.append('          this CRS; set [scale] combined_factor = "auto" to use its factor')
    return out


def _convergence_lines(setup: Setup, scale: ScaleInfo) -> list[str]:
    if scale.convergence is not None and setup.azimuth_reference != "geodetic":
        return [f"convergence at the occupied point {format_dms(scale.convergence, 1)} (not applied: "
                "grid backsight)"]
    return []


def _instrument_lines(d: Design) -> list[str]:
    """The instrument's standard errors and what the precision columns mean."""
    spec, sd = d.job.instrument, d.setup
    if spec is None or sd is None or sd.precision is None:
        return []
    u = d.unit.symbol
    out = [f"instrument angle {spec.angle_sigma_arcsec:g}\" per direction   distance {spec.distance_sigma:g} {u} + "
           f"{spec.distance_ppm:g} ppm   centring {spec.centering_sigma:g} {u}   pole {spec.pole_sigma:g} {u}",
           "          sd along / sd across: predicted standard errors of the stake along and square to",
           f"          the sight; r95 = {R95_FACTOR} x the larger (95 % radius)"]
    if sd.flagged is not None and sd.tolerance is not None:
        out.append(f"          {FLAG}: r95 exceeds [check] horizontal_tolerance {sd.tolerance:g} "
                   f"({int(sd.flagged.sum())} of {sd.flagged.size} stakes)")
    else:
        out.append("          no [check] horizontal_tolerance in the job: no stake is flagged")
    return out


#: The mark of a stake whose predicted 95 % radius exceeds the tolerance.
FLAG = "r95>tol"
#: What the sheet says of a stake at the occupied point, in place of an angle.
AT_INSTRUMENT_NOTE = "at the instrument"


def _stake_table(d: Design) -> tuple[str, list[str]]:
    """The stake table's column header and one row per stake (point order),
    column widths fitted to the whole job so that every setup's table aligns.
    """
    assert d.setup is not None
    stakes, so, sdes = d.stakes, d.setup.setout, d.setup
    unit = d.unit
    sd = unit.station_decimals
    points = stakes.point
    wp = max([10] + [len(p) for p in points])
    labels = stakes.station_label
    ws = max([11] + [len(x) for x in labels])
    offs = side_text(stakes.offset, sd)
    wo = max([8] + [len(x) for x in offs])
    at = so.at_instrument
    angles = format_azimuth_dms(so.angle_right, 0)
    grid = fixed(so.grid_distance, 3)
    ground = fixed(so.ground_distance, 3)
    elev = stakes.elevation
    el_text = fixed(elev, 3) if elev is not None else None
    zen = format_dms(so.zenith, 0) if so.zenith is not None else None
    slope = fixed(so.slope_distance, 3) if so.slope_distance is not None else None
    prec = sdes.precision
    cols = (f"{'point':<{wp}} {'station':>{ws}} {'offset':>{wo}} {'code':<6} {'feature':<7} {'ang right':>10} "
            f"{'grid dist':>10} {'grnd dist':>10}")
    if el_text is not None:
        cols += f" {'design el':>9}"
    if zen is not None:
        cols += f" {'zenith':>9} {'slope dist':>10}"
    if prec is not None:
        cols += f" {'sd along':>8} {'sd across':>9} {'r95':>7}"
        s_al, s_ac, r95 = fixed(prec.sigma_along, 4), fixed(prec.sigma_across, 4), fixed(prec.r95, 4)
    notes = [""] * len(stakes)
    for i in np.flatnonzero(at).tolist():
        notes[i] = AT_INSTRUMENT_NOTE
    if sdes.flagged is not None:
        for i in np.flatnonzero(sdes.flagged).tolist():
            notes[i] = f"{notes[i]}; {FLAG}" if notes[i] else FLAG
    wn = max(len(n) for n in notes) if notes else 0
    if wn:
        cols += f" {'note':<{wn}}"
    rows = []
    for i in range(len(stakes)):
        row = (f"{points[i]:<{wp}} {labels[i]:>{ws}} {offs[i]:>{wo}} {stakes.code[i]:<6} "
               f"{stakes.feature[i]:<7} {'' if at[i] else angles[i]:>10} {grid[i]:>10} {ground[i]:>10}")
        if el_text is not None:
            row += f" {el_text[i]:>9}"
        if zen is not None and slope is not None:
            row += f" {zen[i]:>9} {slope[i]:>10}"
        if prec is not None:
            row += f" {s_al[i]:>8} {s_ac[i]:>9} {r95[i]:>7}"
        if wn:
            row += f" {notes[i]}"
        rows.append(row.rstrip())
    return cols, rows


def _stake_foot(d: Design) -> list[str]:
    assert d.setup is not None
    unit, stakes = d.unit, d.stakes
    foot = [f"{len(stakes)} points; angles to 1 second, distances in {unit.plural}"
            + ("; design el = design elevation of the stake" if stakes.elevation is not None else "")]
    if d.setup.setout.at_instrument.any():
        foot.append(f"{AT_INSTRUMENT_NOTE}: the stake is the occupied point itself (within {AT_INSTRUMENT} "
                    f"{unit.symbol}); no angle to turn")
    foot.append("")
    return foot + curve_lines(d)


def setout_sheet(d: Design) -> str:
    """Render ``setout.txt``.

    One setup given inline: the setup in the header, then the stakes.
    Setups from control points or several: the header and a summary of the
    setups, then one section per setup (its occupied point, backsight and
    factor, then its stakes), each starting on a new page.
    """
    assert d.setup is not None
    if d.setup.listed:
        return _sectioned_sheet(d)
    job = d.job
    setup, o, scale = d.setup.setup, d.setup.occupations[0], d.setup.scale
    title = "SETOUT SHEET"
    head = header_lines(title, d)
    head += _point_lines(o, setup, scale)
    head += _factor_lines(d, scale)
    head += _convergence_lines(setup, scale)
    head.append("ground distance = grid distance / combined factor; angle right = clockwise from the backsight")
    if setup.target_height is not None:
        head.append(f"target height {setup.target_height:.3f}")
    head += _instrument_lines(d)
    cols, rows = _stake_table(d)
    return paged(head, [cols], rows, f"{title}   {job.info.name}", _stake_foot(d), width=max(WIDTH, len(cols)))


def _summary(d: Design) -> SheetPart:
    """The setup summary: one row per setup."""
    assert d.setup is not None
    sdes = d.setup
    occs = sdes.occupations
    lab = d.stationing.label
    wo = max([8] + [len(o.occupied.id) for o in occs])
    wb = max([9] + [len(o.backsight.id) for o in occs if o.backsight is not None])
    cols = (f"{'setup':>5} {'occupied':<{wo}} {'backsight':<{wb}} {'bs azimuth':>12} {'bs dist':>10} "
            f"{'stakes':>6} {'farthest':>9} {'from station':>12} {'to station':>12}")
    prec = sdes.precision
    worst = np.zeros(len(occs))
    flagged = np.zeros(len(occs), dtype=np.int64)
    if prec is not None:
        cols += f" {'max r95':>8}"
        np.maximum.at(worst, sdes.setup_index, prec.r95)
        if sdes.flagged is not None:
            cols += f" {'flagged':>7}"
            flagged = np.bincount(sdes.setup_index, weights=sdes.flagged, minlength=len(occs)).astype(np.int64)
    rows = []
    for k, o in enumerate(occs):
        dist = o.backsight_distance
        row = (f"{o.number:>5} {o.occupied.id:<{wo}} {o.backsight.id if o.backsight else '(azimuth)':<{wb}} "
               f"{format_azimuth_dms(o.backsight_azimuth, 1):>12} {'' if dist is None else f'{dist:.3f}':>10} "
               f"{o.stake_count:>6} {o.farthest_sight:>9.3f} {lab(o.first_station):>12} {lab(o.last_station):>12}")
        if prec is not None:
            row += f" {worst[k]:>8.4f}"
            if sdes.flagged is not None:
                row += f" {int(flagged[k]):>7}"
        rows.append(row.rstrip())
    setup = sdes.setup
    if setup.auto:
        how = (f"chosen among the {len(d.job.control)} control points: each stake within max_distance "
               f"{setup.max_distance:g} of its setup (the nearest chosen), each backsight the farthest control "
               f"point within max_backsight {setup.max_backsight:g}")
    elif setup.stations and setup.stations[0].from_station is not None:
        how = "as listed in the job file ([[setup.station]]), each serving its range of stations"
    elif setup.stations:
        how = "as listed in the job file ([[setup.station]]), each stake on the nearest setup"
    else:
        how = "as given in the job file"
    head = ["", f"SETUPS: {len(occs)}"] + [f"  {line}" for line in textwrap.wrap(how, WIDTH - 2)]
    head.append("  bs = backsight (grid azimuth and distance); farthest = longest sight to a stake")
    return SheetPart(head, [cols], rows, "setups, continued")


def _sectioned_sheet(d: Design) -> str:
    """``setout.txt`` with a setup summary and one section per setup."""
    assert d.setup is not None
    job, sdes = d.job, d.setup
    setup = sdes.setup
    title = "SETOUT SHEET"
    head = header_lines(title, d)
    first = sdes.occupations[0].scale
    auto_factor = first.scale_factor is not None and first.elevation_factor is not None
    if auto_factor:
        head.append("combined factor at each occupied point = grid scale factor k there x elevation factor "
                    "R/(R+h)")
        head.append(f"                (h {first.height:.3f} {d.unit.symbol} ellipsoid height); see each setup")
    else:
        head += _factor_lines(d, first)
    head.append("ground distance = grid distance / combined factor; angle right = clockwise from the backsight")
    heights = []
    if setup.instrument_height is not None:
        heights.append(f"instrument height {setup.instrument_height:.3f}")
    if setup.target_height is not None:
        heights.append(f"target height {setup.target_height:.3f}")
    if heights:
        head.append("   ".join(heights) + " (every setup)")
    head += _instrument_lines(d)
    cols, rows = _stake_table(d)
    parts = [_summary(d)]
    n = len(sdes.occupations)
    lab = d.stationing.label
    for o, idx in zip(sdes.occupations, sdes.groups()):
        sh = [f"SETUP {o.number} of {n}" + (f"   ({o.where})" if o.where != "setup" else "")]
        sh += _point_lines(o, setup, o.scale, inst=False)
        if auto_factor:
            sh += _factor_lines(d, o.scale)
        sh += _convergence_lines(setup, o.scale)
        if o.stake_count:
            line = (f"{o.stake_count} stake{'s' if o.stake_count != 1 else ''}, farthest sight "
                    f"{o.farthest_sight:.3f}, stations {lab(o.first_station)} to {lab(o.last_station)}")
        else:
            line = "no stakes"
        if sdes.flagged is not None:
            line += f"; {int(sdes.flagged[idx].sum())} flagged {FLAG}"
        sh.append(line)
        parts.append(SheetPart(sh, [cols], [rows[i] for i in idx.tolist()] or ["(no stakes)"],
                               f"setup {o.number} of {n} (occupied {o.occupied.id}), continued"))
    width = max([WIDTH, len(cols)] + [len(c) for c in parts[0].columns])
    return paged_parts(head, parts, f"{title}   {job.info.name}", _stake_foot(d), width=width)


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
            r0, r1 = end_radii(el)
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
