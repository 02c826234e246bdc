"""``alignment.xml``: the staked design handed on as LandXML 1.2.

The alignment (lines, arcs and clothoids by their points, with the start
station and the station equations), the profile, and every stake as a
``CgPoint`` (name = point number, code, northing easting elevation).  The
XML itself is written by :mod:`stakeout.landxml`, the project's only XML
module; this writer only turns the design into its plain records.
"""

from __future__ import annotations

import math

from .. import __version__
from ..alignment import Arc, Element, Spiral
from ..alignment.curves import intersect_tangents
from ..angles import sincosd
from ..design import Design
from ..landxml import XPVI, XCurve, XElement, XEquation, XLine, XPoints, XSpiral, write_landxml

__all__ = ["alignment_xml"]


def _spiral_pi(el: Element) -> tuple[float, float]:
    """Where the spiral's start and end tangents meet."""
    t = intersect_tangents(el.start_northing, el.start_easting, el.start_azimuth,
                           el.end_northing, el.end_easting, el.end_azimuth).back
    s0, c0 = (float(v) for v in sincosd(el.start_azimuth))
    return el.start_northing + t * c0, el.start_easting + t * s0


def _elements(d: Design) -> list[XElement]:
    out: list[XElement] = []
    for i, el in enumerate(d.alignment.elements, start=1):
        ends = (el.start_northing, el.start_easting)
        if isinstance(el, Arc):
            out.append(XCurve(i, f"C{i}", *ends, el.center_northing, el.center_easting, el.end_northing,
                              el.end_easting, el.turn))
        elif isinstance(el, Spiral):
            pn, pe = _spiral_pi(el)
            out.append(XSpiral(i, f"S{i}", *ends, pn, pe, el.end_northing, el.end_easting, el.radius_start,
                               el.radius_end, el.turn))
        else:
            out.append(XLine(i, f"L{i}", *ends, el.end_northing, el.end_easting))
    return out


def _profile(d: Design) -> list[XPVI] | None:
    if d.profile is None:
        return None
    out = []
    for spec, row in zip(d.profile.pvis, d.profile.rows()):
        if spec.radius is not None and row.grade_in is not None and row.grade_out is not None:
            arc = spec.radius * abs(math.atan(row.grade_out) - math.atan(row.grade_in))
            out.append(XPVI(spec.station, spec.elevation, "circ", arc, None, None, spec.radius))
        elif spec.curve_length_back or spec.curve_length_ahead:
            kind = "para" if spec.curve_length_back == spec.curve_length_ahead else "unsym"
            out.append(XPVI(spec.station, spec.elevation, kind, spec.curve_length_back + spec.curve_length_ahead,
                            spec.curve_length_back, spec.curve_length_ahead))
        else:
            out.append(XPVI(spec.station, spec.elevation))
    return out


def alignment_xml(d: Design) -> bytes:
    """Render ``alignment.xml`` (LandXML 1.2, the same bytes for the same design)."""
    sp = d.stakes
    eqs = [XEquation(eq.internal, eq.ahead, eq.back) for eq in d.stationing.equations]
    points = XPoints(sp.point, sp.northing, sp.easting, sp.elevation, sp.code)
    name = d.job.info.name or d.alignment.name
    return write_landxml(d.unit.key, d.alignment.name, d.alignment.start_station, _elements(d), eqs, _profile(d),
                         points, "stakeout", f"staked design of {name}"[:200],
                         profile_name=d.profile.name or None if d.profile is not None else None,
                         application_version=__version__)
