"""``[setup]``, ``[instrument]``, ``[scale]`` and ``[check]``.

``[setup]`` takes one of three forms: one setup (``occupied`` with
``backsight`` or ``backsight_azimuth``), several (``[[setup.station]]``
entries, each with its own occupied point, backsight and optionally the
stations it serves), or ``occupied = "auto"`` with ``max_distance`` (and
``max_backsight``, default twice ``max_distance``): setups chosen among the
control points.  ``occupied`` and ``backsight`` are a control point id
(``"CP101"``) or an inline table ``{id, northing, easting, elevation}``.
"""

from __future__ import annotations

import math

from ..errors import JobFileError
from ..job import CheckSpec, ControlPoint, Scale, Setup, SetupStation
from ..limits import MAX_HEIGHT
from ..precision import InstrumentSpec
from ..textsafety import show_value
from ..stations import StationRef
from .control import inline_point
from .reader import Table, check_safe_text, direction, station_ref

__all__ = ["read_setup", "read_instrument", "read_scale", "read_check", "MIN_BACKSIGHT"]

#: Shortest backsight accepted (job units): a closer one cannot orient the circle.
MIN_BACKSIGHT = 1.0


_POINT_KEYS = ("id", "northing", "easting", "elevation")
_SETUP_KEYS = ("occupied", "backsight", "backsight_azimuth", "azimuth_reference", "instrument_height",
               "target_height", "max_distance", "max_backsight", "station", "curvature_refraction",
               "refraction_coefficient")
_STATION_KEYS = ("occupied", "backsight", "backsight_azimuth", "from_station", "to_station")
_AUTO = "auto"

#: Refraction coefficient when the job gives none (common practice for daytime sights over land).
DEFAULT_REFRACTION = 0.13


class _Points:
    """The job's control points by id, for ``occupied``/``backsight`` given as an id."""

    def __init__(self, control: tuple[ControlPoint, ...]):
        self.by_id = {p.id: p for p in control}
        self.used_id = False

    def resolve(self, t: Table, k: str, required: bool) -> ControlPoint | None:
        """A point given inline (``{id, northing, easting, elevation}``) or as a control point id."""
        v = t.raw(k, required)
        if v is None:
            return None
        where = t.key(k)
        if isinstance(v, str):
            if not self.by_id:
                raise JobFileError(f"{where} = {show_value(v)}: names a control point, but the job has no "
                                   "[control] points; add them, or give the point inline {id, northing, easting}")
            p = self.by_id.get(v)
            if p is None:
                ids = sorted(self.by_id)
                shown = ", ".join(ids[:8]) + (f" and {len(ids) - 8} more" if len(ids) > 8 else "")
                raise JobFileError(f"{where} = {show_value(v)}: no control point has this id (the job's: {shown})")
            self.used_id = True
            return p
        if not isinstance(v, dict):
            raise JobFileError(f"{where} = {show_value(v)}: expected a control point id such as \"CP101\" or a "
                               "table {id, northing, easting, elevation}")
        c = t.table(k, _POINT_KEYS)
        assert c is not None
        p = inline_point(c)
        known = self.by_id.get(p.id)
        if known is not None and (known.northing, known.easting, known.elevation) != (p.northing, p.easting,
                                                                                      p.elevation):
            raise JobFileError(f"{where}.id = {p.id!r}: is also a control point ({known.where}) with other "
                               f"coordinates; name it by id (\"{p.id}\") or give it another id")
        return p


def _backsight(t: Table, points: _Points, occupied: ControlPoint, reference: str,
               reference_given: bool) -> tuple[ControlPoint | None, float | None]:
    """The backsight of one setup: a point or an azimuth, exactly one."""
    backsight = points.resolve(t, "backsight", required=False)
    bs_az = direction(t, "backsight_azimuth", required=False)
    if (backsight is None) == (bs_az is None):
        raise JobFileError(
            f"{t.path}: give the backsight as `backsight = \"CP102\"` (a control point id), "
            "`backsight = {id, northing, easting}` or `backsight_azimuth`, exactly one of them"
            + (" (both given)" if backsight is not None else "")
        )
    if backsight is not None:
        if reference_given and reference != "grid":
            raise JobFileError(
                "setup.azimuth_reference = 'geodetic': only a `backsight_azimuth` can be geodetic; "
                "a backsight point is on the grid"
            )
        dist = math.hypot(backsight.northing - occupied.northing, backsight.easting - occupied.easting)
        if dist < MIN_BACKSIGHT:
            raise JobFileError(
                f"{t.key('backsight')} = {backsight.id!r}: lies {dist:.6g} from the occupied point {occupied.id!r}; "
                f"a backsight must be at least {MIN_BACKSIGHT:g} job unit away to orient the instrument"
            )
    return backsight, bs_az


#: Words a station range may use for the alignment's ends (its first and last station,
#: whatever they print as), so a range need not repeat the end station to the last decimal.
RANGE_ENDS = {"start": -math.inf, "end": math.inf}


def _range_end(value: object, station_length: int, where: str) -> StationRef:
    """``from_station``/``to_station``: a station as everywhere, or ``"start"``/``"end"``."""
    if isinstance(value, str) and value.strip().lower() in RANGE_ENDS:
        return StationRef(RANGE_ENDS[value.strip().lower()], None, where)
    return station_ref(value, station_length, where)


def _station(t: Table, points: _Points, reference: str, reference_given: bool,
             station_length: int) -> SetupStation:
    """One ``[[setup.station]]``: occupied, backsight, and the stations it serves."""
    occupied = points.resolve(t, "occupied", required=True)
    assert occupied is not None
    backsight, bs_az = _backsight(t, points, occupied, reference, reference_given)
    refs = [None if t.raw(k) is None else _range_end(t.raw(k), station_length, t.key(k))
            for k in ("from_station", "to_station")]
    if (refs[0] is None) != (refs[1] is None):
        missing = "to_station" if refs[1] is None else "from_station"
        raise JobFileError(f"{t.key(missing)}: missing; a station range needs both from_station and to_station")
    return SetupStation(occupied, backsight, bs_az, refs[0], refs[1], where=t.path)


def read_setup(top: Table, control: tuple[ControlPoint, ...] = (), station_length: int = 100) -> Setup | None:
    """``[setup]``: one setup, several (``[[setup.station]]``) or ``occupied = "auto"``.

    Parameters
    ----------
    top : Table
        The whole job file.
    control : tuple of ControlPoint
        The job's control points, which ``occupied`` and ``backsight`` may
        name by id (and ``auto`` chooses among).
    station_length : int
        The job's station length, for ``from_station``/``to_station`` text.

    Returns
    -------
    Setup or None
        None when the job has no ``[setup]``.
    """
    t = top.table("setup", _SETUP_KEYS)
    if t is None:
        return None
    points = _Points(control)
    ref_given = t.has("azimuth_reference")
    ref = t.text("azimuth_reference", choices=("grid", "geodetic")) or "grid"
    ih = t.number("instrument_height", nonnegative=True, bound=MAX_HEIGHT)
    th = t.number("target_height", nonnegative=True, bound=MAX_HEIGHT)
    refr = _refraction(t)
    auto = t.raw("occupied") == _AUTO
    if not auto:
        for k in ("max_distance", "max_backsight"):
            if t.has(k):
                raise JobFileError(f"setup.{k} = {show_value(t.raw(k))}: goes with occupied = \"auto\" only")
    if t.has("station"):
        for k in ("occupied", "backsight", "backsight_azimuth"):
            if t.has(k):
                raise JobFileError(f"setup.{k} = {show_value(t.raw(k))}: not with [[setup.station]]; give each "
                                   "setup's occupied point and backsight in its own [[setup.station]] entry")
        stations = tuple(_station(st, points, ref, ref_given, station_length)
                         for st in t.tables("station", _STATION_KEYS))
        if not stations:
            raise JobFileError("setup.station = []: list at least one [[setup.station]]")
        ranged = [s.from_station is not None for s in stations]
        if any(ranged) and not all(ranged):
            i = ranged.index(not ranged[0])
            raise JobFileError(f"setup.station[{i}]: give from_station/to_station on every [[setup.station]] or "
                               "on none (without ranges each stake goes to the nearest setup)")
        return Setup(None, None, None, ref, ih, th, stations=stations, by_id=points.used_id, refraction=refr)
    if auto:
        for k in ("backsight", "backsight_azimuth"):
            if t.has(k):
                raise JobFileError(f"setup.{k} = {show_value(t.raw(k))}: not with occupied = \"auto\"; each "
                                   "automatic setup backsights the farthest control point within max_backsight")
        if ref != "grid":
            raise JobFileError("setup.azimuth_reference = 'geodetic': not with occupied = \"auto\" (its "
                               "backsights are control points, on the grid)")
        if not t.has("max_distance"):
            raise JobFileError('setup.max_distance: missing; occupied = "auto" needs the longest sight from a '
                               "setup to a stake (job units)")
        md = t.number("max_distance", positive=True)
        mb = t.number("max_backsight", positive=True)
        assert md is not None
        if len(control) < 2:
            raise JobFileError(f'setup.occupied = "auto": needs at least two control points ([control]); the job '
                               f"has {len(control)}")
        return Setup(None, None, None, ref, ih, th, max_distance=md, max_backsight=2.0 * md if mb is None else mb,
                     refraction=refr)
    occupied = points.resolve(t, "occupied", required=True)
    assert occupied is not None
    backsight, bs_az = _backsight(t, points, occupied, ref, ref_given)
    return Setup(occupied, backsight, bs_az, ref, ih, th, by_id=points.used_id, refraction=refr)


def _refraction(t: Table) -> float | None:
    """``curvature_refraction = true`` (with an optional ``refraction_coefficient``): k, else None."""
    on = t.raw("curvature_refraction")
    if on is not None and not isinstance(on, bool):
        raise JobFileError(f"setup.curvature_refraction = {show_value(on)}: expected true or false")
    if not on:
        if t.has("refraction_coefficient"):
            raise JobFileError(f"setup.refraction_coefficient = {show_value(t.raw('refraction_coefficient'))}: "
                               "goes with curvature_refraction = true")
        return None
    k = t.number("refraction_coefficient", bound=1.0)
    if k is not None and not 0.0 <= k < 1.0:
        raise JobFileError(f"setup.refraction_coefficient = {k!r}: must lie from 0 up to (not including) 1")
    return DEFAULT_REFRACTION if k is None else k


def read_instrument(top: Table) -> InstrumentSpec | None:
    """``[instrument]``: the standard errors behind the predicted precision (every key required).

    Returns
    -------
    InstrumentSpec or None
        None when the job has no ``[instrument]``.
    """
    t = top.table("instrument", tuple(_INSTRUMENT_KEYS))
    if t is None:
        return None
    values = {}
    for key, name in _INSTRUMENT_KEYS.items():
        if not t.has(key):
            raise JobFileError(f"instrument.{key}: missing; give every one of {', '.join(_INSTRUMENT_KEYS)} "
                               "(0 where a source of error is to be left out)")
        values[name] = t.number(key, nonnegative=True)
    return InstrumentSpec(**values)  # type: ignore[arg-type]


#: ``[instrument]`` key -> :class:`InstrumentSpec` field.
_INSTRUMENT_KEYS = {"angle_sigma": "angle_sigma_arcsec", "distance_sigma": "distance_sigma",
                    "distance_ppm": "distance_ppm", "centering_sigma": "centering_sigma",
                    "pole_sigma": "pole_sigma"}


def read_scale(top: Table) -> Scale:
    """``[scale]``: the combined factor, or ``auto`` with the height for it."""
    t = top.table("scale", ("combined_factor", "ellipsoid_height", "elevation", "geoid_separation"))
    if t is None:
        return Scale(1.0, given=False)
    cf = t.raw("combined_factor")
    if cf is None:
        factor: float | None = 1.0
    elif cf == "auto":
        factor = None
    elif isinstance(cf, bool) or not isinstance(cf, (int, float)):
        raise JobFileError(f"scale.combined_factor = {cf!r}: expected a number such as 0.99996 or \"auto\"")
    elif not (math.isfinite(cf) and 0.9 < cf < 1.1):
        raise JobFileError(
            f"scale.combined_factor = {cf!r}: must be a positive factor near 1 (between 0.9 and 1.1)"
        )
    else:
        factor = float(cf)
    h = t.number("ellipsoid_height", bound=MAX_HEIGHT)
    elev = t.number("elevation", bound=MAX_HEIGHT)
    n = t.number("geoid_separation", bound=MAX_HEIGHT)
    if factor is not None and (h is not None or elev is not None or n is not None):
        raise JobFileError(
            "scale: ellipsoid_height, elevation and geoid_separation go with combined_factor = \"auto\" only"
        )
    if h is not None and (elev is not None or n is not None):
        raise JobFileError("scale: give `ellipsoid_height`, or `elevation` with `geoid_separation`, not both")
    if (elev is None) != (n is None):
        missing = "geoid_separation" if n is None else "elevation"
        raise JobFileError(f"scale.{missing}: missing; `elevation` and `geoid_separation` go together")
    if factor is None and h is None and elev is None:
        raise JobFileError(
            'scale.combined_factor = "auto": needs the height for the elevation factor; give '
            "`ellipsoid_height`, or `elevation` with `geoid_separation` (job units)"
        )
    return Scale(factor, h, elev, n, given=cf is not None)


def read_check(top: Table) -> CheckSpec | None:
    """``[check]``: tolerances for checking staked points."""
    t = top.table("check", ("horizontal_tolerance", "vertical_tolerance", "search_radius", "ground_codes"))
    if t is None:
        return None
    codes = t.array("ground_codes") or []
    for i, c in enumerate(codes):
        if not isinstance(c, str) or not c.strip() or len(c.split()) != 1:
            raise JobFileError(f"check.ground_codes[{i}] = {show_value(c)}: expected a code, one word of text")
        check_safe_text(c, f"check.ground_codes[{i}]")
    return CheckSpec(
        horizontal_tolerance=t.number("horizontal_tolerance", positive=True),
        vertical_tolerance=t.number("vertical_tolerance", positive=True),
        search_radius=t.number("search_radius", positive=True),
        ground_codes=tuple(codes),
    )
