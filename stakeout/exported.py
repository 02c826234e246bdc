"""The design's alignment as LandXML records (plain data, no XML): what ``alignment.xml`` holds.

Lines, arcs (by start, centre and end) and clothoids (by start, the PI of
their end tangents and end), each element kind through one
:class:`~stakeout.alignment.kinds.PerKind` table.  Computed once per build
by the presentation model (:attr:`stakeout.presentation.Presentation.landxml_elements`);
the XML itself is written by :mod:`stakeout.landxml`.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import cast

from .alignment import Arc, Element, Spiral
from .alignment.curves import intersect_tangents
from .alignment.kinds import PerKind
from .angles import angle_difference, sincosd
from .errors import OutputError
from .landxml import XCurve, XElement, XLine, XSpiral

__all__ = ["landxml_elements", "EXPORT", "MAX_ARC_TURN", "MAX_SPIRAL_TURN"]


#: Largest turn of one exported element, degrees.  LandXML describes an arc by its Start, Center and End,
#: which say nothing of the sweep when Start and End (nearly) meet; a spiral by the PI of its end tangents,
#: which runs off to infinity as its turn nears 180 degrees.  A longer element is written as equal pieces
#: of at most this turn (an arc of 359.9999 degrees as three arcs of one circle): exactly the same curve.
MAX_ARC_TURN = 150.0
MAX_SPIRAL_TURN = 90.0
_ANGLE_EPS = 1e-9  # degrees: a smaller change of direction at a join is none (as the alignment counts it)


def _spiral_pi(el: Element) -> tuple[float, float]:
    """Where the spiral's start and end tangents meet."""
    t = intersect_tangents(el.start_northing, el.start_easting, el.start_azimuth,
                           el.end_northing, el.end_easting, el.end_azimuth).back
    s0, c0 = (float(v) for v in sincosd(el.start_azimuth))
    return el.start_northing + t * c0, el.start_easting + t * s0


#: Makes piece ``k`` of ``count`` of an element from where it starts (station, N, E, azimuth, length).
PieceMaker = Callable[[tuple[float, float, float, float, float], int, int], Element]


def _pieces(el: Element, most: float, make: PieceMaker) -> list[Element]:
    """``el`` as equal pieces turning at most ``most`` degrees each (itself when it turns less)."""
    count = math.ceil(el.central_angle / most - 1e-9)
    if count <= 1:
        return [el]
    step = el.length / count
    out: list[Element] = []
    n, e, az = el.start_northing, el.start_easting, el.start_azimuth
    for k in range(count):  # each piece starts where the one before ends
        piece = make((el.start + k * step, n, e, az, step), k, count)
        out.append(piece)
        n, e, az = piece.end_northing, piece.end_easting, piece.end_azimuth
    return out


def _line(name: str, el: Element, before: Element | None) -> list[XElement]:
    deflects = before is not None and abs(float(angle_difference(before.end_azimuth, el.start_azimuth))) > _ANGLE_EPS
    return [XLine(0, f"L{name}", el.start_northing, el.start_easting, el.end_northing, el.end_easting,
                  angle_point=deflects)]


def _arc(name: str, element: Element, before: Element | None) -> list[XElement]:
    el = cast(Arc, element)  # the table's "arc" entry
    parts = _pieces(el, MAX_ARC_TURN, lambda start, k, count: Arc.follow(*start, el.radius, el.turn))
    return [XCurve(0, f"C{name}" if len(parts) == 1 else f"C{name}.{k}", p.start_northing, p.start_easting,
                   el.center_northing, el.center_easting, p.end_northing, p.end_easting, el.turn)
            for k, p in enumerate(parts, start=1)]


def _spiral(name: str, el: Element, before: Element | None) -> list[XElement]:
    out: list[XElement] = []
    k0, k1 = el.curvature_start, el.curvature_end
    parts = _pieces(el, MAX_SPIRAL_TURN, lambda start, k, count: Spiral.follow(
        *start, k0 + (k1 - k0) * k / count, k0 + (k1 - k0) * (k + 1) / count))
    for k, p in enumerate(parts, start=1):
        pn, pe = _spiral_pi(p)
        out.append(XSpiral(0, f"S{name}" if len(parts) == 1 else f"S{name}.{k}", p.start_northing, p.start_easting,
                           pn, pe, p.end_northing, p.end_easting, p.radius_start, p.radius_end, el.turn))
    return out


#: How each element kind of the design is exported: a :class:`~stakeout.alignment.kinds.PerKind` table,
#: so a kind missing here fails at import and an unregistered class is an error, never a ``<Line>``.
EXPORT: PerKind[Callable[[str, Element, Element | None], list[XElement]]] = PerKind(
    "LandXML export", {"line": _line, "arc": _arc, "spiral": _spiral})


def landxml_elements(elements: Sequence[Element]) -> list[XElement]:
    """The elements as LandXML records, element ``i`` (from 1) named ``L{i}``/``C{i}``/``S{i}``
    (``C{i}.1``, ``C{i}.2`` ... for the pieces of a long one).

    Raises
    ------
    OutputError
        An element of a class the export does not know, naming it.
    """
    out: list[XElement] = []
    before: Element | None = None
    for i, el in enumerate(elements, start=1):
        try:
            export = EXPORT[el]
        except TypeError:
            raise OutputError(f"alignment.xml: element {i} of the alignment is a {type(el).__name__!r}, "
                              "which the LandXML export does not know") from None
        out.extend(export(str(i), el, before))
        before = el
    return out
