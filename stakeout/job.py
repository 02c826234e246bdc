"""The typed job: what a job file says, as plain frozen data (no reading, no computing).

:mod:`stakeout.jobfile` produces a :class:`Job`; :mod:`stakeout.design`
turns it into a :class:`~stakeout.design.Design`.  Lengths in the job's
units; angles in decimal degrees; azimuths clockwise from grid north.
"""

from __future__ import annotations

from dataclasses import dataclass

from .alignment.specs import AlignmentSpec
from .stations import StationRef
from .units import Unit

__all__ = ["Job", "JobInfo", "OffsetLine", "Staking", "ControlPoint", "Setup", "Scale", "CheckSpec",
           "ProfilePVI", "ProfileInput", "DesignFile"]


@dataclass(frozen=True)
class JobInfo:
    """``[job]``: name, unit, CRS and station length."""

    name: str
    unit: Unit
    crs: str | None
    station_length: int


@dataclass(frozen=True)
class OffsetLine:
    """One offset line: offset (job units, negative left) and its code."""

    offset: float
    code: str
    dz: float | None = None  # elevation difference from the centreline (job units)
    cross_slope: float | None = None  # percent, per unit of distance out from the centreline

    def elevation_change(self) -> float:
        """Elevation of this line's stakes relative to the centreline (job units)."""
        if self.dz is not None:
            return self.dz
        if self.cross_slope is not None:
            return self.cross_slope / 100.0 * abs(self.offset)
        return 0.0


@dataclass(frozen=True)
class Staking:
    """``[staking]``: what to stake and how points are numbered."""

    interval: float
    offsets: tuple[OffsetLine, ...]
    extra_stations: tuple[StationRef, ...]
    first_point: int
    point_prefix: str
    elevation: float | None
    profile_points: bool | None = None  # None: the default (true with a profile)


@dataclass(frozen=True)
class ControlPoint:
    """A control point: id, grid coordinates (job units), optional elevation."""

    id: str
    northing: float
    easting: float
    elevation: float | None = None


@dataclass(frozen=True)
class Setup:
    """``[setup]``: the occupied point and the backsight (point or azimuth)."""

    occupied: ControlPoint
    backsight: ControlPoint | None
    backsight_azimuth: float | None
    azimuth_reference: str
    instrument_height: float | None
    target_height: float | None


@dataclass(frozen=True)
class Scale:
    """``[scale]``: combined factor as a number, or ``auto`` (needs a CRS)."""

    combined_factor: float | None  # None: "auto"
    ellipsoid_height: float | None = None
    elevation: float | None = None
    geoid_separation: float | None = None
    given: bool = True  # False: no factor in the job file, 1.0 by default

    @property
    def auto(self) -> bool:
        """True when the factor is to be computed from the CRS."""
        return self.combined_factor is None


@dataclass(frozen=True)
class CheckSpec:
    """``[check]``: tolerances for checking staked points (job units)."""

    horizontal_tolerance: float | None
    vertical_tolerance: float | None
    search_radius: float | None


@dataclass(frozen=True)
class ProfilePVI:
    """One ``[[profile.pvi]]``: station as given, elevation, vertical-curve lengths (job units)."""

    station: StationRef
    elevation: float
    curve_length_back: float = 0.0
    curve_length_ahead: float = 0.0
    where: str = ""
    symmetric: bool = False  # given as one `curve_length`
    radius: float | None = None  # a circular vertical curve (from a design file)


@dataclass(frozen=True)
class ProfileInput:
    """``[profile]``: the vertical alignment as the job file gives it.

    ``internal``: the PVI stations are internal stations (a design file's),
    not stations read in the job's stationing.
    """

    name: str
    pvis: tuple[ProfilePVI, ...]
    internal: bool = False


@dataclass(frozen=True)
class DesignFile:
    """A design file the job takes geometry from: role, path as given, SHA-256,
    what in it a staking job does not use, and the name chosen in it.
    """

    role: str
    path: str
    sha256: str
    not_used: tuple[str, ...] = ()
    chosen: str = ""


@dataclass(frozen=True)
class Job:
    """A whole validated job."""

    path: str
    sha256: str
    info: JobInfo
    alignment: AlignmentSpec
    staking: Staking
    setup: Setup | None
    scale: Scale
    check: CheckSpec | None
    profile: ProfileInput | None = None
    #: Station equations in order: (back station, ahead station, key for errors).
    equations: tuple[tuple[float, float, str], ...] = ()
    design_files: tuple[DesignFile, ...] = ()
