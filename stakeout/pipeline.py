"""What the commands do, end to end: job file -> alignment -> stakes ->
setout / check -> writers -> one atomic output folder.

The CLI only parses options and calls these functions.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .alignment import Alignment, build_alignment
from .errors import JobFileError, OutputError
from .jobfile import Job, load_job
from .staking import StakePoints, plan_stakes

__all__ = ["OUTPUT_FILES", "Computed", "compute", "parse_only", "run_build", "run_curve_report"]

#: ``--only`` names and the files they write, in writing order.
OUTPUT_FILES: dict[str, str] = {
    "points": "points.csv",
    "stations": "stations.csv",
    "curves": "curves.csv",
    "setout": "setout.csv",
    "sheet": "setout.txt",
    "dxf": "plan.dxf",
    "manifest": "manifest.json",
}
_SETOUT_NAMES = ("setout", "sheet")


@dataclass
class Computed:
    """Everything computed for a job before any file is written."""

    job: Job
    alignment: Alignment
    stakes: StakePoints
    factors: dict[str, Any] = field(default_factory=dict)
    proj_version: str | None = None


def compute(job: Job) -> Computed:
    """Build the alignment and the stake points of a job."""
    alignment = build_alignment(job.alignment)
    unit = job.info.unit
    stakes = plan_stakes(alignment, job.staking, job.info.station_length, unit.station_decimals)
    return Computed(job, alignment, stakes, {"combined_factor": job.scale.combined_factor})


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


def _render(name: str, c: Computed) -> bytes:
    from .writers import tables

    unit = c.job.info.unit
    if name == "points":
        return tables.points_csv(c.stakes, unit).encode("utf-8")
    if name == "stations":
        return tables.stations_csv(c.stakes).encode("utf-8")
    if name == "curves":
        return tables.curves_csv(c.alignment, unit).encode("utf-8")
    raise OutputError(f"--only {name}: this output is not available in this version")


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
    available = [n for n in OUTPUT_FILES if n in ("points", "stations", "curves", "manifest")]
    if chosen is None:
        names = available
        if job.setup is None:
            notes.append("no [setup] in the job: setout.csv and setout.txt skipped")
    else:
        if job.setup is None:
            for n in chosen:
                if n in _SETOUT_NAMES:
                    raise JobFileError(f"--only {n}: the job has no [setup], so there is no setout to write")
        names = [n for n in OUTPUT_FILES if n in chosen]
    folder = OutputFolder(out, force)
    c = compute(job)
    written: dict[str, bytes] = {}
    with folder:
        for name in names:
            if name == "manifest":
                continue
            data = _render(name, c)
            folder.write_bytes(OUTPUT_FILES[name], data)
            written[OUTPUT_FILES[name]] = data
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
    return curve_report(alignment, job.info.name, job.info.unit, job.info.station_length, job.info.crs)
