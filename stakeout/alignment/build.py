"""Build an :class:`Alignment` from any of the three job-file forms.

Form A chains elements from a start point; Form B joins a list of PIs with
simple or compound curves and angle points; Form C is one curve at a PI
given by its station.  Forms B and C check closure: walking the arcs from
the PC must land on the PT that the PI geometry predicts.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import cast

import numpy as np

from ..angles import angle_difference, azimuth_between, sincosd
from ..errors import GeometryError
from .alignment import FEATURE_ORDER, STATION_TOLERANCE, Alignment, Curve, KeyPoint
from .curves import CompoundTangents, compound_tangents, intersect_tangents
from .kinds import IS_CIRCULAR_ARC
from .elements import Arc, Element, Line, Spiral, end_features, join_features, join_problem, start_features
from .specs import AlignmentSpec, ArcSpec, ChainSpec, FixedSpec, LineSpec, PIListSpec, SinglePISpec, SpiralSpec

__all__ = ["build_alignment", "CLOSURE_TOLERANCE", "MIN_CURVE_LENGTH"]

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
    if isinstance(spec, FixedSpec):
        return _build_fixed(spec)
    raise TypeError(f"not an alignment spec: {spec!r}")


# ---- walking ------------------------------------------------------------------------
def _spiral(length: float, k_start: float, k_end: float) -> _Step:
    """A spiral step leaving along the current direction."""
    return lambda st, n, e, az: Spiral.follow(st, n, e, az, length, k_start, k_end)


#: Shortest arc or spiral accepted (job units): anything shorter cannot be staked or even drawn.
MIN_CURVE_LENGTH = 0.001


def _walk(station: float, n: float, e: float, az: float, steps: list[_Step]) -> list[Element]:
    out: list[Element] = []
    for step in steps:
        el = step(float(station), n, e, az)
        if el.curving and not el.length >= MIN_CURVE_LENGTH:
            r = min(r for r in (el.radius_start, el.radius_end) if r is not None)
            raise GeometryError(
                f"element {len(out) + 1} ({el.kind}, radius {r:.6g}) at station {station:.4f} is {el.length:.3g} "
                f"long, shorter than the {MIN_CURVE_LENGTH:g} a curve element needs; check its radius and angle")
        out.append(el)
        n, e, az = el.end_northing, el.end_easting, el.end_azimuth
        station += el.length
    return out


def _finish(name: str, elements: list[Element], where: list[str] | None = None,
            warnings: tuple[str, ...] = ()) -> Alignment:
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
        problem = join_problem(prev, cur)
        if problem is not None:
            raise GeometryError(f"{where[i] if where else f'element {i + 1}'}: {problem}")
        deflects = abs(float(angle_difference(prev.end_azimuth, cur.start_azimuth))) > _ANGLE_EPS
        add(i, join_features(prev, cur, deflects), cur.start, cur.start_northing, cur.start_easting)
    end = len(elements)
    add(end, end_features(last) + ("POE",), last.end, last.end_northing, last.end_easting)
    key_points = tuple(
        KeyPoint(points[i][0], points[i][1], points[i][2],
                 tuple(f for f in FEATURE_ORDER if f in feats[i]))
        for i in sorted(feats)
    )
    return Alignment.from_elements(name, elements, _curves(elements), key_points, warnings)


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
    """Tangents from the PI of a curve: the published relations for a run of
    arcs; for a curve with spirals, the intersection of its end tangents.
    """
    if all(IS_CIRCULAR_ARC[a] for a in run):
        return compound_tangents(tuple(cast(Arc, a).radius for a in run),
                                 tuple(a.central_angle for a in run))
    first, last = run[0], run[-1]
    return intersect_tangents(first.start_northing, first.start_easting, first.start_azimuth,
                               last.end_northing, last.end_easting, last.end_azimuth)


def _check_closure(where: str, elements: list[Element], first: int, count: int,
                   pi_n: float, pi_e: float, ahead_az: float, t_ahead: float, slack: float = 0.0) -> None:
    s, c = sincosd(ahead_az)
    pt_n, pt_e = pi_n + t_ahead * float(c), pi_e + t_ahead * float(s)
    end = elements[first + count - 1]
    miss = math.hypot(end.end_northing - pt_n, end.end_easting - pt_e)
    if miss > CLOSURE_TOLERANCE + slack:
        raise GeometryError(f"{where}: walking the arcs misses the PT by {miss:.6g} (closure failed)")


# ---- Form A ---------------------------------------------------------------------------
def _step_of(el: LineSpec | ArcSpec | SpiralSpec) -> _Step:
    """The walking step of one element of a chain."""
    if isinstance(el, LineSpec):
        return _line(el.length)
    if isinstance(el, SpiralSpec):
        if el.radius_start is None and el.radius_end is None:
            raise GeometryError(f"{el.where}: a spiral needs radius_start or radius_end (both infinite is a line)")
        k0 = 0.0 if el.radius_start is None else el.turn / el.radius_start
        k1 = 0.0 if el.radius_end is None else el.turn / el.radius_end
        return _spiral(el.length, k0, k1)
    length = el.length if el.length is not None else el.radius * math.radians(el.delta or 0.0)
    if length >= 2.0 * math.pi * el.radius:
        raise GeometryError(f"{el.where}: an arc must turn less than 360 degrees")
    return _arc(length, el.radius, el.turn)


def _build_chain(spec: ChainSpec) -> Alignment:
    steps = [_step_of(el) for el in spec.elements]
    if not steps:
        raise GeometryError("alignment.element: at least one element is needed")
    elements = _walk(spec.start_station, spec.start_northing, spec.start_easting, spec.azimuth, steps)
    return _finish(spec.name, elements, [el.where for el in spec.elements])


# ---- anchored elements (a design file) ------------------------------------------------
def _build_fixed(spec: FixedSpec) -> Alignment:
    """Each element from its own start point and direction, at its internal station."""
    if not spec.elements:
        raise GeometryError("alignment: the design file's alignment has no elements")
    elements: list[Element] = []
    station = spec.start_station
    for a in spec.elements:  # one step per element
        el = _step_of(a.element)(float(station), a.northing, a.easting, a.azimuth)
        elements.append(el)
        station += el.length
    return _finish(spec.name, elements, [a.element.where for a in spec.elements])


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


@dataclass(frozen=True)
class _PICurve:
    """A curve fitted at a PI: its turn, the elements to walk, its tangents from the PI."""

    turn: int
    steps: list[_Step]
    tangents: CompoundTangents


def _curve_at_pi(where: str, az_in: float, az_out: float, radii: tuple[float, ...],
                 deltas: tuple[float | None, ...], spirals: tuple[float, ...] = ()) -> _PICurve:
    signed = float(angle_difference(az_in, az_out))
    if abs(signed) < _ANGLE_EPS:
        raise GeometryError(f"{where}: the tangents do not deflect here (I = 0), so no curve fits")
    turn = 1 if signed > 0 else -1
    intersection = abs(signed)
    if not any(spirals):
        ds = _resolve_deltas(where, intersection, radii, deltas)
        return _PICurve(turn, _arc_steps(radii, ds, turn), compound_tangents(radii, ds))
    # with spirals: the rest takes what the other arcs and every spiral's angle leave
    ks = [0.0, *(1.0 / r for r in radii), 0.0]
    theta = sum(ls * (ks[i] + ks[i + 1]) / 2.0 for i, ls in enumerate(spirals))
    given = sum(d for d in deltas if d is not None)
    rest = intersection - given - math.degrees(theta)
    if rest < -_ANGLE_EPS:
        raise GeometryError(
            f"{where}.spirals: the spirals turn {math.degrees(theta):.6f} deg and the given deltas "
            f"{given:.6f} deg, more than the intersection angle I = {intersection:.6f} deg "
            f"(the rest would be {rest:.6f} deg); shorten the spirals"
        )
    ds = tuple(max(rest, 0.0) if d is None else d for d in deltas)
    steps: list[_Step] = []
    for i, r in enumerate(radii):
        if spirals[i] > 0.0:
            steps.append(_spiral(spirals[i], turn * ks[i], turn * ks[i + 1]))
        if r * math.radians(ds[i]) > CLOSURE_TOLERANCE:  # spirals taking the whole angle leave no arc
            steps.append(_arc(r * math.radians(ds[i]), r, turn))
    if spirals[-1] > 0.0:
        steps.append(_spiral(spirals[-1], turn * ks[-2], 0.0))
    walked = _walk(0.0, 0.0, 0.0, 0.0, steps)
    end = walked[-1]
    return _PICurve(turn, steps, intersect_tangents(0.0, 0.0, 0.0, end.end_northing, end.end_easting,
                                                     end.end_azimuth))


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
    curves: dict[int, _PICurve] = {}
    for i in range(1, len(pis) - 1):
        p = pis[i]
        signed = float(angle_difference(seg_az[i - 1], seg_az[i]))
        if abs(abs(signed) - 180.0) < _ANGLE_EPS:
            raise GeometryError(f"{p.where}: the alignment reverses here (deflection 180 deg)")
        if p.radii:
            pc = _curve_at_pi(p.where, float(seg_az[i - 1]), float(seg_az[i]), p.radii, p.deltas, p.spirals)
            curves[i] = pc
            back[i], ahead[i] = pc.tangents.back, pc.tangents.ahead
    steps: list[_Step] = []
    first_arc: dict[int, int] = {}
    slack: dict[int, float] = {}
    absorbed = 0.0
    warnings: list[str] = []
    for j in range(len(pis) - 1):
        need = ahead[j] + back[j + 1]
        free = float(seg_len[j]) - need
        if ahead[j] > 0.0 and back[j + 1] > 0.0 and CLOSURE_TOLERANCE < abs(free) <= spec.join_tolerance:
            # the designer's rounded radii leave a sliver of tangent (or overlap): the curves meet
            what = "tangent" if free > 0 else "overlap"
            warnings.append(f"the curves at {pis[j].where} and {pis[j + 1].where} leave a {abs(free):.4f} {what} "
                            f"between them, within alignment.join_tolerance = {spec.join_tolerance:g}: taken as "
                            "none, they meet at one PCC/PRC and the stakes after it shift by up to that much")
            absorbed += abs(free)
            free = 0.0
        slack[j + 1] = absorbed
        if free < -CLOSURE_TOLERANCE:
            a, b = pis[j].where, pis[j + 1].where
            with_curves = [w for w, t in ((a, ahead[j]), (b, back[j + 1])) if t > 0.0]
            if len(with_curves) == 2:
                what = f"curves at {a} and {b} overlap: their tangents ({ahead[j]:.4f} + {back[j + 1]:.4f}) exceed"
            else:
                what = (f"the curve at {with_curves[0]} does not fit between {a} and {b}: its tangent "
                        f"{max(ahead[j], back[j + 1]):.4f} exceeds")
            raise GeometryError(f"{what} the {seg_len[j]:.4f} between the points")
        if free > CLOSURE_TOLERANCE:
            steps.append(_line(float(free), float(seg_az[j])))
        if j + 1 in curves:
            first_arc[j + 1] = len(steps)
            steps.extend(curves[j + 1].steps)
    if not steps:
        raise GeometryError("alignment.pi: the alignment has no length")
    elements = _walk(spec.start_station, float(n[0]), float(e[0]), float(seg_az[0]), steps)
    for i, pc in curves.items():
        _check_closure(pis[i].where, elements, first_arc[i], len(pc.steps), float(n[i]), float(e[i]),
                       float(seg_az[i]), pc.tangents.ahead, slack.get(i, 0.0))
    last = elements[-1]
    miss = math.hypot(last.end_northing - n[-1], last.end_easting - e[-1])
    if miss > CLOSURE_TOLERANCE + absorbed:
        raise GeometryError(f"{pis[-1].where}: walking the alignment misses the POE by {miss:.6g}")
    return _finish(spec.name, elements, warnings=tuple(warnings))


# ---- Form C ---------------------------------------------------------------------------
def _build_single(spec: SinglePISpec) -> Alignment:
    signed = float(angle_difference(spec.back_azimuth, spec.ahead_azimuth))
    if abs(abs(signed) - 180.0) < _ANGLE_EPS:
        raise GeometryError(f"{spec.where}: the tangents reverse (deflection 180 deg)")
    pc = _curve_at_pi(spec.where, spec.back_azimuth, spec.ahead_azimuth, spec.radii, spec.deltas, spec.spirals)
    tans = pc.tangents
    s, c = sincosd(spec.back_azimuth)
    pc_n = spec.northing - tans.back * float(c)
    pc_e = spec.easting - tans.back * float(s)
    pob_n = pc_n - spec.lead_in * float(c)
    pob_e = pc_e - spec.lead_in * float(s)
    steps: list[_Step] = []
    if spec.lead_in > 0:
        steps.append(_line(spec.lead_in, spec.back_azimuth))
    first = len(steps)
    steps.extend(pc.steps)
    if spec.lead_out > 0:
        steps.append(_line(spec.lead_out, spec.ahead_azimuth))
    start = spec.pi_station - tans.back - spec.lead_in
    elements = _walk(start, pob_n, pob_e, spec.back_azimuth, steps)
    _check_closure(spec.where, elements, first, len(pc.steps), spec.northing, spec.easting,
                   spec.ahead_azimuth, tans.ahead)
    return _finish(spec.name, elements)
