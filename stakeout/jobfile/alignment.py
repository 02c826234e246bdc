"""``[alignment]``: Form A (element chain), Form B (PI list), Form C (one curve at a PI)."""

from __future__ import annotations

import math

from ..alignment.specs import (
    AlignmentSpec,
    ArcSpec,
    ChainSpec,
    LineSpec,
    PIListSpec,
    PISpec,
    SinglePISpec,
    SpiralSpec,
)
from ..angles import parse_angle
from ..errors import JobFileError
from ..job import JobInfo
from ..limits import MAX_COORDINATE
from .reader import Table, angle, check_safe_text, direction, station

__all__ = ["read_alignment", "read_equations"]


def _name(t: Table) -> str:
    """The alignment's name (``CL`` when not given), checked as safe text."""
    name = t.text("name")
    if name is None:
        return "CL"
    return check_safe_text(name, t.key("name"))


def read_alignment(top: Table, info: JobInfo) -> AlignmentSpec:
    """``[alignment]`` in any of its three forms."""
    raw = top.raw("alignment", required=True)
    if not isinstance(raw, dict):
        raise JobFileError(f"alignment = {raw!r}: expected a table")
    forms = [k for k in ("element", "pi", "at_pi", "landxml") if k in raw]
    if len(forms) != 1:
        got = ", ".join(forms) if forms else "none"
        raise JobFileError(
            "alignment: give exactly one form: [[alignment.element]] (chain), "
            f"[[alignment.pi]] (PI list), [alignment.at_pi] (one curve) or landxml = \"file\"; found {got}"
        )
    form = forms[0]
    if form == "element":
        t = top.table("alignment", ("name", "start", "azimuth", "element", "station_equation"))
        assert t is not None
        st = t.table("start", ("station", "northing", "easting"), required=True)
        assert st is not None
        elements: list[LineSpec | ArcSpec | SpiralSpec] = []
        for el in t.tables("element", ("kind", "length", "radius", "delta", "turn", "radius_start", "radius_end")):
            kind = el.text("kind", required=True, choices=("line", "arc", "spiral"))
            if kind == "spiral":
                elements.append(_spiral(el))
                continue
            for k in ("radius_start", "radius_end"):
                if el.has(k):
                    raise JobFileError(f"{el.key(k)}: only a spiral takes `{k}`")
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
                    delta = angle(el, "delta")
                    if delta is None or not 0.0 < delta < 360.0:
                        raise JobFileError(
                            f"{el.key('delta')} = {el.raw('delta')!r}: must be more than 0 and less than 360 degrees")
                else:
                    length = el.number("length", required=True, positive=True)
                elements.append(ArcSpec(float(radius or 0.0), 1 if turn == "right" else -1, delta, length, el.path))
        if not elements:
            raise JobFileError("alignment.element: at least one element is needed")
        return ChainSpec(
            name=_name(t),
            start_station=station(st, "station", info.station_length),
            start_northing=float(st.number("northing", required=True) or 0.0),
            start_easting=float(st.number("easting", required=True) or 0.0),
            azimuth=float(direction(t, "azimuth") or 0.0),
            elements=tuple(elements),
        )
    if form == "pi":
        t = top.table("alignment", ("name", "start_station", "pi", "station_equation", "join_tolerance"))
        assert t is not None
        pis = []
        for p in t.tables("pi", ("northing", "easting", "radius", "radii", "deltas", "spirals")):
            radii, deltas = _curve_def(p)
            pis.append(PISpec(float(p.number("northing", required=True) or 0.0),
                              float(p.number("easting", required=True) or 0.0), radii, deltas, p.path,
                              _spirals(p, radii)))
        if len(pis) < 2:
            raise JobFileError("alignment.pi: needs at least two entries, the POB and the POE")
        join = t.number("join_tolerance", nonnegative=True)
        return PIListSpec(_name(t), station(t, "start_station", info.station_length, required=False, default=0.0),
                          tuple(pis), 0.01 if join is None else join)
    t = top.table("alignment", ("name", "at_pi", "station_equation"))
    assert t is not None
    c = t.table("at_pi", ("station", "northing", "easting", "back_tangent_azimuth", "ahead_tangent_azimuth",
                          "radius", "radii", "deltas", "lead_in", "lead_out", "spirals"))
    assert c is not None
    radii, deltas = _curve_def(c)
    if not radii:
        raise JobFileError("alignment.at_pi.radius: missing; give `radius` or `radii` with `deltas`")
    return SinglePISpec(
        name=_name(t),
        pi_station=station(c, "station", info.station_length),
        northing=float(c.number("northing", required=True) or 0.0),
        easting=float(c.number("easting", required=True) or 0.0),
        back_azimuth=float(direction(c, "back_tangent_azimuth") or 0.0),
        ahead_azimuth=float(direction(c, "ahead_tangent_azimuth") or 0.0),
        radii=radii,
        deltas=deltas,
        lead_in=c.number("lead_in", nonnegative=True) or 0.0,
        lead_out=c.number("lead_out", nonnegative=True) or 0.0,
        spirals=_spirals(c, radii),
    )


def _curve_def(t: Table) -> tuple[tuple[float, ...], tuple[float | None, ...]]:
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


def read_equations(top: Table, info: JobInfo) -> tuple[tuple[float, float, str], ...]:
    """``[[alignment.station_equation]]``: (back, ahead, key) in file order."""
    t = top.table("alignment", ("name", "start", "azimuth", "element", "start_station", "pi", "at_pi",
                                "station_equation", "landxml", "join_tolerance"))
    assert t is not None
    out = []
    for eq in t.tables("station_equation", ("back", "ahead")):
        out.append((station(eq, "back", info.station_length), station(eq, "ahead", info.station_length), eq.path))
    return tuple(out)


def _spiral(el: Table) -> SpiralSpec:
    """A spiral element of a chain: length, the radius at either end (omitted: infinite), turn."""
    for k in ("radius", "delta"):
        if el.has(k):
            raise JobFileError(f"{el.key(k)}: a spiral takes `length`, `radius_start` and/or `radius_end`, and `turn`")
    length = float(el.number("length", required=True, positive=True) or 0.0)
    turn = el.text("turn", required=True, choices=("left", "right"))
    rs = el.number("radius_start", positive=True)
    re_ = el.number("radius_end", positive=True)
    if rs is None and re_ is None:
        raise JobFileError(f"{el.path}: a spiral needs `radius_start` or `radius_end` (or both); with neither "
                           "it would be a line")
    return SpiralSpec(length, 1 if turn == "right" else -1, rs, re_, el.path)


def _spirals(t: Table, radii: tuple[float, ...]) -> tuple[float, ...]:
    """``spirals = [...]`` at a PI: one more entry than ``radii`` (0 = none)."""
    raw = t.array("spirals")
    if raw is None:
        return ()
    if not radii:
        raise JobFileError(f"{t.key('spirals')}: spirals go with a curve; give `radius` or `radii` beside them")
    if len(raw) != len(radii) + 1:
        raise JobFileError(
            f"{t.key('spirals')} = {raw!r}: has {len(raw)} entries but needs {len(radii) + 1}, one more than the "
            "radii: before the first arc, between each pair of arcs, after the last (0 = none)"
        )
    out = []
    for i, v in enumerate(raw):
        where = f"{t.key('spirals')}[{i}]"
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v < 0:
            raise JobFileError(f"{where} = {v!r}: expected a spiral length, 0 or more (0 = no spiral)")
        if abs(v) > MAX_COORDINATE:
            raise JobFileError(f"{where} = {v!r}: out of range")
        out.append(float(v))
    return tuple(out)
