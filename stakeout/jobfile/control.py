"""``[control]``: the job's control points.

From three sources, all optional, ids unique over all of them:

* ``file``: a control CSV in the ``points.csv`` layout
  (``point,northing,easting,elevation,description``, header optional), read
  with the staked-file reader's rules (:func:`stakeout.shots.read_shots`:
  encodings, delimiters, plain-ASCII numbers, bounded coordinates);
* ``landxml``: the ``<CgPoint>`` elements of a LandXML 1.2 file (its units
  must be the job's);
* ``[[control.point]]``: ``{id, northing, easting, elevation}`` inline.

Paths are relative to the job file.  Ids are checked like point ids
(:func:`check_safe_text`); each file's SHA-256 is recorded as a
:class:`~stakeout.job.DesignFile` with the role ``control``.
"""

from __future__ import annotations

import hashlib
import math
from pathlib import Path

from ..errors import JobFileError, StakedFileError
from ..job import ControlPoint, DesignFile, JobInfo
from ..limits import MAX_HEIGHT, MAX_STAKED_FILE_BYTES, check_coordinate, check_height, read_regular_file
from .design_file import DesignFiles
from .reader import Table, check_safe_text

__all__ = ["read_control", "inline_point", "CONTROL_KEYS"]

#: Keys of ``[control]``.
CONTROL_KEYS = ("file", "landxml", "point")
_POINT_KEYS = ("id", "northing", "easting", "elevation")


def inline_point(t: Table, where: str | None = None) -> ControlPoint:
    """A point given inline as ``{id, northing, easting, elevation}`` (elevation optional).

    Parameters
    ----------
    t : Table
        The point's table (its keys already checked against ``id``,
        ``northing``, ``easting``, ``elevation``).
    where : str, optional
        Where the point was given, recorded for messages (default: the table's key).

    Returns
    -------
    ControlPoint
        Coordinates in job units.
    """
    return ControlPoint(
        id=check_safe_text(t.raw("id", required=True), t.key("id")),
        northing=float(t.number("northing", required=True) or 0.0),
        easting=float(t.number("easting", required=True) or 0.0),
        elevation=t.number("elevation", bound=MAX_HEIGHT),
        where=where or t.path,
    )


def _path(given: str, base: Path) -> Path:
    p = Path(given)
    return p if p.is_absolute() else base / p


def _from_csv(t: Table, base: Path) -> tuple[list[ControlPoint], DesignFile]:
    """``control.file``: a control CSV in the points.csv layout."""
    from ..shots import read_shots

    given = t.text("file", required=True)
    assert given is not None
    path = _path(given, base)
    key = f"control.file = {given!r}"
    try:
        shots = read_shots(path)
    except StakedFileError as exc:
        # the reader names a "staked file"; say which key gave this one
        msg, head = str(exc), f"staked file {str(path)!r}"
        raise JobFileError(key + (msg[len(head):] if msg.startswith(head) else f": {msg}")) from None
    data = read_regular_file(path, "control.file =", MAX_STAKED_FILE_BYTES)
    points = []
    for pid, n, e, z, line in zip(shots.point, shots.northing.tolist(), shots.easting.tolist(),
                                  shots.elevation.tolist(), shots.line):
        where = f"{key} line {line}"
        check_safe_text(pid, f"{where} point")
        points.append(ControlPoint(pid, n, e, None if math.isnan(z) else z, where=where))
    return points, DesignFile("control", given, hashlib.sha256(data).hexdigest())


def _from_landxml(t: Table, info: JobInfo, files: DesignFiles) -> tuple[list[ControlPoint], DesignFile]:
    """``control.landxml``: the ``<CgPoint>`` elements of a LandXML file."""
    from .. import landxml

    given = t.text("landxml", required=True)
    assert given is not None
    key = f"control.landxml = {given!r}"
    design = files.read(given, key)  # errors name the key and the file
    landxml.check_units(design, info.unit.key, key)
    if not design.points:
        raise JobFileError(f"{key}: the file holds no <CgPoint>; there are no control points to take from it")
    points = []
    for k, p in enumerate(design.points, start=1):
        where = f"{key} CgPoint {k}"
        if not p.name:
            raise JobFileError(f"{where}: has no name; a control point needs one (its id)")
        check_safe_text(p.name, f"{where} name")
        n = check_coordinate(p.northing, f"{where} ({p.name}) northing")
        e = check_coordinate(p.easting, f"{where} ({p.name}) easting")
        z = None if p.elevation is None else check_height(p.elevation, f"{where} ({p.name}) elevation")
        points.append(ControlPoint(p.name, n, e, z, where=f"{where} ({p.name})"))
    return points, DesignFile("control", given, design.sha256, chosen="CgPoints")


def read_control(top: Table, info: JobInfo, design_files: DesignFiles) -> tuple[tuple[ControlPoint, ...], tuple[DesignFile, ...]]:
    """``[control]``: every control point of the job and the files they came from.

    Parameters
    ----------
    top : Table
        The whole job file.
    info : JobInfo
        ``[job]`` (the units a LandXML file must match).
    design_files : DesignFiles
        The job's design files (each parsed once); its ``base``, the job file's folder, is what
        ``file`` and ``landxml`` are relative to.

    Returns
    -------
    points, files
        Control points in the order file, LandXML, inline; the files with
        their SHA-256.

    Raises
    ------
    JobFileError
        An unknown key, an unreadable or malformed file, an unsafe id, an
        id given twice, or a ``[control]`` table that gives no point.
    """
    t = top.table("control", CONTROL_KEYS)
    if t is None:
        return (), ()
    points: list[ControlPoint] = []
    files: list[DesignFile] = []
    if t.has("file"):
        pts, rec = _from_csv(t, design_files.base)
        points += pts
        files.append(rec)
    if t.has("landxml"):
        pts, rec = _from_landxml(t, info, design_files)
        points += pts
        files.append(rec)
    for pt in t.tables("point", _POINT_KEYS):
        points.append(inline_point(pt))
    if not points:
        raise JobFileError("control: gives no control point; add `file = ...`, `landxml = ...` or "
                           "[[control.point]] entries, or leave [control] out")
    seen: dict[str, ControlPoint] = {}
    for p in points:
        first = seen.setdefault(p.id, p)
        if first is not p:
            raise JobFileError(f"control point id {p.id!r}: given twice, at {first.where} and at {p.where}; "
                               "ids must be unique")
    return tuple(points), tuple(files)
