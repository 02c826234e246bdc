"""Build an :class:`Alignment` from any of the three job-file forms.

Form A chains elements from a start point; Form B joins a list of PIs with
simple or compound curves and angle points; Form C is one curve at a PI
given by its station.  Forms B and C check closure: walking the arcs from
the PC must land on the PT that the PI geometry predicts.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from ..angles import angle_difference, azimuth_between, sincosd
from ..errors import GeometryError
from .alignment import FEATURE_ORDER, STATION_TOLERANCE, Alignment, Curve, KeyPoint
from .curves import CompoundTangents, compound_tangents
from .elements import Arc, Element, Line, end_features, join_features, start_features
from .specs import AlignmentSpec, ArcSpec, ChainSpec, LineSpec, PIListSpec, SinglePISpec

__all__ = ["build_alignment", "CLOSURE_TOLERANCE"]

#: Largest allowed miss (job units) between a walked PT and the PI geometry's PT.
CLOSURE_TOLERANCE = 1e-6
_ANGLE_EPS = 1e-9  # degrees: smaller deflections count as none


#: One element to walk: given its start (internal station, northing, easting,
#: azimuth), build it.  Steps are made by :func:`_line` and :func:`_arc`.
_Step = Callable[[float, float, float, float], Element]


def _line(length: float, azimuth: float | None = None) -> _Step:
    """A line step: a fixed ``azimuth``, or continuing the current direction."""
    return lambda st, n, e, az: Line.follow(st, n, e, az if azimuth is None else azimuth, length)


def _arc(length: float, radius: float, turn: int) -> _Step:
    """An arc step leaving along the current direction."""
    return lambda st, n, e, az: Arc.follow(st, n, e, az, length, radius, turn)


def build_alignment(spec: AlignmentSpec) -> Alignment:
    """Build the alignment described by a Form A, B or C spec."""
    if isinstance(spec, ChainSpec):
        return _build_chain(spec)
    if isinstance(spec, PIListSpec):
        return _build_pi_list(spec)
    if isinstance(spec, SinglePISpec):
        return _build_single(spec)
    raise TypeError(f"not an alignment spec: {spec!r}")


# ---- walking ------------------------------------------------------------------------
def _walk(station: float, n: float, e: float, az: float, steps: list[_Step]) -> list[Element]:
    out: list[Element] = []
    for step in steps:
        el = step(float(station), n, e, az)
        out.append(el)
        n, e, az = el.end_northing, el.end_easting, el.end_azimuth
        station += el.length
    return out


def _finish(name: str, elements: list[Element]) -> Alignment:
    feats: dict[int, list[str]] = {}
    points: dict[int, tuple[float, float, float]] = {}

    def add(i: int, fs: tuple[str, ...], st: float, n: float, e: float) -> None:
        if fs:
            feats.setdefault(i, []).extend(fs)
            points.setdefault(i, (st, n, e))

    first, last = elements[0], elements[-1]
    add(0, ("POB",) + start_features(first), first.start, first.start_northing, first.start_easting)
    for i in range(1, len(elements)):
        prev, cur = elements[i - 1], elements[i]
        deflects = abs(float(angle_difference(prev.end_azimuth, cur.start_azimuth))) > _ANGLE_EPS
        add(i, join_features(prev, cur, deflects), cur.start, cur.start_northing, cur.start_easting)
    end = len(elements)
    add(end, end_features(last) + ("POE",), last.end, last.end_northing, last.end_easting)
    key_points = tuple(
        KeyPoint(points[i][0], points[i][1], points[i][2],
                 tuple(f for f in FEATURE_ORDER if f in feats[i]))
        for i in sorted(feats)
    )
    return Alignment.from_elements(name, elements, _curves(elements), key_points)


def _curves(elements: list[Element]) -> tuple[Curve, ...]:
    runs: list[list[int]] = []
    for i, el in enumerate(elements):
        if not el.curving:
            continue
        if runs and runs[-1][-1] == i - 1 and elements[i - 1].turn == el.turn:
            runs[-1].append(i)
        else:
            runs.append([i])
    curves = []
    for number, run in enumerate(runs, start=1):
        arcs = [elements[i] for i in run]
        total = sum(a.central_angle for a in arcs)
        pc, pt = arcs[0], arcs[-1]
        tangents: CompoundTangents | None = None
        pi_n = pi_e = pi_st = None
        if total < 180.0 - _ANGLE_EPS:
            tangents = _run_tangents(arcs)
            s, c = sincosd(pc.start_azimuth)
            pi_n = pc.start_northing + tangents.back * float(c)
            pi_e = pc.start_easting + tangents.back * float(s)
            pi_st = pc.start + tangents.back
        curves.append(Curve(number, tuple(run), pc.turn, total, pc.start, pt.end,
                            pi_st, pi_n, pi_e, tangents))
    return tuple(curves)


def _run_tangents(run: list[Element]) -> CompoundTangents:
    """Tangents from the PI of a run of arcs (the published relations)."""
    assert all(isinstance(a, Arc) for a in run)
    return compound_tangents(tuple(a.radius for a in run if isinstance(a, Arc)),
                             tuple(a.central_angle for a in run))


def _check_closure(where: str, elements: list[Element], first: int, count: int,
                   pi_n: float, pi_e: float, ahead_az: float, t_ahead: float) -> None:
    s, c = sincosd(ahead_az)
    pt_n, pt_e = pi_n + t_ahead * float(c), pi_e + t_ahead * float(s)
    end = elements[first + count - 1]
    miss = math.hypot(end.end_northing - pt_n, end.end_easting - pt_e)
    if miss > CLOSURE_TOLERANCE:
        raise GeometryError(f"{where}: walking the arcs misses the PT by {miss:.6g} (closure failed)")


# ---- Form A ---------------------------------------------------------------------------
def _build_chain(spec: ChainSpec) -> Alignment:
    steps = []
    for el in spec.elements:
        if isinstance(el, LineSpec):
            steps.append(_line(el.length))
        else:
            assert isinstance(el, ArcSpec)
            length = el.length if el.length is not None else el.radius * math.radians(el.delta or 0.0)
            if length >= 2.0 * math.pi * el.radius:
                raise GeometryError(f"{el.where}: an arc must turn less than 360 degrees")
            steps.append(_arc(length, el.radius, el.turn))
    if not steps:
        raise GeometryError("alignment.element: at least one element is needed")
    elements = _walk(spec.start_station, spec.start_northing, spec.start_easting, spec.azimuth, steps)
    return _finish(spec.name, elements)


# ---- curves at a PI (Forms B and C) ---------------------------------------------------
def _resolve_deltas(where: str, intersection: float, radii: tuple[float, ...],
                    deltas: tuple[float | None, ...]) -> tuple[float, ...]:
    given = sum(d for d in deltas if d is not None)
    rest = intersection - given
    if rest <= _ANGLE_EPS:
        raise GeometryError(
            f"{where}.deltas: the given deltas ({given:.6f} deg) leave nothing of the intersection "
            f"angle I = {intersection:.6f} deg; they must sum to less than I"
        )
    return tuple(rest if d is None else d for d in deltas)


def _curve_at_pi(where: str, az_in: float, az_out: float, radii: tuple[float, ...],
                 deltas: tuple[float | None, ...]) -> tuple[int, tuple[float, ...], CompoundTangents]:
    signed = float(angle_difference(az_in, az_out))
    if abs(signed) < _ANGLE_EPS:
        raise GeometryError(f"{where}: the tangents do not deflect here (I = 0), so no curve fits")
    turn = 1 if signed > 0 else -1
    ds = _resolve_deltas(where, abs(signed), radii, deltas)
    return turn, ds, compound_tangents(radii, ds)


def _arc_steps(radii: tuple[float, ...], deltas: tuple[float, ...], turn: int) -> list[_Step]:
    return [_arc(r * math.radians(d), r, turn) for r, d in zip(radii, deltas)]


# ---- Form B ---------------------------------------------------------------------------
def _build_pi_list(spec: PIListSpec) -> Alignment:
    pis = spec.pis
    if len(pis) < 2:
        raise GeometryError("alignment.pi: needs at least two entries, the POB and the POE")
    for end in (pis[0], pis[-1]):
        if end.radii:
            raise GeometryError(f"{end.where}: the first and last entries are the POB and POE and carry no curve")
    n = np.array([p.northing for p in pis])
    e = np.array([p.easting for p in pis])
    seg_len = np.hypot(np.diff(n), np.diff(e))
    for j, length in enumerate(seg_len):
        if length <= STATION_TOLERANCE:
            raise GeometryError(f"{pis[j].where} and {pis[j + 1].where}: the points coincide")
    seg_az = np.asarray(azimuth_between(n[:-1], e[:-1], n[1:], e[1:]))
    back = np.zeros(len(pis))
    ahead = np.zeros(len(pis))
    curves: dict[int, tuple[int, tuple[float, ...], CompoundTangents]] = {}
    for i in range(1, len(pis) - 1):
        p = pis[i]
        signed = float(angle_difference(seg_az[i - 1], seg_az[i]))
        if abs(abs(signed) - 180.0) < _ANGLE_EPS:
            raise GeometryError(f"{p.where}: the alignment reverses here (deflection 180 deg)")
        if p.radii:
            turn, ds, tans = _curve_at_pi(p.where, float(seg_az[i - 1]), float(seg_az[i]), p.radii, p.deltas)
            curves[i] = (turn, ds, tans)
            back[i], ahead[i] = tans.back, tans.ahead
    steps: list[_Step] = []
    first_arc: dict[int, int] = {}
    for j in range(len(pis) - 1):
        need = ahead[j] + back[j + 1]
        free = float(seg_len[j]) - need
        if free < -CLOSURE_TOLERANCE:
            a, b = pis[j].where, pis[j + 1].where
            raise GeometryError(
                f"curves at {a} and {b} overlap: their tangents ({ahead[j]:.4f} + {back[j + 1]:.4f}) "
                f"exceed the {seg_len[j]:.4f} between the points"
            )
        if free > CLOSURE_TOLERANCE:
            steps.append(_line(float(free), float(seg_az[j])))
        if j + 1 in curves:
            turn, ds, _ = curves[j + 1]
            first_arc[j + 1] = len(steps)
            steps.extend(_arc_steps(pis[j + 1].radii, ds, turn))
    if not steps:
        raise GeometryError("alignment.pi: the alignment has no length")
    elements = _walk(spec.start_station, float(n[0]), float(e[0]), float(seg_az[0]), steps)
    for i, (_turn, ds, tans) in curves.items():
        _check_closure(pis[i].where, elements, first_arc[i], len(ds), float(n[i]), float(e[i]),
                       float(seg_az[i]), tans.ahead)
    last = elements[-1]
    miss = math.hypot(last.end_northing - n[-1], last.end_easting - e[-1])
    if miss > CLOSURE_TOLERANCE:
        raise GeometryError(f"{pis[-1].where}: walking the alignment misses the POE by {miss:.6g}")
    return _finish(spec.name, elements)


# ---- Form C ---------------------------------------------------------------------------
def _build_single(spec: SinglePISpec) -> Alignment:
    signed = float(angle_difference(spec.back_azimuth, spec.ahead_azimuth))
    if abs(abs(signed) - 180.0) < _ANGLE_EPS:
        raise GeometryError(f"{spec.where}: the tangents reverse (deflection 180 deg)")
    turn, ds, tans = _curve_at_pi(spec.where, spec.back_azimuth, spec.ahead_azimuth, spec.radii, spec.deltas)
    s, c = sincosd(spec.back_azimuth)
    pc_n = spec.northing - tans.back * float(c)
    pc_e = spec.easting - tans.back * float(s)
    pob_n = pc_n - spec.lead_in * float(c)
    pob_e = pc_e - spec.lead_in * float(s)
    steps: list[_Step] = []
    if spec.lead_in > 0:
        steps.append(_line(spec.lead_in, spec.back_azimuth))
    first = len(steps)
    steps.extend(_arc_steps(spec.radii, ds, turn))
    if spec.lead_out > 0:
        steps.append(_line(spec.lead_out, spec.ahead_azimuth))
    start = spec.pi_station - tans.back - spec.lead_in
    elements = _walk(start, pob_n, pob_e, spec.back_azimuth, steps)
    _check_closure(spec.where, elements, first, len(ds), spec.northing, spec.easting,
                   spec.ahead_azimuth, tans.ahead)
    return _finish(spec.name, elements)
