"""The design: everything a job computes before any file is written.

:func:`build_design` turns a typed :class:`~stakeout.job.Job` into a frozen
:class:`Design` — the alignment, its stationing, the stakes, and with a
``[setup]`` the setout from the occupied point with the factors used.
Every writer reads a :class:`Design` and nothing else of the job's
processing.

Setups: one, several listed in the job (each stake by its station range,
or to the nearest), or chosen automatically among the control points
(:mod:`stakeout.setups`).  Every stake is set out from its own setup, with
the combined factor at that setup's occupied point; with ``[instrument]``
its predicted precision (:mod:`stakeout.precision`) comes from the same
setup.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, fields, replace
from functools import cached_property
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

from .alignment import STATION_TOLERANCE, Alignment, build_alignment
from .crosssection import DerivedRow, SectionPlan, derive_rows, plan_sections
from .earthwork import Earthwork, catch_and_reference_stakes, earthwork, placed
from .errors import GeometryError, JobFileError
from .job import ControlPoint, Job, Setup, SetupStation, SuperelevationRow
from .precision import Precision, flag_exceeding, predict_precision
from .profile import PVISpec, Profile, build_profile
from .setout import MEAN_EARTH_RADIUS_M, ScaleInfo, Setout, backsight_azimuth, compute_setout, resolve_scale
from .setups import choose_setups
from .listed import ListedStakes, listed_stakes, number_listed
from .staking import EachStake, MoreStakes, StakePoints, join_stakes, plan_stakes, with_stakes
from .stations import StationRef, Stationing
from .units import Unit

if TYPE_CHECKING:  # pragma: no cover
    from .crs import GridCRS
    from .presentation import Presentation

__all__ = ["Design", "Factors", "SetupDesign", "Occupation", "build_design", "build_setups", "build_stationing",
           "build_profile_of", "precision_rules_setups", "build_sections"]


@dataclass(frozen=True)
class Occupation:
    """One instrument setup as computed.

    Attributes
    ----------
    number : int
        1, 2, ... in the order of the sheet: as listed in the job, or for
        automatic setups by the first stake each serves.
    occupied : ControlPoint
        The occupied point (job units).
    backsight : ControlPoint or None
        The backsight point; None when a backsight azimuth was given.
    given_azimuth : float or None
        The backsight azimuth as the job gave it (degrees; grid or, with
        ``azimuth_reference = "geodetic"``, geodetic); None with a point.
    backsight_azimuth : float
        Grid azimuth of the backsight, degrees clockwise from grid north.
    scale : ScaleInfo
        The combined factor used at this occupied point.
    where : str
        The job-file key the setup came from (``setup``,
        ``setup.station[1]``); ``setup`` for automatic setups.
    stake_count : int
        Stakes set out from this setup.
    farthest_sight : float
        Longest grid distance to one of its stakes (job units); 0 with none.
    first_station, last_station : float or None
        Internal stations of its first and last stakes (None with none).
    range_from, range_to : float or None
        The station range the job gives the setup (``from_station``,
        ``to_station``; internal stations), None without one.
    """

    number: int
    occupied: ControlPoint
    backsight: ControlPoint | None
    given_azimuth: float | None
    backsight_azimuth: float
    scale: ScaleInfo
    where: str
    stake_count: int
    farthest_sight: float
    first_station: float | None
    last_station: float | None
    #: The station range the job gives the setup (internal stations; "start"/"end" resolved), or None.
    range_from: float | None = None
    range_to: float | None = None

    @property
    def backsight_distance(self) -> float | None:
        """Grid distance to the backsight point (job units), None without one."""
        if self.backsight is None:
            return None
        return math.hypot(self.backsight.northing - self.occupied.northing,
                          self.backsight.easting - self.occupied.easting)


@dataclass(frozen=True)
class SetupDesign:
    """The instrument setups as computed: the job's ``[setup]``, each setup
    with its factor, each stake's setup, and the setout of every stake from
    its own setup; with ``[instrument]`` the predicted precision and, with a
    ``[check] horizontal_tolerance``, the stakes whose 95 % radius exceeds it.

    Attributes
    ----------
    setup : Setup
        The job's ``[setup]``.
    occupations : tuple of Occupation
        Every setup, in sheet order (at least one).
    setup_index : ndarray of int64
        Per stake (point order): index into ``occupations``.
    setout : Setout
        Per stake, from its own setup.
    precision : Precision or None
        Per stake ``sigma_along``, ``sigma_across``, ``r95`` (job units).
    flagged : ndarray of bool or None
        Per stake: r95 exceeds ``tolerance``; None without precision or tolerance.
    tolerance : float or None
        ``[check] horizontal_tolerance`` (job units) used for the flags.
    """

    setup: Setup
    occupations: tuple[Occupation, ...]
    setup_index: NDArray[np.int64]
    setout: Setout
    precision: Precision | None = None
    flagged: NDArray[np.bool_] | None = None
    tolerance: float | None = None

    @property
    def scale(self) -> ScaleInfo:
        """The combined factor of the first (or only) setup."""
        return self.occupations[0].scale

    @property
    def backsight_azimuth(self) -> float:
        """Grid azimuth of the first (or only) setup's backsight, degrees."""
        return self.occupations[0].backsight_azimuth

    @property
    def listed(self) -> bool:
        """Setups from control points or several: outputs number and name them."""
        return self.setup.listed or len(self.occupations) > 1

    def groups(self) -> list[NDArray[np.int64]]:
        """Stake indices of each setup, in point order, one array per setup."""
        order = np.argsort(self.setup_index, kind="stable")
        counts = np.bincount(self.setup_index, minlength=len(self.occupations))
        return np.split(order, np.cumsum(counts)[:-1])


@dataclass(frozen=True)
class Factors:
    """The factors a build used, as the manifest records them (``None``: not given, left out).

    ``how`` says where the combined factor came from (``default``: none was
    given); with several setups only what they share is here (each setup's own
    are listed in the manifest's setups).  Lengths in job units, angles in degrees.
    """

    how: str | None = None
    combined_factor: float | None = None
    scale_factor: float | None = None
    elevation_factor: float | None = None
    radius_m: float | None = None
    height: float | None = None
    convergence_deg: float | None = None
    backsight_grid_azimuth_deg: float | None = None

    def as_dict(self) -> dict[str, str | float]:
        """The factors given, by name (the manifest's ``factors``)."""
        out: dict[str, str | float] = {}
        for f in fields(self):
            v = getattr(self, f.name)
            if v is not None:
                out[f.name] = v
        return out


@dataclass(frozen=True)
class Design:
    """A computed job, read by every writer."""

    job: Job
    alignment: Alignment
    stationing: Stationing
    stakes: StakePoints
    setup: SetupDesign | None = None
    profile: Profile | None = None
    warnings: tuple[str, ...] = ()
    crs_label: str | None = None
    proj_version: str | None = None
    factors: Factors = Factors()
    #: The cross-section: superelevation rows, template lines, widening (None: not computed).
    sections: SectionPlan | None = None
    #: With ``[ground]``: each stake's ground elevation and cut/fill; with ``[slope_stakes]`` the catch
    #: and reference stakes per station and side, the sections and the volumes (None without a ground).
    earthwork: Earthwork | None = None
    #: With several alignments: each alignment's design, in job order (this one is the first).
    parts: tuple["Design", ...] = ()

    @property
    def unit(self) -> Unit:
        """The job's unit."""
        return self.job.info.unit

    @property
    def occupations(self) -> tuple[Occupation, ...]:
        """The setups (none without a ``[setup]``); with several alignments each one's stake count and
        farthest sight over every alignment.
        """
        if self.setup is None:
            return ()
        own = [p.setup for p in self.parts if p.setup is not None]
        if not own:
            return self.setup.occupations
        return tuple(replace(o, stake_count=sum(sd.occupations[i].stake_count for sd in own),
                             farthest_sight=max(sd.occupations[i].farthest_sight for sd in own))
                     for i, o in enumerate(self.setup.occupations))

    @property
    def design_elevation(self) -> np.ndarray | None:
        """Design elevation of every stake, or ``None`` when the job gives none."""
        return self.stakes.elevation

    @cached_property
    def presentation(self) -> "Presentation":
        """What the outputs show, as numbers (:mod:`stakeout.presentation`), made on first use
        and shared by every writer of the build.
        """
        from .presentation import Presentation

        return Presentation(self)


def build_sections(job: Job, alignment: Alignment, stationing: Stationing) -> SectionPlan:
    """The job's cross-section: its ``[[superelevation]]`` rows, or the rows of the design
    file's ``<Superelevation>`` elements (:func:`~stakeout.crosssection.derive_rows`), and its lines.
    """
    rows: Sequence[SuperelevationRow | DerivedRow] = job.superelevation
    if job.superelevation_file is not None:
        rows = derive_rows(job.superelevation_file, alignment)
    return plan_sections(job.staking.offsets, rows, stationing)


def unapplied_superelevation_warnings(job: Job, stationing: Stationing) -> list[str]:
    """One warning per ``<Superelevation>`` of the alignment's design file that the job does not apply
    (outputs.md, "Content not used": never only a list entry), over the stations it spans.
    """
    out = []
    for p in job.unapplied_superelevation:
        given = [v for v in (p.begin_runout, p.begin_runoff, p.full_super, p.runoff, p.start_of_runout,
                             p.end_of_runout) if v is not None]
        span = f" from {stationing.label(min(given))} to {stationing.label(max(given))}" if given else ""
        out.append(f"offset elevations ignore the design file's superelevation{span} (apply it with "
                   "[superelevation] landxml and normal_crown)")
    return out


def build_stationing(job: Job, alignment: Alignment) -> Stationing:
    """The stationing of the job's alignment."""
    return Stationing.with_equations(alignment.start_station, alignment.end_station, job.info.station_length,
                                     job.info.unit.station_decimals, job.equations)


def build_profile_of(job: Job, stationing: Stationing) -> Profile | None:
    """The job's profile, its PVI stations read in the alignment's stationing."""
    if job.profile is None:
        return None
    internal = job.profile.internal
    pvis = [PVISpec(p.station.value if internal else stationing.to_internal(p.station), p.elevation,
                    p.curve_length_back, p.curve_length_ahead, radius=p.radius, where=p.where,
                    symmetric=p.symmetric) for p in job.profile.pvis]
    return build_profile(pvis, job.profile.name)


def precision_rules_setups(job: Job) -> bool:
    """Whether automatic setups keep stakes within tolerance: ``[instrument]`` and
    ``[check] horizontal_tolerance`` both given (job-file contract).
    """
    return (job.instrument is not None and job.check is not None
            and job.check.horizontal_tolerance is not None)


def _auto_stations(job: Job, setup: Setup, stakes: StakePoints) -> tuple[tuple[SetupStation, ...], NDArray[np.int64]]:
    """Automatic setups among the control points (:func:`stakeout.setups.choose_setups`),
    numbered by the first stake each serves.
    """
    assert setup.max_distance is not None and setup.max_backsight is not None
    ctrl = job.control
    r95 = tolerance = None
    if precision_rules_setups(job):
        assert job.check is not None and job.instrument is not None
        spec, tolerance = job.instrument, job.check.horizontal_tolerance

        def r95(on: NDArray[np.float64], oe: NDArray[np.float64], bn: NDArray[np.float64], be: NDArray[np.float64],
                sn: NDArray[np.float64], se: NDArray[np.float64]) -> NDArray[np.float64]:
            return predict_precision(on, oe, bn, be, sn, se, spec).r95

    plan = choose_setups([c.id for c in ctrl], np.array([c.northing for c in ctrl]),
                         np.array([c.easting for c in ctrl]), stakes.northing, stakes.easting, setup.max_distance,
                         setup.max_backsight, stake_ids=EachStake(len(stakes), stakes.point_id), r95=r95, tolerance=tolerance)
    n = len(stakes)
    first = np.full(len(plan.setups), n, dtype=np.int64)
    np.minimum.at(first, plan.setup_index, np.arange(n, dtype=np.int64))
    order = np.argsort(first, kind="stable")
    rank = np.empty_like(order)
    rank[order] = np.arange(order.size)
    by_id = {c.id: c for c in ctrl}
    stations = tuple(SetupStation(by_id[plan.setups[k].occupied_id], by_id[plan.setups[k].backsight_id], None)
                     for k in order.tolist())
    return stations, rank[plan.setup_index]


def _range_internal(ref: StationRef, stationing: Stationing) -> float:
    """Internal station of a range end: ``"start"``/``"end"`` (read as -inf/+inf) are the alignment's ends."""
    if math.isinf(ref.value):
        return stationing.start if ref.value < 0 else stationing.end
    return stationing.to_internal(ref)


def _ranged_index(stations: tuple[SetupStation, ...], stakes: StakePoints,
                  stationing: Stationing) -> NDArray[np.int64]:
    """Each stake's setup by the station ranges the setups serve (inclusive;
    at a shared end the setup listed first).
    """
    spans = []
    for s in stations:
        assert s.from_station is not None and s.to_station is not None
        lo, hi = _range_internal(s.from_station, stationing), _range_internal(s.to_station, stationing)
        if hi < lo:
            raise JobFileError(f"{s.where}.to_station = {stationing.label(hi)!r}: comes before from_station "
                               f"{stationing.label(lo)!r}")
        spans.append((lo, hi, s.where))
    ordered = sorted(spans)
    for (lo0, hi0, w0), (lo1, hi1, w1) in zip(ordered, ordered[1:]):
        if lo1 < hi0 - STATION_TOLERANCE:
            raise JobFileError(f"{w1} (from {stationing.label(lo1)} to {stationing.label(hi1)}): overlaps {w0} "
                               f"(from {stationing.label(lo0)} to {stationing.label(hi0)}); ranges may share "
                               "only an end")
    st = stakes.station
    tol = max(STATION_TOLERANCE, 0.5 * 10.0 ** -stationing.decimals)  # a range's ends as its labels print them
    index = np.full(st.size, -1, dtype=np.int64)
    for k, (lo, hi, _) in enumerate(spans):  # one step per setup, vectorised over the stakes
        index[(index < 0) & (st >= lo - tol) & (st <= hi + tol)] = k
    if (index < 0).any():
        i = int(np.argmax(index < 0))
        raise GeometryError(f"stake {stakes.point_id(i)!r} at {stationing.label(float(st[i]))}: no "
                            "[[setup.station]] from_station/to_station range serves it")
    return index


def _nearest_index(stations: tuple[SetupStation, ...], stakes: StakePoints) -> NDArray[np.int64]:
    """Each stake's nearest setup (ties: the one listed first)."""
    on = np.array([s.occupied.northing for s in stations])
    oe = np.array([s.occupied.easting for s in stations])
    index = np.empty(len(stakes), dtype=np.int64)
    step = max(1, (1 << 22) // len(stations))
    for lo in range(0, len(stakes), step):  # blocks of stakes: a setups x block matrix stays small
        sn, se = stakes.northing[lo:lo + step], stakes.easting[lo:lo + step]
        d2 = (sn[None, :] - on[:, None]) ** 2 + (se[None, :] - oe[:, None]) ** 2
        index[lo:lo + step] = np.argmin(d2, axis=0)
    return index


def assign_setups(job: Job, stakes: StakePoints, stationing: Stationing
                  ) -> tuple[tuple[SetupStation, ...], NDArray[np.int64]]:
    """The job's setups and each stake's setup (an index into them): automatic, by station
    range, the one setup, or the nearest.
    """
    setup = job.setup
    assert setup is not None
    if setup.auto:
        return _auto_stations(job, setup, stakes)
    stations = setup.explicit()
    if stations[0].from_station is not None:
        return stations, _ranged_index(stations, stakes, stationing)
    if len(stations) == 1:
        return stations, np.zeros(len(stakes), dtype=np.int64)
    return stations, _nearest_index(stations, stakes)


def build_setups(job: Job, stakes: StakePoints, stationing: Stationing, grid: GridCRS | None,
                 assigned: tuple[tuple[SetupStation, ...], NDArray[np.int64]] | None = None) -> SetupDesign:
    """The setups of a job with a ``[setup]``, each stake's setup, the setout and the precision.

    Parameters
    ----------
    job : Job
        The job; its ``setup`` must not be None.
    stakes : StakePoints
        Every stake, in point order.
    stationing : Stationing
        The alignment's stationing (for ``[[setup.station]]`` ranges).
    grid : GridCRS or None
        The job's CRS: the factors and convergence at each occupied point.
    assigned : (setups, index), optional
        The setups and each stake's setup, when chosen over more stakes than
        these (several alignments: :func:`assign_setups` over all of them).

    Returns
    -------
    SetupDesign

    Raises
    ------
    GeometryError
        A stake no setup serves (no control point reaches it, or no range).
    JobFileError
        A station range that runs backwards or overlaps another.
    """
    setup = job.setup
    assert setup is not None
    unit = job.info.unit
    stations, index = assigned if assigned is not None else assign_setups(job, stakes, stationing)
    k = len(stations)
    occ_n = np.array([s.occupied.northing for s in stations])
    occ_e = np.array([s.occupied.easting for s in stations])
    scales, bs_az, radii = [], [], []
    for s in stations:  # one CRS evaluation per setup
        pf = None
        if grid is not None:
            grid.check_in_area(s.occupied.northing, s.occupied.easting, "setup.occupied")
            pf = grid.factors(s.occupied.northing, s.occupied.easting)
        radii.append(unit.from_metres(MEAN_EARTH_RADIUS_M if pf is None else pf.radius_m))
        scales.append(resolve_scale(job.scale, unit, pf))
        bs_az.append(backsight_azimuth(s, pf.convergence if pf else None, setup.azimuth_reference))
    cf = np.array([sc.combined_factor for sc in scales])
    elev = [s.occupied.elevation for s in stations]
    occ_z = None if any(z is None for z in elev) else np.array(elev, dtype=float)[index]
    if k == 1:  # one setup: scalars, exactly as a one-setup job always was
        setout = compute_setout(float(occ_n[0]), float(occ_e[0]), bs_az[0], stakes.northing, stakes.easting,
                                float(cf[0]), elev[0], setup.instrument_height, stakes.elevation,
                                setup.target_height, setup.refraction, radii[0])
    else:
        setout = compute_setout(occ_n[index], occ_e[index], np.array(bs_az)[index], stakes.northing,
                                stakes.easting, cf[index], occ_z, setup.instrument_height, stakes.elevation,
                                setup.target_height, setup.refraction, np.array(radii)[index])
    counts = np.bincount(index, minlength=k)
    farthest = np.zeros(k)
    np.maximum.at(farthest, index, setout.grid_distance)
    st = stakes.station
    first_st = np.full(k, np.inf)
    last_st = np.full(k, -np.inf)
    np.minimum.at(first_st, index, st)
    np.maximum.at(last_st, index, st)
    ranges = [(None, None) if s.from_station is None or s.to_station is None
              else (_range_internal(s.from_station, stationing), _range_internal(s.to_station, stationing))
              for s in stations]
    occupations = tuple(
        Occupation(i + 1, s.occupied, s.backsight, s.backsight_azimuth, bs_az[i], scales[i], s.where,
                   int(counts[i]), float(farthest[i]), float(first_st[i]) if counts[i] else None,
                   float(last_st[i]) if counts[i] else None, *ranges[i])
        for i, s in enumerate(stations)
    )
    precision = flagged = tolerance = None
    if job.instrument is not None:
        bn = np.array([s.backsight.northing if s.backsight is not None else np.nan for s in stations])
        be = np.array([s.backsight.easting if s.backsight is not None else np.nan for s in stations])
        precision = predict_precision(occ_n[index], occ_e[index], bn[index], be[index], stakes.northing,
                                      stakes.easting, job.instrument)
        if job.check is not None and job.check.horizontal_tolerance is not None:
            tolerance = job.check.horizontal_tolerance
            flagged = flag_exceeding(precision.r95, tolerance)
    return SetupDesign(setup, occupations, index, setout, precision, flagged, tolerance)


def build_design(job: Job) -> Design:
    """Build the alignment, the stakes and, with a ``[setup]``, the setout; with several
    alignments each one's (:attr:`Design.parts`) and setups serving all of them.
    """
    if job.parts:
        return _build_several(job)
    d = _build_alignment_design(job)
    if job.setup is None:
        return d
    return _with_setups(d, build_setups(job, d.stakes, d.stationing, _grid(job)), serves_none=True)


def _grid(job: Job) -> GridCRS | None:
    if job.info.crs is None:
        return None
    from .crs import load_crs

    return load_crs(job.info.crs, job.info.unit)


def _build_alignment_design(job: Job) -> Design:
    """One alignment's design, without setups."""
    alignment = build_alignment(job.alignment)
    stationing = build_stationing(job, alignment)
    profile = build_profile_of(job, stationing)
    sections = build_sections(job, alignment, stationing)
    staking = replace(job.staking, offsets=sections.lines)  # left to right on the alignment (widened lines)
    plan = plan_stakes(alignment, staking, stationing, profile, sections)
    # the ground work runs on the grid; its catch and reference stakes then join the table, each after
    # its station's stakes, and the listed points (staking.points) after the grid
    ew = None if job.ground is None else earthwork(plan, job.ground, job.slope_stakes, alignment)
    more = [catch_and_reference_stakes(plan, ew)] if ew is not None else []
    listed = listed_stakes(alignment, stationing, profile, sections, staking)
    if listed is not None:
        first_free = plan.first_point + plan.numbered + sum(len(m) for m in more)
        more.append(_listed_as_stakes(listed, first_free, plan.prefix))
    stakes = with_stakes(plan, join_stakes(more)) if more else plan
    if ew is not None and job.ground is not None:
        ew = placed(ew, stakes, job.ground, 0)
    crs_label = proj = None
    if job.info.crs is not None:
        from .crs import proj_version

        crs_label = _grid(job).label  # type: ignore[union-attr]
        proj = proj_version()
    warnings: list[str] = list(alignment.warnings)
    warnings.extend(unapplied_superelevation_warnings(job, stationing))
    return Design(job, alignment, stationing, stakes, profile=profile, warnings=tuple(warnings),
                  sections=sections, crs_label=crs_label, proj_version=proj, earthwork=ew)


def _listed_as_stakes(listed: ListedStakes, first_free: int, prefix: str) -> MoreStakes:
    """The listed points as stakes after the grid: those without an id in their numbering order
    (:func:`~stakeout.listed.number_listed`), then those with one, in file order.
    """
    order, _ = number_listed(listed, first_free, prefix)
    named = np.array([i for i, v in enumerate(listed.id) if v], dtype=np.int64)
    idx = np.concatenate([order.astype(np.int64), named])
    n = idx.size
    pick = idx.tolist()
    return MoreStakes(after=np.full(n, -1, dtype=np.int64), station=listed.station[idx], offset=listed.offset[idx],
                      northing=listed.northing[idx], easting=listed.easting[idx], azimuth=listed.azimuth[idx],
                      elevation=listed.elevation[idx], code=tuple(listed.code[i] for i in pick),
                      feature=("",) * n, description=tuple(listed.description[i] for i in pick),
                      name=tuple(listed.id[i] or None for i in pick))


def _with_setups(d: Design, setup_design: SetupDesign, serves_none: bool) -> Design:
    """``d`` with its setups, their factors and warnings (``serves_none``: warn of a setup
    serving no stake, which with several alignments is judged over all of them).
    """
    job = d.job
    warnings = list(d.warnings)
    if not job.scale.given and job.info.crs is not None:
        warnings.append("no combined factor in the job: ground distances equal grid distances (factor 1.0); "
                        'set [scale] combined_factor = "auto" to use the CRS\'s factor at the occupied point')
    if serves_none:
        for o in setup_design.occupations:
            if o.stake_count == 0:
                warnings.append(f"setup {o.number} ({o.where}, occupied {o.occupied.id}) serves no stake")
    first = setup_design.occupations[0]
    scale = first.scale
    how = scale.how if job.scale.given else "default"
    if len(setup_design.occupations) == 1:
        factors = Factors(how, scale.combined_factor, scale.scale_factor, scale.elevation_factor, scale.radius_m,
                          scale.height, scale.convergence, first.backsight_azimuth)
    else:  # per-setup factors are listed in the manifest's setups
        shared = len({o.scale.combined_factor for o in setup_design.occupations}) == 1
        factors = Factors(how, scale.combined_factor if shared else None, height=scale.height)
    return replace(d, setup=setup_design, warnings=tuple(warnings), factors=factors)


class _AllStakes:
    """The stakes of several alignments as one set, in job order (for choosing setups)."""

    def __init__(self, designs: Sequence[Design]):
        self.parts = [d.stakes for d in designs]
        self.starts = np.cumsum([0] + [len(sp) for sp in self.parts])
        self.northing = np.concatenate([sp.northing for sp in self.parts])
        self.easting = np.concatenate([sp.easting for sp in self.parts])

    def __len__(self) -> int:
        return int(self.starts[-1])

    def point_id(self, i: int) -> str:
        k = int(np.searchsorted(self.starts, i, side="right")) - 1
        return self.parts[k].point_id(i - int(self.starts[k]))


def _build_several(job: Job) -> Design:
    """Each alignment's design; with a ``[setup]``, setups chosen over every stake of every
    alignment and each alignment's setout from them.  The design returned is the first
    alignment's, with every one in :attr:`Design.parts`.
    """
    designs = []
    for k, part in enumerate(job.parts):
        try:
            designs.append(replace(_build_alignment_design(part), job=part))
        except (JobFileError, GeometryError) as exc:  # name the alignment the key belongs to
            raise type(exc)(f"alignment[{k}] ({part.alignment.name!r}): {exc}") from None
    check_ids_across(designs)
    if job.setup is not None:
        everything = _AllStakes(designs)
        if job.setup.explicit() and job.setup.explicit()[0].from_station is not None:
            where = job.setup.explicit()[0].where
            raise JobFileError(f"{where}.from_station: station ranges name stations of one alignment; a job with "
                               "several alignments takes setups by nearest control point or occupied = \"auto\"")
        assigned = assign_setups(job, everything, None)  # type: ignore[arg-type]
        grid = _grid(job)
        out = []
        for k, d in enumerate(designs):
            span = slice(int(everything.starts[k]), int(everything.starts[k + 1]))
            sd = build_setups(job.parts[k], d.stakes, d.stationing, grid, assigned=(assigned[0], assigned[1][span]))
            out.append(_with_setups(d, sd, serves_none=False))
        counts = np.bincount(assigned[1], minlength=len(assigned[0]))
        none = tuple(f"setup {i + 1} ({s.where}, occupied {s.occupied.id}) serves no stake"
                     for i, s in enumerate(assigned[0]) if counts[i] == 0)
        designs = out
    else:
        none = ()
    # the job's design: the first alignment's, with the whole job (every design file) and the warnings
    # of the job as a whole (every alignment's own stay with it in parts)
    return replace(designs[0], job=job, parts=tuple(designs), warnings=none)


def check_ids_across(designs: Sequence[Design]) -> None:
    """Refuse point ids that two alignments would both use (naming both alignments)."""
    spans = []
    for d in designs:
        sp = d.stakes
        if sp.numbered:
            spans.append((sp.prefix, sp.first_point, sp.first_point + sp.numbered - 1, d))
    for i, (pa, lo_a, hi_a, da) in enumerate(spans):
        for pb, lo_b, hi_b, db in spans[i + 1:]:
            if pa == pb and lo_b <= hi_a and lo_a <= hi_b:
                raise JobFileError(
                    f"staking.first_point: alignment {db.alignment.name!r} numbers its stakes {pb}{lo_b} to {pb}{hi_b} "
                    f"and alignment {da.alignment.name!r} {pa}{lo_a} to {pa}{hi_a}; point ids must be unique in the "
                    "job: move one alignment's first_point (or give it another point_prefix)")
    for d in designs:  # an id the job gave (a listed point's) that spells another alignment's number
        named = d.stakes.layout.names if d.stakes.layout is not None else ()
        for pid in named:
            for prefix, lo, hi, other in spans:
                rest = pid[len(prefix):] if other is not d and pid.startswith(prefix) else ""
                if rest.isascii() and rest.isdigit() and str(int(rest)) == rest and lo <= int(rest) <= hi:
                    raise JobFileError(f"point id {pid!r}: alignment {d.alignment.name!r} gives it to a listed point "
                                       f"and alignment {other.alignment.name!r} numbers a stake so; point ids must "
                                       "be unique in the job")
    seen: dict[str, str] = {}
    for d in designs:  # ids the job gave, and prefixes that spell another alignment's numbers
        sp = d.stakes
        named = sp.layout.names if sp.layout is not None else ()
        others = [s for s in spans if s[3] is not d and s[0] != sp.prefix]
        ids: list[str] = list(named)
        if any(o[0].startswith(sp.prefix) or sp.prefix.startswith(o[0]) for o in others):
            ids = sp.point + []
        for pid in ids:
            if pid in seen and seen[pid] != d.alignment.name:
                raise JobFileError(f"point id {pid!r}: alignment {d.alignment.name!r} and alignment {seen[pid]!r} "
                                   "both use it; point ids must be unique in the job")
            seen[pid] = d.alignment.name
