"""``check.csv``, the printable ``check.txt`` and ``restake.csv`` of a staked-point check."""

from __future__ import annotations

import math
import textwrap
from pathlib import Path

import numpy as np

from ..check import CheckResult
from ..design import Design
from ..shots import Shots
from .tables import DECIMALS, POINTS_COLUMNS, csv_text, csv_text_field, points_csv
from .text import WIDE, WIDTH, Column, SheetPart, clip, finite_or_empty, paged_parts, table_lines

__all__ = ["CHECK_COLUMNS", "RESTAKE_COLUMNS", "check_csv", "check_txt", "restake_csv", "cut_fill", "status_text",
           "move_text", "move_decimals", "what_to_do", "target_id", "listed_shots", "LISTED_SHOTS"]

CHECK_COLUMNS = ("point", "design_point", "station", "offset", "d_northing", "d_easting", "horizontal_error",
                 "d_station", "d_offset", "d_elevation", "status",
                 # added columns
                 "matched_by", "northing", "easting", "line", "fails", "governing_line",
                 # second set
                 "d_along", "d_across", "alignment")
#: ``restake.csv`` is laid out as ``points.csv``, so a crew loads it the same way.
RESTAKE_COLUMNS = POINTS_COLUMNS
#: Ids of design points not staked listed in ``check.txt`` (all are in ``restake.csv``).
NOT_STAKED_LISTED = 400
_CHUNK_ROWS = 16384


def _f(v: float, d: int = DECIMALS) -> str:
    return finite_or_empty(v, d)




def target_id(d: Design, r: CheckResult, k: int) -> str:
    """The id of the design or control point shot ``k`` was matched to, or empty."""
    i, c = int(r.design_index[k]), int(r.control_index[k])
    if i >= 0:
        return d.stakes.prefix + str(d.stakes.first_point + i)
    return r.control_ids[c] if c >= 0 else ""


def check_csv(d: Design, shots: Shots, r: CheckResult) -> bytes:
    """``check.csv``: one row per shot, in file order.

    ``design_point`` holds the control point's id for a ``control`` shot;
    ``fails`` names the tolerance an ``out`` or ``control`` shot fails;
    ``governing_line`` is, for a ``superseded`` or ``duplicate`` shot, the
    line of the shot that governs its design point.
    """
    station = d.stationing.station
    name = csv_text_field(d.alignment.name)
    out = []
    for k in range(len(shots)):
        g = int(r.related[k])
        out.append(",".join([
            csv_text_field(shots.point[k]), csv_text_field(target_id(d, r, k)), _f(float(station(r.station[k]))),
            _f(r.offset[k]), _f(r.d_northing[k]), _f(r.d_easting[k]), _f(r.horizontal_error[k]),
            _f(r.d_station[k]), _f(r.d_offset[k]), _f(r.d_elevation[k]), r.status[k], r.matched_by[k],
            _f(shots.northing[k]), _f(shots.easting[k]), str(shots.line[k]), r.fails[k],
            str(shots.line[g]) if g >= 0 else "",
            _f(r.d_along[k]), _f(r.d_across[k]), name if r.design_index[k] >= 0 else "",
        ]))
    return csv_text(CHECK_COLUMNS, out).encode("utf-8")


def restake_csv(d: Design, r: CheckResult) -> bytes:
    """``restake.csv``: the design points still to set, in point order.

    Out of tolerance (by the shot that governs them, so also a point whose
    good shot was superseded by one out of tolerance) or not staked; every
    row exactly as in ``points.csv`` (the rows are taken from it).
    """
    data = np.frombuffer(points_csv(d), dtype=np.uint8)
    line_of_byte = np.concatenate([[0], np.cumsum(data[:-1] == 10)])  # line 0 is the header
    keep = np.zeros(len(d.stakes) + 1, dtype=bool)
    keep[0] = True
    keep[np.asarray(r.restake, dtype=np.int64) + 1] = True
    out: bytes = data[keep[line_of_byte]].tobytes()
    return out


def cut_fill(d_elevation: np.ndarray, decimals: int) -> list[str]:
    """Cut or fill to mark on each stake: ``C 0.42`` where the shot is above
    design (cut down to grade), ``F 0.17`` below; empty where unknown.
    """
    out = []
    for v in d_elevation.tolist():
        if not math.isfinite(v):
            out.append("")
            continue
        t = f"{abs(v):.{decimals}f}"
        out.append(f"C {t}" if v > 0 and float(t) > 0 else (f"F {t}" if v < 0 and float(t) > 0 else f"0 {t}"))
    return out


#: Above this many shots, check.txt and check.html list only the shots that need attention, at
#: most this many of them, and give the counts of the rest (check.csv lists every shot).
LISTED_SHOTS = 5000


def listed_shots(r: CheckResult) -> tuple[list[int], list[int], list[int], str]:
    """The shots check.txt and check.html list: needing attention, within tolerance, superseded
    (file order), and a note of what is left out (empty when everything is listed).
    """
    m = len(r.status)
    attention = [k for k in range(m) if r.needs_attention(k)]
    if m <= LISTED_SHOTS:
        fine = [k for k in range(m) if r.status[k] in ("ok", "control") and not r.needs_attention(k)]
        superseded = [k for k in range(m) if r.status[k] == "superseded"]
        return attention, fine, superseded, ""
    more = len(attention) - LISTED_SHOTS
    note = (f"{m:,} shots, more than {LISTED_SHOTS:,}: only the shots needing attention are listed"
            + (f" (the first {LISTED_SHOTS:,}; {more:,} more)" if more > 0 else "")
            + "; every shot is in check.csv")
    return attention[:LISTED_SHOTS], [], [], note


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


def status_text(r: CheckResult, k: int) -> str:
    """The shot's status, and for ``out`` (or a control shot beyond tolerance)
    which tolerance it fails: ``out (horizontal)``, ``control out (both)``.
    """
    s, f = r.status[k], r.fails[k]
    if s == "out":
        return f"out ({f})"
    if s == "control" and f:
        return f"control out ({f})"
    return s


def move_decimals(is_feet: bool, horizontal_tolerance: float) -> int:
    """Decimals of a correction: 2 in feet, 3 in metres, more when the
    tolerance is finer than five units of the last one (at most 4).
    """
    dec = 2 if is_feet else 3
    while dec < 4 and 10.0**-dec > horizontal_tolerance / 5:
        dec += 1
    return dec


def move_text(d_along: float, d_across: float, d_elevation: float, horizontal: bool, vertical: bool,
              decimals: int) -> str:
    """The correction of a stake in the crew's terms, looking up-station.

    The stake moves from where it was shot to design, by ground distances
    along and square to the alignment's direction at the stake (never
    station differences, which differ on an offset line of a curve):
    ``ahead`` or ``back``, ``right`` or ``left``, and, for a vertical
    failure, its top ``down`` (shot above design) or ``up``.  Components
    that round to zero are left out.

    Parameters
    ----------
    d_along, d_across, d_elevation : float
        Shot minus design: along and square to the alignment at the stake
        (ground distances, positive ahead and right) and elevation, job units.
    horizontal, vertical : bool
        Which tolerances the shot fails: only those parts are given.
    decimals : int
        Decimals of the distances.
    """
    parts = []
    if horizontal:
        for v, plus, minus in ((-d_along, "ahead", "back"), (-d_across, "right", "left")):
            if math.isfinite(v) and round(abs(v), decimals) > 0:
                parts.append(f"{abs(v):.{decimals}f} {plus if v > 0 else minus}")
    if vertical and math.isfinite(d_elevation) and round(abs(d_elevation), decimals) > 0:
        parts.append(f"{abs(d_elevation):.{decimals}f} {'down' if d_elevation > 0 else 'up'}")
    return "move " + ", ".join(parts) if parts else ""



def what_to_do(d: Design, shots: Shots, r: CheckResult, k: int) -> str:
    """What the crew does about shot ``k``, for ``check.txt`` and ``check.html``:
    the move for one out of tolerance, which shot governs for a duplicate or
    a superseded one, what to check for an unmatched shot or a control point
    that is off; empty for a shot within tolerance.
    """
    s = r.status[k]
    by_position = " (matched by position)" if r.matched_by[k] == "nearest" else ""
    g = int(r.related[k])
    governor = f"shot {shots.point[g]} on line {shots.line[g]}" if g >= 0 else "another shot"
    if s == "out":
        f = r.fails[k]
        what = move_text(r.ground_along[k], r.ground_across[k], r.d_elevation[k], f in ("horizontal", "both"),
                         f in ("vertical", "both"), move_decimals(d.unit.is_feet, r.horizontal_tolerance))
        return f"{what or 'reset it'}{by_position}"
    if s == "misnumbered":
        assert r.stored_as is not None
        stored = f"{d.stakes.prefix}{d.stakes.first_point + int(r.stored_as[k])}"
        return (f"stored as {stored} but lies on {target_id(d, r, k)} (within tolerance): confirm which stake it "
                f"is and correct the number; {stored} is still to set")
    if s == "duplicate":
        return f"design point {target_id(d, r, k)} already has {governor}{by_position}; find which stake is the point"
    if s == "unmatched":
        return f"no design or control point within {r.search_radius:.4f}; check the point number and the shot"
    if s == "superseded":
        return f"superseded by {governor} ({r.status[g]})"
    if s == "control" and r.fails[k]:
        return (f"control point {target_id(d, r, k)} is off{by_position}; check the setup (occupied point, "
                "backsight, heights) before staking on")
    return ""


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
    job, design = d.job, d.stakes
    unit = job.info.unit
    counts = r.counts()
    station_label = d.stationing.label

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
                Column("station", [station_label(r.station[k]) for k in ks]),
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
    missing = [design.prefix + str(design.first_point + int(i)) for i in r.not_staked[:NOT_STAKED_LISTED]]
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
