"""The only module that imports pyproj: CRS checks, geographic positions,
grid scale factor and meridian convergence.

Sign of the convergence gamma: positive where grid north lies east of true
north (east of the central meridian in the northern hemisphere, for a
transverse Mercator zone).  Then grid azimuth = geodetic azimuth - gamma
(NOAA Manual NOS NGS 5, t = alpha - gamma + delta, with the arc-to-chord
term delta neglected: under 1" for sights of a few hundred metres).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pyproj
from numpy.typing import ArrayLike, NDArray

from .textsafety import find_unsafe_char, show_name, show_value
from .errors import CRSError
from .units import Unit

__all__ = ["GridCRS", "load_crs", "PointFactors", "MIN_PROJ", "proj_version", "compare_crs"]

#: Earlier PROJ gives wrong scale factors for CRSs whose unit is not the metre.
MIN_PROJ = (9, 3)


def proj_version() -> str:
    """Version of the PROJ library bundled with pyproj."""
    return str(pyproj.proj_version_str)


@dataclass(frozen=True)
class PointFactors:
    """Grid factors at a point.

    Attributes
    ----------
    longitude, latitude : float
        Geographic position in degrees on the CRS's own datum.
    scale_factor : float
        Grid scale factor k (dimensionless).
    convergence : float
        Meridian convergence gamma in degrees, positive where grid north lies
        east of true north.
    radius_m : float
        Gaussian mean radius of curvature sqrt(M N) of the CRS's ellipsoid at
        the latitude, metres.
    """

    longitude: float
    latitude: float
    scale_factor: float
    convergence: float
    radius_m: float


class GridCRS:
    """A projected CRS checked against the job's unit."""

    def __init__(self, crs: pyproj.CRS, text: str, unit: Unit):
        self.crs = crs
        self.text = text
        self.unit = unit
        self.name = show_name(crs.name)  # a WKT carries its own name: checked and escaped before any sheet shows it
        self._to_geo = pyproj.Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True)
        self._proj = pyproj.Proj(crs)
        ell = crs.ellipsoid
        if ell is None:
            raise CRSError(f"{show_value(text)}: the CRS names no ellipsoid")
        self._a = float(ell.semi_major_metre)
        inv_f = float(ell.inverse_flattening)
        f = 0.0 if inv_f == 0 else 1.0 / inv_f
        self._e2 = f * (2.0 - f)

    @property
    def label(self) -> str:
        """What the job file said (or, for WKT, PROJJSON or a PROJ string, the CRS's
        authority code when it has one), with the CRS's own name.
        """
        text = self.text.strip()
        if len(text) > 40 or find_unsafe_char(text) is not None or text.startswith(("{", "+")) or "[" in text:
            auth = self.crs.to_authority(min_confidence=90)
            text = f"{auth[0]}:{auth[1]}" if auth else "as given"
        return f"{text} ({self.name})"

    def check_in_area(self, northing: float, easting: float, where: str) -> None:
        """Refuse a point outside the CRS's area of use (where its factors mean nothing).

        A margin of 1 degree is allowed beyond the published bounds (zones are
        used a little past their edges).
        """
        area = self.crs.area_of_use
        if area is None:
            return
        lon, lat = self.lonlat(northing, easting)
        lon_f, lat_f = float(lon), float(lat)
        west, south, east, north = area.bounds
        inside_lat = south - 1.0 <= lat_f <= north + 1.0
        if west <= east:
            inside_lon = west - 1.0 <= lon_f <= east + 1.0
        else:  # the area crosses the antimeridian
            inside_lon = lon_f >= west - 1.0 or lon_f <= east + 1.0
        if not (inside_lat and inside_lon and math.isfinite(lon_f) and math.isfinite(lat_f)):
            raise CRSError(
                f"{where}: N {northing} E {easting} lies at {lat_f:.4f} N {lon_f:.4f} E, outside the area of use "
                f"of {self.name} ({south:.2f} to {north:.2f} N, {west:.2f} to {east:.2f} E); check the "
                "coordinates or job.crs"
            )

    def lonlat(self, northing: ArrayLike, easting: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Longitude and latitude (degrees, CRS datum) of grid points (job units)."""
        lon, lat = self._to_geo.transform(np.asarray(easting, dtype=float), np.asarray(northing, dtype=float),
                                          errcheck=True)
        return np.asarray(lon), np.asarray(lat)

    def gaussian_radius(self, latitude: float) -> float:
        """Gaussian mean radius sqrt(M N) in metres at ``latitude`` (degrees)."""
        s2 = math.sin(math.radians(latitude)) ** 2
        w = 1.0 - self._e2 * s2
        m = self._a * (1.0 - self._e2) / w**1.5
        n = self._a / math.sqrt(w)
        return math.sqrt(m * n)

    def factors(self, northing: float, easting: float) -> PointFactors:
        """Scale factor, convergence and mean radius at one grid point."""
        try:
            lon, lat = self.lonlat(northing, easting)
            f = self._proj.get_factors(float(lon), float(lat), errcheck=True)
        except pyproj.exceptions.ProjError as exc:
            raise CRSError(f"point N {northing} E {easting}: outside what {self.label} can project ({exc})") from None
        k = 0.5 * (f.meridional_scale + f.parallel_scale)
        gamma = float(f.meridian_convergence)
        if not (math.isfinite(k) and math.isfinite(gamma)):
            raise CRSError(f"point N {northing} E {easting}: {self.label} gives no scale factor there")
        return PointFactors(float(lon), float(lat), float(k), gamma, self.gaussian_radius(float(lat)))


def _check_proj() -> None:
    parts = tuple(int(p) for p in proj_version().split(".")[:2])
    if parts < MIN_PROJ:
        raise CRSError(
            f"PROJ {proj_version()} is too old: at least {MIN_PROJ[0]}.{MIN_PROJ[1]} is needed "
            "(earlier versions give wrong factors for foot-unit CRSs); upgrade pyproj"
        )


def load_crs(text: str, unit: Unit, where: str = "job.crs") -> GridCRS:
    """Parse and check a projected CRS whose linear unit equals the job's.

    Parameters
    ----------
    text : str
        ``"EPSG:2229"`` or any string pyproj understands.
    unit : Unit
        The job's unit; the CRS's axes must be in exactly this unit.

    Raises
    ------
    CRSError
        Unknown CRS, not projected, or a unit other than the job's.
    """
    _check_proj()
    try:
        crs = pyproj.CRS.from_user_input(text)
    except pyproj.exceptions.CRSError:
        raise CRSError(f"{where} = {show_value(text)}: unknown CRS; give e.g. \"EPSG:2229\" or another code pyproj "
                       "knows") from None
    if not crs.is_projected:
        kind = "geographic" if crs.is_geographic else ("geocentric" if crs.is_geocentric else "not projected")
        raise CRSError(
            f"{where} = {show_value(text)}: {show_name(crs.name)} is {kind}; stakeout needs a projected CRS "
            "(a state plane or UTM zone, say)"
        )
    axes = [a for a in crs.axis_info if a.direction in ("north", "east", "south", "west")]
    if not axes:
        raise CRSError(f"{where} = {show_value(text)}: has no northing/easting axes")
    factor = float(axes[0].unit_conversion_factor)
    if not math.isclose(factor, unit.metres, rel_tol=1e-12):
        raise CRSError(
            f"{where} = {show_value(text)}: its unit is the {axes[0].unit_name} ({factor:.12g} m) but job.units = "
            f"{unit.key!r} ({unit.label}); the two must agree"
        )
    return GridCRS(crs, text, unit)


def _resolve(text: str) -> pyproj.CRS | None:
    try:
        return pyproj.CRS.from_user_input(text)
    except pyproj.exceptions.CRSError:
        return None


def compare_crs(job_crs: str, epsg_code: str, name: str, wkt: str = "") -> tuple[bool, str] | None:
    """Compare the job's ``crs`` with a design file's ``<CoordinateSystem>`` (``epsgCode``, else a ``name``
    pyproj resolves, else its ``ogcWktCode``).

    Returns
    -------
    (bool, str) or None
        Whether the two are one CRS (pyproj's ``CRS.equals``, axis order ignored), with the file's
        CRS as shown in a message (``EPSG:25832 (ETRS89 / UTM zone 32N)``); None when they cannot be
        compared (neither code nor name resolves, or the job's crs does not).
    """
    job = _resolve(job_crs)
    if job is None:
        return None
    code = epsg_code.strip()
    other = None
    shown = ""
    if code:
        digits = code.split(":")[-1].strip()
        if digits.isdigit():
            other = _resolve(f"EPSG:{int(digits)}")
            shown = f"EPSG:{int(digits)}"
    if other is None and name.strip():
        other = _resolve(name.strip())
        shown = show_value(name.strip())
    if other is None and wkt.strip():
        other = _resolve(wkt.strip())
        shown = "its ogcWktCode"
    if other is None:
        return None
    same = other.equals(job, ignore_axis_order=True)
    if not same:  # one CRS given by two routes (a code and its WKT) may differ in metadata only
        a, b = other.to_epsg(min_confidence=90), job.to_epsg(min_confidence=90)
        same = a is not None and a == b
    return same, f"{shown} ({show_name(other.name)})"
