"""Circular curve relations: simple curves and compound curves at a PI.

Sources (route-surveying handbook relations, see shared references):
T = R tan(D/2), L = R D, LC = 2R sin(D/2), E = R (sec(D/2) - 1),
M = R (1 - cos(D/2)); degree of curve, arc definition, D = 18000/(pi R)
for a 100-ft arc.  Two-centred compound curve (R1 > R2, I = D1 + D2):
T_A = (R2 - R1 cos I + (R1 - R2) cos D2) / sin I on the larger-radius side,
T_B = (R1 - R2 cos I - (R1 - R2) cos D1) / sin I on the smaller.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..angles import sincosd
from ..errors import GeometryError

__all__ = [
    "ArcProperties",
    "arc_properties",
    "two_centered_tangents",
    "chained_tangents",
    "CompoundTangents",
    "compound_tangents",
    "degree_of_curve_arc",
    "intersect_tangents",
]


@dataclass(frozen=True)
class ArcProperties:
    """Classic figures of one circular arc, in job units and degrees.

    ``tangent`` and ``external`` are ``None`` for arcs of 180 degrees or more,
    where they do not exist.
    """

    radius: float
    delta: float
    length: float
    tangent: float | None
    chord: float
    external: float | None
    middle_ordinate: float


def arc_properties(radius: float, delta_deg: float) -> ArcProperties:
    """Compute L, T, LC, E and M of an arc of ``radius`` and ``delta_deg``."""
    d = math.radians(delta_deg)
    half = d / 2.0
    quarter = d / 4.0
    big = delta_deg >= 180.0 - 1e-12
    tangent = None if big else radius * math.tan(half)
    # E = T tan(D/4) and M = 2R sin^2(D/4): the same values as R(sec-1) and
    # R(1-cos) without the cancellation those suffer on flat curves.
    external = None if big else radius * math.tan(half) * math.tan(quarter)
    return ArcProperties(
        radius=radius,
        delta=delta_deg,
        length=radius * d,
        tangent=tangent,
        chord=2.0 * radius * math.sin(half),
        external=external,
        middle_ordinate=2.0 * radius * math.sin(quarter) ** 2,
    )


def degree_of_curve_arc(radius_ft: float) -> float:
    """Degree of curve, arc definition (100-ft arc), degrees: 18000/(pi R)."""
    return 18000.0 / (math.pi * radius_ft)


def two_centered_tangents(r1: float, r2: float, d1_deg: float, d2_deg: float) -> tuple[float, float]:
    """T_A and T_B of a two-centred compound curve.

    Parameters
    ----------
    r1, r2 : float
        The larger and the smaller radius (``r1 >= r2``), job units.
    d1_deg, d2_deg : float
        Central angles of the larger and of the smaller arc, degrees.

    Returns
    -------
    (T_A, T_B)
        T_A from the PI along the tangent on the larger-radius arc's side,
        T_B along the tangent on the smaller-radius arc's side.
    """
    if r1 < r2:
        raise ValueError("two_centered_tangents needs r1 >= r2")
    i = math.radians(d1_deg + d2_deg)
    si, ci = math.sin(i), math.cos(i)
    t_a = (r2 - r1 * ci + (r1 - r2) * math.cos(math.radians(d2_deg))) / si
    t_b = (r1 - r2 * ci - (r1 - r2) * math.cos(math.radians(d1_deg))) / si
    return t_a, t_b


def chained_tangents(radii: tuple[float, ...], deltas_deg: tuple[float, ...]) -> tuple[float, float]:
    """Back and ahead tangents of any run of same-turn arcs, by chaining.

    The arcs are walked from a PC at the origin heading along +y, turning
    right; the PI is where the back tangent (the y axis) meets the ahead
    tangent through the end point.  Valid for 0 < I < 180 degrees.
    """
    x = y = 0.0
    head = 0.0
    for r, d in zip(radii, deltas_deg):
        dr = math.radians(d)
        chord = 2.0 * r * math.sin(dr / 2.0)
        mid = head + dr / 2.0
        x += chord * math.sin(mid)
        y += chord * math.cos(mid)
        head += dr
    s, c = math.sin(head), math.cos(head)
    t_ahead = x / s
    t_back = y - t_ahead * c
    return t_back, t_ahead


@dataclass(frozen=True)
class CompoundTangents:
    """Tangent lengths of a curve from its PI.

    ``back`` runs from the PI back to the PC, ``ahead`` from the PI to the
    PT.  For a two-centred curve ``t_a``/``t_b`` are the published T_A and
    T_B and ``t_a_side`` says which side T_A lies on: ``"back"`` when the
    larger-radius arc comes first, ``"ahead"`` when it comes second.
    """

    back: float
    ahead: float
    t_a: float | None = None
    t_b: float | None = None
    t_a_side: str | None = None


def compound_tangents(radii: tuple[float, ...], deltas_deg: tuple[float, ...]) -> CompoundTangents:
    """Tangents from the PI of a simple or compound curve, arcs in station order.

    One arc: T = R tan(I/2) both ways.  Two arcs: the published two-centred
    formulas, T_A put on the side of the larger radius whichever arc comes
    first (so the classic swap of T_A and T_B cannot happen here).  Three
    or more: chaining (:func:`chained_tangents`).
    """
    total = sum(deltas_deg)
    if not 0.0 < total < 180.0:
        raise GeometryError(f"intersection angle {total:.6f} deg must be between 0 and 180")
    if len(radii) == 1:
        t = radii[0] * math.tan(math.radians(total) / 2.0)
        return CompoundTangents(t, t)
    if len(radii) == 2:
        (ra, rb), (da, db) = radii, deltas_deg
        larger_first = ra >= rb
        if larger_first:
            t_a, t_b = two_centered_tangents(ra, rb, da, db)
            return CompoundTangents(t_a, t_b, t_a, t_b, "back")
        t_a, t_b = two_centered_tangents(rb, ra, db, da)
        return CompoundTangents(t_b, t_a, t_a, t_b, "ahead")
    back, ahead = chained_tangents(radii, deltas_deg)
    return CompoundTangents(back, ahead)


def intersect_tangents(n0: float, e0: float, az0: float, n1: float, e1: float, az1: float) -> CompoundTangents:
    """Back and ahead tangent lengths from the PI where the line through (n0, e0)
    along ``az0`` meets the line through (n1, e1) along ``az1`` (job units;
    azimuths in degrees clockwise from grid north; infinite for parallel lines).
    """
    s0, c0 = (float(v) for v in sincosd(az0))
    s1, c1 = (float(v) for v in sincosd(az1))
    dn, de = n1 - n0, e1 - e0
    det = s1 * c0 - c1 * s0  # sin(az1 - az0)
    t_back = (dn * s1 - de * c1) / det if det else math.inf
    t_ahead = (de * c0 - dn * s0) / det if det else math.inf
    return CompoundTangents(t_back, t_ahead)
