"""``staking.points``: stakes listed by station and offset in a CSV file.

The file (relative to the job file) starts with a header naming its
columns, in any order and any case: ``station``, ``offset`` and ``code``
always, ``id``, ``elevation``, ``skew``, ``description`` and ``region`` when
wanted; a column the reader does not know is refused (a misspelt
``elevaton`` would otherwise drop every elevation silently), and so is a
column named twice.  Each further row is one stake:

* ``station`` -- as every station of the job file is written
  (``1+234.567`` or ``1234.567``); ``region`` (a whole number, 1 or more)
  when the station lies in two regions after an equation that steps back;
* ``offset`` -- job units, negative left, measured square to the alignment
  or, with ``skew``, along the skewed line;
* ``skew`` -- an angle in any form the job file takes (``15``,
  ``"15-30-00"``), positive clockwise in plan from the square line;
  ``|skew| < 90`` degrees (at 90 the line runs along the alignment);
  empty or absent: 0;
* ``code`` -- required; ``id`` -- optional; both held to the rules of every
  id and code (1 to 20 of letters, digits, ``_ # . / -``), ids unique in
  the file;
* ``elevation`` -- optional, job units (empty: the design's);
* ``description`` -- optional free text (printable, one line, at most 200
  characters).

The file is read with the staked-file reader's hardening
(:mod:`stakeout.delimited`): at most 256 MiB, a regular file only,
UTF-8/UTF-16 with a mark/Windows-1252, comma, semicolon, tab or spaces,
bounded fields and rows, numbers in plain ASCII.  Every refusal is one
line naming ``staking.points``, the file and, for a row, its line number
and the value.
"""

from __future__ import annotations

import hashlib
import math
import re
from pathlib import Path

from ..angles import parse_angle
from ..delimited import (Source, blank, check_fields, check_header_once, decode_text, detect_delimiter,
                         not_a_number, number, records)
from ..errors import JobFileError
from ..job import JobInfo, ListedPoints
from ..limits import MAX_HEIGHT, MAX_LENGTH, MAX_STAKED_FILE_BYTES, check_station_value, read_regular_file
from ..stations import StationRef, parse_station
from ..textsafety import SAFE_ID, SAFE_ID_HELP, check_free_text, show_value

__all__ = ["read_listed_points", "POINT_COLUMNS", "REQUIRED_COLUMNS", "MAX_SKEW"]

#: Columns of a points list, in the order the contract names them.
POINT_COLUMNS = ("station", "offset", "code", "id", "elevation", "skew", "description", "region")
#: Columns every points list names.
REQUIRED_COLUMNS = ("station", "offset", "code")
#: A skew (degrees) must lie strictly within +-MAX_SKEW: at 90 the skewed line runs along the alignment.
MAX_SKEW = 90.0
#: Largest region number read (far above any job's station equations).
_MAX_REGION = 10**6
_REGION = re.compile(r"[0-9]{1,7}")


def _resolve(given: str, base: Path) -> Path:
    p = Path(given)
    return p if p.is_absolute() else base / p


def read_listed_points(given: str, base: Path, info: JobInfo) -> ListedPoints:
    """Read and check the points list named by ``staking.points``.

    Parameters
    ----------
    given : str
        The file as the job file gives it.
    base : Path
        The job file's folder (``given`` is relative to it).
    info : JobInfo
        ``[job]``: the station length stations are read with.

    Returns
    -------
    ListedPoints
        The rows in file order, with the file's SHA-256.

    Raises
    ------
    JobFileError
        One line naming ``staking.points``, the file and, for a row, its
        line number and the value: a missing, unreadable, oversized or
        undecodable file; no header or a header without ``station``,
        ``offset`` and ``code``, or naming a column twice or one unknown;
        no rows; a row with too many fields, an empty required field, a
        value that is not a station, number, angle or region, out of range
        (offset beyond ``MAX_LENGTH``, elevation beyond ``MAX_HEIGHT``,
        ``|skew| >= 90``), an unsafe id or code, or an id given twice.
    """
    key = f"staking.points = {given!r}"
    if not given.strip():
        raise JobFileError(f"{key}: empty; name the CSV of points by station and offset")
    raw = read_regular_file(_resolve(given, base), "staking.points =", MAX_STAKED_FILE_BYTES)
    sha = hashlib.sha256(raw).hexdigest()
    src = Source(key, JobFileError, "a points list (station,offset,code)")
    text, _ = decode_text(raw, src)
    del raw
    rows = ((ln, r) for ln, r in records(text, detect_delimiter(text, src), src) if not blank(r))
    first = next(rows, None)
    if first is None:
        raise src.fail(": empty; give a header naming station,offset,code and a row per point")
    ln0, r0 = first
    check_fields(src, ln0, r0)
    names = [c.strip().lower() for c in r0]
    if not all(c in names for c in REQUIRED_COLUMNS):
        missing = ", ".join(c for c in REQUIRED_COLUMNS if c not in names)
        raise src.fail(f" line {ln0}: the header {show_value(','.join(c.strip() for c in r0))} does not name "
                       f"{missing}; the first row names the columns: station,offset,code and any of "
                       "id,elevation,skew,description,region")
    unknown = [c for c in r0 if c.strip() and c.strip().lower() not in POINT_COLUMNS]
    if unknown:
        raise src.fail(f" line {ln0}: the header names the column {show_value(unknown[0].strip())}, which is not "
                       f"one of {','.join(POINT_COLUMNS)}")
    check_header_once(src, ln0, names, r0, POINT_COLUMNS, "name each column once")
    col = {c: names.index(c) for c in POINT_COLUMNS if c in names}
    width = len(names)
    unnamed = [i for i, c in enumerate(names) if not c]  # a spreadsheet's trailing delimiter: must stay empty

    def fail(ln: int, what: str, value: str, why: str) -> JobFileError:
        return JobFileError(f"{key} line {ln}: {what} {show_value(value)} {why}")

    def num(ln: int, what: str, value: str) -> float:
        v = number(value)
        if v is None:
            raise fail(ln, what, value, not_a_number(value))
        return v

    stations: list[StationRef] = []
    offsets: list[float] = []
    skews: list[float] = []
    codes: list[str] = []
    descs: list[str] = []
    ids: list[str | None] = []
    elevs: list[float] = []
    lines: list[int] = []
    first_of: dict[str, int] = {}
    for ln, r in rows:
        check_fields(src, ln, r)
        if len(r) > width:
            raise src.fail(f" line {ln}: {len(r)} fields, but the header names {width} columns "
                           f"({','.join(names)}); quote a field holding the delimiter")
        cell = {c: (r[i].strip() if i < len(r) else "") for c, i in col.items()}
        stray = [i for i in unnamed if i < len(r) and r[i].strip()]
        if stray:
            raise fail(ln, f"field {stray[0] + 1}", r[stray[0]].strip(), "lies under a column the header does not "
                       "name; name the column (one of " + ",".join(POINT_COLUMNS) + ") or leave it empty")
        for c in REQUIRED_COLUMNS:
            if not cell[c]:
                raise src.fail(f" line {ln}: no {c}; every row needs station, offset and code")
        where = f"{key} line {ln} station"
        region = None
        if cell.get("region"):
            rt = cell["region"]
            if _REGION.fullmatch(rt) is None or not 1 <= int(rt) <= _MAX_REGION:
                raise fail(ln, "region", rt, "is not a region number (a whole number, 1 or more)")
            region = int(rt)
        value = check_station_value(parse_station(cell["station"], info.station_length, where), where)
        stations.append(StationRef(value, region, where))
        off = num(ln, "offset", cell["offset"])
        if abs(off) > MAX_LENGTH:
            raise fail(ln, "offset", cell["offset"], f"is out of range; offsets lie within -{MAX_LENGTH:,.0f} to "
                       f"{MAX_LENGTH:,.0f} job units")
        offsets.append(off)
        skew = 0.0
        if cell.get("skew"):
            skew = parse_angle(cell["skew"], f"{key} line {ln} skew")
            if not abs(skew) < MAX_SKEW:
                raise fail(ln, "skew", cell["skew"], f"is out of range; a skew lies strictly between -{MAX_SKEW:g} "
                           f"and {MAX_SKEW:g} degrees (at {MAX_SKEW:g} the skewed line runs along the alignment)")
        skews.append(skew)
        code = cell["code"]
        if SAFE_ID.fullmatch(code) is None:
            raise fail(ln, "code", code, f"is not a code; use {SAFE_ID_HELP}")
        codes.append(code)
        pid = cell.get("id") or None
        if pid is not None:
            if SAFE_ID.fullmatch(pid) is None:
                raise fail(ln, "id", pid, f"is not a point id; use {SAFE_ID_HELP}")
            if pid in first_of:
                raise fail(ln, "id", pid, f"is given twice (first at line {first_of[pid]}); ids must be unique")
            first_of[pid] = ln
        ids.append(pid)
        z = math.nan
        if cell.get("elevation"):
            z = num(ln, "elevation", cell["elevation"])
            if abs(z) > MAX_HEIGHT:
                raise fail(ln, "elevation", cell["elevation"], f"is out of range; elevations lie within "
                           f"-{MAX_HEIGHT:,.0f} to {MAX_HEIGHT:,.0f} job units")
        elevs.append(z)
        descs.append(check_free_text(cell.get("description", ""), f"{key} line {ln} description"))
        lines.append(ln)
    if not lines:
        raise src.fail(f": line {ln0} is the header and no points follow; give a row per point, or leave "
                       "staking.points out")
    return ListedPoints(given, sha, tuple(stations), tuple(offsets), tuple(skews), tuple(codes), tuple(descs),
                        tuple(ids), tuple(elevs), tuple(lines))
