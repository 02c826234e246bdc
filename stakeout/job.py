"""The typed job: what a job file says, as plain frozen data (no reading, no computing).

:mod:`stakeout.jobfile` produces a :class:`Job`; :mod:`stakeout.design`
turns it into a :class:`~stakeout.design.Design`.  Lengths in the job's
units; angles in decimal degrees; azimuths clockwise from grid north.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import PurePath

from .alignment.specs import AlignmentSpec
from .ground import Ground
from .precision import InstrumentSpec
from .slopestakes import SlopeStaking
from .stations import StationRef
from .units import Unit

__all__ = ["Job", "JobInfo", "OffsetLine", "WideningRow", "SuperelevationRow", "SuperelevationFile",
           "SuperelevationPeriod",
            "Staking", "ListedPoints", "ControlPoint", "SetupStation", "Setup", "Scale", "CheckSpec",
           "ProfilePVI", "ProfileInput", "DesignFile", "InstrumentSpec"]


@dataclass(frozen=True)
class JobInfo:
    """``[job]``: name, unit, CRS and station length."""

    name: str
    unit: Unit
    crs: str | None
    station_length: int


@dataclass(frozen=True)
class WideningRow:
    """One row of a widened offset line: station as given and the offset there (job units)."""

    station: StationRef
    offset: float


@dataclass(frozen=True)
class SuperelevationRow:
    """One ``[[superelevation]]`` row: station as given, left and right cross slopes (percent,
    negative falls away from the centreline); ``where`` is its key (``superelevation[2]``).
    """

    station: StationRef
    left: float
    right: float
    where: str = ""


@dataclass(frozen=True)
class SuperelevationPeriod:
    """One design file ``<Superelevation>`` element, as plain numbers.

    Stations are internal stations (job units); ``full_superelevation`` is
    ``FullSuperelev`` in percent; ``outside_left`` says which side is the
    outside of the curve in force at ``full_super`` (the side away from its
    centre: the left on a curve turning right), None to take it from the
    alignment.  A station the element does not give is None.  ``where``
    names the element in messages.
    """

    begin_runout: float | None
    begin_runoff: float | None
    full_super: float | None
    runoff: float | None
    start_of_runout: float | None
    end_of_runout: float | None
    full_superelevation: float | None
    outside_left: bool | None
    where: str


@dataclass(frozen=True)
class SuperelevationFile:
    """``[superelevation] landxml = ...``: the design file's ``<Superelevation>`` elements
    (``periods``, read by the LandXML reader) with ``normal_crown`` (percent).

    :func:`stakeout.crosssection.derive_rows` turns them into rows.
    """

    landxml: str
    normal_crown: float
    periods: tuple[SuperelevationPeriod, ...] = ()


@dataclass(frozen=True)
class OffsetLine:
    """One offset line: offset (job units, negative left) and its code.

    Template lines (job-file contract, second set): ``from_code`` names the
    line its elevation is measured from (None: the centreline);
    ``superelevation`` takes the slope from the ``[[superelevation]]``
    table on its side; ``steepen_with_inner`` and ``rollover`` (percent)
    bend the slope toward the inner line's; ``widening`` holds the rows of
    an offset that changes along the alignment (``offset`` is then the
    first row's, used only for ordering before the design resolves them).
    """

    offset: float
    code: str
    dz: float | None = None  # elevation difference from the centreline (job units)
    cross_slope: float | None = None  # percent, per unit of distance out from the centreline
    superelevation: bool = False
    from_code: str | None = None
    steepen_with_inner: bool = False
    rollover: float | None = None
    widening: tuple[WideningRow, ...] = ()
    where: str = field(default="", compare=False)

    @property
    def template(self) -> bool:
        """True when the line uses any key of the second set (its elevation needs the section model)."""
        return (self.superelevation or self.from_code is not None or self.steepen_with_inner
                or self.rollover is not None or bool(self.widening))

    @property
    def has_slope(self) -> bool:
        """True when the line has a cross slope (a number or the superelevation table)."""
        return self.cross_slope is not None or self.superelevation

    def all_offsets(self) -> tuple[float, ...]:
        """Every offset the line takes: its one offset, or each widening row's."""
        return tuple(r.offset for r in self.widening) if self.widening else (self.offset,)

    def elevation_change(self) -> float:
        """Elevation of this line's stakes relative to the centreline (job units)."""
        if self.dz is not None:
            return self.dz
        if self.cross_slope is not None:
            return self.cross_slope / 100.0 * abs(self.offset)
        return 0.0


@dataclass(frozen=True)
class ListedPoints:
    """``staking.points``: stakes listed by station and offset in a CSV file, in file order.

    One entry per row in every field.  ``station`` is read like every
    station of the job file (a ``region`` column gives its region);
    ``offset`` is measured square to the alignment, or along the line
    turned ``skew`` degrees clockwise (in plan) from the square line
    (``skew`` 0 where not given, ``|skew| < 90``); ``elevation`` is NaN
    where not given; ``id`` is None where not given.  Lengths and
    elevations in the job's units.  ``path`` is the file as the job file
    gives it (relative to the job file's folder), ``sha256`` its content's
    hash; ``line`` each row's line number in the file.
    """

    path: str
    sha256: str
    station: tuple[StationRef, ...]
    offset: tuple[float, ...]
    skew: tuple[float, ...]
    code: tuple[str, ...]
    description: tuple[str, ...]
    id: tuple[str | None, ...]
    elevation: tuple[float, ...]
    line: tuple[int, ...]

    def __len__(self) -> int:
        return len(self.line)

    @property
    def key(self) -> str:
        """How messages name the file: ``staking.points = 'structures.csv'``."""
        return f"staking.points = {self.path!r}"


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
    exit_spiral_from: str = "CS"  # the end an exit spiral's deflections are run from: "CS" or "ST"
    #: ``staking.points``: stakes listed by station and offset (None: not given).
    points: ListedPoints | None = None


@dataclass(frozen=True)
class ControlPoint:
    """A control point: id, grid coordinates (job units), optional elevation.

    ``where`` says where the job gave it (``control.point[2]``,
    ``control.file 'c.csv' line 5``), for messages; it takes no part in
    comparisons.
    """

    id: str
    northing: float
    easting: float
    elevation: float | None = None
    where: str = field(default="", compare=False)


@dataclass(frozen=True)
class SetupStation:
    """One explicit instrument setup: the occupied point, the backsight (a
    point, or a grid or geodetic azimuth) and, optionally, the range of
    stations it serves (inclusive, both or neither given).

    ``where`` is the job-file key it came from (``setup`` or
    ``setup.station[1]``), named in messages.
    """

    occupied: ControlPoint
    backsight: ControlPoint | None
    backsight_azimuth: float | None
    from_station: StationRef | None = None
    to_station: StationRef | None = None
    where: str = "setup"


@dataclass(frozen=True)
class Setup:
    """``[setup]``: the instrument setups, in one of three forms.

    * one setup: ``occupied`` with ``backsight`` or ``backsight_azimuth``
      (each point inline or a control point named by id);
    * several setups: ``stations`` (``[[setup.station]]``), ``occupied``
      and the backsight fields ``None``;
    * automatic setups (``occupied = "auto"``): ``max_distance`` and
      ``max_backsight`` set, ``occupied`` and the backsight fields ``None``.

    Heights and the azimuth reference are shared by every setup.  ``by_id``
    is True when a point of the setup(s) was named by a control point id.
    """

    occupied: ControlPoint | None
    backsight: ControlPoint | None
    backsight_azimuth: float | None
    azimuth_reference: str
    instrument_height: float | None
    target_height: float | None
    max_distance: float | None = None  # job units; set with occupied = "auto"
    max_backsight: float | None = None  # job units; set with occupied = "auto"
    stations: tuple[SetupStation, ...] = ()
    by_id: bool = False
    #: The refraction coefficient k when zenith angles and slope distances are corrected for
    #: the earth's curvature and refraction (``curvature_refraction = true``); None: not corrected.
    refraction: float | None = None

    @property
    def auto(self) -> bool:
        """True when the setups are to be chosen among the control points."""
        return self.max_distance is not None

    @property
    def listed(self) -> bool:
        """True when the setups come from control points or are several: the
        outputs then number them and name their points (``setup,occupied,backsight``).
        """
        return self.auto or bool(self.stations) or self.by_id

    def explicit(self) -> tuple[SetupStation, ...]:
        """The setups the job lists: its stations, or the one ``[setup]`` (none with ``auto``)."""
        if self.stations:
            return self.stations
        if self.occupied is None:
            return ()
        return (SetupStation(self.occupied, self.backsight, self.backsight_azimuth),)


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
    #: Description codes of shots on the ground beside a stake (checked horizontally only).
    ground_codes: tuple[str, ...] = ()


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
    #: Control points from ``[control]`` (file, LandXML CgPoints, inline), ids unique.
    control: tuple[ControlPoint, ...] = ()
    #: ``[instrument]``: standard errors for the predicted precision of every stake.
    instrument: InstrumentSpec | None = None
    #: ``[[superelevation]]`` rows, as given (stations in the job's stationing).
    superelevation: tuple[SuperelevationRow, ...] = ()
    #: ``[superelevation] landxml``: rows to come from the design file (hook, not wired yet).
    superelevation_file: SuperelevationFile | None = None
    #: the alignment design file's ``<Superelevation>`` elements the job does not apply (a warning)
    unapplied_superelevation: tuple[SuperelevationPeriod, ...] = ()
    #: ``[ground]``: the existing ground as a TIN (its file is among ``design_files``, role ``ground``).
    ground: Ground | None = None
    #: ``[slope_stakes]``: hinges, slopes, reference offset and farthest catch per side.
    slope_stakes: SlopeStaking | None = None
    #: With several alignments (``[[alignment]]``): one whole job per alignment, in job order, each with
    #: the shared sections; this job is then the first of them with every design file (empty: one alignment).
    parts: tuple["Job", ...] = ()

    def control_points(self) -> tuple[ControlPoint, ...]:
        """Every control point the job lists or uses, each id once, in the job's order.

        The ``[control]`` points (file rows, LandXML points, then
        ``[[control.point]]`` entries), then the points of every listed setup
        (occupied, and a backsight given as a point) not already among them.
        """
        points = list(self.control)
        if self.setup is not None:
            for st in self.setup.explicit():
                points += [cp for cp in (st.occupied, st.backsight) if cp is not None]
        seen: set[str] = set()
        out: list[ControlPoint] = []
        for cp in points:
            if cp.id not in seen:
                seen.add(cp.id)
                out.append(cp)
        return tuple(out)

    def inputs(self) -> tuple[str, ...]:
        """Every file the job reads: the job file, then each design file
        (alignment, profile, control, and any input added later as a
        :class:`DesignFile`), paths relative to the job file resolved
        against its folder.  ``--force`` never replaces a folder holding one.
        """
        base = PurePath(self.path).parent
        return (self.path,) + tuple(str(base / f.path) for f in self.design_files)
