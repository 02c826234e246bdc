"""What the commands do, end to end: job file -> alignment -> stakes ->
setout / check -> writers -> one atomic output folder.

The CLI only parses options and calls these functions.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np

from .design import Design, build_design, precision_rules_setups
from .errors import JobFileError, StakedFileError
from .job import Job
from .jobfile import load_job
from .outputs import OUTPUTS, Rendered, parse_only
from .progress import Progress
from .textsafety import check_file_name

__all__ = ["run_build", "run_curve_report", "run_check", "run_inspect", "compute", "setup_notes"]

#: The console lists at most this many setups (the sheet lists them all).
NOTE_SETUPS = 20


def compute(job_path: str | Path) -> Design:
    """Read a job file and build its design."""
    return build_design(load_job(job_path))


def slope_stake_notes(d: Design) -> list[str]:
    """What the console says of the slope stakes: how many station sides have no catch point, and why."""
    if d.earthwork is None or d.earthwork.slopes is None:
        return []
    missing, total, why = d.presentation.catch_gaps
    if not missing:
        return [f"slope stakes: every one of {total} station side(s) has a catch point"]
    return [f"slope stakes: {missing} of {total} station side(s) without a catch point ({why}); "
            "see slopestakes.csv"]


def setup_notes(d: Design) -> list[str]:
    """What the console says of the setups: a summary of each (numbered setups
    only), stakes at the instrument, and the predicted precision.
    """
    sd = d.setup
    if sd is None:
        return []
    out = []
    occs = sd.occupations
    if sd.listed:
        setup = sd.setup
        if setup.auto:
            how = (f"chosen among {len(d.job.control)} control points (max_distance {setup.max_distance:g}, "
                   f"max_backsight {setup.max_backsight:g}"
                   + (", r95 within the tolerance where a setup can keep it)" if precision_rules_setups(d.job) else ")"))
        else:
            how = "as listed in the job file"
        out.append(f"setups: {len(occs)}, {how}")
        for o in occs[:NOTE_SETUPS]:
            bs = (f"backsight {o.backsight.id} ({o.backsight_distance:.3f} away)" if o.backsight is not None
                  else "backsight by azimuth")
            out.append(f"  setup {o.number}: occupy {o.occupied.id}, {bs}, {o.stake_count} stakes, "
                       f"farthest sight {o.farthest_sight:.3f}")
        if len(occs) > NOTE_SETUPS:
            out.append(f"  ... and {len(occs) - NOTE_SETUPS} more setups: see setout.txt")
    at = sd.setout.at_instrument
    if at.any():
        first = int(at.argmax())
        out.append(f"{int(at.sum())} stake(s) at the instrument, no angle (first: point {d.stakes.point[first]}, "
                   f"setup {occs[int(sd.setup_index[first])].number})")
    if sd.precision is not None:
        worst = float(sd.precision.r95.max()) if len(d.stakes) else 0.0
        if sd.flagged is not None and sd.tolerance is not None:
            out.append(f"precision: r95 up to {worst:.4f}; {int(sd.flagged.sum())} of {sd.flagged.size} stakes "
                       f"exceed [check] horizontal_tolerance {sd.tolerance:g} (marked on setout.txt)")
        else:
            out.append(f"precision: r95 up to {worst:.4f}; no [check] horizontal_tolerance, so no stake is flagged")
    return out


def stake_factors(d: Design) -> np.ndarray | float:
    """Grid / ground at each stake: its setup's combined factor; without a setup the
    job's ``[scale] combined_factor`` (1.0 when it gives none).
    """
    if d.setup is not None:
        return np.array([o.scale.combined_factor for o in d.setup.occupations])[d.setup.setup_index]
    cf = d.job.scale.combined_factor
    return 1.0 if cf is None else float(cf)


#: A sight longer than this many times the job's extent (the diagonal of its stakes' box), and than
#: :data:`ABSURD_SIGHT_M`, is refused: a coordinate with a lost decimal point, not a setup.
ABSURD_SIGHT_EXTENTS = 10.0
ABSURD_SIGHT_M = 10_000.0


def check_design(d: Design) -> None:
    """What only the built design shows: an id used both by a stake and by a
    control or setup point, and a setup whose sights are absurd for the job's extent.

    Raises
    ------
    JobFileError
        Naming both uses of the id, or the setup, its point and the sight.
    """
    from .check import stake_index_of_ids

    job, sp = d.job, d.stakes
    points = list(job.control)
    if job.setup is not None:
        for st in job.setup.explicit():
            points += [(cp.__class__(cp.id, cp.northing, cp.easting, cp.elevation, cp.where or f"{st.where}.{role}"))
                       for role, cp in (("occupied", st.occupied), ("backsight", st.backsight)) if cp is not None]
    if points and len(sp):
        hit = stake_index_of_ids([cp.id for cp in points], sp)
        for k in np.flatnonzero(hit >= 0)[:1].tolist():
            cp, i = points[k], int(hit[k])
            what = " ".join(w for w in (sp.feature[i], sp.code[i]) if w) if sp.layout is not None else ""
            raise JobFileError(
                f"{cp.where or cp.id}: id {cp.id!r} is also a stake's (point {sp.point_id(i)}"
                f"{' ' + what if what else ''} at {d.stationing.label(float(sp.station[i]))}, offset "
                f"{float(sp.offset[i]):.3f}); one id names one point in the point file and on the sheets: give the "
                "control point another id or set staking.point_prefix")
    if d.setup is None or not len(sp):
        return
    extent = float(np.hypot(np.ptp(sp.northing), np.ptp(sp.easting)))
    limit = max(ABSURD_SIGHT_EXTENTS * extent, ABSURD_SIGHT_M / d.unit.metres)
    for o in d.setup.occupations:
        for what, dist in (("farthest sight", o.farthest_sight), ("backsight", o.backsight_distance or 0.0)):
            if dist > limit:
                raise JobFileError(
                    f"{o.where}: setup {o.number} on {o.occupied.id} (N {o.occupied.northing!r} E "
                    f"{o.occupied.easting!r}) has a {what} of {dist:,.3f}, absurd for a job whose stakes span "
                    f"{extent:,.3f} (more than {limit:,.0f}); check the coordinates (a decimal point lost?)")


def _has_profile(job: Job) -> bool:
    """Whether the job (any of its alignments) has a profile."""
    return any(p.profile is not None for p in (job.parts or (job,)))


def _has_extra(extra: str | None) -> bool:
    """Whether the optional install an output needs is there."""
    if extra is None:
        return True
    import importlib.util

    return importlib.util.find_spec("matplotlib") is not None


def run_build(job_path: str | Path, out: str | Path, only: str | None = None, force: bool = False,
              wide: bool = False) -> list[str]:
    """``stakeout build``: compute a job and write its outputs atomically.

    ``wide``: the text sheets one line per stake, notes wrapped at 132 columns (default: 80 columns).

    Returns
    -------
    list of str
        Notes for the user (what was written, what was skipped and why).
    """
    from .writers.folder import OutputFolder

    job = load_job(job_path)
    chosen = parse_only(only)
    notes: list[str] = []
    if chosen is None:
        outputs = [o for o in OUTPUTS if o.default and (job.setup is not None or not o.needs_setup)
                   and (_has_profile(job) or not o.needs_profile)]
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
        if not _has_profile(job):
            for o in OUTPUTS:
                if o.name in chosen and o.needs_profile:
                    raise JobFileError(f"--only {o.name}: the job has no [profile], so there is no {o.filename}")
        outputs = [o for o in OUTPUTS if o.name in chosen]
        for o in outputs:
            if not _has_extra(o.extra):
                raise JobFileError(f"--only {o.name}: matplotlib is not installed, so there is no {o.filename} "
                                   f"(pip install 'stakeout[{o.extra}]')")
    manifest = any(o.name == "manifest" for o in outputs)
    folder = OutputFolder(out, force, protect=job.inputs(), hashes=manifest)  # hashes only for a manifest
    d = build_design(job)
    for part in d.parts or (d,):
        check_design(part)
    for o in [o for o in outputs if not o.serves(d)]:
        if chosen is not None:
            raise JobFileError(f"--only {o.name}: {o.absent}, so there is no {o.filename}")
        outputs.remove(o)
    files = [o for o in outputs if o.name != "manifest"]
    done = Rendered(wide, frozenset(o.filename for o in files))
    count = sum(len(p.stakes) for p in d.parts or (d,))
    progress = Progress(len(files) + 1, count)
    progress.step("computed")
    with folder:
        from .beside import start

        # above a size, a second process renders about half the outputs meanwhile
        beside, here = start(d, files, folder, done, count)
        try:
            for o in here:  # written piece by piece as rendered
                folder.write_chunks(o.filename, o.chunks(d, done))
                progress.step(o.filename)
            if beside is not None:
                for name, (digest, size) in beside.finish().items():
                    folder.adopt(name, digest, size)
                    progress.step(name)
        finally:
            if beside is not None:
                beside.abandon()
        if manifest:
            from .writers.manifest import manifest_json  # importlib.metadata: only when a manifest is asked for

            folder.write_bytes("manifest.json", manifest_json(d, str(job_path), folder.written()))
        folder.commit()
    several = f" on {len(d.parts)} alignments" if d.parts else ""
    notes.insert(0, f"wrote {len(outputs)} file(s) for {count} points{several} to {out}")
    notes[1:1] = folder.litter_notes
    if d.parts and d.setup is not None:  # the setups serve every alignment: one summary, stakes counted over all
        merged = replace(d.setup, occupations=d.occupations)
        notes.extend(n for n in setup_notes(replace(d, setup=merged)) if n.startswith(("setups:", "  ")))
    for part in d.parts or (d,):
        named = f"alignment {part.alignment.name}: " if d.parts else ""
        own = [n for n in setup_notes(part) if not (d.parts and n.startswith(("setups:", "  ")))]
        notes.extend(named + n for n in own + slope_stake_notes(part))
        notes.extend(f"warning: {named}{w}" for w in part.warnings)
    if d.parts:  # the job's own (a setup serving no stake of any alignment)
        notes.extend(f"warning: {w}" for w in d.warnings)
    for f in job.design_files:  # once per file: the job file's reader puts it on the file's first record
        if f.not_used:
            notes.append(f"not used from {Path(f.path).name}: {', '.join(f.not_used)}")
    return notes


def run_curve_report(job_path: str | Path) -> str:
    """``stakeout curve``: the readable curve report of a job's alignment (of each, with several)."""
    from .alignment import build_alignment
    from .design import build_sections, build_stationing
    from .staking import plan_stakes
    from .writers.report import curve_report

    job = load_job(job_path)
    reports = []
    for part in job.parts or (job,):  # several alignments: each one's report in job order
        alignment = build_alignment(part.alignment)
        stationing = build_stationing(part, alignment)
        sections = build_sections(part, alignment, stationing)
        stakes = plan_stakes(alignment, part.staking, stationing)
        reports.append(curve_report(Design(part, alignment, stationing, stakes, sections=sections)))
    return "\n".join(reports)


def run_check(job_path: str | Path, staked: str | Path, out: str | Path, force: bool = False,
              columns: str | None = None, delimiter: str = "auto", wide: bool = False) -> tuple[bool, list[str]]:
    """``stakeout check``: staked shots against design, written atomically.

    Writes ``check.csv``, ``check.txt`` and ``restake.csv`` (the design
    points still to set).  A file whose northings and eastings look swapped
    is refused before anything is written.

    Returns
    -------
    (all_ok, notes)
        ``all_ok`` is False when any shot needs attention: out of
        tolerance, duplicated, unmatched, or a control shot beyond
        tolerance (the CLI exits 1).
    """
    from .check import check_column_order, check_shots, job_control_points
    from .shots import parse_columns, read_shots
    from .writers.checkreport import check_csv, check_txt
    from .writers.folder import OutputFolder
    from .writers.html import check_html
    from .writers.picture import residual_svg_element
    from .writers.tables import restake_csv

    job = load_job(job_path)
    spec = job.check
    if spec is None or spec.horizontal_tolerance is None:
        raise JobFileError("check.horizontal_tolerance: missing; stakeout check needs [check] "
                           "horizontal_tolerance in job units (it never guesses a tolerance)")
    cols = parse_columns(columns)
    check_file_name(str(staked), "staked file", StakedFileError)
    shots = read_shots(staked, cols, delimiter, columns_given=columns is not None)
    folder = OutputFolder(out, force, protect=job.inputs() + (staked,), hashes=False)  # no manifest
    d = build_design(job)
    parts = d.parts or (d,)
    for part in parts:
        check_design(part)
    control = job_control_points(job)
    radius = spec.search_radius if spec.search_radius is not None else 10.0 * spec.horizontal_tolerance
    check_column_order(np.concatenate([p.stakes.northing for p in parts]),
                       np.concatenate([p.stakes.easting for p in parts]), control, shots, radius, str(staked))
    progress = Progress(3, max(len(shots), sum(len(p.stakes) for p in parts)))
    progress.step("design computed")
    # with several alignments every shot is matched against the stakes of all of them
    result = check_shots(d.alignment, d.stakes, d.design_elevation, shots, spec.horizontal_tolerance,
                         spec.vertical_tolerance, radius, control, stake_factors(d), spec.ground_codes,
                         more=[(p.alignment, p.stakes, p.design_elevation, stake_factors(p)) for p in parts[1:]])
    progress.step("shots checked")

    with folder:
        folder.write_bytes("check.csv", check_csv(d, shots, result))
        folder.write_bytes("check.txt", check_txt(d, str(staked), shots, result, wide))
        residuals = residual_svg_element(d, shots, result, Path(staked).name)
        folder.write_bytes("check.html", check_html(d, str(staked), shots, result, residuals))
        folder.write_bytes("restake.csv", restake_csv(d, result))
        folder.commit()
    progress.step("check.csv, check.txt, check.html, restake.csv")
    counts = result.counts()
    notes = [f"checked {len(shots)} shots: " + ", ".join(f"{k} {v}" for k, v in counts.items()) + f"; wrote {out}",
             f"{result.restake.size} design point(s) to set again in restake.csv "
             f"({result.restake.size - result.not_staked.size} out of tolerance, "
             f"{result.not_staked.size} not staked)"] + folder.litter_notes
    return result.all_ok, notes


def run_inspect(path: str | Path) -> str:
    """``stakeout inspect``: what a LandXML design file holds, to choose ``name`` keys."""
    from .landxml import describe, read_landxml
    from .landxml.surface import describe_surfaces
    from .limits import read_regular_file
    from .landxml.records import MAX_FILE_BYTES

    design = read_landxml(path)
    text = describe(design)
    surfaces = describe_surfaces(read_regular_file(str(path), "LandXML file", MAX_FILE_BYTES),
                                 design.units.unit_key, str(path))
    return "\n".join([text.rstrip("\n"), *surfaces]) + ("\n" if text.endswith("\n") else "")
