"""``[setup]``, ``[scale]`` and ``[check]``."""

from __future__ import annotations

import math

from ..errors import JobFileError
from ..job import CheckSpec, ControlPoint, Scale, Setup
from ..limits import MAX_HEIGHT
from .reader import Table, check_safe_text, direction

__all__ = ["read_setup", "read_scale", "read_check", "MIN_BACKSIGHT"]

#: Shortest backsight accepted (job units): a closer one cannot orient the circle.
MIN_BACKSIGHT = 1.0


def _control_point(t: Table, k: str, required: bool) -> ControlPoint | None:
    """An inline control point ``{id, northing, easting, elevation}``."""
    c = t.table(k, ("id", "northing", "easting", "elevation"), required=required)
    if c is None:
        return None
    return ControlPoint(
        id=check_safe_text(c.raw("id", required=True), c.key("id")),
        northing=float(c.number("northing", required=True) or 0.0),
        easting=float(c.number("easting", required=True) or 0.0),
        elevation=c.number("elevation", bound=MAX_HEIGHT),
    )


def read_setup(top: Table) -> Setup | None:
    """``[setup]``: the occupied point and the backsight (point or azimuth)."""
    t = top.table("setup", ("occupied", "backsight", "backsight_azimuth", "azimuth_reference",
                            "instrument_height", "target_height"))
    if t is None:
        return None
    occupied = _control_point(t, "occupied", required=True)
    assert occupied is not None
    backsight = _control_point(t, "backsight", required=False)
    bs_az = direction(t, "backsight_azimuth", required=False)
    if (backsight is None) == (bs_az is None):
        raise JobFileError(
            "setup: give the backsight as `backsight = {id, northing, easting}` or as `backsight_azimuth`, "
            "exactly one of them" + (" (both given)" if backsight is not None else "")
        )
    ref = t.text("azimuth_reference", choices=("grid", "geodetic")) or "grid"
    if backsight is not None:
        if t.has("azimuth_reference") and ref != "grid":
            raise JobFileError(
                "setup.azimuth_reference = 'geodetic': only a `backsight_azimuth` can be geodetic; "
                "a backsight point is on the grid"
            )
        dist = math.hypot(backsight.northing - occupied.northing, backsight.easting - occupied.easting)
        if dist < MIN_BACKSIGHT:
            raise JobFileError(
                f"setup.backsight = {backsight.id!r}: lies {dist:.6g} from the occupied point {occupied.id!r}; "
                f"a backsight must be at least {MIN_BACKSIGHT:g} job unit away to orient the instrument"
            )
    return Setup(
        occupied=occupied,
        backsight=backsight,
        backsight_azimuth=bs_az,
        azimuth_reference=ref,
        instrument_height=t.number("instrument_height", nonnegative=True, bound=MAX_HEIGHT),
        target_height=t.number("target_height", nonnegative=True, bound=MAX_HEIGHT),
    )


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
    t = top.table("check", ("horizontal_tolerance", "vertical_tolerance", "search_radius"))
    if t is None:
        return None
    return CheckSpec(
        horizontal_tolerance=t.number("horizontal_tolerance", positive=True),
        vertical_tolerance=t.number("vertical_tolerance", positive=True),
        search_radius=t.number("search_radius", positive=True),
    )
