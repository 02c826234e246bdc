"""``check.csv``, the printable ``check.txt`` and ``restake.csv`` of a staked-point check."""

from __future__ import annotations

import math
import textwrap
from pathlib import Path

import numpy as np

from ..check import CheckResult
from ..design import Design
from ..shots import Shots
from .checkwords import (LISTED_SHOTS, NOT_STAKED_LISTED, cut_fill, design_point_id, listed_shots, move_decimals,
                         move_text, shot_alignments, shot_label, shot_stations, status_text, target_id, what_to_do)
from .csvtext import DECIMALS, csv_text, csv_text_field
from .text import WIDE, WIDTH, Column, SheetPart, clip, finite_or_empty, paged_parts, table_lines

__all__ = ["CHECK_COLUMNS", "check_csv", "check_txt", "cut_fill", "status_text",
           "move_text", "move_decimals", "what_to_do", "target_id", "listed_shots", "LISTED_SHOTS", "NOT_STAKED_LISTED"]

CHECK_COLUMNS = ("point", "design_point", "station", "offset", "d_northing", "d_easting", "horizontal_error",
                 "d_station", "d_offset", "d_elevation", "status",
                 # added columns
                 "matched_by", "northing", "easting", "line", "fails", "governing_line",
                 # second set
                 "d_along", "d_across", "alignment")
_CHUNK_ROWS = 16384


def _f(v: float, d: int = DECIMALS) -> str:
    return finite_or_empty(v, d)




def check_csv(d: Design, shots: Shots, r: CheckResult) -> bytes:
    """``check.csv``: one row per shot, in file order.

    ``design_point`` holds the control point's id for a ``control`` shot;
    ``fails`` names the tolerance an ``out`` or ``control`` shot fails;
    ``governing_line`` is, for a ``superseded`` or ``duplicate`` shot, the
    line of the shot that governs its design point.
    """
    station = shot_stations(d, r)
    names = [csv_text_field(a) for a in shot_alignments(d, r)]
    out = []
    for k in range(len(shots)):
        g = int(r.related[k])
        out.append(",".join([
            csv_text_field(shots.point[k]), csv_text_field(target_id(d, r, k)), _f(float(station[k])),
            _f(r.offset[k]), _f(r.d_northing[k]), _f(r.d_easting[k]), _f(r.horizontal_error[k]),
            _f(r.d_station[k]), _f(r.d_offset[k]), _f(r.d_elevation[k]), r.status[k], r.matched_by[k],
            _f(shots.northing[k]), _f(shots.easting[k]), str(shots.line[k]), r.fails[k],
            str(shots.line[g]) if g >= 0 else "",
            _f(r.d_along[k]), _f(r.d_across[k]), names[k],
        ]))
    return csv_text(CHECK_COLUMNS, out).encode("utf-8")


#: Longest shot or design id printed whole on check.txt (check.csv keeps every id whole).
ID_PRINTED = 24


def _ident(pid: str) -> str:
    """An id as printed: whole up to :data:`ID_PRINTED` characters, else cut and ended with ``~``."""
    return pid if len(pid) <= ID_PRINTED else pid[: ID_PRINTED - 1] + "~"


def _short_mark(mark: str, dz: float) -> str:
    """A cut/fill mark in at most 9 characters for the printed table (fewer
    decimals for a blunder of hundreds of units; check.csv keeps the value).
    """
    if len(mark) <= 9:
        return mark
    return mark[:2] + _fit(abs(dz), 7, 3)


def _fit(v: float, width: int, decimals: int) -> str:
    """A number in at most ``width`` characters: fewer decimals, then ``1e+05`` form; empty for NaN."""
    if not math.isfinite(v):
        return ""
    for dec in range(decimals, -1, -1):
        t = f"{round(v, dec) + 0.0:.{dec}f}"
        if len(t) <= width:
            return t
    return f"{v:.0e}"


def check_txt(d: Design, staked_path: str, shots: Shots, r: CheckResult, wide: bool = False) -> bytes:
    """``check.txt``: summary, what needs attention first and what to do, the
    shots within tolerance, the superseded ones, the points to set again;
    sign-off and cautions at the foot.  Pages of at most 60 lines with the
    column header repeated; no line over :data:`WIDTH` characters
    (:data:`WIDE` with ``wide``).
    """
    width = WIDE if wide else WIDTH
    job = d.job
    unit = job.info.unit
    counts = r.counts()

    title = f"STAKED-POINT CHECK   {job.info.name}".rstrip()
    out = [clip(title, width),
           clip(f"job file     {Path(job.path).name}", width),
           f"  sha256 {job.sha256}",
           clip(f"staked file  {Path(staked_path).name}", width),
           f"units        {unit.label}",
           f"tolerances   horizontal {r.horizontal_tolerance:.4f}   vertical "
           + (f"{r.vertical_tolerance:.4f}" if r.vertical_tolerance is not None else "not set (not checked)"),
           f"search radius for renumbered shots {r.search_radius:.4f}",
           clip("control points " + (", ".join(r.control_ids) if r.control_ids else "none in the job"), width),
           "",
           f"shots {len(shots)}:  " + "   ".join(f"{s} {c}" for s, c in counts.items()),
           ]
    governing = np.isin(np.array(r.status, dtype=object), ["ok", "out"])
    hz = r.horizontal_error[governing & np.isfinite(r.horizontal_error)]
    dz = r.d_elevation[governing & np.isfinite(r.d_elevation)]
    out.append(f"worst horizontal error {_fit(float(hz.max()), 20, 4)}" if hz.size else "worst horizontal error -")
    out.append(f"worst vertical error {_fit(float(np.abs(dz).max()), 20, 4)}" if dz.size
               else "worst vertical error - (no elevations to compare)")
    out.append(f"verdict: {'ALL WITHIN TOLERANCE' if r.all_ok else 'NEEDS ATTENTION: see the first table'}")
    out.append("")

    with_grade = d.design_elevation is not None
    marks = cut_fill(r.d_elevation, 2 if unit.is_feet else 3)

    def target(k: int) -> str:
        t = target_id(d, r, k)
        return t + "*" if r.matched_by[k] == "nearest" else t

    def table(ks: list[int], with_status: bool, notes: dict[int, str]) -> tuple[list[str], list[str]]:
        """The column header lines and one record per shot of ``ks``, widths
        from their content; ``notes`` lines under a shot's row, in its record.

        The status ends the row where the whole row fits the page; otherwise
        it opens the line below.  Columns that do not fit run on to a second
        line (long ids or station labels).
        """
        cols = [Column("shot", [_ident(shots.point[k]) for k in ks], "<"),
                Column("design", [_ident(target(k)) for k in ks], "<"),
                Column("station", [shot_label(d, r, k) for k in ks]),
                Column("offset", [_fit(r.offset[k], 9, 3) for k in ks]),
                Column("horiz", [_fit(r.horizontal_error[k], 7, 3) for k in ks]),
                Column("d along", [_fit(r.d_along[k], 8, 3) for k in ks]),
                Column("d across", [_fit(r.d_across[k], 8, 3) for k in ks], with_previous=True)]
        if np.isfinite(r.d_elevation[ks]).any():  # no column of blanks where no shot has a height
            cols.append(Column("d elev", [_fit(r.d_elevation[k], 7, 3) for k in ks]))
        if with_grade:
            cols.append(Column("mark", ["" if r.status[k] == "control" else
                                        _short_mark(marks[k], float(r.d_elevation[k])) for k in ks], "<"))
        status = [status_text(r, k) for k in ks]
        if with_status:
            cols.append(Column("status", status, "<"))
        inline = with_status and sum(c.width + 1 for c in cols) - 1 <= width  # the whole row fits the page
        if with_status and not inline:
            cols.pop()
        heads, records = table_lines(cols, width)
        out = []
        for i, k in enumerate(ks):
            lines = [records[i]]
            note = notes.get(k, "")
            if with_status and not inline:
                note = f"{status[i]}: {note}" if note else status[i]
            if note:
                lines += textwrap.wrap(note, width, initial_indent="    ", subsequent_indent="      ",
                                       break_long_words=True, break_on_hyphens=False)
            out.append("\n".join(lines))
        return heads, out

    attention, fine, superseded, left_out = listed_shots(r)
    notes = {k: what_to_do(d, shots, r, k) for k in attention}
    if left_out:
        out += textwrap.wrap(left_out, width) + [""]
    sections: tuple[tuple[str, list[int], bool, dict[int, str]], ...] = (
        ("NEEDS ATTENTION, with what to do (out, duplicate, unmatched, control off)", attention, True, notes),
        ("WITHIN TOLERANCE", fine, True, {}),
        ("SUPERSEDED (shot again later in the file; the later shot governs)", superseded, False,
         {k: what_to_do(d, shots, r, k) for k in superseded}),
    )
    parts: list[SheetPart] = []
    shown_counts = {"WITHIN TOLERANCE": sum(1 for k in range(len(shots)) if r.status[k] in ("ok", "control")
                                            and not r.needs_attention(k)),
                    "SUPERSEDED": counts["superseded"],
                    "NEEDS ATTENTION": sum(1 for k in range(len(shots)) if r.needs_attention(k))}
    for name, ks, with_status, extra in sections:
        total = next(v for key, v in shown_counts.items() if name.startswith(key))
        if not total and name.startswith("SUPERSEDED"):
            continue
        head = [f"{name}: {total}" + (" (not listed: see check.csv)" if total and not ks else
                                      (f" (the first {len(ks)} listed)" if len(ks) < total else ""))]
        if ks:
            cols, records = table(ks, with_status, extra)
            short = name.split(",")[0].split(" (")[0]
            parts.append(SheetPart(head, cols, records, f"{short}, continued", new_page=False))
        else:
            parts.append(SheetPart(head, [], [], new_page=False))
    missing = [design_point_id(d, int(i)) for i in r.not_staked[:NOT_STAKED_LISTED]]
    n_out = int(r.restake.size - r.not_staked.size)
    head = [f"design points to set again (restake.csv): {r.restake.size}",
            f"  out of tolerance {n_out}   not staked {r.not_staked.size}",
            f"design points not staked: {r.not_staked.size}"]
    rows: list[str] = []
    line = ""
    for pid in missing:
        if len(line) + len(pid) + 1 > width - 2:
            rows.append("  " + line.rstrip())
            line = ""
        line += pid + " "
    if line:
        rows.append("  " + line.rstrip())
    if r.not_staked.size > NOT_STAKED_LISTED:
        rows.append(f"  ... and {r.not_staked.size - NOT_STAKED_LISTED} more (all of them are in restake.csv)")
    parts.append(SheetPart(head, [], rows, "design points not staked, continued", new_page=False))
    foot = []
    if with_grade:
        foot += ["mark: the cut or fill to write on the stake,",
                 "  C where the shot is above design, F below"]
    if any(len(p) > ID_PRINTED for p in shots.point):
        foot.append(f"~: the end of a shot id cut to {ID_PRINTED} characters (check.csv holds it whole)")
    foot += [
        "move: from where the stake was shot to design, looking up-station: ahead/back",
        "  along the line, right/left square to it at the stake (ground distances),",
        "  down/up for its top",
        "status out (horizontal / vertical / both): which tolerance the shot fails",
        "* matched by position: the shot's number is not a design point (renumbered),",
        "  so it was matched to the nearest design or control point within the search",
        "  radius",
        "control: a shot on a control point of the job, against the control coordinates",
        "d along / d across: the residual along / square to the line at the stake;",
        "  d = staked - design; northing and easting residuals are in check.csv",
    ]
    return paged_parts(out, parts, title, foot, width).encode("utf-8")
