"""The only reader of job files: TOML (format 1) -> a validated, typed :class:`~stakeout.job.Job`.

Every key of the job-file contract is read here, one module per section
(:mod:`.alignment`, :mod:`.staking`, :mod:`.control`, :mod:`.setup`) over the strict table
reader of :mod:`.reader`.  Unknown keys are errors (a typo must never be
silently ignored); every error names the key with its table
(``alignment.pi[2].radius``; array entries count from 0 in file order), the
value, and what is allowed.
"""

from __future__ import annotations

import hashlib
import tomllib
from pathlib import Path

from ..errors import JobFileError
from ..alignment.specs import AlignmentSpec
from ..job import DesignFile, Job, JobInfo
from ..limits import MAX_JOB_FILE_BYTES, decode_job_text, read_regular_file
from ..textsafety import check_free_text
from ..stations import check_station_length
from ..units import get_unit
from .alignment import read_alignment, read_equations
from .design_file import read_alignment_file, read_profile_file
from .profile import read_profile
from .control import read_control
from .reader import SAFE_TEXT, Table, check_safe_text
from .setup import read_check, read_instrument, read_scale, read_setup
from .sections import check_template_lines, read_superelevation
from .staking import read_staking

__all__ = ["load_job", "parse_job", "SAFE_TEXT", "check_safe_text"]


def load_job(path: str | Path) -> Job:
    """Read and validate a job file.

    Raises
    ------
    JobFileError
        If the file is missing, unreadable, not TOML, or not a valid job.
    """
    p = Path(path)
    data = read_regular_file(p, "job file", MAX_JOB_FILE_BYTES)
    return parse_job(data, str(p))


def parse_job(data: bytes, path: str = "<job>") -> Job:
    """Validate job-file bytes (TOML, UTF-8) into a :class:`Job`."""
    text = decode_job_text(data, path)
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise JobFileError(f"{path}: not valid TOML: {exc}") from None
    top = Table(doc, "", ("format", "job", "alignment", "staking", "setup", "scale", "check", "profile", "control",
                          "instrument", "superelevation"))
    fmt = top.raw("format", required=True)
    if type(fmt) is not int or fmt != 1:  # 1.0 and true are not the format number
        raise JobFileError(f"format = {fmt!r}: unsupported job-file format; this version reads format = 1")
    info = _job_info(top)
    base = Path(path).parent
    design_files: list[DesignFile] = []
    raw_alignment = top.raw("alignment", required=True)
    from_file = None
    if isinstance(raw_alignment, dict) and "landxml" in raw_alignment:
        at = top.table("alignment", ("landxml", "name"))
        assert at is not None
        from_file = read_alignment_file(at, info, base)
        alignment: AlignmentSpec = from_file.spec
        design_files.append(from_file.record)
    else:
        alignment = read_alignment(top, info)
    staking = read_staking(top, info)
    control, control_files = read_control(top, info, base)
    setup = read_setup(top, control, info.station_length)
    instrument = read_instrument(top)
    if instrument is not None:
        if setup is None:
            raise JobFileError("instrument: needs [setup]; the precision predicted is that of stakes set out from "
                               "a setup")
        for st in setup.explicit():
            if st.backsight is None:
                raise JobFileError(f"{st.where}.backsight_azimuth = {st.backsight_azimuth!r}: [instrument] needs a "
                                   "backsight point; its distance enters the orientation error (give `backsight`)")
    scale = read_scale(top)
    if scale.auto and info.crs is None:
        raise JobFileError('scale.combined_factor = "auto": needs job.crs (the grid scale factor comes from the CRS)')
    if scale.auto and setup is None:
        raise JobFileError('scale.combined_factor = "auto": needs [setup] (the factor is taken at the occupied point)')
    if setup is not None and setup.azimuth_reference == "geodetic" and info.crs is None:
        raise JobFileError(
            "setup.azimuth_reference = 'geodetic': needs job.crs (the convergence comes from the CRS)"
        )
    profile = read_profile(top, info)
    pt = top.table("profile", ("name", "pvi", "landxml"))
    if pt is not None and pt.has("landxml"):
        if pt.has("pvi"):
            raise JobFileError("profile.pvi: give the PVIs inline or `landxml = ...`, not both")
        wanted = from_file.record.chosen if from_file is not None else alignment.name
        profile, record = read_profile_file(pt, wanted, base)
        design_files.append(record)
    if profile is not None and staking.elevation is not None:
        raise JobFileError(f"staking.elevation = {staking.elevation!r}: cannot be given together with [profile] "
                           "(the profile gives the elevations)")
    se_rows, se_file = read_superelevation(top, info, profile is not None or staking.elevation is not None)
    check_template_lines(list(staking.offsets), bool(se_rows) or se_file is not None)
    return Job(
        path=path,
        sha256=hashlib.sha256(data).hexdigest(),
        info=info,
        alignment=alignment,
        staking=staking,
        setup=setup,
        scale=scale,
        check=read_check(top),
        profile=profile,
        equations=from_file.equations if from_file is not None else read_equations(top, info),
        design_files=tuple(design_files) + control_files,
        control=control,
        instrument=instrument,
        superelevation=se_rows,
        superelevation_file=se_file,
    )


def _job_info(top: Table) -> JobInfo:
    """``[job]``: name, units, CRS, station length."""
    t = top.table("job", ("name", "units", "crs", "station_length"), required=True)
    assert t is not None
    name = check_free_text(t.text("name") or "", "job.name")
    unit = get_unit(t.raw("units", required=True))
    crs = t.text("crs")
    if crs is not None and not crs.strip():
        raise JobFileError(f"job.crs = {crs!r}: empty; leave the key out for a local grid")
    sl = t.raw("station_length")
    station_length = int(unit.station_length) if sl is None else check_station_length(sl)
    return JobInfo(name, unit, crs, station_length)
