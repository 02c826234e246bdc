"""``[ground]`` and ``[slope_stakes]``: the existing ground and the side slopes staked to it.

``[ground]`` gives the ground as ground points (``file``: a CSV
``point,northing,easting,elevation[,description]``, header optional, in the
job's units, triangulated by Delaunay: no breaklines) or as a LandXML
``<Surface>`` (``landxml``, with ``name`` choosing among several).  The
path is relative to the job file; its SHA-256 is recorded as a
:class:`~stakeout.job.DesignFile` with the role ``ground``.

``[slope_stakes]`` gives a table per side (``left``, ``right``; at least
one) naming the hinge's offset-line code and the slopes (run per unit rise,
``0 < slope <= MAX_SLOPE``), an optional ditch (``ditch_depth`` with
``foreslope``, ``ditch_width`` default 0: a V ditch), and for both sides
``reference_offset`` and ``max_width`` (job units, required).
"""

from __future__ import annotations

import hashlib
from collections.abc import Collection
from pathlib import Path

from ..errors import JobFileError
from ..ground import Ground, read_ground_csv
from ..job import DesignFile
from ..limits import MAX_HEIGHT, MAX_LENGTH, MAX_STAKED_FILE_BYTES, read_regular_file
from ..slopestakes import SideSlopes, SlopeStaking
from .design_file import DesignFiles
from .reader import Table, check_safe_text

__all__ = ["read_ground", "read_slope_stakes", "GROUND_KEYS", "SLOPE_STAKES_KEYS", "SIDE_KEYS", "MAX_SLOPE"]

GROUND_KEYS = ("file", "landxml", "name")
SLOPE_STAKES_KEYS = ("left", "right", "reference_offset", "max_width")
SIDE_KEYS = ("hinge", "fill_slope", "cut_slope", "foreslope", "ditch_depth", "ditch_width")
#: Flattest slope read, run per unit rise (1000:1 is level to any staking tolerance).
MAX_SLOPE = 1000.0


def _path(given: str, base: Path) -> Path:
    p = Path(given)
    return p if p.is_absolute() else base / p


def read_ground(top: Table, base: Path, unit_key: str = "m", files: DesignFiles | None = None
                ) -> tuple[Ground, DesignFile] | None:
    """``[ground]``: the existing ground, read and triangulated, and its file's record.

    Parameters
    ----------
    top : Table
        The whole job file (``[ground]`` may be absent: None).
    base : Path
        The job file's folder: ``file`` and ``landxml`` are relative to it.
    unit_key : str
        The job's ``units`` (``m``, ``ft``, ``us_ft``): a LandXML surface's must match.
    files : DesignFiles, optional
        The job's design files: a surface in one of them was taken when it was parsed.

    Returns
    -------
    (Ground, DesignFile) or None
        The TIN and the file (role ``ground``, its SHA-256).

    Raises
    ------
    JobFileError
        An unknown key, neither or both of ``file`` and ``landxml``, ``name``
        without ``landxml``, or a file that cannot be read as a ground.
    """
    t = top.table("ground", GROUND_KEYS)
    if t is None:
        return None
    if t.has("file") == t.has("landxml"):
        raise JobFileError("ground: give `file = \"ground.csv\"` (ground points) or `landxml = \"...\"` "
                           "(a TIN surface), one of them")
    if t.has("file"):
        if t.has("name"):
            raise JobFileError(f"ground.name = {t.raw('name')!r}: only with `landxml` (it chooses the <Surface>)")
        given = t.text("file", required=True)
        assert given is not None
        if not given.strip():
            raise JobFileError(f"ground.file = {given!r}: empty; name the ground-points CSV")
        path = _path(given, base)
        ground = read_ground_csv(path, "ground.file")
        data = read_regular_file(path, "ground.file =", MAX_STAKED_FILE_BYTES)
        return ground, DesignFile("ground", given, hashlib.sha256(data).hexdigest())
    from ..landxml.surface import read_surface

    given = t.text("landxml", required=True)
    assert given is not None
    key = f"ground.landxml = {given!r}"
    if files is not None:
        surf = files.surface(given, t.text("name"), unit_key, key)
    else:
        surf = read_surface(_path(given, base), t.text("name"), unit_key, key)
    ground = Ground.from_faces(surf.n, surf.e, surf.z, surf.faces, f"{key} <Surface name={surf.name!r}>")
    return ground, DesignFile("ground", given, surf.sha256, chosen=surf.name)


def _slope(t: Table, k: str, required: bool) -> float | None:
    """A slope, run per unit rise: greater than 0, at most MAX_SLOPE."""
    return t.number(k, required=required, positive=True, bound=MAX_SLOPE)


def _side(top: Table, side: str, codes: Collection[str] | None) -> SideSlopes | None:
    t = top.table(side, SIDE_KEYS)
    if t is None:
        return None
    hinge = check_safe_text(t.raw("hinge", required=True), t.key("hinge"))
    if codes is not None and hinge not in codes:
        raise JobFileError(f"{t.key('hinge')} = {hinge!r}: no offset line has this code; use one of "
                           f"{', '.join(repr(c) for c in codes)}")
    fill = _slope(t, "fill_slope", True)
    cut = _slope(t, "cut_slope", True)
    fore = _slope(t, "foreslope", False)
    depth = t.number("ditch_depth", positive=True, bound=MAX_HEIGHT)
    width = t.number("ditch_width", nonnegative=True, bound=MAX_LENGTH)
    if depth is None:
        for k in ("foreslope", "ditch_width"):
            if t.has(k):
                raise JobFileError(f"{t.key(k)} = {t.raw(k)!r}: needs `ditch_depth` (without a ditch the cut "
                                   "slope rises from the hinge)")
    elif fore is None:
        raise JobFileError(f"{t.key('ditch_depth')} = {depth!r}: needs `foreslope` (the slope down to the ditch, "
                           "run per unit rise)")
    assert fill is not None and cut is not None
    return SideSlopes(hinge, fill, cut, fore, depth, 0.0 if width is None else width + 0.0)


def read_slope_stakes(top: Table, codes: Collection[str] | None = None) -> SlopeStaking | None:
    """``[slope_stakes]``: each side's hinge and slopes, reference offset, farthest catch.

    Parameters
    ----------
    top : Table
        The whole job file (or an ``[[alignment]]`` entry's table).
    codes : collection of str, optional
        The offset-line codes a hinge may name (checked when given).

    Returns
    -------
    SlopeStaking or None
        None without ``[slope_stakes]``.

    Raises
    ------
    JobFileError
        An unknown key, no side, a slope not in ``(0, MAX_SLOPE]``, a ditch
        key without ``ditch_depth`` (or a depth without ``foreslope``), a
        missing or non-positive ``reference_offset`` or ``max_width``, or a
        hinge naming no offset line.
    """
    t = top.table("slope_stakes", SLOPE_STAKES_KEYS)
    if t is None:
        return None
    left = _side(t, "left", codes)
    right = _side(t, "right", codes)
    if left is None and right is None:
        raise JobFileError("slope_stakes: give `left = { hinge = ..., fill_slope = ..., cut_slope = ... }` "
                           "and/or `right = { ... }`")
    ref = t.number("reference_offset", required=True, positive=True, bound=MAX_LENGTH)
    width = t.number("max_width", required=True, positive=True, bound=MAX_LENGTH)
    assert ref is not None and width is not None
    return SlopeStaking(left, right, ref, width)
