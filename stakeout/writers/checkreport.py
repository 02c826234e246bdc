"""``check.csv`` and the printable ``check.txt`` summary of a staked-point check."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from ..check import STATUSES, CheckResult
from ..design import Design
from ..shots import Shots
from .tables import DECIMALS, csv_field, csv_text
from .text import CAUTION_LINES, SIGN_OFF_LINES, clip, finite_or_empty

__all__ = ["CHECK_COLUMNS", "check_csv", "check_txt", "cut_fill", "status_text"]

CHECK_COLUMNS = ("point", "design_point", "station", "offset", "d_northing", "d_easting", "horizontal_error",
                 "d_station", "d_offset", "d_elevation", "status",
                 # added columns
                 "matched_by", "northing", "easting", "line")


def _f(v: float, d: int = DECIMALS) -> str:
    return finite_or_empty(v, d)


def _shot_id(pid: str) -> str:
    """A shot id from the field as a CSV field that no spreadsheet runs as a formula."""
    if pid[:1] in ("=", "+", "-", "@", "\t", "\r"):
        pid = "'" + pid
    return csv_field(pid)


def check_csv(d: Design, shots: Shots, r: CheckResult) -> bytes:
    """``check.csv``: one row per shot, in file order."""
    design = d.stakes
    station = d.stationing.station
    rows = []
    for k in range(len(shots)):
        i = int(r.design_index[k])
        rows.append(",".join([
            _shot_id(shots.point[k]), design.point[i] if i >= 0 else "", _f(float(station(r.station[k]))), _f(r.offset[k]),
            _f(r.d_northing[k]), _f(r.d_easting[k]), _f(r.horizontal_error[k]), _f(r.d_station[k]),
            _f(r.d_offset[k]), _f(r.d_elevation[k]), r.status[k], r.matched_by[k],
            _f(shots.northing[k]), _f(shots.easting[k]), str(shots.line[k]),
        ]))
    return csv_text(CHECK_COLUMNS, rows).encode("utf-8")


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


def status_text(r: CheckResult, k: int) -> str:
    """The shot's status, and for ``out`` which tolerance it fails."""
    s = r.status[k]
    if s != "out":
        return s
    hz = bool(r.horizontal_error[k] > r.horizontal_tolerance)
    dz = r.d_elevation[k]
    vt = r.vertical_tolerance is not None and math.isfinite(dz) and abs(dz) > r.vertical_tolerance
    return "out (" + ("both" if hz and vt else ("horizontal" if hz else "vertical")) + ")"


def check_txt(d: Design, staked_path: str, shots: Shots, r: CheckResult) -> bytes:
    """``check.txt``: summary, what needs attention first, then the rest; cautions at the foot."""
    job, design = d.job, d.stakes
    unit = job.info.unit
    counts = r.counts()
    station_label = d.stationing.label

    out = [clip(f"STAKED-POINT CHECK   {job.info.name}".rstrip()),
           clip(f"job file     {Path(job.path).name}"),
           f"             sha256 {job.sha256}",
           clip(f"staked file  {Path(staked_path).name}"),
           f"units        {unit.label}",
           f"tolerances   horizontal {r.horizontal_tolerance:.4f}   vertical "
           + (f"{r.vertical_tolerance:.4f}" if r.vertical_tolerance is not None else "not set (not checked)"),
           f"search radius for renumbered shots {r.search_radius:.4f}",
           "",
           f"shots {len(shots)}:  " + "   ".join(f"{s} {counts[s]}" for s in STATUSES),
           ]
    hz = r.horizontal_error[np.isfinite(r.horizontal_error)]
    dz = r.d_elevation[np.isfinite(r.d_elevation)]
    out.append(f"worst horizontal error {hz.max():.4f}" if hz.size else "worst horizontal error -")
    out.append(f"worst vertical error {np.abs(dz).max():.4f}" if dz.size else "worst vertical error - (no elevations to compare)")
    out.append(f"verdict: {'ALL WITHIN TOLERANCE' if r.all_ok else 'NEEDS ATTENTION: see the first table'}")
    out.append("")
    ids = shots.point + [design.point[int(i)] for i in r.design_index if i >= 0]
    w = min(16, max([6] + [len(p) for p in ids]))

    def ident(p: str) -> str:
        return p if len(p) <= w else p[: w - 1] + "~"

    with_grade = d.design_elevation is not None
    marks = cut_fill(r.d_elevation, 2 if unit.is_feet else 3)
    cols = (f"{'shot':<{w}} {'design':<{w}} {'station':>10} {'offset':>9} {'horiz':>7} {'d along':>8} "
            f"{'d across':>8} {'d elev':>7} " + (f"{'mark':<8} " if with_grade else "") + "status")
    rule = "-" * (len(cols) + 3)

    def row(k: int) -> str:
        i = int(r.design_index[k])
        return (f"{ident(shots.point[k]):<{w}} {ident(design.point[i]) if i >= 0 else '':<{w}} "
                f"{station_label(r.station[k]):>10} {_f(r.offset[k], 3):>9} {_f(r.horizontal_error[k], 3):>7} "
                f"{_f(r.d_station[k], 3):>8} {_f(r.d_offset[k], 3):>8} {_f(r.d_elevation[k], 3):>7} "
                + (f"{marks[k]:<8} " if with_grade else "") + status_text(r, k))

    attention = [k for k in range(len(shots)) if r.status[k] != "ok"]
    fine = [k for k in range(len(shots)) if r.status[k] == "ok"]
    for title, ks in (("NEEDS ATTENTION (out of tolerance, duplicate, unmatched)", attention),
                      ("WITHIN TOLERANCE", fine)):
        out.append(f"{title}: {len(ks)}")
        if ks:
            out += [rule, cols, rule] + [row(k) for k in ks] + [rule]
        out.append("")
    missing = [design.point[i] for i in r.not_staked]
    out.append(f"design points not staked: {len(missing)}")
    line = ""
    for pid in missing:
        if len(line) + len(pid) + 1 > 96:
            out.append("  " + line.rstrip())
            line = ""
        line += pid + " "
    if line:
        out.append("  " + line.rstrip())
    out.append("")
    if with_grade:
        out.append("mark: the cut or fill to write on the stake, C where the shot is above design, F below;")
        out.append("status out (horizontal / vertical / both): which tolerance the shot fails")
    out.append("d along / d across: the shot's station / offset minus the design point's; d = staked - design;")
    out.append("northing and easting residuals are in check.csv")
    out.append("")
    out.extend(SIGN_OFF_LINES)
    out.append("")
    out.extend(CAUTION_LINES)
    text = "\n".join(out) + "\n"
    return text.encode("utf-8")
