"""What the commands do, end to end: job file -> alignment -> stakes ->
setout / check -> writers -> one atomic output folder.

The CLI only parses options and calls these functions.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .alignment import Alignment, build_alignment
from .angles import azimuth_between, normalize_azimuth
from .errors import JobFileError, OutputError
from .jobfile import Job, load_job
from .progress import Progress
from .setout import ScaleInfo, Setout, compute_setout, elevation_factor
from .staking import StakePoints, plan_stakes

__all__ = ["OUTPUT_FILES", "Computed", "compute", "parse_only", "run_build", "run_curve_report", "run_check"]

#: ``--only`` names and the files they write, in writing order.
OUTPUT_FILES: dict[str, str] = {
    "points": "points.csv",
    "stations": "stations.csv",
    "curves": "curves.csv",
    "setout": "setout.csv",
    "sheet": "setout.txt",
    "deflections": "deflections.txt",
    "dxf": "plan.dxf",
    "preview": "plan.png",
    "manifest": "manifest.json",
}
_SETOUT_NAMES = ("setout", "sheet")
#: A default build draws plan.png only up to this many points.
PREVIEW_MAX_POINTS = 20_000


@dataclass
class Computed:
    """Everything computed for a job before any file is written."""

    job: Job
    alignment: Alignment
    stakes: StakePoints
    crs_label: str | None = None
    scale: ScaleInfo | None = None
    setout: Setout | None = None
    factors: dict[str, Any] = field(default_factory=dict)
    proj_version: str | None = None
    plan: bytes | None = None  # plan.dxf once drawn: the preview is drawn from it

    def plan_dxf(self) -> bytes:
        """plan.dxf, drawn once however many outputs need it."""
        if self.plan is None:
            from .writers.dxf import plan_dxf

            self.plan = plan_dxf(self)
        return self.plan


def _scale_and_backsight(job: Job, grid: Any) -> tuple[ScaleInfo, float]:
    setup = job.setup
    assert setup is not None
    unit = job.info.unit
    occ = setup.occupied
    pf = grid.factors(occ.northing, occ.easting) if grid is not None else None
    sc = job.scale
    if sc.auto:
        assert pf is not None
        h = sc.ellipsoid_height if sc.ellipsoid_height is not None else (sc.elevation or 0.0) + (sc.geoid_separation or 0.0)
        ef = elevation_factor(unit.to_metres(h), pf.radius_m)
        cf = pf.scale_factor * ef
        how = "auto: grid scale factor k at the occupied point x elevation factor R/(R+h)"
        scale = ScaleInfo(cf, how, pf.scale_factor, ef, pf.radius_m, h, pf.convergence, pf.latitude, pf.longitude)
    else:
        assert sc.combined_factor is not None
        scale = ScaleInfo(sc.combined_factor, "given in the job file",
                          convergence=pf.convergence if pf else None,
                          latitude=pf.latitude if pf else None, longitude=pf.longitude if pf else None)
    if setup.backsight is not None:
        bs = setup.backsight
        bs_az = float(azimuth_between(occ.northing, occ.easting, bs.northing, bs.easting))
    else:
        assert setup.backsight_azimuth is not None
        bs_az = setup.backsight_azimuth
        if setup.azimuth_reference == "geodetic":
            assert pf is not None
            bs_az = float(normalize_azimuth(bs_az - pf.convergence))
    return scale, bs_az


def compute(job: Job) -> Computed:
    """Build the alignment, the stake points and, with a [setup], the setout."""
    alignment = build_alignment(job.alignment)
    unit = job.info.unit
    stakes = plan_stakes(alignment, job.staking, job.info.station_length, unit.station_decimals)
    c = Computed(job, alignment, stakes)
    grid = None
    if job.info.crs is not None:
        from .crs import load_crs, proj_version

        grid = load_crs(job.info.crs, unit)
        c.crs_label = grid.label
        c.proj_version = proj_version()
    if job.setup is not None:
        setup = job.setup
        scale, bs_az = _scale_and_backsight(job, grid)
        occ = setup.occupied
        elev = None if job.staking.elevation is None else np.full(len(stakes), job.staking.elevation)
        c.scale = scale
        c.setout = compute_setout(occ.northing, occ.easting, bs_az, stakes.northing, stakes.easting,
                                  scale.combined_factor, occ.elevation, setup.instrument_height, elev,
                                  setup.target_height)
        c.factors = {k: v for k, v in {
            "combined_factor": scale.combined_factor, "how": scale.how, "scale_factor": scale.scale_factor,
            "elevation_factor": scale.elevation_factor, "radius_m": scale.radius_m, "height": scale.height,
            "convergence_deg": scale.convergence, "backsight_grid_azimuth_deg": bs_az,
        }.items() if v is not None}
    return c


def parse_only(text: str | None) -> list[str] | None:
    """Parse ``--only a,b``; ``None`` when not given."""
    if text is None:
        return None
    names = [n.strip() for n in text.split(",") if n.strip()]
    if not names:
        raise JobFileError(f"--only {text!r}: name at least one of {', '.join(OUTPUT_FILES)}")
    for n in names:
        if n not in OUTPUT_FILES:
            raise JobFileError(f"--only {n!r}: unknown output; use names from {', '.join(OUTPUT_FILES)}")
    return names


def _has_matplotlib() -> bool:
    import importlib.util

    return importlib.util.find_spec("matplotlib") is not None


def _render(name: str, c: Computed) -> bytes:
    from .writers import sheets, tables

    unit = c.job.info.unit
    text: str | bytes
    if name == "points":
        text = tables.points_csv(c.stakes, unit)
    elif name == "stations":
        text = tables.stations_csv(c.stakes)
    elif name == "curves":
        text = tables.curves_csv(c.alignment, unit)
    elif name == "setout":
        assert c.setout is not None
        text = tables.setout_csv(c.stakes, c.setout)
    elif name == "sheet":
        assert c.setout is not None and c.scale is not None
        text = sheets.setout_sheet(c.job, c.alignment, c.stakes, c.setout, c.scale, c.crs_label)
    elif name == "deflections":
        text = sheets.deflection_sheet(c.job, c.alignment, c.stakes.stations, c.crs_label)
    elif name == "dxf":
        return c.plan_dxf()
    elif name == "preview":
        from .writers.dxf import plan_png

        return plan_png(c.plan_dxf())
    else:  # pragma: no cover - names are checked by parse_only
        raise OutputError(f"--only {name}: unknown output")
    return text if isinstance(text, bytes) else text.encode("utf-8")


def run_build(job_path: str | Path, out: str | Path, only: str | None = None, force: bool = False) -> list[str]:
    """``stakeout build``: compute a job and write its outputs atomically.

    Returns
    -------
    list of str
        Notes for the user (what was written, what was skipped and why).
    """
    from .writers.folder import OutputFolder
    from .writers.manifest import manifest_json

    job = load_job(job_path)
    chosen = parse_only(only)
    notes: list[str] = []
    if chosen is None:
        names = [n for n in OUTPUT_FILES if job.setup is not None or n not in _SETOUT_NAMES]
        if not _has_matplotlib():
            names.remove("preview")
            notes.append("matplotlib is not installed: plan.png skipped (pip install 'stakeout[preview]')")
        if job.setup is None:
            notes.append("no [setup] in the job: setout.csv and setout.txt skipped")
    else:
        if job.setup is None:
            for n in chosen:
                if n in _SETOUT_NAMES:
                    raise JobFileError(f"--only {n}: the job has no [setup], so there is no setout to write")
        names = [n for n in OUTPUT_FILES if n in chosen]
    folder = OutputFolder(out, force, protect=(job_path,))
    c = compute(job)
    if chosen is None and "preview" in names and len(c.stakes) > PREVIEW_MAX_POINTS:
        names.remove("preview")
        notes.append(f"{len(c.stakes)} points: plan.png skipped (over {PREVIEW_MAX_POINTS:,} points it is not "
                     "legible; ask for it with --only preview)")
    written: dict[str, bytes] = {}
    files = [n for n in names if n != "manifest"]
    progress = Progress(len(files) + 1, len(c.stakes))
    progress.step("computed")
    with folder:
        for name in files:  # per-point CSVs render their chunks on every core
            data = _render(name, c)
            folder.write_bytes(OUTPUT_FILES[name], data)
            written[OUTPUT_FILES[name]] = data
            progress.step(OUTPUT_FILES[name])
        if "manifest" in names:
            folder.write_bytes("manifest.json", manifest_json(
                str(job_path), job.sha256, job.info.name, job.info.unit.key, job.info.crs,
                c.factors, written, c.proj_version))
        folder.commit()
    notes.insert(0, f"wrote {len(names)} file(s) for {len(c.stakes)} points to {out}")
    return notes


def run_curve_report(job_path: str | Path) -> str:
    """``stakeout curve``: the readable curve report of a job's alignment."""
    from .writers.report import curve_report

    job = load_job(job_path)
    alignment = build_alignment(job.alignment)
    return curve_report(alignment, job.info.name, job.info.unit, job.info.station_length, job.info.crs,
                        Path(job.path).name, job.sha256)


def run_check(job_path: str | Path, staked: str | Path, out: str | Path, force: bool = False,
              columns: str | None = None, delimiter: str = "auto") -> tuple[bool, list[str]]:
    """``stakeout check``: staked shots against design, written atomically.

    Returns
    -------
    (all_ok, notes)
        ``all_ok`` is False when any shot is out of tolerance, duplicated
        or unmatched (the CLI exits 1).
    """
    from .check import check_shots
    from .shots import parse_columns, read_shots
    from .writers.checkreport import check_csv, check_txt
    from .writers.folder import OutputFolder

    job = load_job(job_path)
    spec = job.check
    if spec is None or spec.horizontal_tolerance is None:
        raise JobFileError("check.horizontal_tolerance: missing; stakeout check needs [check] "
                           "horizontal_tolerance in job units (it never guesses a tolerance)")
    cols = parse_columns(columns)
    shots = read_shots(staked, cols, delimiter, columns_given=columns is not None)
    folder = OutputFolder(out, force, protect=(job_path, staked))
    c = compute(job)
    alignment, design = c.alignment, c.stakes
    elev = None if job.staking.elevation is None else np.full(len(design), job.staking.elevation)
    progress = Progress(3, max(len(shots), len(design)))
    progress.step("design computed")
    result = check_shots(alignment, design, elev, shots, spec.horizontal_tolerance, spec.vertical_tolerance,
                         spec.search_radius)
    progress.step("shots checked")

    with folder:
        folder.write_bytes("check.csv", check_csv(shots, design, result).encode("utf-8"))
        folder.write_bytes("check.txt", check_txt(job, str(staked), shots, design, result).encode("utf-8"))
        folder.commit()
    progress.step("check.csv, check.txt")
    counts = result.counts()
    notes = [f"checked {len(shots)} shots: " + ", ".join(f"{k} {v}" for k, v in counts.items()) + f"; wrote {out}"]
    return result.all_ok, notes
