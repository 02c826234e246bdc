"""``check.csv``, the printable ``check.txt`` and ``restake.csv`` of a staked-point check."""

from __future__ import annotations

import math
import os
import textwrap
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from ..check import CheckResult
from ..design import Design
from ..shots import Shots
from .checkwords import (LISTED_SHOTS, NOT_STAKED_LISTED, cut_fill, design_point_id, listed_shots, move_decimals,
                         move_text, shot_alignments, shot_label, shot_stations, status_text, target_id, what_to_do)
from . import rows
from .csvtext import DECIMALS, FORMULA_LEADS, csv_text_field
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

    Built from whole columns (:mod:`.rows`): each text column is joined and
    encoded once, numbers are laid out as digits by numpy, rows are rendered
    in blocks (:func:`.rows.row_chunks`) on every core.
    """
    n = len(shots)
    head = (",".join(CHECK_COLUMNS) + "\n").encode("ascii")
    if n == 0:
        return head
    point = _csv_strings(shots.point)
    target = _Targets(d, r)
    words = [rows.Strings(r.status), rows.Strings(r.matched_by), rows.Strings(r.fails)]
    line = np.asarray(shots.line, dtype=np.int64)
    g = np.asarray(r.related, dtype=np.int64)
    names = _csv_strings(shot_alignments(d, r))  # '' where no design point: control and unmatched shots
    station = shot_stations(d, r)
    first = [station, r.offset, r.d_northing, r.d_easting, r.horizontal_error, r.d_station, r.d_offset,
             r.d_elevation]

    def num(v: NDArray[np.float64], sl: slice) -> rows.Field:
        try:
            return rows.optional(v[sl], DECIMALS)
        except ValueError:  # a number beyond the digit tables (over 1e13): Python's own formatting
            return rows.Strings([_f(x) for x in v[sl].tolist()]).field(slice(None))

    def chunk(bounds: tuple[int, int]) -> bytes:
        sl = slice(*bounds)
        k = bounds[1] - bounds[0]
        sep = rows.const(",", k)
        gov = g[sl]
        fields = [point.field(sl), sep, *target.fields(sl), sep]
        for v in first:
            fields += [num(v, sl), sep]
        status, matched_by, fails = (w.field(sl) for w in words)
        fields += [status, sep, matched_by, sep, num(shots.northing, sl), sep, num(shots.easting, sl), sep,
                   rows.integer(line[sl]), sep, fails, sep,
                   rows.blank(rows.integer(np.where(gov >= 0, line[gov], 0)), gov < 0), sep,
                   num(r.d_along, sl), sep, num(r.d_across, sl), sep, names.field(sl)]
        return rows.join_rows(fields, k)

    blocks = rows.row_chunks(point.lens + target.lens(), _CHUNK_ROWS)
    if len(blocks) < 2:
        return head + b"".join(map(chunk, blocks))
    with ThreadPoolExecutor(max_workers=min(4, os.cpu_count() or 1)) as pool:  # numpy releases the GIL
        return head + b"".join(pool.map(chunk, blocks))


_CSV_LEADS = "".join(FORMULA_LEADS).encode("ascii")
_CSV_QUOTED = b',"\r\n'


def _csv_strings(strings: list[str]) -> rows.Strings:
    """A text column of a CSV file: each string as :func:`csv_text_field` writes it (only the few
    that need a guard or quotes go through it).
    """
    col = rows.Strings(strings)
    odd = col.rows_holding(_CSV_LEADS, _CSV_QUOTED)
    if odd.size:
        strings = list(strings)
        for k in odd.tolist():
            strings[k] = csv_text_field(strings[k])
        col = rows.Strings(strings)
    return col


class _Targets:
    """check.csv's ``design_point``: the design point's id (prefix and number) or the control point's."""

    def __init__(self, d: Design, r: CheckResult):
        sp = d.stakes
        self.design = np.asarray(r.design_index, dtype=np.int64)
        self.control = np.asarray(r.control_index, dtype=np.int64)
        self.number = sp.first_point + self.design
        self.prefix = np.frombuffer(sp.prefix.encode("utf-8"), dtype=np.uint8)
        self.strings: rows.Strings | None = None
        on = self.design >= 0
        plain = csv_text_field(sp.prefix + "0") == sp.prefix + "0" and (sp.prefix != "" or
                                                                         not np.any(self.number[on] < 0))
        # several alignments, or ids the job gave (listed points): each id as written, not a number
        plain = plain and not d.parts and not (sp.layout is not None and sp.layout.names)
        if not plain:  # a prefix that takes a guard or quotes: every id through csv_text_field
            self.strings = _csv_strings([target_id(d, r, k) for k in range(len(r.status))])
            return
        self.ids = _csv_strings(list(r.control_ids))
        digits = np.floor(np.log10(np.maximum(np.abs(self.number), 1))).astype(np.int64) + 1
        self.width = np.where(on, self.prefix.size + digits + (self.number < 0),
                              np.append(self.ids.lens, 0)[self.control])  # -1: none, 0 bytes

    def lens(self) -> NDArray[np.int64]:
        """Bytes of each shot's id (about: for sizing blocks of rows)."""
        return self.strings.lens if self.strings is not None else self.width

    def fields(self, sl: slice) -> list[rows.Field]:
        if self.strings is not None:
            return [self.strings.field(sl)]
        i, c = self.design[sl], self.control[sl]
        k = i.size
        design, control = i >= 0, (i < 0) & (c >= 0)
        return [rows.blank(np.broadcast_to(self.prefix, (k, self.prefix.size)), ~design),
                rows.blank(rows.integer(np.where(design, self.number[sl], 0)), ~design),
                rows.blank(self.ids.field(np.where(control, c, 0)), ~control) if len(self.ids.lens) else
                np.zeros((k, 0), dtype=np.uint8)]


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
    hz = r.horizontal_error[r.governing & np.isfinite(r.horizontal_error)]
    dz = r.d_elevation[r.governing & np.isfinite(r.d_elevation)]
    out.append(f"worst horizontal error {_fit(float(hz.max()), 20, 4)}" if hz.size else "worst horizontal error -")
    out.append(f"worst vertical error {_fit(float(np.abs(dz).max()), 20, 4)}" if dz.size
               else "worst vertical error - (no elevations to compare)")
    out.append(f"verdict: {'ALL WITHIN TOLERANCE' if r.all_ok else 'NEEDS ATTENTION: see the first table'}")
    out.append("")

    with_grade = d.design_elevation is not None

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
            marks = cut_fill(r.d_elevation[ks], 2 if unit.is_feet else 3)
            cols.append(Column("mark", ["" if r.status[k] == "control" else
                                        _short_mark(mark, float(r.d_elevation[k])) for k, mark in zip(ks, marks)],
                               "<"))
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
    shown_counts = {"WITHIN TOLERANCE": int(r.within.sum()), "SUPERSEDED": counts["superseded"],
                    "NEEDS ATTENTION": int(r.attention.sum())}
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
    if max(map(len, shots.point), default=0) > ID_PRINTED:
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
