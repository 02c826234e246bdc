"""``alignment.xml``: the staked design handed on as LandXML 1.2.

The alignment (lines, arcs and clothoids by their points, with the start
station and the station equations), the profile, and every stake as a
``CgPoint`` (name = point number, code, northing easting elevation).  The
XML itself is written by :mod:`stakeout.landxml`, the project's only XML
module; this writer only turns the design into its plain records.

The root's ``date`` and ``time`` (the schema requires both) are those of
``SOURCE_DATE_EPOCH`` (seconds since 1970-01-01 UTC, the reproducible-builds
convention) when it is set, else the fixed 1970-01-01 00:00:00 (the same as
``SOURCE_DATE_EPOCH=0``): never the clock, so the same input gives the same
bytes.
"""

from __future__ import annotations

import datetime as _dt
import math
import os
from collections.abc import Callable

import numpy as np

from .. import __version__
from ..alignment import Arc, Element, Line, Spiral
from ..alignment.curves import intersect_tangents
from ..angles import angle_difference, sincosd
from ..design import Design
from ..errors import OutputError, StakeoutError
from ..numbers import round_to
from ..landxml import XPVI, XCurve, XElement, XEquation, XLine, XPoints, XSpiral, write_landxml

__all__ = ["alignment_xml", "EXPORT", "MAX_ARC_TURN", "MAX_SPIRAL_TURN"]


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


def _pieces(el: Element, most: float) -> list[Element]:
    """``el`` as equal pieces turning at most ``most`` degrees each (itself when it turns less)."""
    count = math.ceil(el.central_angle / most - 1e-9)
    if count <= 1:
        return [el]
    k0, k1 = el.curvature_start, el.curvature_end
    step = el.length / count
    out: list[Element] = []
    n, e, az = el.start_northing, el.start_easting, el.start_azimuth
    for k in range(count):  # each piece starts where the one before ends
        start = (el.start + k * step, n, e, az, step)
        if isinstance(el, Arc):
            piece: Element = Arc.follow(*start, el.radius, el.turn)
        else:
            piece = Spiral.follow(*start, k0 + (k1 - k0) * k / count, k0 + (k1 - k0) * (k + 1) / count)
        out.append(piece)
        n, e, az = piece.end_northing, piece.end_easting, piece.end_azimuth
    return out


def _line(name: str, el: Element, before: Element | None) -> list[XElement]:
    deflects = before is not None and abs(float(angle_difference(before.end_azimuth, el.start_azimuth))) > _ANGLE_EPS
    return [XLine(0, f"L{name}", el.start_northing, el.start_easting, el.end_northing, el.end_easting,
                  angle_point=deflects)]


def _arc(name: str, el: Element, before: Element | None) -> list[XElement]:
    assert isinstance(el, Arc)
    parts = _pieces(el, MAX_ARC_TURN)
    return [XCurve(0, f"C{name}" if len(parts) == 1 else f"C{name}.{k}", p.start_northing, p.start_easting,
                   el.center_northing, el.center_easting, p.end_northing, p.end_easting, el.turn)
            for k, p in enumerate(parts, start=1)]


def _spiral(name: str, el: Element, before: Element | None) -> list[XElement]:
    out: list[XElement] = []
    parts = _pieces(el, MAX_SPIRAL_TURN)
    for k, p in enumerate(parts, start=1):
        pn, pe = _spiral_pi(p)
        out.append(XSpiral(0, f"S{name}" if len(parts) == 1 else f"S{name}.{k}", p.start_northing, p.start_easting,
                           pn, pe, p.end_northing, p.end_easting, p.radius_start, p.radius_end, el.turn))
    return out


#: How each element class of the design is exported: one entry per class of ``alignment/elements.py``
#: (a test holds this); a class missing here is an error, never a ``<Line>``.
EXPORT: dict[type[Element], Callable[[str, Element, Element | None], list[XElement]]] = {Line: _line, Arc: _arc, Spiral: _spiral}


def _elements(d: Design) -> list[XElement]:
    out: list[XElement] = []
    before: Element | None = None
    for i, el in enumerate(d.alignment.elements, start=1):
        export = EXPORT.get(type(el))
        if export is None:
            raise OutputError(f"alignment.xml: element {i} of the alignment is a {type(el).__name__!r}, "
                              "which the LandXML export does not know")
        out.extend(export(str(i), el, before))
        before = el
    return out


def _profile(d: Design) -> list[XPVI] | None:
    if d.profile is None:
        return None
    out = []
    for spec, row in zip(d.profile.pvis, d.profile.rows()):
        if spec.radius is not None and row.grade_in is not None and row.grade_out is not None:
            # derived (a cross-check on reading): rounded as the CSVs round lengths
            arc = float(round_to(spec.radius * abs(math.atan(row.grade_out) - math.atan(row.grade_in)), 4))
            out.append(XPVI(spec.station, spec.elevation, "circ", arc, None, None, spec.radius))
        elif spec.curve_length_back or spec.curve_length_ahead:
            kind = "para" if spec.curve_length_back == spec.curve_length_ahead else "unsym"
            out.append(XPVI(spec.station, spec.elevation, kind, spec.curve_length_back + spec.curve_length_ahead,
                            spec.curve_length_back, spec.curve_length_ahead))
        else:
            out.append(XPVI(spec.station, spec.elevation))
    return out


#: Largest SOURCE_DATE_EPOCH taken (9999-12-31 UTC: xs:date has four-digit years here).
_MAX_EPOCH = 253402300799


def source_date() -> _dt.datetime | None:
    """The date of ``SOURCE_DATE_EPOCH`` (UTC), None when unset or empty.

    Raises
    ------
    OutputError
        A value that is not a whole number of seconds from 0 to 253402300799.
    """
    text = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if not text:
        return None
    if not text.isdigit() or int(text) > _MAX_EPOCH:
        raise OutputError(f"SOURCE_DATE_EPOCH = {text[:40]!r}: expected whole seconds since 1970-01-01 UTC "
                          f"(0 to {_MAX_EPOCH}); it dates alignment.xml")
    return _dt.datetime.fromtimestamp(int(text), _dt.timezone.utc).replace(tzinfo=None)


#: The ``code`` of a control point's CgPoint (outputs contract, "Control points in the outputs").
CONTROL_CODE = "control"


def _points(d: Design) -> XPoints:
    """Every stake, then every control point the job lists or uses (code ``control``), as CgPoints."""
    sp = d.stakes
    ctrl = d.job.control_points()
    if not ctrl:
        return XPoints(sp.point, sp.northing, sp.easting, sp.elevation, sp.code)
    nan = np.nan
    stake_z = sp.elevation if sp.elevation is not None else np.full(len(sp), nan)
    ctrl_z = np.array([nan if c.elevation is None else c.elevation for c in ctrl], dtype=float)
    elevation = np.concatenate([stake_z, ctrl_z])
    return XPoints([*sp.point, *(c.id for c in ctrl)],
                   np.concatenate([sp.northing, [c.northing for c in ctrl]]),
                   np.concatenate([sp.easting, [c.easting for c in ctrl]]),
                   None if np.isnan(elevation).all() else elevation,
                   [*sp.code, *(CONTROL_CODE for _ in ctrl)])


def alignment_xml(d: Design) -> bytes:
    """Render ``alignment.xml`` (LandXML 1.2, the same bytes for the same design)."""
    eqs = [XEquation(eq.internal, eq.ahead, eq.back) for eq in d.stationing.equations]
    points = _points(d)
    name = d.job.info.name or d.alignment.name
    try:
        return write_landxml(d.unit.key, d.alignment.name, d.alignment.start_station, _elements(d), eqs,
                             _profile(d), points, "stakeout", f"staked design of {name}"[:200],
                             profile_name=d.profile.name or None if d.profile is not None else None,
                             application_version=__version__, created=source_date())
    except StakeoutError as exc:  # name the output and the part of the job it comes from
        raise type(exc)(f"alignment.xml (the LandXML export of [alignment] and [profile]): {exc}") from None
