"""Angles and distances from the occupied point (numpy, no I/O).

Grid and ground (NOAA Manual NOS NGS 5): elevation factor EF = R/(R + h),
h the ellipsoid height; combined factor CF = k * EF; grid distance =
ground distance * CF.  The angle right is the point's grid azimuth minus
the backsight's grid azimuth, reduced to [0, 360).  Several setups are
computed at once: the occupied point, backsight azimuth, factor and
elevation may be given per point (each point's own setup).

A point closer than :data:`AT_INSTRUMENT` to its occupied point is *at the
instrument*: it has no direction, so it gets no angle (the outputs leave the
angle empty and say so).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from typing import TYPE_CHECKING

from .angles import azimuth_between, normalize_azimuth
from .errors import JobFileError
from .job import Scale, SetupStation
from .units import Unit

if TYPE_CHECKING:  # pragma: no cover
    from .crs import PointFactors

#: How a factor of 1.0 that no job file gave is described (sheets, manifest, console).
DEFAULT_FACTOR_NOTE = "default: no factor given, ground distances equal grid distances"

#: A point closer than this to the occupied point (job units) is at the instrument: no angle to
#: turn.  Half the last digit of the sheet's distances, so it prints as distance 0.000 there.
AT_INSTRUMENT = 5e-4

__all__ = ["DEFAULT_FACTOR_NOTE", "AT_INSTRUMENT", "elevation_factor", "ScaleInfo", "Setout", "compute_setout",
           "resolve_scale", "backsight_azimuth"]


#: The earth's mean radius (metres; IUGG mean radius R1 = 6,371,008.8 m, rounded), used for the
#: curvature and refraction correction where the job has no CRS to give the Gaussian radius.
MEAN_EARTH_RADIUS_M = 6_371_000.0


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
    """Per-point setout from the occupied point (arrays in point order).

    ``backsight_azimuth`` is a float for one setup, or one value per point
    (its own setup's) when the points were set out from several.
    """

    backsight_azimuth: float | NDArray[np.float64]
    azimuth: NDArray[np.float64]
    angle_right: NDArray[np.float64]
    grid_distance: NDArray[np.float64]
    ground_distance: NDArray[np.float64]
    zenith: NDArray[np.float64] | None
    slope_distance: NDArray[np.float64] | None

    @property
    def at_instrument(self) -> NDArray[np.bool_]:
        """Points closer than :data:`AT_INSTRUMENT` to the occupied point: no angle."""
        return np.asarray(self.grid_distance < AT_INSTRUMENT)


def compute_setout(
    occ_n: ArrayLike,
    occ_e: ArrayLike,
    backsight_azimuth: ArrayLike,
    northing: ArrayLike,
    easting: ArrayLike,
    combined_factor: ArrayLike,
    occ_elevation: ArrayLike | None = None,
    instrument_height: float | None = None,
    elevation: ArrayLike | None = None,
    target_height: float | None = None,
    refraction: float | None = None,
    earth_radius: ArrayLike | None = None,
) -> Setout:
    """Azimuth, angle right, grid and ground distance to every point.

    Parameters
    ----------
    occ_n, occ_e : float or array
        Occupied point, grid coordinates (job units): one for all points, or
        one per point (each point's own setup).
    backsight_azimuth : float or array
        Grid azimuth to the backsight, degrees clockwise from grid north;
        one, or one per point.
    northing, easting : arrays
        Target points (job units).
    combined_factor : float or array
        Grid / ground; ground distance = grid distance / combined_factor;
        one, or one per point.
    occ_elevation, instrument_height, elevation, target_height : optional
        With all four, the zenith angle (degrees, 90 = level) and slope
        distance (ground) are computed.  ``occ_elevation`` may be given
        per point.
    refraction : float, optional
    earth_radius : float or array, optional
        With both, the zenith angle and slope distance are corrected for
        the earth's curvature and refraction: the target is sighted
        ``(1 - k) D^2 / (2 R)`` lower than its height difference, D the
        ground distance and R the earth's radius (job units), k the
        refraction coefficient; the slope distance is the one along that
        sight, so that slope distance x sin(zenith) is the ground distance.
        Without them no correction is applied (short sights).
    """
    n = np.asarray(northing, dtype=float)
    e = np.asarray(easting, dtype=float)
    on = np.asarray(occ_n, dtype=float)
    oe = np.asarray(occ_e, dtype=float)
    bs = np.asarray(backsight_azimuth, dtype=float)
    az = np.asarray(azimuth_between(on, oe, n, e), dtype=float)
    grid = np.hypot(n - on, e - oe)
    # a point on the occupied station has no direction: report azimuth 0
    az = np.where(grid > 0, az, 0.0)
    ar = np.asarray(normalize_azimuth(az - bs), dtype=float)
    ground = grid / np.asarray(combined_factor, dtype=float)
    zen = slope = None
    if all(v is not None for v in (occ_elevation, instrument_height, elevation, target_height)):
        inst = np.asarray(occ_elevation, dtype=float) + float(instrument_height)  # type: ignore[arg-type]
        dz = (np.asarray(elevation, dtype=float) + float(target_height)) - inst  # type: ignore[arg-type]
        dz = np.broadcast_to(dz, ground.shape)
        if refraction is not None and earth_radius is not None:
            dz = dz - (1.0 - refraction) * ground * ground / (2.0 * np.asarray(earth_radius, dtype=float))
        zen = np.degrees(np.arctan2(ground, dz))
        slope = np.hypot(ground, dz)
    return Setout(float(bs) if bs.ndim == 0 else np.broadcast_to(bs, grid.shape).copy(), az, ar, grid, ground, zen,
                  slope)


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


def backsight_azimuth(setup: SetupStation, convergence: float | None, azimuth_reference: str = "grid") -> float:
    """Grid azimuth of the backsight, degrees clockwise from grid north.

    From the backsight point, or the given azimuth; a geodetic azimuth
    becomes grid = geodetic - convergence (NGS 5: t = alpha - gamma + delta,
    the arc-to-chord term delta, under 1 second for ordinary sights, not applied).

    Parameters
    ----------
    setup : SetupStation
        One setup: occupied point and backsight point or azimuth (degrees).
    convergence : float or None
        Meridian convergence at the occupied point, degrees (needed for a
        geodetic azimuth).
    azimuth_reference : str
        ``"grid"`` or ``"geodetic"``: what a given ``backsight_azimuth`` is.
    """
    occ = setup.occupied
    if setup.backsight is not None:
        bs = setup.backsight
        return float(azimuth_between(occ.northing, occ.easting, bs.northing, bs.easting))
    assert setup.backsight_azimuth is not None
    az = setup.backsight_azimuth
    if azimuth_reference == "geodetic":
        assert convergence is not None
        az = float(normalize_azimuth(az - convergence))
    return az
