"""What the commands do, end to end: job file -> alignment -> stakes ->
setout / check -> writers -> one atomic output folder.

The CLI only parses options and calls these functions.
"""

from __future__ import annotations

from pathlib import Path

from .design import Design, build_design
from .errors import JobFileError
from .jobfile import load_job
from .outputs import OUTPUTS, Rendered, parse_only
from .progress import Progress

__all__ = ["run_build", "run_curve_report", "run_check", "run_inspect", "compute"]


def compute(job_path: str | Path) -> Design:
    """Read a job file and build its design."""
    return build_design(load_job(job_path))


def _has_extra(extra: str | None) -> bool:
    """Whether the optional install an output needs is there."""
    if extra is None:
        return True
    import importlib.util

    return importlib.util.find_spec("matplotlib") is not None


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
        outputs = [o for o in OUTPUTS if o.default and (job.setup is not None or not o.needs_setup)
                   and (job.profile is not None or not o.needs_profile)]
        for o in [o for o in outputs if not _has_extra(o.extra)]:
            outputs.remove(o)
            notes.append(f"matplotlib is not installed: {o.filename} skipped (pip install 'stakeout[{o.extra}]')")
        if job.setup is None:
            notes.append("no [setup] in the job: setout.csv and setout.txt skipped")
    else:
        if job.setup is None:
            for o in OUTPUTS:
                if o.name in chosen and o.needs_setup:
                    raise JobFileError(f"--only {o.name}: the job has no [setup], so there is no setout to write")
        if job.profile is None:
            for o in OUTPUTS:
                if o.name in chosen and o.needs_profile:
                    raise JobFileError(f"--only {o.name}: the job has no [profile], so there is no {o.filename}")
        outputs = [o for o in OUTPUTS if o.name in chosen]
        for o in outputs:
            if not _has_extra(o.extra):
                raise JobFileError(f"--only {o.name}: matplotlib is not installed, so there is no {o.filename} "
                                   f"(pip install 'stakeout[{o.extra}]')")
    folder = OutputFolder(out, force, protect=(job_path,))
    d = build_design(job)
    for o in [o for o in outputs if o.applies is not None and not o.applies(d)]:
        if chosen is not None:
            raise JobFileError(f"--only {o.name}: {o.absent}, so there is no {o.filename}")
        outputs.remove(o)
    written: dict[str, bytes] = {}
    done = Rendered()
    files = [o for o in outputs if o.name != "manifest"]
    progress = Progress(len(files) + 1, len(d.stakes))
    progress.step("computed")
    with folder:
        for o in files:  # per-point CSVs render their chunks on every core
            data = o.render(d, done)
            folder.write_bytes(o.filename, data)
            written[o.filename] = data
            progress.step(o.filename)
        if any(o.name == "manifest" for o in outputs):
            folder.write_bytes("manifest.json", manifest_json(d, str(job_path), written))
        folder.commit()
    notes.insert(0, f"wrote {len(outputs)} file(s) for {len(d.stakes)} points to {out}")
    notes.extend(f"warning: {w}" for w in d.warnings)
    for f in job.design_files:
        for item in f.not_used:
            notes.append(f"{f.role} file {Path(f.path).name}: not used by a staking job: {item}")
    return notes


def run_curve_report(job_path: str | Path) -> str:
    """``stakeout curve``: the readable curve report of a job's alignment."""
    from .alignment import build_alignment
    from .design import build_stationing
    from .staking import plan_stakes
    from .writers.report import curve_report

    job = load_job(job_path)
    alignment = build_alignment(job.alignment)
    stationing = build_stationing(job, alignment)
    stakes = plan_stakes(alignment, job.staking, stationing)
    return curve_report(Design(job, alignment, stationing, stakes))


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
    from .writers.html import check_html

    job = load_job(job_path)
    spec = job.check
    if spec is None or spec.horizontal_tolerance is None:
        raise JobFileError("check.horizontal_tolerance: missing; stakeout check needs [check] "
                           "horizontal_tolerance in job units (it never guesses a tolerance)")
    cols = parse_columns(columns)
    shots = read_shots(staked, cols, delimiter, columns_given=columns is not None)
    folder = OutputFolder(out, force, protect=(job_path, staked))
    d = build_design(job)
    progress = Progress(3, max(len(shots), len(d.stakes)))
    progress.step("design computed")
    result = check_shots(d.alignment, d.stakes, d.design_elevation, shots, spec.horizontal_tolerance,
                         spec.vertical_tolerance, spec.search_radius)
    progress.step("shots checked")

    with folder:
        folder.write_bytes("check.csv", check_csv(d, shots, result))
        folder.write_bytes("check.txt", check_txt(d, str(staked), shots, result))
        folder.write_bytes("check.html", check_html(d, str(staked), shots, result))
        folder.commit()
    progress.step("check.csv, check.txt, check.html")
    counts = result.counts()
    notes = [f"checked {len(shots)} shots: " + ", ".join(f"{k} {v}" for k, v in counts.items()) + f"; wrote {out}"]
    return result.all_ok, notes


def run_inspect(path: str | Path) -> str:
    """``stakeout inspect``: what a LandXML design file holds, to choose ``name`` keys."""
    from .landxml import describe, read_landxml

    return describe(read_landxml(path))
