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
import math
import re
import tomllib
from dataclasses import dataclass, replace
from pathlib import Path

from ..errors import JobFileError
from ..alignment.specs import AlignmentSpec, ArcSpec, FixedSpec
from ..ground import Ground
from ..job import (CheckSpec, ControlPoint, DesignFile, Job, JobInfo, Scale, Setup,
                   SuperelevationPeriod)
from ..precision import InstrumentSpec
from ..limits import MAX_COORDINATE, MAX_JOB_FILE_BYTES, decode_job_text, read_regular_file
from ..textsafety import check_file_name, check_free_text, show_value
from ..stations import check_station_length
from ..units import get_unit
from .alignment import read_alignment, read_equations
from .design_file import (DesignFiles, periods_of, read_alignment_file, read_profile_file, read_superelevation_file,
                          summarise_not_used)
from .profile import read_profile
from .control import read_control
from .ground import read_ground, read_slope_stakes
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
    check_file_name(str(path), "job file")
    data = read_regular_file(p, "job file", MAX_JOB_FILE_BYTES)
    return parse_job(data, str(p))


def parse_job(data: bytes, path: str = "<job>") -> Job:
    """Validate job-file bytes (TOML, UTF-8) into a :class:`Job`."""
    text = decode_job_text(data, path)
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise JobFileError(f"{path}: not valid TOML: {exc}") from None
    except RecursionError:  # arrays or inline tables nested past the reader's stack
        raise JobFileError(f"{path}: not valid TOML: nested too deeply (line {_deepest_line(text)}); a job file "
                           "nests arrays and tables a few levels at most") from None
    except ValueError as exc:  # an integer past Python's digit limit for text
        line = _longest_number_line(text)
        if line is None:
            raise JobFileError(f"{path}: not valid TOML: {show_value(str(exc))}") from None
        raise JobFileError(f"{path}: not valid TOML: number too long (line {line}); no value of a job file "
                           "needs more than a few dozen digits") from None
    several = isinstance(doc.get("alignment"), list)
    top = Table(doc, "", _SHARED + _PER_ALIGNMENT)
    fmt = top.raw("format", required=True)
    if type(fmt) is not int or fmt != 1:  # 1.0 and true are not the format number
        raise JobFileError(f"format = {fmt!r}: unsupported job-file format; this version reads format = 1")
    info = _job_info(top)
    base = Path(path).parent
    files = DesignFiles(info, base, _ground_file(top.raw("ground")))
    top.raw("alignment", required=True)
    if several:
        for section in _PER_ALIGNMENT[1:]:
            if top.has(section):
                raise JobFileError(f"{section}: in a job with several alignments ([[alignment]]) each alignment's "
                                   f"{section} goes in its own [alignment.{section}] (after its [[alignment]])")
    shared = _read_shared(top, info, files, base)
    head = Job(path=path, sha256=hashlib.sha256(data).hexdigest(), info=info, alignment=None,  # type: ignore[arg-type]
               staking=None, setup=shared.setup, scale=shared.scale,  # type: ignore[arg-type]
               check=shared.check, control=shared.control, instrument=shared.instrument, ground=shared.ground)
    if not several:
        return _read_alignment_sections(top, head, shared, files)
    entries = doc["alignment"]
    if not entries:
        raise JobFileError("alignment: an empty [[alignment]] list; give at least one alignment")
    parts: list[Job] = []
    for k, entry in enumerate(entries):
        if not isinstance(entry, dict):
            raise JobFileError(f"alignment[{k}] = {show_value(entry)}: expected a table ([[alignment]])")
        sub = {"alignment": {key: v for key, v in entry.items() if key not in _PER_ALIGNMENT[1:]}}
        sub.update({key: entry[key] for key in _PER_ALIGNMENT[1:] if key in entry})
        name = entry.get("name")
        try:
            parts.append(_read_alignment_sections(Table(sub, "", _PER_ALIGNMENT), head, shared, files))
        except JobFileError as exc:
            what = f" ({show_value(name)})" if isinstance(name, str) else ""
            raise JobFileError(f"alignment[{k}]{what}: {exc}") from None
    seen: dict[str, int] = {}
    for k, part in enumerate(parts):
        if part.alignment.name in seen:
            raise JobFileError(f"alignment[{k}].name = {part.alignment.name!r}: alignment[{seen[part.alignment.name]}] "
                               "has this name too; each alignment of a job needs its own name")
        seen[part.alignment.name] = k
    records: dict[tuple[str, str, str | None], DesignFile] = {}
    for part in parts:
        for r in part.design_files:
            records.setdefault((r.role, r.path, r.chosen), r)
    return replace(parts[0], parts=tuple(parts), design_files=tuple(records.values()))


#: Sections every alignment of a job shares.
_SHARED = ("format", "job", "setup", "scale", "check", "control", "instrument", "ground")
#: Sections that describe one alignment (repeated inside each ``[[alignment]]`` of a job with several).
_PER_ALIGNMENT = ("alignment", "staking", "profile", "superelevation", "slope_stakes")


@dataclass(frozen=True)
class _Shared:
    """The sections every alignment shares, read once, and the files they came from."""

    control: tuple[ControlPoint, ...]
    control_files: tuple[DesignFile, ...]
    setup: Setup | None
    instrument: InstrumentSpec | None
    scale: Scale
    check: CheckSpec | None
    ground: Ground | None
    ground_record: DesignFile | None


def _read_shared(top: Table, info: JobInfo, files: DesignFiles, base: Path) -> _Shared:
    """``[control]``, ``[setup]``, ``[instrument]``, ``[scale]``, ``[check]`` and ``[ground]``."""
    control, control_files = read_control(top, info, files)
    _check_control_coordinates(control)
    setup = read_setup(top, control, info.station_length)
    if setup is not None:
        _check_one_position_per_id(control, setup)
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
    check = read_check(top)
    ground_read = read_ground(top, base, info.unit.key, files)
    ground, ground_record = ground_read if ground_read is not None else (None, None)
    return _Shared(control, control_files, setup, instrument, scale, check, ground, ground_record)


def _read_alignment_sections(top: Table, head: Job, shared: _Shared, files: DesignFiles) -> Job:
    """One alignment's sections (``alignment``, ``staking``, ``profile``, ``superelevation``,
    ``slope_stakes``) on top of the shared ones: a whole single-alignment :class:`Job`.
    """
    info = head.info
    design_files: list[DesignFile] = []
    raw_alignment = top.raw("alignment", required=True)
    from_file = None
    if isinstance(raw_alignment, dict) and "landxml" in raw_alignment:
        at = top.table("alignment", ("landxml", "name"))
        assert at is not None
        from_file = read_alignment_file(at, info, files)
        alignment: AlignmentSpec = from_file.spec
        _check_length(from_file.spec)
        design_files.append(from_file.record)
    else:
        alignment = read_alignment(top, info)
    staking = read_staking(top, info, Path(head.path).parent)
    profile = read_profile(top, info)
    pt = top.table("profile", ("name", "pvi", "landxml"))
    if pt is not None and pt.has("landxml"):
        if pt.has("pvi"):
            raise JobFileError("profile.pvi: give the PVIs inline or `landxml = ...`, not both")
        wanted = from_file.record.chosen if from_file is not None else alignment.name
        profile, record = read_profile_file(pt, wanted, files)
        design_files.append(record)
    if profile is not None and staking.elevation is not None:
        raise JobFileError(f"staking.elevation = {staking.elevation!r}: cannot be given together with [profile] "
                           "(the profile gives the elevations)")
    se_name = from_file.record.chosen if from_file is not None else None
    se_rows, se_file, se_record = read_superelevation(
        top, info, profile is not None or staking.elevation is not None,
        lambda given: read_superelevation_file(given, info, se_name, files))
    if se_record is not None:
        design_files.append(se_record)
    unapplied: tuple[SuperelevationPeriod, ...] = ()
    if from_file is not None and from_file.source is not None and from_file.source.superelevations and (
            se_record is None or se_record.sha256 != from_file.record.sha256):
        unapplied = periods_of(from_file.source, "alignment.landxml")
    # the points list is an input like the design files: recorded with its hash, and protected from --force
    points_files = () if staking.points is None else (
        DesignFile("points", staking.points.path, staking.points.sha256),)
    all_files = _not_used_once(tuple(design_files) + shared.control_files + points_files, files, unapplied)
    check_template_lines(list(staking.offsets), bool(se_rows) or se_file is not None)
    if shared.ground_record is not None:
        all_files += (shared.ground_record,)
    slope_stakes = read_slope_stakes(top, [ol.code for ol in staking.offsets])
    if slope_stakes is not None:
        if shared.ground is None:
            raise JobFileError("slope_stakes: needs [ground] (the catch points lie on the existing ground)")
        if profile is None and staking.elevation is None:
            raise JobFileError("slope_stakes: needs design elevations at the hinges ([profile] or "
                               "staking.elevation)")
    return replace(
        head,
        alignment=alignment,
        staking=staking,
        profile=profile,
        equations=from_file.equations if from_file is not None else read_equations(top, info),
        design_files=all_files,
        superelevation=se_rows,
        superelevation_file=se_file,
        unapplied_superelevation=unapplied,
        slope_stakes=slope_stakes,
    )


def _ground_file(raw: object) -> tuple[str, str | None] | None:
    """``[ground] landxml`` and ``name`` as given, when they are text (read and checked by
    :func:`read_ground`; known before the design files are parsed, so that a design file that
    holds the ground gives its surface in the same pass).
    """
    if not isinstance(raw, dict):
        return None
    given, name = raw.get("landxml"), raw.get("name")
    if isinstance(given, str) and (name is None or isinstance(name, str)):
        return given, name
    return None


def _not_used_once(records: tuple[DesignFile, ...], files: DesignFiles,
                   unapplied: tuple[SuperelevationPeriod, ...]) -> tuple[DesignFile, ...]:
    """Each design file's unused content, counted per element name, on its first record only (a file
    serving alignment and profile is reported once).  A ``<CoordinateSystem>`` that could not be
    compared and ``<Superelevation>`` elements the job does not apply count as not used too.
    """
    out = []
    seen: set[str] = set()
    for i, r in enumerate(records):
        if r.sha256 in seen or files.parsed(r.sha256) is None:
            out.append(r)
            continue
        seen.add(r.sha256)
        design = files.parsed(r.sha256)
        assert design is not None
        kinds = list(design.unused_kinds)
        if files.crs_unused.get(r.sha256):
            kinds.append(("CoordinateSystem", 1))
        if unapplied and i == 0 and r.role == "alignment":
            kinds.append(("Superelevation", len(unapplied)))
        out.append(replace(r, not_used=summarise_not_used(kinds)))
    return tuple(out)


def _check_length(spec: FixedSpec) -> None:
    """Refuse a design-file alignment of length zero (every stake would be one point)."""
    total = 0.0
    for a in spec.elements:
        el = a.element
        if isinstance(el, ArcSpec) and el.length is None:
            total += el.radius * math.radians(el.delta or 0.0)
        else:
            total += float(el.length or 0.0)
    if not total > 0.0:
        raise JobFileError(f"alignment.landxml: alignment {spec.name!r} has length 0 (its elements start and end "
                           "at one point); there is nothing to stake along it")


def _check_control_coordinates(control: tuple[ControlPoint, ...]) -> None:
    """Control coordinates within the bounds of every coordinate (a lost decimal point gives 9e11)."""
    for cp in control:
        for what, v in (("northing", cp.northing), ("easting", cp.easting)):
            if not abs(v) <= MAX_COORDINATE:
                raise JobFileError(f"{cp.where or cp.id}: {what} {v!r} of control point {cp.id!r} is out of range; "
                                   f"coordinates must lie within -{MAX_COORDINATE:,.0f} to {MAX_COORDINATE:,.0f} "
                                   "job units (a decimal point lost?)")


def _check_one_position_per_id(control: tuple[ControlPoint, ...], setup: Setup) -> None:
    """One id names one point: an inline setup point may repeat a control point or another
    setup's point only at the same coordinates.
    """
    seen: dict[str, ControlPoint] = {cp.id: cp for cp in control}
    for st in setup.explicit():
        for role, cp in (("occupied", st.occupied), ("backsight", st.backsight)):
            if cp is None:
                continue
            where = cp.where or f"{st.where}.{role}"
            first = seen.setdefault(cp.id, ControlPoint(cp.id, cp.northing, cp.easting, cp.elevation, where))
            if (first.northing, first.easting) != (cp.northing, cp.easting) or (
                    first.elevation is not None and cp.elevation is not None and first.elevation != cp.elevation):
                raise JobFileError(
                    f"{where}: id {cp.id!r} at N {cp.northing!r} E {cp.easting!r} is also the point at N "
                    f"{first.northing!r} E {first.easting!r} ({first.where or first.id}); one id names one point, "
                    "give the second point an id of its own")


def _deepest_line(text: str) -> int:
    """Line (from 1) where brackets and braces nest deepest, strings and comments skipped roughly."""
    depth = best = 0
    line = best_line = 1
    quote = ""
    comment = False
    for ch in text:
        if ch == "\n":
            line += 1
            comment = False
            continue
        if comment:
            continue
        if quote:
            if ch == quote:
                quote = ""
        elif ch in "\"'":
            quote = ch
        elif ch == "#":
            comment = True
        elif ch in "[{":
            depth += 1
            if depth > best:
                best, best_line = depth, line
        elif ch in "]}":
            depth = max(depth - 1, 0)
    return best_line


def _longest_number_line(text: str) -> int | None:
    """Line (from 1) of the longest run of digits (None without a run of 50 or more)."""
    runs = [(len(m.group()), m.start()) for m in re.finditer(r"[0-9_]{50,}", text)]
    if not runs:
        return None
    return text.count("\n", 0, max(runs)[1]) + 1


def _job_info(top: Table) -> JobInfo:
    """``[job]``: name, units, CRS, station length."""
    t = top.table("job", ("name", "units", "crs", "station_length"), required=True)
    assert t is not None
    name = check_free_text(t.text("name") or "", "job.name")
    unit = get_unit(t.raw("units", required=True))
    crs = t.text("crs", lines=True)  # a WKT may run over several lines
    if crs is not None and not crs.strip():
        raise JobFileError(f"job.crs = {show_value(crs)}: empty; leave the key out for a local grid")
    sl = t.raw("station_length")
    station_length = int(unit.station_length) if sl is None else check_station_length(sl)
    return JobInfo(name, unit, crs, station_length)
