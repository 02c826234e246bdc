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
from collections.abc import Callable

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
    if a.unsupported:
        raise GeometryError(f"alignment {a.name!r}: {a.unsupported[0]} cannot be staked (Line, Curve, Spiral only)")
    els = a.elements
    if not els:
        raise GeometryError(f"alignment {a.name!r}: <CoordGeom> has no elements")
    codes = [kind_of(el).code for el in els]  # an unknown record class fails here
    for el in els:
        if isinstance(el, XSpiral) and el.spi_type != "clothoid":
            raise GeometryError(
                f"{_where(a, el)}: spiType = {el.spi_type!r}; only clothoid spirals can be staked"
            )
        if isinstance(el, XSpiral):
            for r in (el.radius_start, el.radius_end):
                if r is not None and not r > 0.0:
                    raise GeometryError(f"{_where(a, el)}: radius {r!r} must be positive or INF")
            if el.radius_start is None and el.radius_end is None:
                raise GeometryError(f"{_where(a, el)}: radiusStart and radiusEnd are both INF (no curvature)")
            if el.radius_start == el.radius_end:
                raise GeometryError(f"{_where(a, el)}: radiusStart = radiusEnd = {el.radius_start!r} is an arc")
        if not isinstance(el, XLine) and el.rot not in (1, -1):
            raise GeometryError(f"{_where(a, el)}: rot = {el.rot!r}, expected +1 (cw) or -1 (ccw)")

    n = len(els)
    kind = np.array(codes)
    nan = math.nan
    sn = np.array([e.start_n for e in els], dtype=float)
    se = np.array([e.start_e for e in els], dtype=float)
    en = np.array([e.end_n for e in els], dtype=float)
    ee = np.array([e.end_e for e in els], dtype=float)
    cn = np.array([getattr(e, "center_n", nan) for e in els], dtype=float)
    ce = np.array([getattr(e, "center_e", nan) for e in els], dtype=float)
    pn = np.array([getattr(e, "pi_n", nan) for e in els], dtype=float)
    pe = np.array([getattr(e, "pi_e", nan) for e in els], dtype=float)
    turn = np.array([getattr(e, "rot", 0) for e in els], dtype=float)
    is_spiral = kind == KINDS[XSpiral].code
    rs_attr = np.where(is_spiral, [getattr(e, "radius_start", None) or math.inf for e in els], nan)
    re_attr = np.where(is_spiral, [getattr(e, "radius_end", None) or math.inf for e in els], nan)

    def attr(name: str) -> NDArray[np.float64]:
        vals = [getattr(e, name, None) for e in els]
        return np.array([nan if v is None else v for v in vals], dtype=float)

    with np.errstate(invalid="ignore", divide="ignore"):
        is_line, is_arc, is_spi = kind == KINDS[XLine].code, kind == KINDS[XCurve].code, is_spiral
        # lines
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
        fit_n = np.full(n, nan)
        fit_e = np.full(n, nan)
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

        # element checks, in the order a message is preferred at one element
        radius_attr = attr("radius_attr")
        length_attr = attr("length_attr")
        delta_attr = attr("delta_attr")
        chord_attr = attr("chord_attr")
        arc_chord = 2.0 * r1 * np.sin(np.radians(sweep) / 2.0)
        tol = tolerance
        checks: list[tuple[NDArray[np.bool_], Callable[[int], str]]] = [
            (is_arc & ~(chord > tol), lambda i: f"Start and End coincide ({fmt(chord[i])} apart)"),
            (is_arc & ~(r1 > tol), lambda i: f"Center is on Start (radius {fmt(r1[i])})"),
            (
                is_arc & ~(np.abs(r1 - r2) <= tol + _REL * r1),
                lambda i: f"|Start-Center| = {fmt(r1[i])} but |End-Center| = {fmt(r2[i])}",
            ),
            (
                is_spi & ~((t1 > tol) & (t2 > tol)),
                lambda i: f"PI coincides with Start or End (tangents {fmt(t1[i])} and {fmt(t2[i])})",
            ),
            (
                is_spi & ~(theta > 0.0),
                lambda i: (
                    f"the tangents Start->PI and PI->End turn {fmt(abs(defl[i]))} degrees "
                    f"{'right' if defl[i] > 0 else 'left'}, against rot = {'cw' if turn[i] > 0 else 'ccw'}"
                ),
            ),
            (
                ok_spi & ~(miss <= tol),
                lambda i: (
                    f"End is {fmt(miss[i])} from the clothoid through Start along Start->PI with radiusStart "
                    f"{fmt(rs_attr[i])}, radiusEnd {fmt(re_attr[i])} and length {fmt(length[i])}"
                ),
            ),
            (
                ok_spi & ~(end_turn <= _ARCSEC),
                lambda i: (
                    f"PI->End is {fmt(end_turn[i] * 3600.0)} arc-seconds off the end direction of the clothoid "
                    f"through Start and End with radiusStart {fmt(rs_attr[i])} and radiusEnd {fmt(re_attr[i])}"
                ),
            ),
            (
                is_arc & ~np.isnan(radius_attr) & ~(np.abs(radius_attr - r1) <= tol + _REL * r1),
                lambda i: f"radius = {fmt(radius_attr[i])} contradicts |Start-Center| = {fmt(r1[i])}",
            ),
            (
                ~np.isnan(length_attr) & ~(np.abs(length_attr - length) <= tol + _REL * np.abs(length)),
                lambda i: f"length = {fmt(length_attr[i])} contradicts the points, which give {fmt(length[i])}",
            ),
            (
                is_arc & ~np.isnan(delta_attr) & ~(np.abs(delta_attr - sweep) <= np.maximum(_ARCSEC, np.degrees(tol / r1))),
                lambda i: f"delta = {fmt(delta_attr[i])} degrees contradicts the points, which give {fmt(sweep[i])}",
            ),
            (
                is_arc & ~np.isnan(chord_attr) & ~(np.abs(chord_attr - arc_chord) <= tol + _REL * r1),
                lambda i: f"chord = {fmt(chord_attr[i])} contradicts the points, which give {fmt(arc_chord[i])}",
            ),
        ]

        # junctions: the check sits on the later element (i + 1)
        gap = np.concatenate([[0.0], np.hypot(sn[1:] - en[:-1], se[1:] - ee[:-1])])
        kink = np.concatenate([[0.0], np.abs(_wrap180(az_start[1:] - az_end[:-1]))])
        k_before = np.concatenate([[0.0], np.where(np.isinf(rad_end[:-1]), 0.0, turn[:-1] / rad_end[:-1])])
        k_here = np.where(np.isinf(rad_start), 0.0, turn / rad_start)
        r_before = np.concatenate([[np.inf], rad_end[:-1]])
        spiral_joint = np.concatenate([[False], is_spi[:-1] | is_spi[1:]])
        inf_a, inf_b = k_before == 0.0, k_here == 0.0
        same_r = np.abs(r_before - rad_start) <= tol + _REL * np.fmin(r_before, rad_start)
        curv_ok = (inf_a & inf_b) | (~inf_a & ~inf_b & (np.sign(k_before) == np.sign(k_here)) & same_r)
        checks += [
            (~(gap <= tol), lambda i: f"starts {fmt(gap[i])} from the end of the element before"),
            (
                ~(kink <= _ARCSEC) & joins,
                lambda i: f"starts {fmt(kink[i] * 3600.0)} arc-seconds off the direction of the element before",
            ),
            (
                spiral_joint & ~curv_ok & joins,
                lambda i: (
                    f"starts with radius {_radius_text(k_here[i], rad_start[i])} where the element before ends "
                    f"with radius {_radius_text(k_before[i], r_before[i])}"
                ),
            ),
        ]

    bad = np.zeros(n, dtype=bool)
    for mask, _ in checks:
        bad |= mask
    if bad.any():
        first = int(np.flatnonzero(bad)[0])
        for mask, message in checks:
            if mask[first]:
                raise GeometryError(f"{_where(a, els[first])}: {message(first)}")

    total = float(length.sum())
    span = abs(station_at(a, a.sta_start + total) - a.sta_start)  # what some programs write instead
    if a.length_attr is not None and not min(abs(a.length_attr - total), abs(a.length_attr - span)) <= (
        tolerance + _REL * total
    ):
        raise GeometryError(
            f"alignment {a.name!r}: length = {fmt(a.length_attr)} contradicts its elements, which add up to {fmt(total)}"
        )
    _check_equations(a, total, tolerance)

    starts = a.sta_start + np.concatenate([[0.0], np.cumsum(length)[:-1]])
    return tuple(
        XMeasured(
            index=els[i].index,
            kind=kind_of(els[i]).kind,
            name=els[i].name,
            sta_start=float(starts[i]),
            length=float(length[i]),
            az_start=float(az_start[i]),
            az_end=float(az_end[i]),
            radius_start=None if math.isinf(rad_start[i]) else float(rad_start[i]),
            radius_end=None if math.isinf(rad_end[i]) else float(rad_end[i]),
            turn=int(turn[i]),
        )
        for i in range(n)
    )


def _check_equations(a: XAlignment, total: float, tolerance: float) -> None:
    """Equations in order, on the alignment, and each staBack on the stationing."""
    end = a.sta_start + total
    prev = None
    for k, eq in enumerate(a.equations, start=1):
        where = f"alignment {a.name!r}, StaEquation {k} (staInternal {fmt(eq.sta_internal)})"
        if not (a.sta_start - tolerance <= eq.sta_internal <= end + tolerance):
            raise GeometryError(
                f"{where}: outside the alignment's internal stations {fmt(a.sta_start)} to {fmt(end)}"
            )
        if prev is not None and not eq.sta_internal > prev.sta_internal:
            raise GeometryError(f"{where}: not after the equation before (staInternal {fmt(prev.sta_internal)})")
        if eq.increment not in (1, -1):
            raise GeometryError(f"{where}: increment {eq.increment!r}, expected +1 or -1")
        if eq.sta_back is not None:
            expected = station_at(a, eq.sta_internal, before=k - 1)
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


