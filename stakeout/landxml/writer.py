"""Writing LandXML 1.2: the plain records of :mod:`.records` as a document.

Writing (:func:`write_landxml`)
-------------------------------
Units declare ``angularUnit`` and ``directionUnit`` ``"decimal degrees"``.
``delta`` and a spiral's ``theta`` are unsigned decimal degrees.  Directions
(``dir``, ``dirStart``, ``dirEnd``) follow the schema's ``<Units>``
documentation ("Horizontal directions ... are measured counter-clockwise
from 0 degrees = north"): decimal degrees, ``(360 - azimuth) mod 360`` of
a survey azimuth.  No reader should rely on them (this one does not).  The
schema requires the root's ``date`` and ``time``: they come from the
``created`` argument (the epoch, 1970-01-01 00:00:00, when not given),
never from the clock, so the same input gives the same bytes.  Numbers
are written by the one rounding rule of every output (:mod:`stakeout.numbers`):
attributes derived from the points (lengths, stations of elements, arc
radius, chord, a computed ``staBack``) with 4 decimals as the CSVs, derived angles (delta, theta, directions)
with 8 as the CSVs' decimal degrees; the CgPoints with 6.  The points of
the geometry (``Start``, ``End``, ``Center``, ``PI``) and the numbers the
caller gives (the start station, equation stations, spiral radii, PVI
stations, elevations and curve lengths) are written in Python's shortest round-trip
form, so reading the file back gives the same geometry exactly (the reader
takes geometry from the points; the rounded attributes are cross-checks).

Angle conventions in the dataclasses: azimuths in degrees clockwise from
grid north; ``rot``/``turn`` +1 clockwise (right), -1 counter-clockwise
(left).
"""

from __future__ import annotations

import datetime as _dt
import itertools
import math
import re
import xml.etree.ElementTree as _ET  # building and serialising only
from collections.abc import Callable, Iterator, Sequence
from typing import Any
from dataclasses import replace

import numpy as np
from numpy.typing import NDArray

from ..errors import GeometryError, JobFileError
from ..numbers import fixed_string, fixed_strings
from ..writers import rows as rows_
from ..writers.rows import Field
from .records import (
    ANGLE_POINT_CODE,
    LANDXML_NS,
    UNIT_WORDS,
    XPVI,
    XAlignment,
    XCurve,
    XElement,
    XEquation,
    XLine,
    XMeasured,
    XPoint,
    XPoints,
    NumberedNames,
    XSpiral,
    fmt,
    kind_of,
)
from .validation import station_at, validate_geometry

__all__ = ["write_landxml"]
_BAD_XML_CHAR = re.compile("[^\t\n\r\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


def _num(v: float, decimals: int | None = None) -> str:
    """xs:double text: shortest round trip (after rounding, if asked), INF for infinity."""
    v = float(v)
    if decimals is not None and math.isfinite(v):
        v = round(v, decimals)
    if math.isnan(v):
        raise GeometryError("a NaN cannot be written to LandXML")
    if math.isinf(v):
        return "INF" if v > 0 else "-INF"
    if v == 0.0:
        return "0.0"
    return repr(v)


def _text(v: str, what: str) -> str:
    if _BAD_XML_CHAR.search(v):
        raise JobFileError(f"{what} = {v!r}: holds a character XML cannot carry")
    return v


# The rounding of every other output (stakeout.numbers: what f"{v:.4f}" prints): derived lengths and
# stations with the CSVs' 4 decimals, derived angles with their 8.  The points of the geometry (Start,
# End, Center, PI) stay exact (shortest round trip): the file is geometry read back, and rounding them
# would move a read-back stake by a unit of the last printed digit.
_LEN_DEC = 4  # decimals of derived lengths and stations (file units): cross-checks, not geometry
_ANG_DEC = 8  # decimals of derived angles (degrees)


def _fixed(v: float, decimals: int) -> str:
    v = float(v)
    if not math.isfinite(v):
        return _num(v)
    return fixed_string(v, decimals)


def _len(v: float) -> str:
    return _fixed(v, _LEN_DEC)


def _ang(v: float) -> str:
    return _fixed(v, _ANG_DEC)


def _dir(az: float) -> str:
    """A survey azimuth as a LandXML direction: degrees counter-clockwise from north."""
    d = (360.0 - az) % 360.0
    text = _ang(d)
    return _ang(0.0) if text == _ang(360.0) else text


def write_landxml(*args: Any, **kwargs: Any) -> bytes:
    """:func:`landxml_pieces` joined: the whole document."""
    return b"".join(landxml_pieces(*args, **kwargs))


def landxml_pieces(
    units_key: str,
    alignment_name: str,
    sta_start: float,
    elements: Sequence[XElement],
    equations: Sequence[XEquation],
    profile_pvis: Sequence[XPVI] | None,
    points: Sequence[XPoint] | XPoints,
    application_name: str,
    source_note: str,
    *,
    profile_name: str | None = None,
    created: _dt.datetime | None = None,
    application_version: str = "",
    tolerance: float = 0.001,
    more_alignments: Sequence[tuple[str, float, Sequence[XElement], Sequence[XEquation], Sequence[XPVI] | None,
                                    str | None]] = (),
) -> Iterator[bytes]:
    """Write a design as a LandXML 1.2 document, piece by piece: the document up to the points
    at once (every check done, so an error comes before the first piece), then the
    ``<CgPoints>`` a block of rows at a time.

    Parameters
    ----------
    units_key : str
        ``"m"`` (``<Metric linearUnit="meter">``), ``"ft"`` (``<Imperial
        linearUnit="foot">``, the international foot) or ``"us_ft"``
        (``<Imperial linearUnit="USSurveyFoot">``).
    alignment_name : str
        ``<Alignment name>``.
    sta_start : float
        Start station (file units); also the first element's internal
        station.
    elements : sequence of XLine, XCurve, XSpiral
        In order; their points (file units) are written as given, their
        attributes (``length``, ``radius``, ``delta``, ``chord``, ``dir``,
        ``dirStart``, ``dirEnd``, spiral ``theta``, ``staStart``) computed
        from the points.  ``index`` is ignored; ``*_attr`` fields must not
        contradict the points.
    equations : sequence of XEquation
        Written with ``staInternal``, ``staAhead``, ``staBack`` (computed
        from the stationing when None) and ``staIncrement``.
    profile_pvis : sequence of XPVI or None
        The design profile at internal stations; None or empty for none.
    points : sequence of XPoint, or XPoints
        Written as ``<CgPoint name code desc>northing easting [elevation]``
        with 6 decimals (laid out by numpy: a build's million stakes need
        no Python object each when given as :class:`XPoints`); names must
        be unique (the schema says so).
    application_name : str
        ``<Application name>``.
    source_note : str
        ``<Application desc>``: where the design came from.
    profile_name : str or None
        ``<ProfAlign name>``; default ``"<alignment_name> profile"``.
    created : datetime or None
        The root's ``date`` and ``time`` (required by the schema); the epoch
        1970-01-01 00:00:00 when None.  Never the clock.
    application_version : str
        ``<Application version>``, omitted when empty.
    tolerance : float
        Position tolerance (file units) of the geometry check run first.
    more_alignments : sequence of (name, sta_start, elements, equations, profile_pvis, profile_name)
        Further alignments of the same job, written after the first in the
        same ``<Alignments>`` (their points are among ``points``).

    Returns
    -------
    bytes
        UTF-8 XML, the same bytes for the same arguments.

    Raises
    ------
    GeometryError
        The elements do not form a continuous alignment (see
        :func:`validate_geometry`).
    JobFileError
        Unknown units, duplicate point names, or text XML cannot carry.
    """
    if units_key not in UNIT_WORDS:
        raise JobFileError(f"units = {units_key!r}: expected 'm', 'ft' or 'us_ft'")
    designs = [(alignment_name, sta_start, elements, equations, profile_pvis, profile_name), *more_alignments]
    checked = [_checked(name, start, els, eqs, tolerance) for name, start, els, eqs, _, _ in designs]

    stamp = created or _dt.datetime(1970, 1, 1)
    root = _ET.Element(
        "LandXML",
        {
            "xmlns": LANDXML_NS,
            "date": stamp.strftime("%Y-%m-%d"),
            "time": stamp.strftime("%H:%M:%S"),
            "version": "1.2",
            "language": "English",
            "readOnly": "false",
        },
    )
    unit_attrs = {
        "m": ("Metric", "squareMeter", "meter", "cubicMeter", "celsius", "milliBars", "meter"),
        "ft": ("Imperial", "squareFoot", "foot", "cubicFeet", "fahrenheit", "inHG", "feet"),
        "us_ft": ("Imperial", "squareFoot", "USSurveyFoot", "cubicFeet", "fahrenheit", "inHG", "feet"),
    }[units_key]
    units = _ET.SubElement(root, "Units")
    _ET.SubElement(
        units,
        unit_attrs[0],
        {
            "areaUnit": unit_attrs[1],
            "linearUnit": unit_attrs[2],
            "volumeUnit": unit_attrs[3],
            "temperatureUnit": unit_attrs[4],
            "pressureUnit": unit_attrs[5],
            "angularUnit": "decimal degrees",
            "directionUnit": "decimal degrees",
            "elevationUnit": unit_attrs[6],
        },
    )
    app = {"name": _text(application_name, "application name")}
    if source_note:
        app["desc"] = _text(source_note, "source note")
    if application_version:
        app["version"] = _text(application_version, "application version")
    _ET.SubElement(root, "Application", app)

    aligns = _ET.SubElement(root, "Alignments")
    for (name, start, _, eqs, pvis, pname), (al, numbered, measured) in zip(designs, checked, strict=True):
        _write_alignment(aligns, name, start, al, numbered, measured, eqs, pvis, pname)

    _ET.indent(root, space="  ")
    body = _ET.tostring(root, encoding="unicode")
    assert body.endswith("</LandXML>")
    # the points as text: a build may stake a million of them, too many for a tree
    cg = _cgpoints_text(points) if len(points.names if isinstance(points, XPoints) else points) else iter(())
    head = ('<?xml version="1.0" encoding="UTF-8"?>\n' + body[: -len("</LandXML>")]).encode("utf-8")
    return itertools.chain((head,), cg, (b"</LandXML>\n",))


_POINT_DECIMALS = 6  # CgPoint coordinates: micro-units, far below any staking tolerance
_NEEDS_ESCAPE = re.compile('[&<>"\n\r\t]')
_ESCAPES = str.maketrans({"&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "\n": "&#10;", "\r": "&#13;",
                          "\t": "&#9;"})


def _checked(name: str, sta_start: float, elements: Sequence[XElement], equations: Sequence[XEquation],
             tolerance: float) -> tuple[XAlignment, tuple[XElement, ...], list[Any]]:
    """One alignment's elements renumbered and measured (its geometry checked)."""
    numbered = tuple(_renumber(el, i) for i, el in enumerate(elements, start=1))
    al = XAlignment(name, float(sta_start), numbered, tuple(equations))
    # the staked design may have angle points and curvature jumps (PT TS): export them as they are
    return al, numbered, list(validate_geometry(al, tolerance, joins=False))


def _write_alignment(aligns: Any, alignment_name: str, sta_start: float, al: XAlignment,
                     numbered: tuple[XElement, ...], measured: list[Any], equations: Sequence[XEquation],
                     profile_pvis: Sequence[XPVI] | None, profile_name: str | None) -> None:
    """One ``<Alignment>`` with its geometry, equations and profile."""
    total = sum(m.length for m in measured)
    a_el = _ET.SubElement(
        aligns,
        "Alignment",
        {"name": _text(alignment_name, "alignment name"), "length": _len(total), "staStart": _num(sta_start)},
    )
    geom = _ET.SubElement(a_el, "CoordGeom")
    for el, m in zip(numbered, measured, strict=True):
        _write_element(geom, el, m)
    for k, eq in enumerate(equations, start=1):
        back = eq.sta_back if eq.sta_back is not None else station_at(al, eq.sta_internal, before=k - 1)
        _ET.SubElement(
            a_el,
            "StaEquation",
            {
                "staAhead": _num(eq.sta_ahead),
                "staBack": _num(back) if eq.sta_back is not None else _len(back),  # computed: rounded
                "staInternal": _num(eq.sta_internal),
                "staIncrement": "increasing" if eq.increment == 1 else "decreasing",
            },
        )
    if profile_pvis:
        pname = profile_name if profile_name is not None else f"{alignment_name} profile"
        prof = _ET.SubElement(a_el, "Profile", {"name": _text(pname, "profile name")})
        palign = _ET.SubElement(prof, "ProfAlign", {"name": _text(pname, "profile name")})
        for v in profile_pvis:
            _write_pvi(palign, v)


def _attr_texts(strings: Sequence[str], what: str) -> Sequence[str]:
    """Strings checked for characters XML cannot carry and escaped for an attribute."""
    joined = "".join(strings)
    if _BAD_XML_CHAR.search(joined):
        culprit = next(v for v in strings if _BAD_XML_CHAR.search(v))
        raise JobFileError(f"{what} = {culprit!r}: holds a character XML cannot carry")
    if _NEEDS_ESCAPE.search(joined):
        return [v.translate(_ESCAPES) for v in strings]  # rare: most names are plain
    return strings


def _largest(x: NDArray[np.float64], nan_is_none: bool = False) -> float:
    """The largest size in ``x`` (0 when empty; NaN or inf when one is not finite; ``nan_is_none``:
    NaN is a missing value, left out).
    """
    if nan_is_none:
        if np.isinf(x).any():
            return math.inf
        return float(np.nanmax(np.abs(x))) if x.size and not np.isnan(x).all() else 0.0
    if not x.size:
        return 0.0
    hi, lo = float(x.max()), float(x.min())
    return math.nan if math.isnan(hi) or math.isnan(lo) else max(abs(hi), abs(lo))


def _optional_attr(name: str, values: Sequence[str] | None, rows: slice) -> list[Field]:
    """`` name="value"`` where a value is given, nothing where it is empty (or none is given): fields of
    ``rows`` (``values`` checked and escaped by :func:`_attr_texts`).
    """
    if values is None:
        return []
    col = rows_.Strings(values[rows])
    empty = col.lens == 0
    return [rows_.blank(rows_.const(f' {name}="', col.n), empty), col.field(slice(None)),
            rows_.blank(rows_.const('"', col.n), empty)]


#: Coordinates at or above this (file units) are written by Python's formatting, not the digit tables
#: of :mod:`stakeout.writers.rows` (which hold 17 digits: 11 before the 6 decimals).
_TABLE_LIMIT = 1e11


def _cgpoints_text(points: Sequence[XPoint] | XPoints) -> Iterator[bytes]:
    """``<CgPoints>`` with one ``<CgPoint>`` a line (coordinates with 6 decimals by the one rounding
    rule), laid out as byte fields a block of rows at a time (:mod:`stakeout.writers.rows`): the
    file's bytes in blocks, each made when it is asked for. Every check (names, codes,
    coordinates) is done here, before the first block.
    """
    if not isinstance(points, XPoints):
        points = XPoints(
            [p.name for p in points],
            np.array([p.northing for p in points], dtype=float),
            np.array([p.easting for p in points], dtype=float),
            np.array([np.nan if p.elevation is None else p.elevation for p in points], dtype=float),
            [p.code for p in points],
            [p.desc for p in points],
        )
    n = len(points.names)
    if not (len(points.northing) == len(points.easting) == n):
        raise JobFileError(f"points: {n} names but {len(points.northing)} northings and {len(points.easting)} eastings")
    numbered = isinstance(points.names, NumberedNames)  # unique and checked by its maker, made a block at a time
    if not numbered and len(set(points.names)) != n:
        seen: set[str] = set()
        dup = next(v for v in points.names if v in seen or seen.add(v))  # type: ignore[func-returns-value]
        raise JobFileError(f"point {dup!r}: written twice; CgPoint names must be unique")
    elev = np.full(n, np.nan) if points.elevation is None else np.asarray(points.elevation, dtype=float)
    nn = np.asarray(points.northing, dtype=float)
    ee = np.asarray(points.easting, dtype=float)
    # each column checked as it is (no joined copy: three of them at a million points)
    biggest = [_largest(nn), _largest(ee), _largest(elev, nan_is_none=True)]
    if any(not b < 1e12 for b in biggest):  # NaN (not finite) fails too
        raise JobFileError("points: coordinates must be finite and below 1e12")
    d = _POINT_DECIMALS
    names = points.names if numbered else _attr_texts(list(points.names), "point name")
    codes = None if points.codes is None else _attr_texts(points.codes, "point code")
    descs = None if points.descs is None else _attr_texts(points.descs, "point desc")
    # characters: the blocks' size, roughly
    width = (points.names.lengths() if isinstance(points.names, NumberedNames)
             else np.fromiter(map(len, names), dtype=np.int64, count=n))
    large = max(biggest) >= _TABLE_LIMIT

    def number(x: NDArray[np.float64]) -> Field:
        if large:  # Python's formatting (the same rule), then laid out as text
            return rows_.Strings(fixed_strings(x, d)).field(slice(None))
        return rows_.fixed(x, d)

    def elevation(z: NDArray[np.float64]) -> Field:
        none = np.isnan(z)
        return np.hstack([rows_.blank(rows_.const(" ", z.size), none),
                          rows_.blank(number(np.where(none, 0.0, z)), none)])

    def blocks() -> Iterator[bytes]:
        yield b"  <CgPoints>\n"
        for a, b in rows_.row_chunks(width):
            k = b - a
            block = _attr_texts(names[a:b], "point name") if numbered else names[a:b]
            fields = [rows_.const('    <CgPoint name="', k), rows_.Strings(block).field(slice(None)),
                      rows_.const('"', k)]
            fields += _optional_attr("code", codes, slice(a, b))
            fields += _optional_attr("desc", descs, slice(a, b))
            fields += [rows_.const(">", k), number(nn[a:b]), rows_.const(" ", k), number(ee[a:b]),
                       elevation(elev[a:b]), rows_.const("</CgPoint>", k)]
            yield rows_.join_rows(fields, k)
        yield b"  </CgPoints>\n"

    return blocks()


def _renumber(el: XElement, index: int) -> XElement:
    return replace(el, index=index)


def _pt(parent: _ET.Element, tag: str, n: float, e: float) -> None:
    _ET.SubElement(parent, tag).text = f"{_num(n)} {_num(e)}"


def _line_attrs(el: XElement, m: XMeasured) -> dict[str, str]:
    return {"dir": _dir(m.az_start), "length": _len(m.length), "staStart": _len(m.sta_start)}


def _curve_attrs(el: XElement, m: XMeasured) -> dict[str, str]:
    assert isinstance(el, XCurve)
    r = float(m.radius_start or 0.0)
    delta = math.degrees(m.length / r)
    chord = 2.0 * r * math.sin(m.length / r / 2.0)
    return {
        "rot": "cw" if el.rot == 1 else "ccw",
        "chord": _len(chord),
        "crvType": "arc",
        "delta": _ang(delta),
        "dirEnd": _dir(m.az_end),
        "dirStart": _dir(m.az_start),
        "length": _len(m.length),
        "radius": _len(r),
        "staStart": _len(m.sta_start),
    }


def _spiral_attrs(el: XElement, m: XMeasured) -> dict[str, str]:
    assert isinstance(el, XSpiral)
    curvatures = sum(1.0 / r for r in (el.radius_start, el.radius_end) if r is not None)
    theta = math.degrees(m.length * curvatures / 2.0)  # the clothoid's deflection
    chord = math.hypot(el.end_n - el.start_n, el.end_e - el.start_e)
    return {
        "length": _len(m.length),
        "radiusEnd": _num(math.inf if el.radius_end is None else el.radius_end),
        "radiusStart": _num(math.inf if el.radius_start is None else el.radius_start),
        "rot": "cw" if el.rot == 1 else "ccw",
        "spiType": "clothoid",
        "chord": _len(chord),
        "dirEnd": _dir(m.az_end),
        "dirStart": _dir(m.az_start),
        "theta": _ang(theta),
        "staStart": _len(m.sta_start),
    }


def _line_points(el: XElement) -> tuple[tuple[str, float, float], ...]:
    return (("Start", el.start_n, el.start_e), ("End", el.end_n, el.end_e))


def _curve_points(el: XElement) -> tuple[tuple[str, float, float], ...]:
    assert isinstance(el, XCurve)
    return (("Start", el.start_n, el.start_e), ("Center", el.center_n, el.center_e), ("End", el.end_n, el.end_e))


def _spiral_points(el: XElement) -> tuple[tuple[str, float, float], ...]:
    assert isinstance(el, XSpiral)
    return (("Start", el.start_n, el.start_e), ("PI", el.pi_n, el.pi_e), ("End", el.end_n, el.end_e))


_AttrFn = Callable[[XElement, XMeasured], dict[str, str]]
_PointsFn = Callable[[XElement], tuple[tuple[str, float, float], ...]]

#: How each record class is written: its attributes and its points (the tag comes from ``KINDS``).
WRITE: dict[type, tuple[_AttrFn, _PointsFn]] = {
    XLine: (_line_attrs, _line_points),
    XCurve: (_curve_attrs, _curve_points),
    XSpiral: (_spiral_attrs, _spiral_points),
}


def _write_element(geom: _ET.Element, el: XElement, m: XMeasured) -> None:
    tag = kind_of(el).tag  # an unknown class fails here, before anything is written
    attrs_of, points_of = WRITE[type(el)]
    base = {"name": _text(el.name, "element name")} if el.name else {}
    x = _ET.SubElement(geom, tag, {**base, **attrs_of(el, m)})
    for p_tag, n, e in points_of(el):
        _pt(x, p_tag, n, e)
    if getattr(el, "angle_point", False):
        _ET.SubElement(x, "Feature", {"name": "angle point", "code": ANGLE_POINT_CODE})


def _write_pvi(parent: _ET.Element, v: XPVI) -> None:
    text = f"{_num(v.station)} {_num(v.elevation)}"
    if v.kind == "pvi":
        x = _ET.SubElement(parent, "PVI")
    elif v.kind == "para":
        x = _ET.SubElement(parent, "ParaCurve", {"length": _num(v.length)})
    elif v.kind == "unsym":
        if v.length_in is None or v.length_out is None:
            raise GeometryError(f"PVI at station {fmt(v.station)}: an unsymmetrical curve needs length_in and length_out")
        x = _ET.SubElement(parent, "UnsymParaCurve", {"lengthIn": _num(v.length_in), "lengthOut": _num(v.length_out)})
    elif v.kind == "circ":
        if v.radius is None:
            raise GeometryError(f"PVI at station {fmt(v.station)}: a circular vertical curve needs its radius")
        x = _ET.SubElement(parent, "CircCurve", {"length": _num(v.length), "radius": _num(v.radius)})
    else:
        raise GeometryError(f"PVI at station {fmt(v.station)}: kind {v.kind!r}, expected pvi, para, unsym or circ")
    x.text = text
