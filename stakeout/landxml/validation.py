"""Checking a LandXML alignment's geometry and measuring its elements from their points.

Checking (:func:`validate_geometry`)
------------------------------------
Tolerances, with ``tolerance`` in file units (default 0.001):

* position between consecutive elements, and a spiral's ``End`` against the
  clothoid through its ``Start`` along ``Start``->``PI`` with its radii and
  derived length: ``tolerance``;
* direction between consecutive elements, and a spiral's ``PI``->``End``
  against the end direction of that clothoid: 1 arc-second;
* curvature where a spiral meets another element: both radii infinite, or
  both finite, of the same hand and within ``tolerance``;
* an arc's ``|Start - Center|`` against ``|End - Center|``, and the
  attributes ``radius``, ``length``, ``chord`` (and the alignment's
  ``length``, against the sum of its elements or, as some programs write
  it, the span of its stations in force) against the values from the
  points: ``tolerance`` plus 1e-9 of the value; ``delta``: the larger of 1 arc-second and the angle that
  subtends ``tolerance`` at the radius.

A spiral's length is derived from its points and radii: the tangent
deflection theta between ``Start``->``PI`` and ``PI``->``End`` gives
``L = 2 theta / (1/Rs + 1/Re)`` (the curvature of a clothoid is linear in
its length).  That estimate magnifies the rounding of the coordinates by
about 2R / tangent (2 mm on a 1500 m radius written to 0.1 mm), so it is
then refined until the clothoid from ``Start`` along ``Start``->``PI``
reaches ``End`` along the chord (a few Newton steps); the ``length``
attribute is a cross-check of the result.  A zero-length ``Line`` (within
``tolerance``; some programs write one between elements) is accepted and
takes the direction in force where it sits.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..alignment.clothoid import clothoid_points
from ..errors import GeometryError
from .records import KINDS, XAlignment, XCurve, XElement, XLine, XMeasured, XSpiral, fmt, kind_of

__all__ = ["validate_geometry", "station_at"]

_ARCSEC = 1.0 / 3600.0  # degrees
_REL = 1e-9  # relative slack for floating-point noise in attribute checks

def _wrap180(a: NDArray[np.float64]) -> NDArray[np.float64]:
    """Angle difference in degrees to (-180, 180]."""
    r = np.mod(a, 360.0)
    return np.where(r > 180.0, r - 360.0, r)


def _azimuth(dn: NDArray[np.float64], de: NDArray[np.float64]) -> NDArray[np.float64]:
    """Azimuth in degrees clockwise from north, [0, 360)."""
    az = np.mod(np.degrees(np.arctan2(de, dn)), 360.0)
    return np.where(az >= 360.0, 0.0, az)


def _clothoid_ends(
    az0_deg: NDArray[np.float64],
    k0: NDArray[np.float64],
    k1: NDArray[np.float64],
    length: NDArray[np.float64],
    turn: NDArray[np.float64],
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Offsets (northing, easting) of clothoid ends from their starts, by the project's clothoid module.

    Curvature magnitudes ``k0`` -> ``k1`` (1/units) run linearly over
    ``length``, turning the way of ``turn``.
    """
    zero = np.zeros_like(length)
    dn, de, _ = clothoid_points(length, zero, zero, zero, az0_deg, turn * k0, turn * k1, length)
    return dn, de


def _fit_clothoid(
    n0: NDArray[np.float64],
    e0: NDArray[np.float64],
    n1: NDArray[np.float64],
    e1: NDArray[np.float64],
    az0_deg: NDArray[np.float64],
    k0: NDArray[np.float64],
    k1: NDArray[np.float64],
    length: NDArray[np.float64],
    turn: NDArray[np.float64],
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Refine spiral lengths so each clothoid reaches its End along the chord.

    ``length`` is the estimate from the tangent deflection.  That estimate
    magnifies coordinate rounding by about 2R / tangent (several mm for a
    large radius written to 0.1 mm); the distance along the chord
    Start->End is conditioned like the coordinates themselves.  Newton steps
    (derivative by forward difference) solve
    ``(P(L) - Start) . chord_unit = |End - Start|``.

    Returns
    -------
    (length, northing, easting)
        Lengths (file units) and the clothoids' end points.
    """
    chord = np.hypot(n1 - n0, e1 - e0)
    un, ue = (n1 - n0) / chord, (e1 - e0) / chord

    def along(lengths: NDArray[np.float64]) -> NDArray[np.float64]:
        dn, de = _clothoid_ends(az0_deg, k0, k1, lengths, turn)  # offsets: no large coordinates
        return dn * un + de * ue - chord

    fitted = length.copy()
    for _ in range(6):
        g = along(fitted)
        h = 1e-6 * fitted
        slope = (along(fitted + h) - g) / h
        step = np.where(np.isfinite(slope) & (slope > 0.1), g / slope, 0.0)
        fitted = np.where(np.abs(step) < 0.5 * fitted, fitted - step, fitted)
    dn, de = _clothoid_ends(az0_deg, k0, k1, fitted, turn)
    return fitted, n0 + dn, e0 + de


def _where(alignment: XAlignment, el: XElement) -> str:
    tag = kind_of(el).tag
    label = f"{tag} {el.name!r}" if el.name else tag
    return f"alignment {alignment.name!r}, element {el.index} ({label})"


def _radius_text(curvature: float, radius: float) -> str:
    if curvature == 0.0:
        return "INF"
    return f"{fmt(radius)} {'right (cw)' if curvature > 0 else 'left (ccw)'}"


_Check = tuple[NDArray[np.bool_], Callable[[int], str]]
_F = NDArray[np.float64]
_B = NDArray[np.bool_]


@dataclass(frozen=True)
class _Shape:
    """Per-element arrays measured from the points (file units, degrees)."""

    is_line: _B
    is_arc: _B
    is_spi: _B
    ok_spi: _B  # spirals whose length could be fitted
    angle_point: _B  # lines that say they start at an angle point
    sn: _F
    se: _F
    en: _F
    ee: _F
    turn: _F
    chord: _F  # Start -> End
    r1: _F  # |Start - Center|
    r2: _F  # |End - Center|
    sweep: _F  # arc's turn from its points, in the direction of rot
    t1: _F  # spiral tangents Start->PI and PI->End
    t2: _F
    defl: _F  # their signed deflection
    theta: _F  # the deflection the way of rot, radians
    rs_attr: _F  # spiral radii as given (INF for a tangent end)
    re_attr: _F
    miss: _F  # spiral End from the fitted clothoid
    end_turn: _F  # PI->End against the fitted clothoid's end direction
    length: _F
    az_start: _F
    az_end: _F
    rad_start: _F
    rad_end: _F


def _refuse_records(a: XAlignment) -> None:
    """What is wrong with the records themselves, before anything is measured."""
    if a.unsupported:
        raise GeometryError(f"alignment {a.name!r}: {a.unsupported[0]} cannot be staked (Line, Curve, Spiral only)")
    if not a.elements:
        raise GeometryError(f"alignment {a.name!r}: <CoordGeom> has no elements")
    for el in a.elements:
        kind_of(el)  # an unknown record class fails here
        if isinstance(el, XSpiral):
            if el.spi_type != "clothoid":
                raise GeometryError(
                    f"{_where(a, el)}: spiType = {el.spi_type!r}; only clothoid spirals can be staked"
                )
            for r in (el.radius_start, el.radius_end):
                if r is not None and not r > 0.0:
                    raise GeometryError(f"{_where(a, el)}: radius {r!r} must be positive or INF")
            if el.radius_start is None and el.radius_end is None:
                raise GeometryError(f"{_where(a, el)}: radiusStart and radiusEnd are both INF (no curvature)")
            if el.radius_start == el.radius_end:
                raise GeometryError(f"{_where(a, el)}: radiusStart = radiusEnd = {el.radius_start!r} is an arc")
        if not isinstance(el, XLine) and el.rot not in (1, -1):
            raise GeometryError(f"{_where(a, el)}: rot = {el.rot!r}, expected +1 (cw) or -1 (ccw)")


def _column(els: Sequence[XElement], name: str, default: float = math.nan) -> _F:
    vals = [getattr(e, name, None) for e in els]
    return np.array([default if v is None else v for v in vals], dtype=float)


def _measure(els: Sequence[XElement], tolerance: float) -> _Shape:
    """Lengths, directions and radii of every element from its points (vectorised by kind)."""
    n = len(els)
    kind = np.array([kind_of(e).code for e in els])
    is_line, is_arc, is_spi = kind == KINDS[XLine].code, kind == KINDS[XCurve].code, kind == KINDS[XSpiral].code
    sn, se, en, ee = (_column(els, k) for k in ("start_n", "start_e", "end_n", "end_e"))
    cn, ce, pn, pe = (_column(els, k) for k in ("center_n", "center_e", "pi_n", "pi_e"))
    turn = _column(els, "rot", 0.0)
    rs_attr = np.where(is_spi, _column(els, "radius_start", math.inf), math.nan)
    re_attr = np.where(is_spi, _column(els, "radius_end", math.inf), math.nan)
    angle_point = is_line & np.array([bool(getattr(e, "angle_point", False)) for e in els], dtype=bool)
    with np.errstate(invalid="ignore", divide="ignore"):
        chord = np.hypot(en - sn, ee - se)
        az_chord = _azimuth(en - sn, ee - se)
        # arcs: radius from Start (the schema's rule), sweep in the direction of rot
        r1 = np.hypot(sn - cn, se - ce)
        r2 = np.hypot(en - cn, ee - ce)
        a1 = _azimuth(sn - cn, se - ce)
        a2 = _azimuth(en - cn, ee - ce)
        sweep = np.mod(turn * (a2 - a1), 360.0)
        # spirals: tangents Start->PI and PI->End
        t1 = np.hypot(pn - sn, pe - se)
        t2 = np.hypot(en - pn, ee - pe)
        b1 = _azimuth(pn - sn, pe - se)
        b2 = _azimuth(en - pn, ee - pe)
        defl = _wrap180(b2 - b1)
        k0 = np.where(np.isinf(rs_attr), 0.0, 1.0 / rs_attr)
        k1 = np.where(np.isinf(re_attr), 0.0, 1.0 / re_attr)
        theta = np.radians(turn * defl)
        defl_len = 2.0 * theta / (k0 + k1)  # L = 2 theta / (1/Rs + 1/Re)
        spi_len = defl_len.copy()
        fit_n = np.full(n, math.nan)
        fit_e = np.full(n, math.nan)
        ok_spi = is_spi & (theta > 0.0) & (defl_len > 0.0) & np.isfinite(defl_len)
        if ok_spi.any():
            i = np.flatnonzero(ok_spi)
            spi_len[i], fit_n[i], fit_e[i] = _fit_clothoid(
                sn[i], se[i], en[i], ee[i], b1[i], k0[i], k1[i], defl_len[i], turn[i]
            )
        # a spiral's End against the clothoid through Start along Start->PI
        miss = np.hypot(fit_n - en, fit_e - ee)
        # and the clothoid's end direction against PI->End
        end_turn = np.abs(_wrap180(b2 - (b1 + turn * np.degrees(spi_len * (k0 + k1) / 2.0))))

        length = np.select([is_line, is_arc], [chord, r1 * np.radians(sweep)], spi_len)
        az_start = np.select([is_line, is_arc], [az_chord, np.mod(a1 + 90.0 * turn, 360.0)], b1)
        az_end = np.select([is_line, is_arc], [az_chord, np.mod(a2 + 90.0 * turn, 360.0)], b2)
        # a zero-length line (some programs write one between elements) carries no
        # direction of its own: it takes the direction in force where it sits
        for j in np.flatnonzero(is_line & ~(chord > tolerance)).tolist():
            ref = az_end[j - 1] if j > 0 else az_start[j + 1] if n > 1 else 0.0
            az_start[j] = az_end[j] = ref
        rad_start = np.select([is_line, is_arc], [np.inf, r1], rs_attr)
        rad_end = np.select([is_line, is_arc], [np.inf, r1], re_attr)
    return _Shape(is_line, is_arc, is_spi, ok_spi, angle_point, sn, se, en, ee, turn, chord, r1, r2, sweep, t1, t2,
                  defl, theta, rs_attr, re_attr, miss, end_turn, length, az_start, az_end, rad_start, rad_end)


def _element_checks(els: Sequence[XElement], g: _Shape, tol: float) -> list[_Check]:
    """Each element against itself and its attributes, in the order a message is preferred at one element."""
    radius_attr = _column(els, "radius_attr")
    length_attr = _column(els, "length_attr")
    delta_attr = _column(els, "delta_attr")
    chord_attr = _column(els, "chord_attr")
    is_arc, is_spi, ok_spi = g.is_arc, g.is_spi, g.ok_spi
    with np.errstate(invalid="ignore", divide="ignore"):
        arc_chord = 2.0 * g.r1 * np.sin(np.radians(g.sweep) / 2.0)
        return [
            (is_arc & ~(g.chord > tol), lambda i: f"Start and End coincide ({fmt(g.chord[i])} apart)"),
            (is_arc & ~(g.r1 > tol), lambda i: f"Center is on Start (radius {fmt(g.r1[i])})"),
            (
                is_arc & ~(np.abs(g.r1 - g.r2) <= tol + _REL * g.r1),
                lambda i: f"|Start-Center| = {fmt(g.r1[i])} but |End-Center| = {fmt(g.r2[i])}",
            ),
            (
                is_spi & ~((g.t1 > tol) & (g.t2 > tol)),
                lambda i: f"PI coincides with Start or End (tangents {fmt(g.t1[i])} and {fmt(g.t2[i])})",
            ),
            (
                is_spi & ~(g.theta > 0.0),
                lambda i: (
                    f"the tangents Start->PI and PI->End turn {fmt(abs(g.defl[i]))} degrees "
                    f"{'right' if g.defl[i] > 0 else 'left'}, against rot = {'cw' if g.turn[i] > 0 else 'ccw'}"
                ),
            ),
            (
                ok_spi & ~(g.miss <= tol),
                lambda i: (
                    f"End is {fmt(g.miss[i])} from the clothoid through Start along Start->PI with radiusStart "
                    f"{fmt(g.rs_attr[i])}, radiusEnd {fmt(g.re_attr[i])} and length {fmt(g.length[i])}"
                ),
            ),
            (
                ok_spi & ~(g.end_turn <= _ARCSEC),
                lambda i: (
                    f"PI->End is {fmt(g.end_turn[i] * 3600.0)} arc-seconds off the end direction of the clothoid "
                    f"through Start and End with radiusStart {fmt(g.rs_attr[i])} and radiusEnd {fmt(g.re_attr[i])}"
                ),
            ),
            (
                is_arc & ~np.isnan(radius_attr) & ~(np.abs(radius_attr - g.r1) <= tol + _REL * g.r1),
                lambda i: f"radius = {fmt(radius_attr[i])} contradicts |Start-Center| = {fmt(g.r1[i])}",
            ),
            (
                ~np.isnan(length_attr) & ~(np.abs(length_attr - g.length) <= tol + _REL * np.abs(g.length)),
                lambda i: f"length = {fmt(length_attr[i])} contradicts the points, which give {fmt(g.length[i])}",
            ),
            (
                is_arc & ~np.isnan(delta_attr)
                & ~(np.abs(delta_attr - g.sweep) <= np.maximum(_ARCSEC, np.degrees(tol / g.r1))),
                lambda i: f"delta = {fmt(delta_attr[i])} degrees contradicts the points, which give {fmt(g.sweep[i])}",
            ),
            (
                is_arc & ~np.isnan(chord_attr) & ~(np.abs(chord_attr - arc_chord) <= tol + _REL * g.r1),
                lambda i: f"chord = {fmt(chord_attr[i])} contradicts the points, which give {fmt(arc_chord[i])}",
            ),
        ]


def _junction_checks(g: _Shape, tol: float, joins: bool) -> list[_Check]:
    """Gaps, kinks and curvature jumps; each check sits on the later element of a join.

    A Line that says it starts at an angle point (``<Feature code="AP">``, as the export writes it) may
    start off the direction of the element before: it is the PI of a tangent with no curve.
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        gap = np.concatenate([[0.0], np.hypot(g.sn[1:] - g.en[:-1], g.se[1:] - g.ee[:-1])])
        kink = np.concatenate([[0.0], np.abs(_wrap180(g.az_start[1:] - g.az_end[:-1]))])
        k_before = np.concatenate([[0.0], np.where(np.isinf(g.rad_end[:-1]), 0.0, g.turn[:-1] / g.rad_end[:-1])])
        k_here = np.where(np.isinf(g.rad_start), 0.0, g.turn / g.rad_start)
        r_before = np.concatenate([[np.inf], g.rad_end[:-1]])
        spiral_joint = np.concatenate([[False], g.is_spi[:-1] | g.is_spi[1:]])
        inf_a, inf_b = k_before == 0.0, k_here == 0.0
        same_r = np.abs(r_before - g.rad_start) <= tol + _REL * np.fmin(r_before, g.rad_start)
        curv_ok = (inf_a & inf_b) | (~inf_a & ~inf_b & (np.sign(k_before) == np.sign(k_here)) & same_r)
    return [
        (~(gap <= tol), lambda i: f"starts {fmt(gap[i])} from the end of the element before"),
        (
            ~(kink <= _ARCSEC) & ~g.angle_point & joins,
            lambda i: f"starts {fmt(kink[i] * 3600.0)} arc-seconds off the direction of the element before",
        ),
        (
            spiral_joint & ~curv_ok & joins,
            lambda i: (
                f"starts with radius {_radius_text(k_here[i], g.rad_start[i])} where the element before ends "
                f"with radius {_radius_text(k_before[i], r_before[i])}"
            ),
        ),
    ]


def _raise_first(a: XAlignment, checks: list[_Check]) -> None:
    """The first failed check in element order (checks of one element in list order)."""
    bad = np.zeros(len(a.elements), dtype=bool)
    for mask, _ in checks:
        bad |= mask
    if bad.any():
        first = int(np.flatnonzero(bad)[0])
        for mask, message in checks:
            if mask[first]:
                raise GeometryError(f"{_where(a, a.elements[first])}: {message(first)}")


def _check_length_attr(a: XAlignment, total: float, tolerance: float) -> None:
    span = abs(station_at(a, a.sta_start + total) - a.sta_start)  # what some programs write instead
    if a.length_attr is not None and not min(abs(a.length_attr - total), abs(a.length_attr - span)) <= (
        tolerance + _REL * total
    ):
        raise GeometryError(
            f"alignment {a.name!r}: length = {fmt(a.length_attr)} contradicts its elements, which add up to {fmt(total)}"
        )


def validate_geometry(alignment: XAlignment, tolerance: float = 0.001, *,
                      joins: bool = True) -> tuple[XMeasured, ...]:
    """Check an alignment's geometry and measure its elements from their points.

    Parameters
    ----------
    alignment : XAlignment
    tolerance : float
        Position tolerance in file units (see the module docstring for every
        tolerance derived from it; directions are held to 1 arc-second).
    joins : bool
        Check directions and curvatures at the joins (a design file); the
        export of a staked design passes False, as its angle points and
        curvature jumps are part of the design.

    Returns
    -------
    tuple of XMeasured
        Per element: internal start station, length, start/end azimuths
        (degrees clockwise from grid north), radii and turn.

    Raises
    ------
    GeometryError
        The first problem in element order, naming the element by position
        and name: unsupported content, a spiral type other than clothoid,
        a degenerate element, points that contradict themselves or the
        attributes, a gap, a kink, a curvature jump at a spiral, or station
        equations that contradict the stationing.
    """
    a = alignment
    _refuse_records(a)
    els = a.elements
    g = _measure(els, tolerance)
    _raise_first(a, _element_checks(els, g, tolerance) + _junction_checks(g, tolerance, joins))
    total = float(g.length.sum())
    _check_length_attr(a, total, tolerance)
    _check_equations(a, total, tolerance)
    starts = a.sta_start + np.concatenate([[0.0], np.cumsum(g.length)[:-1]])
    return tuple(
        XMeasured(
            index=el.index,
            kind=kind_of(el).kind,
            name=el.name,
            sta_start=float(starts[i]),
            length=float(g.length[i]),
            az_start=float(g.az_start[i]),
            az_end=float(g.az_end[i]),
            radius_start=None if math.isinf(g.rad_start[i]) else float(g.rad_start[i]),
            radius_end=None if math.isinf(g.rad_end[i]) else float(g.rad_end[i]),
            turn=int(g.turn[i]),
        )
        for i, el in enumerate(els)
    )


def _check_equations(a: XAlignment, total: float, tolerance: float) -> None:
    """Equations in order, on the alignment, and each staBack on the stationing."""
    end = a.sta_start + total
    prev = None
    for k, eq in enumerate(a.equations, start=1):
        where = f"alignment {a.name!r}, StaEquation {k} (staInternal {fmt(eq.sta_internal)})"
        if not (a.sta_start < eq.sta_internal < end):  # as the stationing needs it: a region on either side
            raise GeometryError(
                f"{where}: not inside the alignment's internal stations {fmt(a.sta_start)} to {fmt(end)} "
                "(an equation lies after the start and before the end)"
            )
        if prev is not None and not eq.sta_internal > prev.sta_internal:
            raise GeometryError(f"{where}: not after the equation before (staInternal {fmt(prev.sta_internal)})")
        if eq.increment not in (1, -1):
            raise GeometryError(f"{where}: increment {eq.increment!r}, expected +1 or -1")
        if eq.sta_back is not None:
            # station_at(a, eq.sta_internal, before=k - 1), in constant time: equations are in order
            expected = (eq.sta_internal if prev is None
                        else prev.sta_ahead + prev.increment * (eq.sta_internal - prev.sta_internal))
            if not abs(eq.sta_back - expected) <= tolerance + _REL * abs(expected):
                raise GeometryError(
                    f"{where}: staBack = {fmt(eq.sta_back)} but the stationing reaches {fmt(expected)} there"
                )
        prev = eq


def station_at(alignment: XAlignment, internal: float, before: int | None = None) -> float:
    """The station in force at an internal station.

    Parameters
    ----------
    alignment : XAlignment
    internal : float
        Internal station (``staStart`` + distance, file units).
    before : int or None
        Apply only the first ``before`` equations (all when None).  At an
        equation's own internal station the ahead value is in force.

    Returns
    -------
    float
        The station value, file units.
    """
    eqs = alignment.equations if before is None else alignment.equations[:before]
    sta = internal
    for eq in eqs:
        if internal >= eq.sta_internal:
            sta = eq.sta_ahead + eq.increment * (internal - eq.sta_internal)
    return sta


