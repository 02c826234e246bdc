"""The only reader of job files: TOML (format 1) -> a validated, typed Job.

Every key of the contract in ``shared/design/job-file.md`` is read here.
Unknown keys are errors (a typo must never be silently ignored); every
error names the key with its table (``alignment.pi[2].radius``; array
entries count from 0 in file order), the value, and what is allowed.
"""

from __future__ import annotations

import hashlib
import math
import re
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .alignment.specs import (
    AlignmentSpec,
    ArcSpec,
    ChainSpec,
    LineSpec,
    PIListSpec,
    PISpec,
    SinglePISpec,
)
from .angles import parse_angle, parse_direction
from .errors import JobFileError
from .stations import check_station_length, parse_station
from .units import Unit, get_unit

__all__ = [
    "Job", "JobInfo", "OffsetLine", "Staking", "ControlPoint", "Setup", "Scale", "CheckSpec",
    "load_job", "parse_job", "SAFE_TEXT", "check_safe_text",
]

#: Point ids, codes and prefixes: letters, digits and ``_ . - / #``, not
#: starting with a character a spreadsheet or data collector would misread.
SAFE_TEXT = re.compile(r"^[A-Za-z0-9_#./][A-Za-z0-9_#./-]{0,19}$")
_SAFE_HELP = "1 to 20 of letters, digits, _ # . / - (not starting with -)"


def check_safe_text(value: object, where: str, allow_empty: bool = False) -> str:
    """Validate an id, code or prefix against :data:`SAFE_TEXT`."""
    if not isinstance(value, str):
        raise JobFileError(f"{where} = {value!r}: expected text ({_SAFE_HELP})")
    if allow_empty and value == "":
        return value
    if not SAFE_TEXT.match(value):
        raise JobFileError(f"{where} = {value!r}: use {_SAFE_HELP}")
    return value


# ---- the typed job ---------------------------------------------------------------------
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


@dataclass(frozen=True)
class Staking:
    """``[staking]``: what to stake and how points are numbered."""

    interval: float
    offsets: tuple[OffsetLine, ...]
    extra_stations: tuple[tuple[float, str], ...]  # (value, key for errors)
    first_point: int
    point_prefix: str
    elevation: float | None


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


# ---- a small strict reader ----------------------------------------------------------------
def _kind(v: object) -> str:
    if isinstance(v, bool):
        return "true/false"
    if isinstance(v, (int, float)):
        return "a number"
    if isinstance(v, str):
        return "text"
    if isinstance(v, dict):
        return "a table"
    if isinstance(v, list):
        return "an array"
    return type(v).__name__


class _Table:
    def __init__(self, data: dict[str, Any], path: str, allowed: tuple[str, ...]):
        self.data = data
        self.path = path
        unknown = [k for k in data if k not in allowed]
        if unknown:
            where = f"{path}.{unknown[0]}" if path else unknown[0]
            raise JobFileError(f"{where}: unknown key; allowed here: {', '.join(allowed)}")

    def key(self, k: str) -> str:
        return f"{self.path}.{k}" if self.path else k

    def has(self, k: str) -> bool:
        return k in self.data

    def raw(self, k: str, required: bool = False) -> Any:
        if k not in self.data:
            if required:
                raise JobFileError(f"{self.key(k)}: missing; this key is required")
            return None
        return self.data[k]

    def number(self, k: str, required: bool = False, positive: bool = False,
               nonnegative: bool = False) -> float | None:
        v = self.raw(k, required)
        if v is None:
            return None
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise JobFileError(f"{self.key(k)} = {v!r}: expected a number, got {_kind(v)}")
        v = float(v)
        if not math.isfinite(v):
            raise JobFileError(f"{self.key(k)} = {v!r}: must be a finite number")
        if positive and v <= 0:
            raise JobFileError(f"{self.key(k)} = {v!r}: must be greater than 0")
        if nonnegative and v < 0:
            raise JobFileError(f"{self.key(k)} = {v!r}: must be 0 or more")
        return v

    def text(self, k: str, required: bool = False, choices: tuple[str, ...] | None = None) -> str | None:
        v = self.raw(k, required)
        if v is None:
            return None
        if not isinstance(v, str):
            raise JobFileError(f"{self.key(k)} = {v!r}: expected text, got {_kind(v)}")
        if choices is not None and v not in choices:
            allowed = " | ".join(f'"{c}"' for c in choices)
            raise JobFileError(f"{self.key(k)} = {v!r}: use {allowed}")
        return v

    def table(self, k: str, allowed: tuple[str, ...], required: bool = False) -> "_Table | None":
        v = self.raw(k, required)
        if v is None:
            return None
        if not isinstance(v, dict):
            raise JobFileError(f"{self.key(k)} = {v!r}: expected a table, got {_kind(v)}")
        return _Table(v, self.key(k), allowed)

    def array(self, k: str, required: bool = False) -> list[Any] | None:
        v = self.raw(k, required)
        if v is None:
            return None
        if not isinstance(v, list):
            raise JobFileError(f"{self.key(k)} = {v!r}: expected an array, got {_kind(v)}")
        return v

    def tables(self, k: str, allowed: tuple[str, ...], required: bool = False) -> list["_Table"]:
        items = self.array(k, required) or []
        out = []
        for i, item in enumerate(items):
            where = f"{self.key(k)}[{i}]"
            if not isinstance(item, dict):
                raise JobFileError(f"{where} = {item!r}: expected a table, got {_kind(item)}")
            out.append(_Table(item, where, allowed))
        return out


# ---- entry points ----------------------------------------------------------------------------
def load_job(path: str | Path) -> Job:
    """Read and validate a job file.

    Raises
    ------
    JobFileError
        If the file is missing, unreadable, not TOML, or not a valid job.
    """
    p = Path(path)
    try:
        data = p.read_bytes()
    except FileNotFoundError:
        raise JobFileError(f"job file {str(p)!r}: not found") from None
    except IsADirectoryError:
        raise JobFileError(f"job file {str(p)!r}: is a folder, not a file") from None
    except OSError as exc:
        raise JobFileError(f"job file {str(p)!r}: cannot be read ({exc.strerror})") from None
    return parse_job(data, str(p))


def parse_job(data: bytes, path: str = "<job>") -> Job:
    """Validate job-file bytes (TOML, UTF-8) into a :class:`Job`."""
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise JobFileError(f"{path}: not UTF-8 text (byte {exc.start})") from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise JobFileError(f"{path}: not valid TOML: {exc}") from None
    top = _Table(doc, "", ("format", "job", "alignment", "staking", "setup", "scale", "check"))
    fmt = top.raw("format", required=True)
    if fmt != 1 or isinstance(fmt, bool):
        raise JobFileError(f"format = {fmt!r}: unsupported job-file format; this version reads format = 1")
    info = _job_info(top)
    alignment = _alignment(top, info)
    staking = _staking(top, info)
    setup = _setup(top)
    scale = _scale(top)
    if scale.auto and info.crs is None:
        raise JobFileError('scale.combined_factor = "auto": needs job.crs (the grid scale factor comes from the CRS)')
    if scale.auto and setup is None:
        raise JobFileError('scale.combined_factor = "auto": needs [setup] (the factor is taken at the occupied point)')
    if setup is not None and setup.azimuth_reference == "geodetic" and info.crs is None:
        raise JobFileError(
            "setup.azimuth_reference = 'geodetic': needs job.crs (the convergence comes from the CRS)"
        )
    return Job(
        path=path,
        sha256=hashlib.sha256(data).hexdigest(),
        info=info,
        alignment=alignment,
        staking=staking,
        setup=setup,
        scale=scale,
        check=_check(top),
    )


def _job_info(top: _Table) -> JobInfo:
    t = top.table("job", ("name", "units", "crs", "station_length"), required=True)
    assert t is not None
    name = t.text("name") or ""
    if "\n" in name or "\r" in name:
        raise JobFileError(f"job.name = {name!r}: must be one line")
    unit = get_unit(t.raw("units", required=True))
    crs = t.text("crs")
    if crs is not None and not crs.strip():
        raise JobFileError(f"job.crs = {crs!r}: empty; leave the key out for a local grid")
    sl = t.raw("station_length")
    station_length = int(unit.station_length) if sl is None else check_station_length(sl)
    return JobInfo(name, unit, crs, station_length)


def _angle(t: _Table, k: str, required: bool = True) -> float | None:
    v = t.raw(k, required)
    return None if v is None else parse_angle(v, t.key(k))


def _direction(t: _Table, k: str, required: bool = True) -> float | None:
    v = t.raw(k, required)
    return None if v is None else parse_direction(v, t.key(k))


def _station(t: _Table, k: str, info: JobInfo, required: bool = True, default: float | None = None) -> float:
    v = t.raw(k, required)
    if v is None:
        assert default is not None
        return default
    return parse_station(v, info.station_length, t.key(k))


def _name(t: _Table) -> str:
    name = t.text("name")
    if name is None:
        return "CL"
    return check_safe_text(name, t.key("name"))


def _alignment(top: _Table, info: JobInfo) -> AlignmentSpec:
    raw = top.raw("alignment", required=True)
    if not isinstance(raw, dict):
        raise JobFileError(f"alignment = {raw!r}: expected a table")
    forms = [k for k in ("element", "pi", "at_pi") if k in raw]
    if len(forms) != 1:
        got = ", ".join(forms) if forms else "none"
        raise JobFileError(
            "alignment: give exactly one form: [[alignment.element]] (chain), "
            f"[[alignment.pi]] (PI list) or [alignment.at_pi] (one curve); found {got}"
        )
    form = forms[0]
    if form == "element":
        t = top.table("alignment", ("name", "start", "azimuth", "element"))
        assert t is not None
        st = t.table("start", ("station", "northing", "easting"), required=True)
        assert st is not None
        elements: list[LineSpec | ArcSpec] = []
        for el in t.tables("element", ("kind", "length", "radius", "delta", "turn")):
            kind = el.text("kind", required=True, choices=("line", "arc"))
            if kind == "line":
                for k in ("radius", "delta", "turn"):
                    if el.has(k):
                        raise JobFileError(f"{el.key(k)}: a line takes only `length`")
                length = el.number("length", required=True, positive=True)
                elements.append(LineSpec(float(length or 0.0), el.path))
            else:
                radius = el.number("radius", required=True, positive=True)
                turn = el.text("turn", required=True, choices=("left", "right"))
                has_d, has_l = el.has("delta"), el.has("length")
                if has_d == has_l:
                    raise JobFileError(
                        f"{el.path}: give the arc `delta` or `length`, exactly one of them"
                        + (" (both given)" if has_d else "")
                    )
                delta = length = None
                if has_d:
                    delta = _angle(el, "delta")
                    if delta is None or not 0.0 < delta < 360.0:
                        raise JobFileError(f"{el.key('delta')} = {el.raw('delta')!r}: must be more than 0 and less than 360 degrees")
                else:
                    length = el.number("length", required=True, positive=True)
                elements.append(ArcSpec(float(radius or 0.0), 1 if turn == "right" else -1, delta, length, el.path))
        if not elements:
            raise JobFileError("alignment.element: at least one element is needed")
        return ChainSpec(
            name=_name(t),
            start_station=_station(st, "station", info),
            start_northing=float(st.number("northing", required=True) or 0.0),
            start_easting=float(st.number("easting", required=True) or 0.0),
            azimuth=float(_direction(t, "azimuth") or 0.0),
            elements=tuple(elements),
        )
    if form == "pi":
        t = top.table("alignment", ("name", "start_station", "pi"))
        assert t is not None
        pis = []
        for p in t.tables("pi", ("northing", "easting", "radius", "radii", "deltas")):
            radii, deltas = _curve_def(p)
            pis.append(PISpec(float(p.number("northing", required=True) or 0.0),
                              float(p.number("easting", required=True) or 0.0), radii, deltas, p.path))
        if len(pis) < 2:
            raise JobFileError("alignment.pi: needs at least two entries, the POB and the POE")
        return PIListSpec(_name(t), _station(t, "start_station", info, required=False, default=0.0), tuple(pis))
    t = top.table("alignment", ("name", "at_pi"))
    assert t is not None
    c = t.table("at_pi", ("station", "northing", "easting", "back_tangent_azimuth", "ahead_tangent_azimuth",
                          "radius", "radii", "deltas", "lead_in", "lead_out"))
    assert c is not None
    radii, deltas = _curve_def(c)
    if not radii:
        raise JobFileError("alignment.at_pi.radius: missing; give `radius` or `radii` with `deltas`")
    return SinglePISpec(
        name=_name(t),
        pi_station=_station(c, "station", info),
        northing=float(c.number("northing", required=True) or 0.0),
        easting=float(c.number("easting", required=True) or 0.0),
        back_azimuth=float(_direction(c, "back_tangent_azimuth") or 0.0),
        ahead_azimuth=float(_direction(c, "ahead_tangent_azimuth") or 0.0),
        radii=radii,
        deltas=deltas,
        lead_in=c.number("lead_in", nonnegative=True) or 0.0,
        lead_out=c.number("lead_out", nonnegative=True) or 0.0,
    )


def _curve_def(t: _Table) -> tuple[tuple[float, ...], tuple[float | None, ...]]:
    """Read ``radius`` or ``radii`` + ``deltas`` of a curve at a PI."""
    if t.has("radius"):
        for k in ("radii", "deltas"):
            if t.has(k):
                raise JobFileError(f"{t.key(k)}: give `radius` for a simple curve or `radii` with `deltas`, not both")
        return (float(t.number("radius", positive=True) or 0.0),), (None,)
    if not t.has("radii"):
        if t.has("deltas"):
            raise JobFileError(f"{t.key('deltas')}: `deltas` needs `radii` beside it")
        return (), ()
    raw_radii = t.array("radii") or []
    if not raw_radii:
        raise JobFileError(f"{t.key('radii')} = []: give at least one radius")
    radii = []
    for i, r in enumerate(raw_radii):
        where = f"{t.key('radii')}[{i}]"
        if isinstance(r, bool) or not isinstance(r, (int, float)) or not math.isfinite(r):
            raise JobFileError(f"{where} = {r!r}: expected a number")
        if r <= 0:
            raise JobFileError(f"{where} = {r!r}: a radius must be greater than 0")
        radii.append(float(r))
    raw_deltas = t.array("deltas")
    if raw_deltas is None:
        if len(radii) == 1:
            return tuple(radii), (None,)
        raise JobFileError(f"{t.key('deltas')}: missing; a compound curve needs `deltas` beside `radii`")
    if len(raw_deltas) != len(radii):
        raise JobFileError(
            f"{t.key('deltas')} = {raw_deltas!r}: has {len(raw_deltas)} entries but `radii` has {len(radii)}; "
            "give one delta per radius"
        )
    deltas: list[float | None] = []
    for i, d in enumerate(raw_deltas):
        where = f"{t.key('deltas')}[{i}]"
        if d == "rest":
            deltas.append(None)
            continue
        v = parse_angle(d, where)
        if not 0.0 < v < 180.0:
            raise JobFileError(f"{where} = {d!r}: a delta must be more than 0 and less than 180 degrees")
        deltas.append(v)
    rests = deltas.count(None)
    if rests != 1:
        raise JobFileError(
            f"{t.key('deltas')} = {raw_deltas!r}: exactly one entry must be \"rest\" (the intersection angle "
            f"minus the others); found {rests}"
        )
    return tuple(radii), tuple(deltas)


def _staking(top: _Table, info: JobInfo) -> Staking:
    t = top.table("staking", ("interval", "offsets", "extra_stations", "first_point", "point_prefix",
                              "elevation"), required=True)
    assert t is not None
    interval = float(t.number("interval", required=True, positive=True) or 0.0)
    offsets: list[OffsetLine] = []
    raw = t.array("offsets")
    if raw is None:
        offsets.append(OffsetLine(0.0, "CL"))
    else:
        if not raw:
            raise JobFileError("staking.offsets = []: give at least one offset line, e.g. {offset = 0, code = \"CL\"}")
        for i, item in enumerate(raw):
            where = f"staking.offsets[{i}]"
            if not isinstance(item, dict):
                raise JobFileError(f"{where} = {item!r}: expected {{offset = ..., code = \"...\"}}")
            o = _Table(item, where, ("offset", "code"))
            off = float(o.number("offset", required=True) or 0.0)
            code = check_safe_text(o.raw("code", required=True), o.key("code"))
            offsets.append(OffsetLine(off + 0.0, code))
    seen: dict[float, int] = {}
    for i, ol in enumerate(offsets):
        if ol.offset in seen:
            raise JobFileError(
                f"staking.offsets[{i}].offset = {ol.offset!r}: same offset as staking.offsets[{seen[ol.offset]}]"
            )
        seen[ol.offset] = i
    extras = []
    for i, v in enumerate(t.array("extra_stations") or []):
        where = f"staking.extra_stations[{i}]"
        extras.append((parse_station(v, info.station_length, where), where))
    fp = t.raw("first_point")
    if fp is None:
        first_point = 1
    elif isinstance(fp, bool) or not isinstance(fp, int) or fp < 0:
        raise JobFileError(f"staking.first_point = {fp!r}: must be a whole number, 0 or more")
    else:
        first_point = fp
    prefix = t.raw("point_prefix")
    prefix = "" if prefix is None else check_safe_text(prefix, "staking.point_prefix", allow_empty=True)
    return Staking(
        interval=interval,
        offsets=tuple(sorted(offsets, key=lambda ol: ol.offset)),
        extra_stations=tuple(extras),
        first_point=first_point,
        point_prefix=prefix,
        elevation=t.number("elevation"),
    )


def _control_point(t: _Table, k: str, required: bool) -> ControlPoint | None:
    c = t.table(k, ("id", "northing", "easting", "elevation"), required=required)
    if c is None:
        return None
    return ControlPoint(
        id=check_safe_text(c.raw("id", required=True), c.key("id")),
        northing=float(c.number("northing", required=True) or 0.0),
        easting=float(c.number("easting", required=True) or 0.0),
        elevation=c.number("elevation"),
    )


def _setup(top: _Table) -> Setup | None:
    t = top.table("setup", ("occupied", "backsight", "backsight_azimuth", "azimuth_reference",
                            "instrument_height", "target_height"))
    if t is None:
        return None
    occupied = _control_point(t, "occupied", required=True)
    assert occupied is not None
    backsight = _control_point(t, "backsight", required=False)
    bs_az = _direction(t, "backsight_azimuth", required=False)
    if (backsight is None) == (bs_az is None):
        raise JobFileError(
            "setup: give the backsight as `backsight = {id, northing, easting}` or as `backsight_azimuth`, "
            "exactly one of them" + (" (both given)" if backsight is not None else "")
        )
    ref = t.text("azimuth_reference", choices=("grid", "geodetic")) or "grid"
    if backsight is not None:
        if t.has("azimuth_reference") and ref != "grid":
            raise JobFileError(
                "setup.azimuth_reference = 'geodetic': only a `backsight_azimuth` can be geodetic; "
                "a backsight point is on the grid"
            )
        if math.hypot(backsight.northing - occupied.northing, backsight.easting - occupied.easting) < 1e-6:
            raise JobFileError(
                f"setup.backsight = {backsight.id!r}: lies on the occupied point {occupied.id!r}; "
                "a backsight must be a distinct point"
            )
    return Setup(
        occupied=occupied,
        backsight=backsight,
        backsight_azimuth=bs_az,
        azimuth_reference=ref,
        instrument_height=t.number("instrument_height", nonnegative=True),
        target_height=t.number("target_height", nonnegative=True),
    )


def _scale(top: _Table) -> Scale:
    t = top.table("scale", ("combined_factor", "ellipsoid_height", "elevation", "geoid_separation"))
    if t is None:
        return Scale(1.0)
    cf = t.raw("combined_factor")
    if cf is None:
        factor: float | None = 1.0
    elif cf == "auto":
        factor = None
    elif isinstance(cf, bool) or not isinstance(cf, (int, float)):
        raise JobFileError(f"scale.combined_factor = {cf!r}: expected a number such as 0.99996 or \"auto\"")
    elif not (math.isfinite(cf) and 0.9 < cf < 1.1):
        raise JobFileError(
            f"scale.combined_factor = {cf!r}: must be a positive factor near 1 (between 0.9 and 1.1)"
        )
    else:
        factor = float(cf)
    h = t.number("ellipsoid_height")
    elev = t.number("elevation")
    n = t.number("geoid_separation")
    if factor is not None and (h is not None or elev is not None or n is not None):
        raise JobFileError(
            "scale: ellipsoid_height, elevation and geoid_separation go with combined_factor = \"auto\" only"
        )
    if h is not None and (elev is not None or n is not None):
        raise JobFileError("scale: give `ellipsoid_height`, or `elevation` with `geoid_separation`, not both")
    if (elev is None) != (n is None):
        missing = "geoid_separation" if n is None else "elevation"
        raise JobFileError(f"scale.{missing}: missing; `elevation` and `geoid_separation` go together")
    if factor is None and h is None and elev is None:
        raise JobFileError(
            'scale.combined_factor = "auto": needs the height for the elevation factor; give '
            "`ellipsoid_height`, or `elevation` with `geoid_separation` (job units)"
        )
    return Scale(factor, h, elev, n)


def _check(top: _Table) -> CheckSpec | None:
    t = top.table("check", ("horizontal_tolerance", "vertical_tolerance", "search_radius"))
    if t is None:
        return None
    return CheckSpec(
        horizontal_tolerance=t.number("horizontal_tolerance", positive=True),
        vertical_tolerance=t.number("vertical_tolerance", positive=True),
        search_radius=t.number("search_radius", positive=True),
    )
