"""The text sheets as they were built before issue 27 (cell by cell, one Python string a
cell): the reference the whole-column sheets are compared with byte for byte
(tests/test_sheets_fast.py).  A frozen copy of stakeout/writers/sheets.py and the table and
paging parts of stakeout/writers/text.py at commit 7a59499 (and the job's warnings on the
first page of several alignments, 049d867); do not change it to follow the package.
"""
# ruff: noqa

from __future__ import annotations

import textwrap
from dataclasses import dataclass
from functools import cached_property
from typing import Any

import numpy as np

from stakeout.angles import format_azimuth_dms, format_dms
from stakeout.design import Design, Occupation, precision_rules_setups
from stakeout.job import Setup
from stakeout.precision import R95_FACTOR
from stakeout.presentation import AT_INSTRUMENT_NOTE, DEFLECTION_HEADERS, FLAG, SETOUT_HEADERS
from stakeout.setout import AT_INSTRUMENT, DEFAULT_FACTOR_NOTE, ScaleInfo
from stakeout.writers.sections import slope_column
from stakeout.writers.text import (CAUTION_LINES, PAGE_LINES, SIGN_OFF_LINES, WIDE, WIDTH, clip, curve_lines,
                                   deflection_origin, deflection_title, fixed, format_azimuth_dms, header_lines,
                                   offset_side, side_text, texts_of, vertical_note, warning_lines, wrap_lines)

# ---- the setout table ---------------------------------------------------------------------------
def setout_cells(d: Design, sided: bool) -> list[tuple[Any, list[str]]]:
    """The setout table's columns (:attr:`Presentation.setout_columns`) as text, shared by
    ``setout.txt`` and ``report.html``: angles in D-M-S to the second (none at the
    instrument), offsets with their side (``sided``) or signed, numbers to their decimals.
    """
    assert d.setup is not None
    at = d.setup.setout.at_instrument
    out: list[tuple[Any, list[str]]] = []
    for c in d.presentation.setout_columns:
        if c.decimals is None:
            texts = list(c.values)
        elif c.key == "angle_right":
            angles = texts_of(format_azimuth_dms(c.values, 0))
            texts = ["" if at[i] else angles[i] for i in range(len(angles))]
        elif c.key == "zenith":
            v = np.asarray(c.values, dtype=float)
            texts = texts_of(format_dms(np.nan_to_num(v, nan=90.0), 0))
            texts = ["" if bad else t for t, bad in zip(texts, np.isnan(v).tolist())]  # no height, no zenith
        elif c.key == "offset" and sided:
            texts = side_text(c.values, c.decimals)
        else:
            v = np.asarray(c.values, dtype=float)
            texts = fixed(c.values, c.decimals)
            if np.isnan(v).any():  # a stake without the number (a reference stake has no design elevation)
                texts = ["" if bad else t for t, bad in zip(texts, np.isnan(v).tolist())]
        out.append((c, texts))
    return out


# ---- tables ----------------------------------------------------------------------------------
@dataclass(frozen=True)
class Column:
    """One column of a printed table: its header, its values as text, and
    its alignment (``"<"`` left, ``">"`` right).  It is as wide as its
    widest entry.
    """

    header: str
    values: list[str]
    align: str = ">"
    with_previous: bool = False  # printed on the same line as the column before it (a group)

    @cached_property
    def width(self) -> int:
        """Characters the column needs: its header or its widest value (measured once)."""
        return max([len(self.header)] + [len(v) for v in self.values])

    def cell(self, text: str) -> str:
        """``text`` padded to the column's width."""
        return f"{text:{self.align}{self.width}}"


#: Widest first column whose run-on lines start under the second column.
_INDENT_MAX = 20


def _indent(columns: list[Column]) -> int:
    """Where a record's run-on lines start (see :func:`_pack`)."""
    return columns[0].width + 1 if columns[0].width <= _INDENT_MAX else 4


def _pack(columns: list[Column], width: int | None) -> list[list[Column]]:
    """Columns packed in order onto lines of at most ``width`` characters.

    The first line starts at the margin; every further line starts under
    the second column (four characters in where the first column is wider
    than :data:`_INDENT_MAX`), so that a record's first column alone marks
    where it starts.  A group (columns marked ``with_previous``) stays on one
    line; each line takes at least one group.  ``None``: one line.
    """
    if width is None or not columns:
        return [columns]
    groups: list[list[Column]] = []
    for c in columns:
        if c.with_previous and groups:
            groups[-1].append(c)
        else:
            groups.append([c])
    indent = _indent(columns)
    lines: list[list[Column]] = [[]]
    used = -1
    for g in groups:
        need = sum(c.width + 1 for c in g)
        if lines[-1] and used + need > width:
            lines.append([])
            used = indent - 1
        lines[-1].extend(g)
        used += need
    return lines


def table_lines(columns: list[Column], width: int | None = WIDTH) -> tuple[list[str], list[str]]:
    """A table's header lines and its records, no line over ``width`` characters.

    The columns keep their order.  Those that fit on one line of ``width``
    characters make the record's first line; the rest run on to further
    lines, indented under the second column, each with its own header line
    (``None``: one line per record, however wide).

    Returns
    -------
    (header lines, records)
        One record per row of the columns; a record of several lines is
        one string with ``\n`` between them (:func:`paged_parts` keeps it
        on one page).
    """
    lines = _pack(columns, width)
    if not columns:
        return [], []
    indent = " " * _indent(columns)
    n = len(columns[0].values)

    def render(k: int, cells: list[str]) -> str:
        return ((indent if k else "") + " ".join(cells)).rstrip()

    heads = [render(k, [c.cell(c.header) for c in cols]) for k, cols in enumerate(lines)]
    records = ["\n".join(render(k, [c.cell(c.values[i]) for c in cols]) for k, cols in enumerate(lines)).rstrip()
               for i in range(n)]
    return heads, records


def row_lines(row: str) -> list[str]:
    """The printed lines of one record (see :func:`table_lines`)."""
    return row.split("\n")


# ---- pages -------------------------------------------------------------------------------------
@dataclass(frozen=True)
class SheetPart:
    """One part of a printed sheet: the lines above its table, the table's
    column header and records, and the line that opens its continuation
    pages.  A part starts on a new page unless ``new_page`` is False and the
    page in hand has room for its head, its column header and a few records.
    A record may hold several lines (``\n`` between them); it is never
    split across pages.
    """

    head: list[str]
    columns: list[str]
    rows: list[str]
    continued: str = ""
    new_page: bool = True


def paged(head: list[str], columns: list[str], rows: list[str], title: str, foot: list[str],
          width: int = WIDTH) -> str:
    """A printable sheet: the header, then pages of at most :data:`PAGE_LINES` lines
    with the column header repeated (pages split by a form feed), the foot
    and the cautions; no line over ``width`` characters (:data:`WIDTH`, wider
    only where the table's own columns need it).
    """
    return paged_parts(head, [SheetPart([], columns, rows)], title, foot, width)


#: Records a part opened on a page in hand must have room for (else it starts a new page).
_MIN_RECORDS = 3


def paged_parts(head: list[str], parts: list[SheetPart], title: str, foot: list[str], width: int = WIDTH) -> str:
    """A printable sheet of several tables (:class:`SheetPart`).

    The first page opens with ``head`` and the first part's head; every
    later part opens a page with its own head (or follows on the page in
    hand, see :class:`SheetPart`); a part's records run on over pages opened
    by its ``continued`` line, the column header repeated on each.  No page
    holds more than :data:`PAGE_LINES` lines and no record is split; pages
    are numbered through the whole sheet and split by a form feed; the foot
    and the cautions close it (on a page of their own when the last is
    full).  Head and foot lines wider than ``width`` (or the widest table
    line, where wider) are wrapped, the page titles cut.
    """
    table = [len(line) for p in parts for line in p.columns] + \
        [len(line) for p in parts for r in p.rows for line in row_lines(r)]
    width = max([width] + table)
    head = wrap_lines(head, width)
    closing = [""] + wrap_lines(foot, width) + [""] + list(SIGN_OFF_LINES) + [""] + list(CAUTION_LINES)
    pages: list[list[str]] = []
    for k, part in enumerate(parts):
        columns = [c.rstrip() for c in part.columns]
        part_head = wrap_lines(part.head, width)
        records = [row_lines(r) for r in part.rows]
        ruled = max([0] + [len(c) for c in columns] + [len(line) for r in records for line in r[:1]])
        rules = ["-" * ruled] if columns else []  # as wide as the header and the rows; plain lines have none
        first = True
        pos = 0  # records placed so far
        while first or pos < len(records):
            if k == 0 and first:
                opening = head + ["page {page} of {pages}"] + part_head
            elif first and not part.new_page and pages:
                opening = [""] + part_head
                need = len(opening) + len(columns) + 3 * len(rules) + sum(len(r) for r in records[:_MIN_RECORDS])
                if len(pages[-1]) + need > PAGE_LINES:
                    opening = ["{title}", ""] + part_head
            elif first:
                opening = ["{title}", ""] + part_head
            else:
                opening = ["{title}", clip(part.continued, width)]
            on_new_page = opening[0] == "{title}" or not pages or (k == 0 and first)
            page = opening + rules + columns + rules
            used = (0 if on_new_page else len(pages[-1])) + len(page) + len(rules)
            start = pos
            while pos < len(records) and (used + len(records[pos]) <= PAGE_LINES or pos == start):
                used += len(records[pos])
                page.extend(records[pos])
                pos += 1
            page.extend(rules)
            if on_new_page:
                pages.append(page)
            else:
                pages[-1].extend(page)
            first = False
    if len(pages[-1]) + len(closing) <= PAGE_LINES:
        pages[-1].extend(closing)
    else:  # on pages of their own (a foot longer than a page runs on)
        for i in range(0, len(closing), PAGE_LINES - 1):
            pages.append(["{title}"] + closing[i:i + PAGE_LINES - 1])
    total = len(pages)
    out: list[str] = []
    for n, lines in enumerate(pages, start=1):
        for i, line in enumerate(lines):
            if line == "{title}":
                line = ("\f" if i == 0 else "") + clip(f"{title}   page {n} of {total}", width)
            elif line == "page {page} of {pages}":
                line = f"page {n} of {total}"
            out.append(line)
    return "\n".join(out) + "\n"


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


def _stake_table(d: Design, width: int | None) -> tuple[list[str], list[str]]:
    """The stake table's column header lines and one record per stake (point
    order), column widths fitted to the whole job so that every setup's table
    aligns.  The columns a crew turns and measures come first; those that do
    not fit ``width`` run on to a second line under their own header
    (``None``: one line per stake).
    """
    left = {"point", "code", "feature", "note"}
    cols = [Column(SETOUT_HEADERS[c.key][0], texts, "<" if c.key in left else ">", with_previous=c.grouped)
            for c, texts in setout_cells(d, sided=True)]
    if width is None:  # the wide layout only: the slope applied to each stake, after its design elevation
        slope = slope_column(d) if d.stakes.elevation is not None else None
        if slope is not None:
            at = next(k for k, c in enumerate(cols) if c.header == SETOUT_HEADERS["design_elevation"][0]) + 1
            cols.insert(at, slope)
    return table_lines(cols, width)


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


def setout_sheet(d: Design, wide: bool = False) -> str:
    """Render ``setout.txt``.

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
    cols, rows = _stake_table(d, table)
    return paged(head, cols, rows, f"{title}   {job.info.name}", _stake_foot(d), width=page)


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


def _sectioned_sheet(d: Design, wide: bool) -> str:
    """``setout.txt`` with a setup summary and one section per setup."""
    assert d.setup is not None
    job, sdes = d.job, d.setup
    setup = sdes.setup
    title = "SETOUT SHEET"
    head = header_lines(title, d)
    head += warning_lines(d)  # on the first page, never only on the console
    first = sdes.occupations[0].scale
    auto_factor = first.scale_factor is not None and first.elevation_factor is not None
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
    page, table = _widths(wide)
    cols, rows = _stake_table(d, table)
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
        parts.append(SheetPart(sh, cols, [rows[i] for i in idx.tolist()] or ["(no stakes)"],
                               f"setup {o.number} of {n} (occupied {o.occupied.id}), continued"))
    return paged_parts(head, parts, f"{title}   {job.info.name}", _stake_foot(d), width=page)


def _several_sheet(d: Design, wide: bool) -> str:
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
    head += [f"WARNING   {w}" for w in d.warnings]  # the job's, then each alignment's (main, 049d867)
    head += [f"WARNING   {p.alignment.name}: {w}" for p in parts for w in p.warnings]
    head += _factor_lines(d, d.setup.occupations[0].scale) + _DEFINITIONS
    setup = d.setup.setup
    heights = [f"{what} height {h:.3f}" for what, h in (("instrument", setup.instrument_height),
                                                         ("target", setup.target_height)) if h is not None]
    if heights:
        head.append("   ".join(heights) + " (every setup)")
    head += [line for line in (vertical_note(d),) if line]
    head += _instrument_lines(d)
    page, table = _widths(wide)
    # one table over every alignment's stakes: the columns any alignment has, empty where another has none
    cells = [setout_cells(p, sided=True) for p in parts]
    keys = list(dict.fromkeys(c.key for per in cells for c, _ in per))
    left = {"point", "code", "feature", "note"}
    cols = []
    for key in keys:
        texts: list[str] = []
        grouped = False
        for p, per in zip(parts, cells):
            found = next(((c, t) for c, t in per if c.key == key), None)
            texts += found[1] if found is not None else [""] * len(p.stakes)
            grouped = grouped or (found is not None and found[0].grouped)
        cols.append(Column(SETOUT_HEADERS[key][0], texts, "<" if key in left else ">", with_previous=grouped))
        if key == "point":  # each stake's alignment beside its point id
            cols.append(Column("alignment", [p.alignment.name for p in parts for _ in range(len(p.stakes))], "<"))
    heads, rows = table_lines(cols, table)
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
    s_heads, s_rows = table_lines(summary, table)
    sections = [SheetPart(["", f"SETUPS: {len(occs)}, serving every alignment"], s_heads, s_rows,
                          "setups, continued")]
    order = np.argsort(index, kind="stable")
    groups = np.split(order, np.cumsum(counts)[:-1])
    for o, idx in zip(occs, groups):
        sh = [f"SETUP {o.number} of {len(occs)}" + (f"   ({o.where})" if o.where != "setup" else "")]
        sh += _point_lines(o, setup, o.scale, inst=False)
        sh += _convergence_lines(setup, o.scale)
        sh.append(f"{idx.size} stake{'s' if idx.size != 1 else ''}" if idx.size else "no stakes")
        sections.append(SheetPart(sh, heads, [rows[i] for i in idx.tolist()] or ["(no stakes)"],
                                  f"setup {o.number} of {len(occs)} (occupied {o.occupied.id}), continued"))
    unit = d.unit
    total = int(index.size)
    foot = [f"{total} points on {len(parts)} alignments; angles to 1 second, distances in {unit.plural}", ""]
    for p in parts:
        foot += [f"ALIGNMENT {p.alignment.name}"] + curve_lines(p) + [""]
    return paged_parts(head, sections, f"{title}   {d.job.info.name}", foot, width=page)


def deflection_sheet(d: Design, wide: bool = False) -> str:
    """Render ``deflections.txt``: deflection angles and chords from the curve points.

    Each curve element opens with a line of its data, kept on the page of
    its first row; lines of at most :data:`WIDTH` characters (``wide``:
    :data:`WIDE`).
    """
    job, lab = d.job, d.stationing.label
    page, table = _widths(wide)
    title = "CURVE DEFLECTIONS"
    head = header_lines(title, d)
    head.append("Occupy the start of each arc (PC, PCC or PRC), sight along its tangent")
    head.append("(zero on the PI or the back tangent), turn the deflection toward the curve")
    head.append("and tape the chord.")
    spirals = d.presentation.has_spirals
    # the sheet in order: a title (str) opens each element and offset line, then its data rows
    # (internal station, length, deflection, chord, sub-chord, turn)
    items: list[str | tuple[float, float, float, float, float, int]] = []

    def data(rows: np.ndarray, turn: int) -> None:
        items.extend((*row, turn) for row in rows.tolist())

    for t in d.presentation.deflections:
        origin = deflection_origin(t, lab)
        items.append(deflection_title(t, "curve", origin))
        data(t.rows, t.deflect_turn)
        for off in t.offsets:  # the offset line from its own start point, along its own start tangent
            items.append(f"  offset line {off.code} {offset_side(off.offset)}: from its point opposite {origin}")
            data(off.rows, t.deflect_turn)
    v = np.array([x for x in items if not isinstance(x, str)], dtype=float).reshape(-1, 6)
    defl = v[:, 2]
    # the circle reading for a left deflection (360 - d), blank for a right one
    left = (v[:, 5] < 0) & (defl != 0.0)
    readings = texts_of(format_dms(360.0 - defl, 0))
    values = [d.stationing.labels(v[:, 0]) if v.size else [], fixed(v[:, 1], 4), texts_of(format_dms(defl, 0)),
              fixed(v[:, 3], 4), fixed(v[:, 4], 4), [r if lt else "" for r, lt in zip(readings, left.tolist())]]
    cols = [Column(h[0], texts) for h, texts in zip(DEFLECTION_HEADERS, values)]
    heads, records = table_lines(cols, table)
    out: list[str] = []
    pending: list[str] = []  # title lines waiting for their first data row
    k = 0
    for x in items:
        if isinstance(x, str):
            pending += wrap_lines([x], page)
        else:
            out.append("\n".join(pending + [records[k]]))
            pending = []
            k += 1
    if not out:
        out.append("(the alignment has no curves)")
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
    return paged(head, heads, out, f"{title}   {job.info.name}", foot, width=page)
