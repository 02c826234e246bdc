"""The design: everything a job computes before any file is written.

:func:`build_design` turns a typed :class:`~stakeout.job.Job` into a frozen
:class:`Design` — the alignment, its stationing, the stakes, and with a
``[setup]`` the setout from the occupied point with the factors used.
Every writer reads a :class:`Design` and nothing else of the job's
processing.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .alignment import Alignment, build_alignment
from .job import Job, Setup
from .profile import PVISpec, Profile, build_profile
from .setout import ScaleInfo, Setout, backsight_azimuth, compute_setout, resolve_scale
from .staking import StakePoints, plan_stakes
from .stations import Stationing
from .units import Unit

__all__ = ["Design", "SetupDesign", "build_design", "build_stationing", "build_profile_of"]


@dataclass(frozen=True)
class SetupDesign:
    """The instrument setup as computed: the job's ``[setup]``, the combined
    factor used and the setout of every stake from it.
    """

    setup: Setup
    scale: ScaleInfo
    setout: Setout

    @property
    def backsight_azimuth(self) -> float:
        """Grid azimuth of the backsight, degrees."""
        return self.setout.backsight_azimuth


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
    factors: dict[str, Any] = field(default_factory=dict)

    @property
    def unit(self) -> Unit:
        """The job's unit."""
        return self.job.info.unit

    @property
    def design_elevation(self) -> np.ndarray | None:
        """Design elevation of every stake, or ``None`` when the job gives none."""
        return self.stakes.elevation


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


def build_design(job: Job) -> Design:
    """Build the alignment, the stakes and, with a ``[setup]``, the setout."""
    alignment = build_alignment(job.alignment)
    stationing = build_stationing(job, alignment)
    profile = build_profile_of(job, stationing)
    stakes = plan_stakes(alignment, job.staking, stationing, profile)
    grid = crs_label = proj = None
    unit = job.info.unit
    if job.info.crs is not None:
        from .crs import load_crs, proj_version

        grid = load_crs(job.info.crs, unit)
        crs_label = grid.label
        proj = proj_version()
    setup_design = None
    factors: dict[str, Any] = {}
    warnings: list[str] = list(alignment.warnings)
    if job.setup is not None:
        setup = job.setup
        occ = setup.occupied
        pf = None
        if grid is not None:
            grid.check_in_area(occ.northing, occ.easting, "setup.occupied")
            pf = grid.factors(occ.northing, occ.easting)
        scale = resolve_scale(job.scale, unit, pf)
        bs_az = backsight_azimuth(setup, pf.convergence if pf else None)
        setout = compute_setout(occ.northing, occ.easting, bs_az, stakes.northing, stakes.easting,
                                scale.combined_factor, occ.elevation, setup.instrument_height, stakes.elevation,
                                setup.target_height)
        setup_design = SetupDesign(setup, scale, setout)
        if not job.scale.given and grid is not None:
            warnings.append("no combined factor in the job: ground distances equal grid distances (factor 1.0); "
                            'set [scale] combined_factor = "auto" to use the CRS\'s factor at the occupied point')
        factors = {k: v for k, v in {
            "combined_factor": scale.combined_factor, "how": scale.how, "scale_factor": scale.scale_factor,
            "elevation_factor": scale.elevation_factor, "radius_m": scale.radius_m, "height": scale.height,
            "convergence_deg": scale.convergence, "backsight_grid_azimuth_deg": bs_az,
        }.items() if v is not None}
        if not job.scale.given:
            factors["how"] = "default"
    return Design(job, alignment, stationing, stakes, setup=setup_design, profile=profile, warnings=tuple(warnings),
                  crs_label=crs_label,
                  proj_version=proj, factors=factors)
