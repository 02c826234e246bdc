"""Printable sheets: the setout sheet (``setout.txt``) and the deflection
sheet for curves (``deflections.txt``).

Plain text, at most 100 characters a line, pages separated by a form feed,
the column header repeated at the top of every page of at most 60 lines, the
cautions at the foot.  Nothing time-dependent is printed, so the same job
gives the same bytes.
"""

from __future__ import annotations

import textwrap
from collections.abc import Iterator

import numpy as np
from numpy.typing import NDArray

from ..angles import format_azimuth_dms, format_dms
from ..design import Design, Occupation, precision_rules_setups
from ..job import Setup
from ..precision import R95_FACTOR
from ..presentation import AT_INSTRUMENT_NOTE, DEFLECTION_HEADERS, FLAG, SETOUT_HEADERS
from ..setout import AT_INSTRUMENT, DEFAULT_FACTOR_NOTE, ScaleInfo
from .sections import slope_column
from .text import (WIDE, WIDTH, Cells, Coded, Column, FieldColumn, FieldTable, Formatted, Same, SheetPart,
                   Stacked, Texts, dms_format, fixed_format, clip, curve_lines, deflection_origin, deflection_title, fixed,
                   header_lines, offset_side, paged_pieces, setout_fields, station_labels, table_lines, TableRecords,
                   vertical_note, warning_lines, wrap_lines)

__all__ = ["setout_sheet", "setout_pieces", "deflection_sheet", "deflection_pieces"]


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
        return [f"combined factor {scale.combined_factor:.8f} = grid scale factor k x elevation factor",
                f"  grid scale factor k {scale.scale_factor:.8f} at the occupied point",
                f"  elevation factor R/(R+h) {scale.elevation_factor:.8f} (R {scale.radius_m:.0f} m, "
                f"h {scale.height:.3f} {unit.symbol} ellipsoid)"]
    out = [f"combined factor {scale.combined_factor:.8f}", f"  {scale.how}"]
    if d.crs_label is not None and scale.how == DEFAULT_FACTOR_NOTE:
        out.append("WARNING   ground distances equal grid distances: no combined factor was given")
        out.append('          for this CRS; set [scale] combined_factor = "auto" to use its factor')
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
           f"{spec.distance_ppm:g} ppm",
           f"          centring {spec.centering_sigma:g} {u}   pole {spec.pole_sigma:g} {u}",
           "          sd along / sd across: predicted standard errors of the stake along and",
           f"          square to the sight; r95 = {R95_FACTOR} x the larger (95 % radius)"]
    if sd.flagged is not None and sd.tolerance is not None:
        out.append(f"          {FLAG}: r95 exceeds [check] horizontal_tolerance {sd.tolerance:g}")
        out.append(f"          ({int(sd.flagged.sum())} of {sd.flagged.size} stakes)")
    else:
        out.append("          no [check] horizontal_tolerance in the job: no stake is flagged")
    return out


#: What the distances and the angle of the sheet are.
_DEFINITIONS = ["ground distance = grid distance / combined factor",
                "angle right = clockwise from the backsight"]


_LEFT = {"point", "code", "feature", "note", "alignment"}  # the columns printed left-aligned


def _slope(d: Design, cols: list[FieldColumn]) -> list[FieldColumn]:
    """The wide layout's slope column (the slope applied to each stake) after the design
    elevation, where the job has one.
    """
    slope = slope_column(d) if d.stakes.elevation is not None else None
    if slope is None:
        return cols
    at = next(k for k, c in enumerate(cols) if c.header == SETOUT_HEADERS["design_elevation"][0]) + 1
    return cols[:at] + [FieldColumn(slope.header, Texts.of(slope.values), slope.align, slope.with_previous)] + cols[at:]


def _stake_table(d: Design, width: int | None) -> FieldTable:
    """The stake table: one record per stake (point order), column widths fitted to the whole
    job so that every setup's table aligns.  The columns a crew turns and measures come first;
    those that do not fit ``width`` run on to a second line under their own header (``None``:
    one line per stake, with the slope column).  Laid out from whole columns, a block of
    records at a time.
    """
    cols = [FieldColumn(SETOUT_HEADERS[key][0], cells, "<" if key in _LEFT else ">", with_previous=grouped)
            for key, grouped, cells in setout_fields(d)]
    return FieldTable(_slope(d, cols) if width is None else cols, width)


def _all(n: int) -> NDArray[np.intp]:
    return np.arange(n, dtype=np.intp)


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


def _widths(wide: bool) -> tuple[int, int | None]:
    """The page width and the tables' width: :data:`WIDTH` columns by default,
    records run on to a second line where needed; ``wide``: one line per
    record, head and foot wrapped at :data:`WIDE`.
    """
    return (WIDE, None) if wide else (WIDTH, WIDTH)


def setout_sheet(d: Design, wide: bool = False) -> bytes:
    """``setout.txt`` whole (:func:`setout_pieces` joined)."""
    return b"".join(setout_pieces(d, wide))


def setout_pieces(d: Design, wide: bool = False) -> Iterator[bytes]:
    """Render ``setout.txt``, a run of pages at a time (:func:`~stakeout.writers.text.paged_pieces`).

    One setup given inline: the setup in the header, then the stakes.
    Setups from control points or several: the header and a summary of the
    setups, then one section per setup (its occupied point, backsight and
    factor, then its stakes), each starting on a new page.  Lines of at
    most :data:`WIDTH` characters, a stake's further columns on a second
    line where they do not fit; ``wide``: one line per stake.
    """
    assert d.setup is not None
    if d.parts:
        return _several_sheet(d, wide)
    if d.setup.listed:
        return _sectioned_sheet(d, wide)
    job = d.job
    setup, o, scale = d.setup.setup, d.setup.occupations[0], d.setup.scale
    title = "SETOUT SHEET"
    head = header_lines(title, d)
    head += warning_lines(d)  # on the first page, never only on the console
    head += _point_lines(o, setup, scale)
    head += _factor_lines(d, scale)
    head += _convergence_lines(setup, scale)
    head += _DEFINITIONS
    if setup.target_height is not None:
        head.append(f"target height {setup.target_height:.3f}")
    head += [line for line in (vertical_note(d),) if line]
    head += _instrument_lines(d)
    page, table = _widths(wide)
    stakes = _stake_table(d, table)
    return paged_pieces(head, [SheetPart([], stakes.heads(), TableRecords(stakes, _all(len(d.stakes))))],
                       f"{title}   {job.info.name}", _stake_foot(d), width=page)


def _summary(d: Design, width: int, table: int | None) -> SheetPart:
    """The setup summary: one record per setup."""
    assert d.setup is not None
    sdes = d.setup
    occs = sdes.occupations
    lab = d.stationing.label
    dists = [o.backsight_distance for o in occs]
    cols = [Column("setup", [str(o.number) for o in occs], "<"),
            Column("occupied", [o.occupied.id for o in occs], "<"),
            Column("backsight", [o.backsight.id if o.backsight else "(azimuth)" for o in occs], "<"),
            Column("bs azimuth", [str(format_azimuth_dms(o.backsight_azimuth, 1)) for o in occs]),
            Column("bs dist", ["" if x is None else f"{x:.3f}" for x in dists]),
            Column("stakes", [str(o.stake_count) for o in occs]),
            Column("farthest", [f"{o.farthest_sight:.3f}" for o in occs]),
            # the range a setup serves where the job gives one, else its first and last stake
            Column("from sta", [lab(o.first_station if o.range_from is None else o.range_from) for o in occs]),
            Column("to sta", [lab(o.last_station if o.range_to is None else o.range_to) for o in occs],
                   with_previous=True)]
    prec = sdes.precision
    if prec is not None:
        worst = np.zeros(len(occs))
        np.maximum.at(worst, sdes.setup_index, prec.r95)
        cols.append(Column("max r95", fixed(worst, 4)))
        if sdes.flagged is not None:
            flagged = np.bincount(sdes.setup_index, weights=sdes.flagged, minlength=len(occs)).astype(np.int64)
            cols.append(Column("flagged", [str(int(f)) for f in flagged], with_previous=True))
    heads, rows = table_lines(cols, table)
    setup = sdes.setup
    if setup.auto:
        if precision_rules_setups(d.job):
            how = (f"chosen among the {len(d.job.control)} control points: each stake within max_distance "
                   f"{setup.max_distance:g} of its setup and, where any setup can keep it so, its predicted r95 "
                   "within the tolerance (the chosen setup with the smallest r95), each backsight the farthest "
                   f"control point within max_backsight {setup.max_backsight:g}")
        else:
            how = (f"chosen among the {len(d.job.control)} control points: each stake within max_distance "
                   f"{setup.max_distance:g} of its setup (the nearest chosen), each backsight the farthest control "
                   f"point within max_backsight {setup.max_backsight:g}")
    elif setup.stations and setup.stations[0].from_station is not None:
        how = "as listed in the job file ([[setup.station]]), each serving its range of stations"
    elif setup.stations:
        how = "as listed in the job file ([[setup.station]]), each stake on the nearest setup"
    else:
        how = "as given in the job file"
    head = ["", f"SETUPS: {len(occs)}"] + [f"  {line}" for line in textwrap.wrap(how, width - 2)]
    head.append("  bs = backsight (grid azimuth and distance)")
    head.append("  farthest = longest sight to a stake")
    return SheetPart(head, heads, rows, "setups, continued")


def _setups_head(d: Design) -> tuple[list[str], bool]:
    """The head lines of a sheet of several setups after the job's (the combined factor, or how each
    setup's is found, the definitions, the heights, the vertical note, the instrument) and whether
    each setup's section gives its own factor (the ``auto`` factor).
    """
    assert d.setup is not None
    setup, first = d.setup.setup, d.setup.occupations[0].scale
    auto_factor = first.scale_factor is not None and first.elevation_factor is not None
    head: list[str] = []
    if auto_factor:
        head.append("combined factor at each occupied point = grid scale factor k there")
        head.append(f"  x elevation factor R/(R+h), h {first.height:.3f} {d.unit.symbol} (ellipsoid); see each setup")
    else:
        head += _factor_lines(d, first)
    head += _DEFINITIONS
    heights = []
    if setup.instrument_height is not None:
        heights.append(f"instrument height {setup.instrument_height:.3f}")
    if setup.target_height is not None:
        heights.append(f"target height {setup.target_height:.3f}")
    if heights:
        head.append("   ".join(heights) + " (every setup)")
    head += [line for line in (vertical_note(d),) if line]
    head += _instrument_lines(d)
    return head, auto_factor


def _sectioned_sheet(d: Design, wide: bool) -> Iterator[bytes]:
    """``setout.txt`` with a setup summary and one section per setup."""
    assert d.setup is not None
    job, sdes = d.job, d.setup
    setup = sdes.setup
    title = "SETOUT SHEET"
    head = header_lines(title, d)
    head += warning_lines(d)  # on the first page, never only on the console
    setups_head, auto_factor = _setups_head(d)
    head += setups_head
    page, table = _widths(wide)
    stakes = _stake_table(d, table)
    cols = stakes.heads()
    parts = [_summary(d, page, table)]
    n = len(sdes.occupations)
    lab = d.stationing.label
    for o, idx in zip(sdes.occupations, sdes.groups()):
        sh = [f"SETUP {o.number} of {n}" + (f"   ({o.where})" if o.where != "setup" else "")]
        sh += _point_lines(o, setup, o.scale, inst=False)
        if auto_factor:
            sh += _factor_lines(d, o.scale)
        sh += _convergence_lines(setup, o.scale)
        if o.stake_count:
            sh.append(f"{o.stake_count} stake{'s' if o.stake_count != 1 else ''}, stations {lab(o.first_station)} "
                      f"to {lab(o.last_station)}")
            line = f"farthest sight {o.farthest_sight:.3f}"
        else:
            line = "no stakes"
        if sdes.flagged is not None:
            line += f"; {int(sdes.flagged[idx].sum())} flagged {FLAG}"
        sh.append(line)
        parts.append(SheetPart(sh, cols, _records(stakes, idx),
                               f"setup {o.number} of {n} (occupied {o.occupied.id}), continued"))
    return paged_pieces(head, parts, f"{title}   {job.info.name}", _stake_foot(d), width=page)


def _records(stakes: FieldTable, idx: NDArray[np.intp]) -> list[str] | TableRecords:
    """A setup's records: its stakes' (``idx``, laid out as their pages are written), or the line
    saying it has none.
    """
    return TableRecords(stakes, idx) if idx.size else ["(no stakes)"]


def _several_sheet(d: Design, wide: bool) -> Iterator[bytes]:
    """``setout.txt`` of a job with several alignments: the setups serve every alignment, so one
    summary and one section per setup holding its stakes of every alignment (point order within
    each alignment, the alignments in job order), an ``alignment`` column naming each stake's.
    """
    assert d.setup is not None
    parts = [p for p in d.parts if p.setup is not None]
    title = "SETOUT SHEET"
    names = ", ".join(p.alignment.name for p in parts)
    head = [line if not line.startswith(f"alignment {d.alignment.name}   units")
            else clip(f"alignments {names}   units {d.job.info.unit.label}") for line in header_lines(title, d)]
    head += [f"WARNING   {w}" for w in d.warnings]  # the job's, then each alignment's
    head += [f"WARNING   {p.alignment.name}: {w}" for p in parts for w in p.warnings]
    setups_head, auto_factor = _setups_head(d)  # each setup's own factor in its section, as with one alignment
    head += setups_head
    setup = d.setup.setup
    page, table = _widths(wide)
    # one table over every alignment's stakes: the columns any alignment has, empty where another has none
    fields = [{key: (grouped, cells) for key, grouped, cells in setout_fields(p)} for p in parts]
    keys = list(dict.fromkeys(key for per in fields for key in per))
    cols = []
    for key in keys:
        found = [per.get(key) for per in fields]
        cols.append(FieldColumn(SETOUT_HEADERS[key][0],
                                Stacked(tuple(Same("", len(p.stakes)) if f is None else f[1]
                                              for p, f in zip(parts, found))),
                                "<" if key in _LEFT else ">", with_previous=any(f is not None and f[0] for f in found)))
        if key == "point":  # each stake's alignment beside its point id
            owner = np.repeat(np.arange(len(parts), dtype=np.intp), [len(p.stakes) for p in parts])
            cols.append(FieldColumn("alignment", Coded(Texts.of([p.alignment.name for p in parts]), owner), "<"))
    stakes = FieldTable(cols, table)
    heads = stakes.heads()
    index = np.concatenate([p.setup.setup_index for p in parts if p.setup is not None])
    occs = d.setup.occupations
    counts = np.bincount(index, minlength=len(occs))
    summary = [Column("setup", [str(o.number) for o in occs], "<"),
               Column("occupied", [o.occupied.id for o in occs], "<"),
               Column("backsight", [o.backsight.id if o.backsight else "(azimuth)" for o in occs], "<"),
               Column("bs azimuth", [str(format_azimuth_dms(o.backsight_azimuth, 1)) for o in occs]),
               Column("stakes", [str(int(c)) for c in counts]),
               Column("alignments", [", ".join(p.alignment.name for p in parts if p.setup is not None
                                               and (p.setup.setup_index == i).any()) for i in range(len(occs))],
                      "<")]
    precisions = [p.setup.precision for p in parts if p.setup is not None]
    if precisions and all(pr is not None for pr in precisions):  # the worst r95 of each setup, over all
        r95 = np.concatenate([pr.r95 for pr in precisions if pr is not None])
        worst = np.zeros(len(occs))
        np.maximum.at(worst, index, r95)
        summary.append(Column("max r95", fixed(worst, 4)))
        flags = [p.setup.flagged for p in parts if p.setup is not None]
        if all(f is not None for f in flags):
            flagged = np.bincount(index, weights=np.concatenate([f for f in flags if f is not None]),
                                  minlength=len(occs)).astype(np.int64)
            summary.append(Column("flagged", [str(int(f)) for f in flagged], with_previous=True))
    s_heads, s_rows = table_lines(summary, table)
    sections = [SheetPart(["", f"SETUPS: {len(occs)}, serving every alignment"], s_heads, s_rows,
                          "setups, continued")]
    order = np.argsort(index, kind="stable")
    groups = np.split(order, np.cumsum(counts)[:-1])
    for o, idx in zip(occs, groups):
        sh = [f"SETUP {o.number} of {len(occs)}" + (f"   ({o.where})" if o.where != "setup" else "")]
        sh += _point_lines(o, setup, o.scale, inst=False)
        if auto_factor:
            sh += _factor_lines(d, o.scale)
        sh += _convergence_lines(setup, o.scale)
        sh.append(f"{idx.size} stake{'s' if idx.size != 1 else ''}" if idx.size else "no stakes")
        sections.append(SheetPart(sh, heads, _records(stakes, idx),
                                  f"setup {o.number} of {len(occs)} (occupied {o.occupied.id}), continued"))
    unit = d.unit
    total = int(index.size)
    with_elevation = any(p.stakes.elevation is not None for p in parts)
    foot = [f"{total} points on {len(parts)} alignments; angles to 1 second, distances in {unit.plural}"
            + ("; design el = design elevation of the stake" if with_elevation else "")]
    if any(p.setup is not None and p.setup.setout.at_instrument.any() for p in parts):
        foot.append(f"{AT_INSTRUMENT_NOTE}: the stake is the occupied point itself (within {AT_INSTRUMENT} "
                    f"{unit.symbol}); no angle to turn")
    foot.append("")
    for p in parts:
        foot += [f"ALIGNMENT {p.alignment.name}"] + curve_lines(p) + [""]
    return paged_pieces(head, sections, f"{title}   {d.job.info.name}", foot, width=page)


def deflection_sheet(d: Design, wide: bool = False) -> bytes:
    """``deflections.txt`` whole (:func:`deflection_pieces` joined)."""
    return b"".join(deflection_pieces(d, wide))


def deflection_pieces(d: Design, wide: bool = False) -> Iterator[bytes]:
    """Render ``deflections.txt`` a run of pages at a time: deflection angles and chords from the curve points.

    Each curve element opens with a line of its data, kept on the page of
    its first row; lines of at most :data:`WIDTH` characters (``wide``:
    :data:`WIDE`).
    """
    job, lab = d.job, d.stationing.label
    page, table_width = _widths(wide)
    title = "CURVE DEFLECTIONS"
    head = header_lines(title, d)
    head.append("Occupy the start of each arc (PC, PCC or PRC), sight along its tangent")
    head.append("(zero on the PI or the back tangent), turn the deflection toward the curve")
    head.append("and tape the chord.")
    spirals = d.presentation.has_spirals
    # the sheet in order: titles (an element's, an offset line's) open the data row that follows
    # them (internal station, length, deflection, chord, sub-chord), one turn a table
    blocks: list[np.ndarray] = []
    turns: list[np.ndarray] = []
    titles: dict[int, list[str]] = {}
    pending: list[str] = []  # title lines waiting for their first data row
    count = 0

    def data(rows: np.ndarray, turn: int) -> None:
        nonlocal count, pending
        if rows.shape[0]:
            titles[count], pending = pending, []
            blocks.append(rows)
            turns.append(np.full(rows.shape[0], turn))
            count += rows.shape[0]

    for t in d.presentation.deflections:
        origin = deflection_origin(t, lab)
        pending += wrap_lines([deflection_title(t, "curve", origin)], page)
        data(t.rows, t.deflect_turn)
        for off in t.offsets:  # the offset line from its own start point, along its own start tangent
            pending += wrap_lines([f"  offset line {off.code} {offset_side(off.offset)}: from its point opposite "
                                   f"{origin}"], page)
            data(off.rows, t.deflect_turn)
    v = np.concatenate(blocks).reshape(-1, 5).astype(float) if blocks else np.zeros((0, 5))
    turn = np.concatenate(turns) if turns else np.zeros(0)
    defl = v[:, 2]
    left = (turn < 0) & (defl != 0.0)  # the circle reading for a left deflection (360 - d), blank for a right one
    values: list[Cells] = [station_labels(d.stationing, v[:, 0]), Formatted(v[:, 1], fixed_format(4)),
                           Formatted(defl, dms_format(False)), Formatted(v[:, 3], fixed_format(4)),
                           Formatted(v[:, 4], fixed_format(4)), Formatted(360.0 - defl, dms_format(False), ~left)]
    table = FieldTable([FieldColumn(h[0], cells) for h, cells in zip(DEFLECTION_HEADERS, values)], table_width)
    heads = table.heads()
    out = TableRecords(table, _all(count), titles) if count else ["(the alignment has no curves)"]
    foot = ["length: along the curve from its start; chord: from the start;",
            "sub-chord: from the row above",
            "arcs: deflection = s / 2R from the tangent at the start; chord = 2R sin(s / 2R)",
            "reading: the horizontal circle reading for a left deflection (360 - d),",
            "zero on the tangent",
            "offset lines: the same from the offset point opposite the curve point;",
            "length along the offset line"]
    if spirals:
        if job.staking.exit_spiral_from == "ST":
            foot.append("spirals: occupy the TS, sight along its tangent; exit spirals: occupy the ST,")
            foot.append("sight back along the ahead tangent (length and chord from the ST);")
        else:
            foot.append("spirals: occupy the TS (the CS for an exit spiral), sight along its tangent;")
        foot.append("deflection = atan(y / x), chord = hypot(x, y), (x, y) the point on the clothoid")
    foot.append("")
    foot += curve_lines(d)
    return paged_pieces(head, [SheetPart([], heads, out)], f"{title}   {job.info.name}", foot, width=page)
