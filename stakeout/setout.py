"""Angles and distances from the occupied point (numpy, no I/O).

Grid and ground (NOAA Manual NOS NGS 5): elevation factor EF = R/(R + h),
h the ellipsoid height; combined factor CF = k * EF; grid distance =
ground distance * CF.  The angle right is the point's grid azimuth minus
the backsight's grid azimuth, reduced to [0, 360).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from typing import TYPE_CHECKING

from .angles import azimuth_between, normalize_azimuth
from .errors import JobFileError
from .job import Scale, Setup
from .units import Unit

if TYPE_CHECKING:  # pragma: no cover
    from .crs import PointFactors

#: How a factor of 1.0 that no job file gave is described (sheets, manifest, console).
DEFAULT_FACTOR_NOTE = "default: no factor given, ground distances equal grid distances"

__all__ = ["DEFAULT_FACTOR_NOTE", "elevation_factor", "ScaleInfo", "Setout", "compute_setout", "resolve_scale",
           "backsight_azimuth"]


def elevation_factor(height_m: float, radius_m: float) -> float:
    """Elevation (ellipsoid) factor R / (R + h), both in metres."""
    return radius_m / (radius_m + height_m)


@dataclass(frozen=True)
class ScaleInfo:
    """The combined factor used and how it was obtained.

    ``scale_factor``, ``elevation_factor``, ``radius_m`` and ``height`` are
    set for an ``auto`` factor; ``convergence`` whenever a CRS was used.
    """

    combined_factor: float
    how: str
    scale_factor: float | None = None
    elevation_factor: float | None = None
    radius_m: float | None = None
    height: float | None = None
    convergence: float | None = None
    latitude: float | None = None
    longitude: float | None = None


@dataclass(frozen=True)
class Setout:
    """Per-point setout from the occupied point (arrays in point order)."""

    backsight_azimuth: float
    azimuth: NDArray[np.float64]
    angle_right: NDArray[np.float64]
    grid_distance: NDArray[np.float64]
    ground_distance: NDArray[np.float64]
    zenith: NDArray[np.float64] | None
    slope_distance: NDArray[np.float64] | None


def compute_setout(
    occ_n: float,
    occ_e: float,
    backsight_azimuth: float,
    northing: ArrayLike,
    easting: ArrayLike,
    combined_factor: float,
    occ_elevation: float | None = None,
    instrument_height: float | None = None,
    elevation: ArrayLike | None = None,
    target_height: float | None = None,
) -> Setout:
    """Azimuth, angle right, grid and ground distance to every point.

    Parameters
    ----------
    occ_n, occ_e : float
        Occupied point, grid coordinates (job units).
    backsight_azimuth : float
        Grid azimuth to the backsight, degrees clockwise from grid north.
    northing, easting : arrays
        Target points (job units).
    combined_factor : float
        Grid / ground; ground distance = grid distance / combined_factor.
    occ_elevation, instrument_height, elevation, target_height : optional
        With all four, the zenith angle (degrees, 90 = level) and slope
        distance (ground) are computed; no curvature or refraction
        correction is applied (short sights).
    """
    n = np.asarray(northing, dtype=float)
    e = np.asarray(easting, dtype=float)
    az = np.asarray(azimuth_between(occ_n, occ_e, n, e), dtype=float)
    grid = np.hypot(n - occ_n, e - occ_e)
    # a point on the occupied station has no direction: report azimuth 0
    az = np.where(grid > 0, az, 0.0)
    ar = np.asarray(normalize_azimuth(az - backsight_azimuth), dtype=float)
    ground = grid / combined_factor
    zen = slope = None
    if all(v is not None for v in (occ_elevation, instrument_height, elevation, target_height)):
        dz = (np.asarray(elevation, dtype=float) + float(target_height)) - (float(occ_elevation) + float(instrument_height))  # type: ignore[arg-type]
        dz = np.broadcast_to(dz, ground.shape)
        zen = np.degrees(np.arctan2(ground, dz))
        slope = np.hypot(ground, dz)
    return Setout(float(backsight_azimuth), az, ar, grid, ground, zen, slope)


def resolve_scale(scale: Scale, unit: Unit, factors: "PointFactors | None") -> ScaleInfo:
    """The combined factor to use, and how it was found.

    Parameters
    ----------
    scale : Scale
        The job's ``[scale]`` table.
    unit : Unit
        The job's unit (heights are in it).
    factors : PointFactors or None
        The CRS's factors at the occupied point (``None`` without a CRS).
        With ``auto``: CF = k x R/(R + h) (NOAA Manual NOS NGS 5), h the
        ellipsoid height (given, or elevation + geoid separation) and R the
        Gaussian mean radius there.
    """
    pf = factors
    if scale.auto:
        assert pf is not None
        sc = scale
        h = sc.ellipsoid_height if sc.ellipsoid_height is not None else (sc.elevation or 0.0) + (sc.geoid_separation or 0.0)
        ef = elevation_factor(unit.to_metres(h), pf.radius_m)
        cf = pf.scale_factor * ef
        if not 0.9 < cf < 1.1:
            raise JobFileError(
                f'scale.combined_factor = "auto": the factor found is {cf:.8f} (k {pf.scale_factor:.8f}, elevation '
                f"factor {ef:.8f}); a combined factor must lie between 0.9 and 1.1, so the occupied point, the "
                "height or job.crs is wrong")
        how = "auto: grid scale factor k at the occupied point x elevation factor R/(R+h)"
        return ScaleInfo(cf, how, pf.scale_factor, ef, pf.radius_m, h, pf.convergence, pf.latitude, pf.longitude)
    assert scale.combined_factor is not None
    how = "given in the job file" if scale.given else DEFAULT_FACTOR_NOTE
    return ScaleInfo(scale.combined_factor, how,
                     convergence=pf.convergence if pf else None,
                     latitude=pf.latitude if pf else None, longitude=pf.longitude if pf else None)


def backsight_azimuth(setup: Setup, convergence: float | None) -> float:
    """Grid azimuth of the backsight, degrees clockwise from grid north.

    From the backsight point, or the given azimuth; a geodetic azimuth
    becomes grid = geodetic - convergence (NGS 5: t = alpha - gamma + delta,
    the arc-to-chord term delta, under 1 second for ordinary sights, not applied).
    """
    occ = setup.occupied
    if setup.backsight is not None:
        bs = setup.backsight
        return float(azimuth_between(occ.northing, occ.easting, bs.northing, bs.easting))
    assert setup.backsight_azimuth is not None
    az = setup.backsight_azimuth
    if setup.azimuth_reference == "geodetic":
        assert convergence is not None
        az = float(normalize_azimuth(az - convergence))
    return az
