"""The earthwork outputs as they were built before issue 27 (row by row, one Python string a
field): the reference the whole-column writers are compared with byte for byte
(tests/test_earthwork_fast.py).  A frozen copy of stakeout/writers/earthwork.py at commit
790ac26 and of Presentation.catch_gaps (the side lines of the sheet's head, unchanged, are
imported); its table and paging come from the frozen copy in tests/sheets_reference.py.
Do not change it to follow the package.
"""
# ruff: noqa

from __future__ import annotations

from stakeout.design import Design
from stakeout.slopestakes import lath_marking
from stakeout.writers.csvtext import csv_field, csv_guard, csv_text, csv_text_field
from stakeout.writers.csvtext import numbers_or_empty as _opt
from stakeout.writers.earthwork import SLOPESTAKES_COLUMNS, VOLUMES_COLUMNS, _side_words  # unchanged by issue 27
from stakeout.writers.text import WIDE, WIDTH, header_lines, wrap_lines

from .sheets_reference import Column, SheetPart, paged_parts, table_lines

SHEET_DECIMALS = 3


def slopestakes_csv(design: Design) -> bytes:
    """``slopestakes.csv``: one row per staked station and side, station order, left before right."""
    ew = design.earthwork
    assert ew is not None and ew.slopes is not None
    r, sp = ew.slopes, design.stakes
    res = r.result
    name = csv_text_field(design.alignment.name)
    labels = sp.labels
    catch_ids, ref_ids = design.presentation.slope_stake_ids
    cols = [
        _opt(sp.station_values[r.station]),
        [csv_field(csv_guard(labels[i])) for i in r.station.tolist()],
        list(r.side),
        [csv_field(f"{sp.prefix}{k}") for k in sp.number[r.hinge].tolist()],
        _opt(r.hinge_offset),
        _opt(res.lines.z),
        _opt(res.ground_at_hinge),
        [str(k) for k in res.kind.tolist()],
        [csv_field(c) for c in catch_ids],
        _opt(r.catch_offset),
        _opt(res.catch_n),
        _opt(res.catch_e),
        _opt(res.catch_z),
        _opt(res.catch_cut_fill),
        [csv_field(c) for c in ref_ids],
        _opt(r.reference_offset),
        _opt(res.ref_n),
        _opt(res.ref_e),
        _opt(res.ref_ground),
        _opt(res.ref_dist),
        _opt(res.vd_to_hinge),
        [csv_field(str(t)) for t in res.note.tolist()],
    ]
    lines = (",".join((name, *row)) for row in zip(*cols))
    return csv_text(SLOPESTAKES_COLUMNS, lines).encode("utf-8")


def volumes_csv(design: Design) -> bytes:
    """``volumes.csv``: areas at every station with both catch points, average-end-area volumes between them."""
    ew = design.earthwork
    assert ew is not None
    sp = design.stakes
    name = csv_text_field(design.alignment.name)
    st = ew.volume_stations
    if ew.sections is None or ew.volumes is None or st.size == 0:
        return csv_text(VOLUMES_COLUMNS, []).encode("utf-8")
    labels = sp.labels
    v = ew.volumes
    cols = [
        _opt(sp.station_values[st]),
        [csv_field(csv_guard(labels[i])) for i in st.tolist()],
        _opt(ew.sections.cut_area[st]),
        _opt(ew.sections.fill_area[st]),
        _opt(v.cut),
        _opt(v.fill),
        _opt(v.cumulative_cut),
        _opt(v.cumulative_fill),
    ]
    lines = (",".join((name, *row)) for row in zip(*cols))
    return csv_text(VOLUMES_COLUMNS, lines).encode("utf-8")


def _catch_gaps(design: Design) -> tuple[int, int, str]:
    """Presentation.catch_gaps as it was."""
    ew = design.earthwork
    if ew is None or ew.slopes is None:
        return 0, 0, ""
    notes = [str(t) for t in ew.slopes.result.note.tolist() if t]
    why = ", ".join(f"{notes.count(t)} {t}" for t in sorted(set(notes)))
    return len(notes), len(ew.slopes.side), why


def slopestakes_sheet(design: Design, wide: bool = False) -> str:
    """``slopestakes.txt``: per staked station and side the hinge, the catch stake and the
    reference stake, each with what the crew writes on its lath (``C 3.42 @ 26.40``: cut or
    fill to the hinge, at the horizontal distance to it); 80 columns (``wide``: one line
    per record) and 60 lines a page.
    """
    ew = design.earthwork
    assert ew is not None and ew.slopes is not None
    page, table = (WIDE, None) if wide else (WIDTH, WIDTH)
    r, sp = ew.slopes, design.stakes
    res = r.result
    catch_ids, ref_ids = design.presentation.slope_stake_ids
    labels = sp.labels
    dec = SHEET_DECIMALS
    title = "SLOPE STAKES"
    head = header_lines(title, design) + [""] + wrap_lines(_side_words(design), page)
    cols = [
        Column("Station", [labels[i] for i in r.station.tolist()], "<"),
        Column("Side", [s[0].upper() for s in r.side], "<"),
        Column("Hinge", [f"{sp.prefix}{k}" for k in sp.number[r.hinge].tolist()], "<"),
        Column("Elev", _opt(res.lines.z, dec)),
        Column("Kind", [str(k) for k in res.kind.tolist()], "<"),
        Column("Catch", catch_ids, "<"),
        Column("Offset", _opt(r.catch_offset, dec)),
        Column("Lath (catch)", lath_marking(res.catch_cut_fill, res.catch_dist), "<"),
        Column("Ref", ref_ids, "<"),
        Column("Offset", _opt(r.reference_offset, dec), with_previous=True),
        Column("Lath (reference)", lath_marking(res.vd_to_hinge, res.ref_dist), "<", with_previous=True),
        Column("Note", [str(t) for t in res.note.tolist()], "<", with_previous=True),
    ]
    heads, records = table_lines(cols, table)
    missing, _, why = _catch_gaps(design)
    foot = ["Lath: C (cut) or F (fill) from the ground at the stake up or down to the hinge,",
            "@ the horizontal distance from the stake to the hinge; offsets negative left.",
            f"{missing} of {len(r.side)} station side(s) without a catch point" + (f" ({why})." if why else "."),
            "Catch and reference point ids are numbered after the last stake of the job."]
    return paged_parts(head, [SheetPart([], heads, records)], f"{title}   {design.job.info.name}", foot, page)
