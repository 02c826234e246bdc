"""LandXML 1.2 design files: read alignments, profiles and points; write them.

This is the only module of stakeout that parses or writes XML.  It is
self-contained: it reads a file into plain frozen dataclasses (``X...``) and
writes the same dataclasses back; building an alignment from them is the
caller's business.

Reading
-------
* Hardened parsing: ``defusedxml.ElementTree`` with ``forbid_dtd=True`` (and
  ``forbid_entities``/``forbid_external``), so a document type declaration,
  entity expansion ("billion laughs") and external entities are refused.
  Files larger than :data:`MAX_FILE_BYTES` (256 MiB, room for the export
  of a build of about three million stakes) and anything that is not a
  regular file are refused before a byte is read.  Malformed XML is a
  :class:`~stakeout.errors.JobFileError` naming the line and column.
* The root must be ``<LandXML>`` in the LandXML 1.2 namespace
  (:data:`LANDXML_NS`) or in no namespace at all.  Elements of any other
  namespace are extensions, listed as not used.
* Units: ``<Metric linearUnit="meter">`` is ``"m"``;
  ``<Imperial linearUnit="USSurveyFoot">`` is ``"us_ft"``;
  ``<Imperial linearUnit="foot">`` is ``"ft"``, the international foot
  (0.3048 m).  The schema offers ``USSurveyFoot`` as a value of its own, so a
  file that says ``foot`` is read as the other foot; a job in US survey feet
  is refused against it by :func:`check_units`, which names both, rather
  than guessed at.  ``internationalFoot`` (not a schema value) is accepted as
  ``"ft"`` too.  Other linear units (millimeter, kilometer, inch, mile) are
  refused: a job is in metres or feet.
* Geometry comes from the coordinates of the points (``Start``, ``Center``,
  ``End``, ``PI``; "northing easting [elevation]", the elevation ignored, or a
  ``pntRef`` to a ``CgPoint``).  Attributes ``length``, ``radius``, ``delta``
  and ``chord`` are kept as cross-checks only.  Direction attributes (``dir``,
  ``dirStart``, ``dirEnd``) are never read: files in use measure them
  counter-clockwise from east although the schema says they run from north.
  ``delta`` is an ``angle`` in the file's ``angularUnit`` and is converted
  to degrees on reading; a file that declares no ``angularUnit`` is read in
  the schema's default, radians, or in decimal degrees where that is what
  fits the points (files in use often omit the unit and write degrees).
* Content a staking job does not use (cant, cross-sections, superelevation,
  surfaces, pipe networks, features, ground profiles, ...) is listed in
  :attr:`XDesign.not_used` as short descriptions; ``<Application>`` is kept
  as :attr:`XDesign.application`.

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
never from the clock, so the same input gives the same bytes.  Given
numbers (coordinates, stations, elevations, spiral radii, curve lengths of
the profile) are written in Python's shortest round-trip form, so reading
the file back gives the same floats; attributes derived from the points
(lengths, stations of elements, arc radius, chord, delta, theta,
directions) are rounded to 1e-9 units and 1e-10 degrees.

Angle conventions in the dataclasses: azimuths in degrees clockwise from
grid north; ``rot``/``turn`` +1 clockwise (right), -1 counter-clockwise
(left).
"""

from __future__ import annotations

import datetime as _dt
import gc
import hashlib
import itertools
import math
import os
import re
import stat
import xml.etree.ElementTree as _ET  # building and serialising only: parsing is defusedxml's
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, replace

import defusedxml.ElementTree as _DET
import numpy as np
from defusedxml import DefusedXmlException
from numpy.typing import NDArray

from .errors import GeometryError, JobFileError

__all__ = [
    "LANDXML_NS",
    "MAX_FILE_BYTES",
    "XUnits",
    "XLine",
    "XCurve",
    "XSpiral",
    "XElement",
    "XEquation",
    "XAlignment",
    "XPVI",
    "XProfile",
    "XPoint",
    "XPoints",
    "XDesign",
    "XMeasured",
    "read_landxml",
    "parse_landxml",
    "pick_alignment",
    "pick_profile",
    "check_units",
    "validate_geometry",
    "station_at",
    "describe",
    "write_landxml",
]

LANDXML_NS = "http://www.landxml.org/schema/LandXML-1.2"
MAX_FILE_BYTES = 256 * 1024 * 1024  # bytes: larger files are refused unread (the export of ~3 million stakes)

_ARCSEC = 1.0 / 3600.0  # degrees
_NEWLINE = b"\n"
_REL = 1e-9  # relative slack for floating-point noise in attribute checks

# ---------------------------------------------------------------------------
# data classes
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class XUnits:
    """Units of a LandXML file.

    Attributes
    ----------
    unit_key : str
        The job-file unit: ``"m"``, ``"ft"`` (international foot) or
        ``"us_ft"`` (US survey foot).
    linear_unit : str
        The ``linearUnit`` as written, e.g. ``"USSurveyFoot"``.
    angular_unit : str
        ``angularUnit`` as written (schema default ``"radians"``).
    direction_unit : str
        ``directionUnit`` as written (schema default ``"radians"``).
    """

    unit_key: str
    linear_unit: str = ""
    angular_unit: str = "radians"
    direction_unit: str = "radians"


@dataclass(frozen=True)
class XLine:
    """A ``<Line>``: coordinates in file units.

    Attributes
    ----------
    index : int
        Position in its ``<CoordGeom>``, from 1.
    name : str
        ``name`` attribute ("" when absent).
    start_n, start_e, end_n, end_e : float
        Northing and easting of ``Start`` and ``End``.
    length_attr : float or None
        ``length`` attribute (a cross-check only).
    sta_start_attr : float or None
        ``staStart`` attribute as written (not used by the reader).
    """

    index: int
    name: str
    start_n: float
    start_e: float
    end_n: float
    end_e: float
    length_attr: float | None = None
    sta_start_attr: float | None = None


@dataclass(frozen=True)
class XCurve:
    """A ``<Curve>`` (circular arc): coordinates in file units.

    Attributes
    ----------
    index, name :
        As for :class:`XLine`.
    start_n, start_e, center_n, center_e, end_n, end_e : float
        Northing and easting of ``Start``, ``Center`` and ``End``.
    rot : int
        +1 for ``cw`` (turning right), -1 for ``ccw`` (turning left).
    radius_attr, length_attr, chord_attr : float or None
        ``radius``, ``length`` (along the arc) and ``chord`` attributes.
    delta_attr : float or None
        ``delta`` attribute converted to degrees (unsigned).
    sta_start_attr : float or None
        ``staStart`` attribute as written.
    """

    index: int
    name: str
    start_n: float
    start_e: float
    center_n: float
    center_e: float
    end_n: float
    end_e: float
    rot: int
    radius_attr: float | None = None
    length_attr: float | None = None
    delta_attr: float | None = None
    chord_attr: float | None = None
    sta_start_attr: float | None = None


@dataclass(frozen=True)
class XSpiral:
    """A ``<Spiral>``: coordinates in file units.

    Attributes
    ----------
    index, name :
        As for :class:`XLine`.
    start_n, start_e, pi_n, pi_e, end_n, end_e : float
        Northing and easting of ``Start``, ``PI`` (intersection of the end
        tangents) and ``End``.
    radius_start, radius_end : float or None
        ``radiusStart``/``radiusEnd``; None for ``INF`` (a tangent end).
    rot : int
        +1 for ``cw``, -1 for ``ccw``.
    length_attr : float or None
        ``length`` attribute (a cross-check of the derived length).
    spi_type : str
        ``spiType`` as written; only ``"clothoid"`` can be staked.
    sta_start_attr : float or None
        ``staStart`` attribute as written.
    """

    index: int
    name: str
    start_n: float
    start_e: float
    pi_n: float
    pi_e: float
    end_n: float
    end_e: float
    radius_start: float | None
    radius_end: float | None
    rot: int
    length_attr: float | None = None
    spi_type: str = "clothoid"
    sta_start_attr: float | None = None


XElement = XLine | XCurve | XSpiral


@dataclass(frozen=True)
class XEquation:
    """A ``<StaEquation>``.

    Attributes
    ----------
    sta_internal : float
        Station with no equation applied (alignment ``staStart`` + distance).
    sta_ahead : float
        Station value ahead of the equation.
    sta_back : float or None
        Station value back of the equation, when the file gives it.
    increment : int
        +1 (``staIncrement="increasing"`` or absent), -1 (``decreasing``).
    """

    sta_internal: float
    sta_ahead: float
    sta_back: float | None = None
    increment: int = 1


@dataclass(frozen=True)
class XAlignment:
    """An ``<Alignment>``.

    Attributes
    ----------
    name : str
        ``name`` attribute.
    sta_start : float
        ``staStart``: the station (and internal station) of its start.
    elements : tuple of XLine, XCurve, XSpiral
        ``<CoordGeom>`` elements in order.
    equations : tuple of XEquation
        ``<StaEquation>`` elements in file order.
    length_attr : float or None
        ``length`` attribute (a cross-check).
    unsupported : tuple of str
        ``CoordGeom`` content that cannot be staked (``IrregularLine``,
        ``Chain``, a second ``CoordGeom``); :func:`validate_geometry` refuses
        an alignment that has any.
    """

    name: str
    sta_start: float
    elements: tuple[XElement, ...]
    equations: tuple[XEquation, ...] = ()
    length_attr: float | None = None
    unsupported: tuple[str, ...] = ()


@dataclass(frozen=True)
class XPVI:
    """One vertical intersection point of a ``<ProfAlign>``.

    Attributes
    ----------
    station : float
        Internal station (file units).
    elevation : float
        Elevation (file units).
    kind : str
        ``"pvi"`` (no vertical curve), ``"para"`` (``ParaCurve``),
        ``"unsym"`` (``UnsymParaCurve``) or ``"circ"`` (``CircCurve``).
    length : float
        Curve length: 0 for ``pvi``; the horizontal length for ``para`` and
        ``unsym`` (``lengthIn + lengthOut``); the length along the arc for
        ``circ``.
    length_in, length_out : float or None
        The halves before and after the PVI (``para``: length/2 each;
        ``unsym``: ``lengthIn``/``lengthOut``; ``pvi``: 0; ``circ``: None,
        they follow from the grades).
    radius : float or None
        ``circ`` only: ``radius`` as written (sign as the file has it).
    """

    station: float
    elevation: float
    kind: str = "pvi"
    length: float = 0.0
    length_in: float | None = 0.0
    length_out: float | None = 0.0
    radius: float | None = None


@dataclass(frozen=True)
class XProfile:
    """A ``<ProfAlign>`` (design profile) of an alignment.

    Attributes
    ----------
    name : str
        ``ProfAlign`` ``name``.
    alignment_name : str
        Name of the ``<Alignment>`` it belongs to.
    pvis : tuple of XPVI
        In file order (stations increasing).
    """

    name: str
    alignment_name: str
    pvis: tuple[XPVI, ...]


@dataclass(frozen=True)
class XPoint:
    """A ``<CgPoint>``.

    Attributes
    ----------
    name : str
        ``name`` attribute ("" when absent).
    northing, easting : float
        File units.
    elevation : float or None
        File units; None when the point has two coordinates.
    code : str
        ``code`` attribute ("" when absent).
    desc : str
        ``desc`` attribute ("" when absent).
    """

    name: str
    northing: float
    easting: float
    elevation: float | None = None
    code: str = ""
    desc: str = ""


@dataclass(frozen=True)
class XPoints:
    """Many points as columns, for writing a build's stakes without a Python
    object per point.

    Attributes
    ----------
    names : sequence of str
        Point names (unique).
    northing, easting : array of float
        File units.
    elevation : array of float or None
        File units; NaN (or None for the whole column) where a point has none.
    codes, descs : sequence of str or None
        ``code`` and ``desc`` attributes; "" or None where there is none.
    """

    names: Sequence[str]
    northing: NDArray[np.float64]
    easting: NDArray[np.float64]
    elevation: NDArray[np.float64] | None = None
    codes: Sequence[str] | None = None
    descs: Sequence[str] | None = None


@dataclass(frozen=True)
class XDesign:
    """Everything a staking job can take from one LandXML file.

    Attributes
    ----------
    units : XUnits
    alignments : tuple of XAlignment
    profiles : tuple of XProfile
        Design profiles of all alignments (see ``alignment_name``).
    points : tuple of XPoint
        All ``CgPoint`` elements, nested collections flattened in order.
    not_used : tuple of str
        Short descriptions of the content a staking job does not use.
    sha256 : str
        Hex SHA-256 of the file's bytes.
    application : str
        ``<Application name>`` of the software that wrote the file, if given.
    """

    units: XUnits
    alignments: tuple[XAlignment, ...]
    profiles: tuple[XProfile, ...]
    points: tuple[XPoint, ...]
    not_used: tuple[str, ...]
    sha256: str
    application: str = ""


@dataclass(frozen=True)
class XMeasured:
    """An element as measured from its points by :func:`validate_geometry`.

    Attributes
    ----------
    index : int
        Position in the ``CoordGeom``, from 1.
    kind : str
        ``"line"``, ``"arc"`` or ``"spiral"``.
    name : str
        The element's ``name``.
    sta_start : float
        Internal station of its start (file units).
    length : float
        Length along the element (file units).
    az_start, az_end : float
        Azimuths of the tangent at start and end, degrees clockwise from
        grid north, in ``[0, 360)``.
    radius_start, radius_end : float or None
        Radii at start and end (file units); None where infinite.
    turn : int
        +1 right (clockwise), -1 left, 0 for a line.
    """

    index: int
    kind: str
    name: str
    sta_start: float
    length: float
    az_start: float
    az_end: float
    radius_start: float | None
    radius_end: float | None
    turn: int


# ---------------------------------------------------------------------------
# reading
# ---------------------------------------------------------------------------

_DOUBLE = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?|[+-]?INF")
_NOT_DOUBLE_CHAR = re.compile(r"[^0-9eE+\-. INF]")
_DMS_PACKED = re.compile(r"([+-]?)(\d+)(?:\.(\d{0,2})(\d*))?")
_ROT = {"cw": 1, "ccw": -1}
_LINEAR = {
    ("Metric", "meter"): "m",
    ("Imperial", "foot"): "ft",
    ("Imperial", "internationalFoot"): "ft",
    ("Imperial", "USSurveyFoot"): "us_ft",
}
_UNIT_WORDS = {"m": "metres", "ft": "international feet (0.3048 m)", "us_ft": "US survey feet (1200/3937 m)"}
_ANGULAR = ("radians", "grads", "decimal degrees", "decimal dd.mm.ss")
_PVI_KIND = {"PVI": "pvi", "ParaCurve": "para", "UnsymParaCurve": "unsym", "CircCurve": "circ"}
_NEEDS = {"Line": ("Start", "End"), "Curve": ("Start", "Center", "End"), "Spiral": ("Start", "PI", "End")}
_COLLECTIONS = frozenset(
    {"Surfaces", "PipeNetworks", "Parcels", "PlanFeatures", "Monuments", "Roadways", "GradeModel", "Survey"}
)


def read_landxml(path: str | os.PathLike[str]) -> XDesign:
    """Read a LandXML 1.2 design file.

    Parameters
    ----------
    path : str or path-like
        The file.  It must be a regular file of at most
        :data:`MAX_FILE_BYTES` bytes.

    Returns
    -------
    XDesign
        Units, alignments, profiles, points, what is not used, and the
        file's SHA-256.  Geometry is not checked here: see
        :func:`validate_geometry`.

    Raises
    ------
    JobFileError
        Unreadable, too large, not a regular file, malformed XML (with the
        line), a refused DTD/entity, not LandXML 1.2, or content that breaks
        the schema in a way the reader relies on (a missing point, a
        non-number, an unknown unit).
    """
    p = os.fspath(path)
    try:
        st = os.stat(p)
    except OSError as exc:
        raise JobFileError(f"{p}: cannot read the LandXML file ({exc.strerror})") from None
    if not stat.S_ISREG(st.st_mode):
        raise JobFileError(f"{p}: not a regular file")
    if st.st_size > MAX_FILE_BYTES:
        raise JobFileError(f"{p}: {st.st_size} bytes, over the limit of {MAX_FILE_BYTES} bytes for a LandXML file")
    try:
        with open(p, "rb") as fh:
            data = fh.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise JobFileError(f"{p}: cannot read the LandXML file ({exc.strerror})") from None
    if len(data) > MAX_FILE_BYTES:
        raise JobFileError(f"{p}: over the limit of {MAX_FILE_BYTES} bytes for a LandXML file")
    return parse_landxml(data, source=p)


def parse_landxml(data: bytes, source: str = "LandXML data") -> XDesign:
    """Parse LandXML 1.2 from bytes (what :func:`read_landxml` does after reading).

    Parameters
    ----------
    data : bytes
        The document (at most :data:`MAX_FILE_BYTES`).
    source : str
        Name of the file, used in error messages.

    Returns
    -------
    XDesign
    """
    if len(data) > MAX_FILE_BYTES:
        raise JobFileError(f"{source}: over the limit of {MAX_FILE_BYTES} bytes for a LandXML file")
    digest = hashlib.sha256(data).hexdigest()
    # a big file makes millions of small objects that the cyclic collector would
    # rescan again and again; none of them forms a cycle worth collecting meanwhile
    paused = gc.isenabled()
    gc.disable()
    try:
        return _parse(data, source, digest)
    finally:
        if paused:
            gc.enable()


def _parse(data: bytes, source: str, digest: str) -> XDesign:
    try:
        root = _DET.fromstring(data, forbid_dtd=True, forbid_entities=True, forbid_external=True)
    except _ET.ParseError as exc:
        line, col = exc.position
        reason = re.sub(r":\s*line \d+, column \d+\s*$", "", str(exc))
        raise JobFileError(f"{source}: malformed XML at line {line}, column {col + 1}: {reason}") from None
    except DefusedXmlException as exc:
        at = data.find(b"<!DOCTYPE")
        line_txt = f" at line {data.count(_NEWLINE, 0, at) + 1}" if at >= 0 else ""
        raise JobFileError(
            f"{source}: refused {type(exc).__name__}{line_txt}: document type declarations, "
            "entities and external references are not accepted"
        ) from None
    return _Reader(source).read(root, digest)


def _split(tag: object) -> tuple[str, str]:
    """(namespace, local name) of an element tag."""
    if not isinstance(tag, str):
        return ("#", "")
    if tag.startswith("{"):
        ns, _, local = tag[1:].partition("}")
        return ns, local
    return "", tag


def _label(local: str, el: _ET.Element) -> str:
    name = el.get("name")
    return f"{local} {name!r}" if name else local


class _Reader:
    """One pass over a parsed document."""

    def __init__(self, source: str) -> None:
        self.source = source
        self.ns = ""
        self.angular = "radians"
        self.angular_declared = True
        self.cg_by_name: dict[str, tuple[float, float, float | None]] = {}
        self.unused: list[tuple[str, str]] = []

    # -- helpers ------------------------------------------------------------

    def err(self, what: str) -> JobFileError:
        return JobFileError(f"{self.source}: {what}")

    def children(self, el: _ET.Element, context: str) -> Iterator[tuple[str, _ET.Element]]:
        """Children in the document's namespace; others are noted as not used."""
        for child in el:
            ns, local = _split(child.tag)
            if ns == "#":
                continue
            if ns != self.ns:
                self.unused.append((context, f"extension element {local!r} ({ns or 'no namespace'})"))
                continue
            yield local, child

    def note(self, context: str, local: str, el: _ET.Element) -> None:
        if local in _COLLECTIONS:
            inner = [_label(c_local, c) for c_local, c in self.children(el, context)]
            shown = ", ".join(inner[:5]) + (f", +{len(inner) - 5} more" if len(inner) > 5 else "")
            self.unused.append((context, f"{_label(local, el)} ({shown})" if inner else _label(local, el)))
        else:
            self.unused.append((context, _label(local, el)))

    def double(self, text: str | None, what: str) -> float:
        if text is None:
            raise self.err(f"{what}: missing")
        s = text.strip()
        if not _DOUBLE.fullmatch(s):
            raise self.err(f"{what} = {text!r}: not a number")
        return float(s)

    def opt_double(self, el: _ET.Element, attr: str, what: str) -> float | None:
        v = el.get(attr)
        return None if v is None else self.double(v, f"{what} {attr}")

    def angle_deg(self, el: _ET.Element, attr: str, what: str) -> float | None:
        """An ``angle`` attribute in the file's angularUnit, as unsigned degrees."""
        text = el.get(attr)
        if text is None:
            return None
        s = text.strip()
        if self.angular == "decimal dd.mm.ss":
            m = _DMS_PACKED.fullmatch(s)
            if not m:
                raise self.err(f"{what} {attr} = {text!r}: not a packed dd.mm.ss angle")
            mm = (m.group(3) or "").ljust(2, "0")
            ss = (m.group(4) or "").ljust(2, "0")
            sec = float(ss[:2] + "." + ss[2:]) if len(ss) > 2 else float(ss)
            return int(m.group(2)) + int(mm) / 60.0 + sec / 3600.0
        v = abs(self.double(s, f"{what} {attr}"))
        if self.angular == "radians":
            return math.degrees(v)
        if self.angular == "grads":
            return v * 0.9
        return v

    def delta_deg(
        self,
        el: _ET.Element,
        where: str,
        s: tuple[float, float, float | None],
        c: tuple[float, float, float | None],
        e: tuple[float, float, float | None],
        rot: int,
    ) -> float | None:
        """A Curve's ``delta`` in degrees.

        Without a declared angularUnit the schema's default, radians, is
        taken, or decimal degrees where that is what fits the points (files
        in use often omit the unit and write degrees).
        """
        deg = self.angle_deg(el, "delta", where)
        if deg is None or self.angular_declared:
            return deg
        raw = abs(self.double(el.get("delta"), f"{where} delta"))
        a1 = math.degrees(math.atan2(s[1] - c[1], s[0] - c[0]))
        a2 = math.degrees(math.atan2(e[1] - c[1], e[0] - c[0]))
        sweep = (rot * (a2 - a1)) % 360.0
        return raw if abs(raw - sweep) < abs(deg - sweep) else deg

    def point(self, el: _ET.Element, what: str) -> tuple[float, float, float | None]:
        parts = (el.text or "").split()
        if not parts:
            ref = el.get("pntRef")
            if ref is None:
                raise self.err(f"{what}: no coordinates and no pntRef")
            if ref not in self.cg_by_name:
                raise self.err(f"{what}: pntRef {ref!r} names no CgPoint with coordinates")
            return self.cg_by_name[ref]
        if len(parts) not in (2, 3):
            raise self.err(f"{what} = {el.text!r}: expected 'northing easting [elevation]'")
        vals = [self.double(p, what) for p in parts]
        if not all(math.isfinite(v) for v in vals):
            raise self.err(f"{what} = {el.text!r}: coordinates must be finite")
        return vals[0], vals[1], (vals[2] if len(vals) == 3 else None)

    # -- document -------------------------------------------------------------

    def read(self, root: _ET.Element, digest: str) -> XDesign:
        ns, local = _split(root.tag)
        if local != "LandXML" or ns not in ("", LANDXML_NS):
            shown = f"{{{ns}}}{local}" if ns else local
            raise self.err(f"root element {shown!r} is not <LandXML> of LandXML 1.2 ({LANDXML_NS})")
        self.ns = ns
        top = list(self.children(root, "file"))
        units_els = [el for local, el in top if local == "Units"]
        if not units_els:
            raise self.err("no <Units>: the file must say whether it is in metres or feet")
        units = [self.units(el) for el in units_els]
        if any(u != units[0] for u in units):
            raise self.err("several <Units> that disagree")
        self.angular = units[0].angular_unit
        self.angular_declared = any(
            u.get("angularUnit") is not None for el in units_els for u in el if isinstance(u.tag, str)
        )
        # CgPoints first: geometry may refer to them by pntRef.
        points: list[XPoint] = []
        for local, el in top:
            if local == "CgPoints":
                self.cgpoints(el, points)
        alignments: list[XAlignment] = []
        profiles: list[XProfile] = []
        application = ""
        for local, el in top:
            if local in ("Units", "CgPoints"):
                continue
            if local == "Application":
                application = application or el.get("name", "")
            elif local == "Alignments":
                for a_local, a_el in self.children(el, "Alignments"):
                    if a_local == "Alignment":
                        alignments.append(self.alignment(a_el, len(alignments) + 1, profiles))
                    else:
                        self.note(f"Alignments {el.get('name') or ''}".rstrip(), a_local, a_el)
            else:
                self.note("file", local, el)
        return XDesign(
            units=units[0],
            alignments=tuple(alignments),
            profiles=tuple(profiles),
            points=tuple(points),
            not_used=_summarise(self.unused),
            sha256=digest,
            application=application,
        )

    def units(self, el: _ET.Element) -> XUnits:
        kids = list(self.children(el, "Units"))
        if len(kids) != 1 or kids[0][0] not in ("Metric", "Imperial"):
            raise self.err("<Units> must hold one <Metric> or <Imperial>")
        system, u = kids[0]
        linear = u.get("linearUnit")
        key = _LINEAR.get((system, linear or ""))
        if key is None:
            raise self.err(
                f"<{system} linearUnit={linear!r}>: a staking job is in meter (Metric), foot or USSurveyFoot (Imperial)"
            )
        ang = u.get("angularUnit", "radians")
        dirn = u.get("directionUnit", "radians")
        if ang not in _ANGULAR:
            raise self.err(f"<{system} angularUnit={ang!r}>: expected one of {', '.join(_ANGULAR)}")
        return XUnits(key, linear or "", ang, dirn)

    def cgpoints(self, el: _ET.Element, out: list[XPoint]) -> None:
        stack = [el]
        order: list[_ET.Element] = []
        tag = f"{{{self.ns}}}CgPoint" if self.ns else "CgPoint"
        while stack:  # nested collections, iteratively and in document order
            coll = stack.pop()
            ctx = f"CgPoints {coll.get('name') or ''}".rstrip()
            nested: list[_ET.Element] = []
            order.extend(child for child in coll if child.tag == tag)
            others = _ET.Element("others")
            others.extend(child for child in coll if child.tag != tag)
            for local, child in self.children(others, ctx):
                if local == "CgPoints":
                    nested.append(child)
                else:
                    self.note(ctx, local, child)
            stack.extend(reversed(nested))
        # all coordinates at once (a file may hold the million stakes of a build)
        names = [c.get("name", "") for c in order]
        split = [(c.text or "").split() for c in order]
        counts = np.fromiter(map(len, split), dtype=np.int64, count=len(split))
        odd = np.flatnonzero((counts == 1) | (counts > 3))
        if odd.size:
            c = order[int(odd[0])]
            raise self.err(f"CgPoint {names[int(odd[0])]!r} = {c.text!r}: expected 'northing easting [elevation]'")
        tokens = list(itertools.chain.from_iterable(split))
        try:
            # xs:double has digits, sign, point, exponent and INF; the conversion refuses malformed numbers
            if _NOT_DOUBLE_CHAR.search(" ".join(tokens)):
                raise ValueError
            numbers = np.array(tokens, dtype=float)
        except ValueError:
            for name, parts in zip(names, split, strict=True):  # only to name the culprit
                for t in parts:
                    self.double(t, f"CgPoint {name!r}")
            raise
        vals = np.concatenate([numbers, np.full(3, np.nan)])  # padded for the gathers
        first = np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(np.int64)
        has = counts > 0
        nn = np.where(has, vals[first], np.nan)
        ee = np.where(has, vals[first + 1], np.nan)
        zz = np.where(counts == 3, vals[first + 2], np.nan)
        finite = np.isfinite(nn) & np.isfinite(ee) & (np.isfinite(zz) | (counts == 2))
        if not finite[has].all():
            i = int(np.flatnonzero(has & ~finite)[0])
            raise self.err(f"CgPoint {names[i]!r} = {order[i].text!r}: coordinates must be finite")
        # names with coordinates first (the first of a name wins), so a CgPoint may refer to another
        for i in reversed(np.flatnonzero(has & np.array([bool(n) for n in names], dtype=bool)).tolist()):
            self.cg_by_name[names[i]] = (float(nn[i]), float(ee[i]), None if counts[i] == 2 else float(zz[i]))
        for i in np.flatnonzero(~has).tolist():  # pntRef only: rare
            nn[i], ee[i], z = self.point(order[i], f"CgPoint {names[i]!r}")
            zz[i] = np.nan if z is None else z
        zs: list[float | None] = [None if math.isnan(z) else z for z in zz.tolist()]
        out.extend(
            XPoint(name, n, e, z, c.get("code", ""), c.get("desc", ""))
            for name, n, e, z, c in zip(names, nn.tolist(), ee.tolist(), zs, order, strict=True)
        )

    def alignment(self, el: _ET.Element, position: int, profiles: list[XProfile]) -> XAlignment:
        name = el.get("name", "")
        what = f"alignment {name!r}" if name else f"alignment {position}"
        sta_start = self.double(el.get("staStart"), f"{what} staStart")
        if not math.isfinite(sta_start):
            raise self.err(f"{what} staStart: must be finite")
        length = self.opt_double(el, "length", what)
        elements: tuple[XElement, ...] = ()
        unsupported: list[str] = []
        equations: list[XEquation] = []
        n_geom = 0
        for local, child in self.children(el, what):
            if local == "CoordGeom":
                n_geom += 1
                if n_geom > 1:
                    unsupported.append("a second <CoordGeom>")
                    continue
                elements = self.coordgeom(child, what, unsupported)
            elif local == "StaEquation":
                equations.append(self.equation(child, what, len(equations) + 1))
            elif local == "Profile":
                self.profile(child, name, what, profiles)
            else:
                self.note(what, local, child)
        if n_geom == 0:
            unsupported.append("no <CoordGeom>")
        return XAlignment(name, sta_start, elements, tuple(equations), length, tuple(unsupported))

    def coordgeom(self, el: _ET.Element, what: str, unsupported: list[str]) -> tuple[XElement, ...]:
        out: list[XElement] = []
        index = 0
        for local, child in self.children(el, f"{what} CoordGeom"):
            if local not in ("Line", "Curve", "Spiral", "IrregularLine", "Chain"):
                self.note(f"{what} CoordGeom", local, child)
                continue
            index += 1
            name = child.get("name", "")
            where = f"{what}, element {index} ({_label(local, child)})"
            if local in ("IrregularLine", "Chain"):
                unsupported.append(f"element {index} ({_label(local, child)})")
                continue
            pts: dict[str, tuple[float, float, float | None]] = {}
            for p_local, p_el in self.children(child, where):
                if p_local in ("Start", "End", "Center", "PI"):
                    pts.setdefault(p_local, self.point(p_el, f"{where} {p_local}"))
                else:
                    self.note(where, p_local, p_el)
            for key in _NEEDS[local]:
                if key not in pts:
                    raise self.err(f"{where}: no <{key}>")
            sta = self.opt_double(child, "staStart", where)
            s, e = pts["Start"], pts["End"]
            if local == "Line":
                out.append(XLine(index, name, s[0], s[1], e[0], e[1], self.opt_double(child, "length", where), sta))
                continue
            rot_txt = child.get("rot")
            if rot_txt not in _ROT:
                raise self.err(f"{where} rot = {rot_txt!r}: expected 'cw' or 'ccw'")
            rot = _ROT[rot_txt]
            if local == "Curve":
                c = pts["Center"]
                out.append(
                    XCurve(
                        index, name, s[0], s[1], c[0], c[1], e[0], e[1], rot,
                        radius_attr=self.opt_double(child, "radius", where),
                        length_attr=self.opt_double(child, "length", where),
                        delta_attr=self.delta_deg(child, where, s, c, e, rot),
                        chord_attr=self.opt_double(child, "chord", where),
                        sta_start_attr=sta,
                    )
                )
            else:
                pi = pts["PI"]
                radii = []
                for attr in ("radiusStart", "radiusEnd"):
                    r = abs(self.double(child.get(attr), f"{where} {attr}"))
                    radii.append(None if math.isinf(r) else r)
                out.append(
                    XSpiral(
                        index, name, s[0], s[1], pi[0], pi[1], e[0], e[1], radii[0], radii[1], rot,
                        length_attr=self.opt_double(child, "length", where),
                        spi_type=child.get("spiType", ""),
                        sta_start_attr=sta,
                    )
                )
        return tuple(out)

    def equation(self, el: _ET.Element, what: str, position: int) -> XEquation:
        where = f"{what}, StaEquation {position}"
        internal = self.double(el.get("staInternal"), f"{where} staInternal")
        ahead = self.double(el.get("staAhead"), f"{where} staAhead")
        back = self.opt_double(el, "staBack", where)
        inc_txt = el.get("staIncrement", "increasing")
        if inc_txt not in ("increasing", "decreasing"):
            raise self.err(f"{where} staIncrement = {inc_txt!r}: expected 'increasing' or 'decreasing'")
        for key, v in (("staInternal", internal), ("staAhead", ahead), ("staBack", back)):
            if v is not None and not math.isfinite(v):
                raise self.err(f"{where} {key}: must be finite")
        for local, child in self.children(el, where):
            self.note(where, local, child)
        return XEquation(internal, ahead, back, 1 if inc_txt == "increasing" else -1)

    def profile(self, el: _ET.Element, a_name: str, what: str, out: list[XProfile]) -> None:
        p_what = f"{what} profile {el.get('name')!r}" if el.get("name") else f"{what} profile"
        for local, child in self.children(el, p_what):
            if local != "ProfAlign":
                self.note(p_what, local, child)
                continue
            name = child.get("name") or el.get("name") or ""
            where = f"{what} ProfAlign {name!r}"
            pvis: list[XPVI] = []
            for k_local, k in self.children(child, where):
                kind = _PVI_KIND.get(k_local)
                if kind is None:
                    self.note(where, k_local, k)
                    continue
                at = f"{where}, {k_local} {len(pvis) + 1}"
                parts = (k.text or "").split()
                if len(parts) != 2:
                    raise self.err(f"{at} = {k.text!r}: expected 'station elevation'")
                sta, elev = (self.double(p, at) for p in parts)
                if not (math.isfinite(sta) and math.isfinite(elev)):
                    raise self.err(f"{at} = {k.text!r}: must be finite")
                if pvis and not sta > pvis[-1].station:
                    raise self.err(f"{at}: station {sta!r} does not increase (previous {pvis[-1].station!r})")
                if kind == "pvi":
                    pvis.append(XPVI(sta, elev))
                elif kind == "para":
                    length = self.double(k.get("length"), f"{at} length")
                    pvis.append(XPVI(sta, elev, "para", length, length / 2.0, length / 2.0))
                elif kind == "unsym":
                    lin = self.double(k.get("lengthIn"), f"{at} lengthIn")
                    lout = self.double(k.get("lengthOut"), f"{at} lengthOut")
                    pvis.append(XPVI(sta, elev, "unsym", lin + lout, lin, lout))
                else:
                    length = self.double(k.get("length"), f"{at} length")
                    radius = self.double(k.get("radius"), f"{at} radius")
                    pvis.append(XPVI(sta, elev, "circ", length, None, None, radius))
                for bad in (pvis[-1].length, pvis[-1].length_in, pvis[-1].length_out):
                    if bad is not None and not (math.isfinite(bad) and bad >= 0.0):
                        raise self.err(f"{at}: curve lengths must be finite and not negative")
            out.append(XProfile(name, a_name, tuple(pvis)))


def _summarise(entries: list[tuple[str, str]]) -> tuple[str, ...]:
    """'context: label' strings, repeats folded into 'x N', in first-seen order."""
    counts: dict[tuple[str, str], int] = {}
    for key in entries:
        counts[key] = counts.get(key, 0) + 1
    return tuple(f"{ctx}: {lab}" + (f" x{n}" if n > 1 else "") for (ctx, lab), n in counts.items())


# ---------------------------------------------------------------------------
# choosing and checking
# ---------------------------------------------------------------------------


def _names(items: Sequence[str]) -> str:
    return ", ".join(repr(n) for n in items) if items else "none"


def pick_alignment(design: XDesign, name: str | None) -> XAlignment:
    """Choose the alignment a job stakes.

    Parameters
    ----------
    design : XDesign
    name : str or None
        ``[alignment] name``; None when the job gives none, allowed only when
        the file holds exactly one alignment.

    Returns
    -------
    XAlignment

    Raises
    ------
    JobFileError
        No alignment, an unknown name, a name given twice, or several
        alignments and no name: the message lists the names in the file.
    """
    names = [a.name for a in design.alignments]
    if not names:
        raise JobFileError("[alignment] landxml: the file holds no <Alignment>")
    if name is None:
        if len(names) == 1:
            return design.alignments[0]
        raise JobFileError(f"[alignment] name: the file holds {len(names)} alignments, choose one of {_names(names)}")
    found = [a for a in design.alignments if a.name == name]
    if not found:
        raise JobFileError(f"[alignment] name = {name!r}: no such <Alignment>; the file has {_names(names)}")
    if len(found) > 1:
        raise JobFileError(f"[alignment] name = {name!r}: the file has {len(found)} alignments of that name")
    return found[0]


def pick_profile(design: XDesign, alignment_name: str, name: str | None) -> XProfile:
    """Choose the design profile (``<ProfAlign>``) of an alignment.

    Parameters
    ----------
    design : XDesign
    alignment_name : str
        The chosen alignment's name.
    name : str or None
        ``[profile] name``; None allowed when the alignment has one profile.

    Returns
    -------
    XProfile

    Raises
    ------
    JobFileError
        None, an unknown name, or an ambiguous choice: the message lists the
        alignment's profile names.
    """
    mine = [p for p in design.profiles if p.alignment_name == alignment_name]
    names = [p.name for p in mine]
    if not mine:
        raise JobFileError(f"[profile] landxml: alignment {alignment_name!r} has no <ProfAlign>")
    if name is None:
        if len(mine) == 1:
            return mine[0]
        raise JobFileError(
            f"[profile] name: alignment {alignment_name!r} has {len(mine)} profiles, choose one of {_names(names)}"
        )
    found = [p for p in mine if p.name == name]
    if not found:
        raise JobFileError(
            f"[profile] name = {name!r}: no such <ProfAlign> on alignment {alignment_name!r}; it has {_names(names)}"
        )
    if len(found) > 1:
        raise JobFileError(f"[profile] name = {name!r}: alignment {alignment_name!r} has {len(found)} of that name")
    return found[0]


def check_units(design: XDesign, job_unit_key: str, where: str) -> None:
    """Refuse a file whose units are not the job's.

    Parameters
    ----------
    design : XDesign
    job_unit_key : str
        The job's ``units``: ``"m"``, ``"ft"`` or ``"us_ft"``.
    where : str
        The job-file key that named the file, e.g. ``"[alignment] landxml"``.

    Raises
    ------
    JobFileError
        Naming the file's ``linearUnit`` (as read) and the job's ``units``.
    """
    u = design.units
    if u.unit_key != job_unit_key:
        system = "Metric" if u.unit_key == "m" else "Imperial"
        raise JobFileError(
            f'{where}: the file\'s units are <{system} linearUnit="{u.linear_unit}"> '
            f"({_UNIT_WORDS[u.unit_key]}) but the job's units = {job_unit_key!r}; they must match"
        )


def _wrap180(a: NDArray[np.float64]) -> NDArray[np.float64]:
    """Angle difference in degrees to (-180, 180]."""
    r = np.mod(a, 360.0)
    return np.where(r > 180.0, r - 360.0, r)


def _azimuth(dn: NDArray[np.float64], de: NDArray[np.float64]) -> NDArray[np.float64]:
    """Azimuth in degrees clockwise from north, [0, 360)."""
    az = np.mod(np.degrees(np.arctan2(de, dn)), 360.0)
    return np.where(az >= 360.0, 0.0, az)


def _clothoid_ends(
    n0: NDArray[np.float64],
    e0: NDArray[np.float64],
    az0_deg: NDArray[np.float64],
    k0: NDArray[np.float64],
    k1: NDArray[np.float64],
    length: NDArray[np.float64],
    turn: NDArray[np.float64],
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """End points of clothoids by composite Gauss-Legendre quadrature.

    Curvature (magnitudes ``k0`` -> ``k1``, 1/units) runs linearly over
    ``length``; the heading is ``az0 + turn * (k0 s + (k1 - k0) s^2 / 2L)``.
    Deflections stay below pi (they come from a PI), so 4 panels of 16 nodes
    integrate to far below a micrometre.
    """
    x, w = np.polynomial.legendre.leggauss(16)
    panels = 4
    u = ((np.arange(panels)[:, None] + (x[None, :] + 1.0) / 2.0) / panels).ravel()  # (P*16,) in (0, 1)
    wt = np.tile(w, panels) / (2.0 * panels)
    s = length[:, None] * u[None, :]
    head = np.radians(az0_deg)[:, None] + turn[:, None] * (
        k0[:, None] * s + (k1 - k0)[:, None] * s * s / (2.0 * length[:, None])
    )
    dn = length * (np.cos(head) @ wt)
    de = length * (np.sin(head) @ wt)
    return n0 + dn, e0 + de  # n0 = e0 = 0 gives the offsets from the start


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

    zero = np.zeros_like(n0)

    def along(lengths: NDArray[np.float64]) -> NDArray[np.float64]:
        dn, de = _clothoid_ends(zero, zero, az0_deg, k0, k1, lengths, turn)  # offsets: no large coordinates
        return dn * un + de * ue - chord

    fitted = length.copy()
    for _ in range(6):
        g = along(fitted)
        h = 1e-6 * fitted
        slope = (along(fitted + h) - g) / h
        step = np.where(np.isfinite(slope) & (slope > 0.1), g / slope, 0.0)
        fitted = np.where(np.abs(step) < 0.5 * fitted, fitted - step, fitted)
    dn, de = _clothoid_ends(zero, zero, az0_deg, k0, k1, fitted, turn)
    return fitted, n0 + dn, e0 + de


def _where(alignment: XAlignment, el: XElement) -> str:
    tag = "Line" if isinstance(el, XLine) else "Curve" if isinstance(el, XCurve) else "Spiral"
    label = f"{tag} {el.name!r}" if el.name else tag
    return f"alignment {alignment.name!r}, element {el.index} ({label})"


def _fmt(v: float) -> str:
    """A number for a message: up to 6 decimals, INF for infinity."""
    v = float(v)
    if math.isinf(v):
        return "INF" if v > 0 else "-INF"
    return f"{v:.6f}".rstrip("0").rstrip(".") if math.isfinite(v) else str(v)


def _radius_text(curvature: float, radius: float) -> str:
    if curvature == 0.0:
        return "INF"
    return f"{_fmt(radius)} {'right (cw)' if curvature > 0 else 'left (ccw)'}"


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
    kind = np.array([0 if isinstance(e, XLine) else 1 if isinstance(e, XCurve) else 2 for e in els])
    nan = math.nan
    sn = np.array([e.start_n for e in els], dtype=float)
    se = np.array([e.start_e for e in els], dtype=float)
    en = np.array([e.end_n for e in els], dtype=float)
    ee = np.array([e.end_e for e in els], dtype=float)
    cn = np.array([e.center_n if isinstance(e, XCurve) else nan for e in els])
    ce = np.array([e.center_e if isinstance(e, XCurve) else nan for e in els])
    pn = np.array([e.pi_n if isinstance(e, XSpiral) else nan for e in els])
    pe = np.array([e.pi_e if isinstance(e, XSpiral) else nan for e in els])
    turn = np.array([0 if isinstance(e, XLine) else e.rot for e in els], dtype=float)
    rs_attr = np.array([(e.radius_start or math.inf) if isinstance(e, XSpiral) else nan for e in els])
    re_attr = np.array([(e.radius_end or math.inf) if isinstance(e, XSpiral) else nan for e in els])

    def attr(name: str) -> NDArray[np.float64]:
        vals = [getattr(e, name, None) for e in els]
        return np.array([nan if v is None else v for v in vals], dtype=float)

    with np.errstate(invalid="ignore", divide="ignore"):
        is_line, is_arc, is_spi = kind == 0, kind == 1, kind == 2
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
            (is_arc & ~(chord > tol), lambda i: f"Start and End coincide ({_fmt(chord[i])} apart)"),
            (is_arc & ~(r1 > tol), lambda i: f"Center is on Start (radius {_fmt(r1[i])})"),
            (
                is_arc & ~(np.abs(r1 - r2) <= tol + _REL * r1),
                lambda i: f"|Start-Center| = {_fmt(r1[i])} but |End-Center| = {_fmt(r2[i])}",
            ),
            (
                is_spi & ~((t1 > tol) & (t2 > tol)),
                lambda i: f"PI coincides with Start or End (tangents {_fmt(t1[i])} and {_fmt(t2[i])})",
            ),
            (
                is_spi & ~(theta > 0.0),
                lambda i: (
                    f"the tangents Start->PI and PI->End turn {_fmt(abs(defl[i]))} degrees "
                    f"{'right' if defl[i] > 0 else 'left'}, against rot = {'cw' if turn[i] > 0 else 'ccw'}"
                ),
            ),
            (
                ok_spi & ~(miss <= tol),
                lambda i: (
                    f"End is {_fmt(miss[i])} from the clothoid through Start along Start->PI with radiusStart "
                    f"{_fmt(rs_attr[i])}, radiusEnd {_fmt(re_attr[i])} and length {_fmt(length[i])}"
                ),
            ),
            (
                ok_spi & ~(end_turn <= _ARCSEC),
                lambda i: (
                    f"PI->End is {_fmt(end_turn[i] * 3600.0)} arc-seconds off the end direction of the clothoid "
                    f"through Start and End with radiusStart {_fmt(rs_attr[i])} and radiusEnd {_fmt(re_attr[i])}"
                ),
            ),
            (
                is_arc & ~np.isnan(radius_attr) & ~(np.abs(radius_attr - r1) <= tol + _REL * r1),
                lambda i: f"radius = {_fmt(radius_attr[i])} contradicts |Start-Center| = {_fmt(r1[i])}",
            ),
            (
                ~np.isnan(length_attr) & ~(np.abs(length_attr - length) <= tol + _REL * np.abs(length)),
                lambda i: f"length = {_fmt(length_attr[i])} contradicts the points, which give {_fmt(length[i])}",
            ),
            (
                is_arc & ~np.isnan(delta_attr) & ~(np.abs(delta_attr - sweep) <= np.maximum(_ARCSEC, np.degrees(tol / r1))),
                lambda i: f"delta = {_fmt(delta_attr[i])} degrees contradicts the points, which give {_fmt(sweep[i])}",
            ),
            (
                is_arc & ~np.isnan(chord_attr) & ~(np.abs(chord_attr - arc_chord) <= tol + _REL * r1),
                lambda i: f"chord = {_fmt(chord_attr[i])} contradicts the points, which give {_fmt(arc_chord[i])}",
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
            (~(gap <= tol), lambda i: f"starts {_fmt(gap[i])} from the end of the element before"),
            (
                ~(kink <= _ARCSEC) & joins,
                lambda i: f"starts {_fmt(kink[i] * 3600.0)} arc-seconds off the direction of the element before",
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
            f"alignment {a.name!r}: length = {_fmt(a.length_attr)} contradicts its elements, which add up to {_fmt(total)}"
        )
    _check_equations(a, total, tolerance)

    starts = a.sta_start + np.concatenate([[0.0], np.cumsum(length)[:-1]])
    kinds = ("line", "arc", "spiral")
    return tuple(
        XMeasured(
            index=els[i].index,
            kind=kinds[int(kind[i])],
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
        where = f"alignment {a.name!r}, StaEquation {k} (staInternal {_fmt(eq.sta_internal)})"
        if not (a.sta_start - tolerance <= eq.sta_internal <= end + tolerance):
            raise GeometryError(
                f"{where}: outside the alignment's internal stations {_fmt(a.sta_start)} to {_fmt(end)}"
            )
        if prev is not None and not eq.sta_internal > prev.sta_internal:
            raise GeometryError(f"{where}: not after the equation before (staInternal {_fmt(prev.sta_internal)})")
        if eq.increment not in (1, -1):
            raise GeometryError(f"{where}: increment {eq.increment!r}, expected +1 or -1")
        if eq.sta_back is not None:
            # station_at(a, eq.sta_internal, before=k - 1), in constant time: equations are in order
            expected = (eq.sta_internal if prev is None
                        else prev.sta_ahead + prev.increment * (eq.sta_internal - prev.sta_internal))
            if not abs(eq.sta_back - expected) <= tolerance + _REL * abs(expected):
                raise GeometryError(
                    f"{where}: staBack = {_fmt(eq.sta_back)} but the stationing reaches {_fmt(expected)} there"
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


# ---------------------------------------------------------------------------
# describing
# ---------------------------------------------------------------------------


def describe(design: XDesign) -> str:
    """A plain-text summary of a LandXML file, for choosing ``name`` keys.

    Parameters
    ----------
    design : XDesign

    Returns
    -------
    str
        Lines: units; each alignment with its station range (stations in
        force, and internal), element counts by kind and equations; each
        profile with its PVI count and station range; the number of
        CgPoints; what is not used.  Geometry errors are reported in place.
    """
    u = design.units
    system = "Metric" if u.unit_key == "m" else "Imperial"
    lines = [
        f'units: {u.unit_key} ({_UNIT_WORDS[u.unit_key]}, <{system} linearUnit="{u.linear_unit}">)',
        f"sha256: {design.sha256}",
    ]
    if design.application:
        lines.append(f"written by: {design.application}")
    lines.append(f"alignments: {len(design.alignments)}")
    for a in design.alignments:
        counts = {"Line": 0, "Curve": 0, "Spiral": 0}
        for el in a.elements:
            counts["Line" if isinstance(el, XLine) else "Curve" if isinstance(el, XCurve) else "Spiral"] += 1
        kinds = ", ".join(f"{v} {k}" for k, v in counts.items())
        try:
            measured = validate_geometry(a)
            total = sum(m.length for m in measured)
            end = a.sta_start + total
            rng = (
                f"stations {_fmt(a.sta_start)} to {_fmt(station_at(a, end))} "
                f"(internal {_fmt(a.sta_start)} to {_fmt(end)}), length {_fmt(total)}"
            )
        except GeometryError as exc:
            rng = f"staStart {_fmt(a.sta_start)}; geometry error: {exc}"
        lines.append(f"  alignment {a.name!r}: {rng}; elements: {kinds}")
        for k, eq in enumerate(a.equations, start=1):
            back = "" if eq.sta_back is None else f", back {_fmt(eq.sta_back)}"
            inc = "" if eq.increment == 1 else ", decreasing"
            lines.append(f"    equation {k}: internal {_fmt(eq.sta_internal)}{back}, ahead {_fmt(eq.sta_ahead)}{inc}")
        for p in design.profiles:
            if p.alignment_name != a.name:
                continue
            if p.pvis:
                span = f"internal stations {_fmt(p.pvis[0].station)} to {_fmt(p.pvis[-1].station)}"
            else:
                span = "empty"
            curves = sum(1 for v in p.pvis if v.kind != "pvi")
            lines.append(f"    profile {p.name!r}: {len(p.pvis)} PVIs ({curves} with vertical curves), {span}")
    lines.append(f"CgPoints: {len(design.points)}")
    if design.not_used:
        lines.append("not used:")
        lines.extend(f"  {item}" for item in design.not_used)
    else:
        lines.append("not used: nothing")
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------
# writing
# ---------------------------------------------------------------------------

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


_LEN_DEC = 9  # decimals of derived lengths (file units): they are cross-checks, not geometry
_ANG_DEC = 10  # decimals of derived angles (degrees)


def _len(v: float) -> str:
    return _num(v, _LEN_DEC)


def _ang(v: float) -> str:
    return _num(v, _ANG_DEC)


def _dir(az: float) -> str:
    """A survey azimuth as a LandXML direction: degrees counter-clockwise from north."""
    d = round((360.0 - az) % 360.0, _ANG_DEC)
    return _num(0.0 if d >= 360.0 else d)


def write_landxml(
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
) -> bytes:
    """Write a design as a LandXML 1.2 document.

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
    if units_key not in _UNIT_WORDS:
        raise JobFileError(f"units = {units_key!r}: expected 'm', 'ft' or 'us_ft'")
    numbered = tuple(
        _renumber(el, i) for i, el in enumerate(elements, start=1)
    )
    al = XAlignment(alignment_name, float(sta_start), numbered, tuple(equations))
    # the staked design may have angle points and curvature jumps (PT TS): export them as they are
    measured = validate_geometry(al, tolerance, joins=False)
    total = sum(m.length for m in measured)

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
                "staBack": _num(back),
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

    _ET.indent(root, space="  ")
    body = _ET.tostring(root, encoding="unicode")
    assert body.endswith("</LandXML>")
    # the points as text: a build may stake a million of them, too many for a tree
    cg = _cgpoints_text(points) if len(points.names if isinstance(points, XPoints) else points) else ""
    return ('<?xml version="1.0" encoding="UTF-8"?>\n' + body[: -len("</LandXML>")] + cg + "</LandXML>\n").encode(
        "utf-8"
    )


_POINT_DECIMALS = 6  # CgPoint coordinates: micro-units, far below any staking tolerance
_NEEDS_ESCAPE = re.compile('[&<>"\n\r\t]')


def _escape_attr(v: str) -> str:
    for raw, ent in (("&", "&amp;"), ("<", "&lt;"), (">", "&gt;"), ('"', "&quot;"), ("\n", "&#10;"),
                     ("\r", "&#13;"), ("\t", "&#9;")):
        v = v.replace(raw, ent)
    return v


def _ascii_field(strings: Sequence[str], what: str) -> tuple[NDArray[np.uint8], NDArray[np.int64]]:
    """Strings as an ``(N, width)`` matrix of UTF-8 bytes, escaped for an attribute,
    NUL-padded on the right; and the byte length of each.
    """
    joined = "".join(strings)
    if _BAD_XML_CHAR.search(joined):
        culprit = next(v for v in strings if _BAD_XML_CHAR.search(v))
        raise JobFileError(f"{what} = {culprit!r}: holds a character XML cannot carry")
    if _NEEDS_ESCAPE.search(joined):
        strings = [_escape_attr(v) for v in strings]  # rare: most names are plain
        joined = "".join(strings)
    n = len(strings)
    if joined.isascii():
        flat = np.frombuffer(joined.encode("ascii"), dtype=np.uint8)
        lens = np.fromiter(map(len, strings), dtype=np.int64, count=n)
    else:
        pieces = [v.encode("utf-8") for v in strings]
        flat = np.frombuffer(b"".join(pieces), dtype=np.uint8)
        lens = np.fromiter(map(len, pieces), dtype=np.int64, count=n)
    width = int(lens.max()) if n else 0
    starts = np.concatenate([[0], np.cumsum(lens)[:-1]]).astype(np.int64)
    cols = np.arange(width, dtype=np.int64)[None, :]
    inside = cols < lens[:, None]
    out = np.zeros((n, width), dtype=np.uint8)
    out[inside] = flat[(starts[:, None] + cols)[inside]]
    return out, lens


def _const_field(text: str, n: int) -> NDArray[np.uint8]:
    return np.tile(np.frombuffer(text.encode(), dtype=np.uint8), (n, 1))


def _fixed_field(values: NDArray[np.float64], decimals: int, what: str) -> NDArray[np.uint8]:
    """Numbers with fixed decimals as an ``(N, width)`` ASCII matrix, NUL-padded on the left."""
    x = np.asarray(values, dtype=float)
    if not np.isfinite(x).all() or (np.abs(x) >= 1e12).any():
        raise JobFileError(f"{what}: coordinates must be finite and below 1e12")
    scaled = _scaled_exact(np.abs(x), decimals)
    neg = (x < 0) & (scaled > 0)
    width = max(decimals + 1, len(str(int(scaled.max()))) if scaled.size else 1)
    digits = np.empty((x.size, width), dtype=np.uint8)
    rest = scaled.copy()
    for j in range(width - 1, -1, -1):  # one vectorised step per digit position
        digits[:, j] = 48 + rest % 10
        rest //= 10
    shown = np.maximum(np.searchsorted(10 ** np.arange(19, dtype=np.int64), scaled, side="right"), decimals + 1)
    digits *= np.arange(width)[None, :] >= (width - shown)[:, None]  # drop leading zeros
    cut = width - decimals
    sign = np.where(neg, 45, 0).astype(np.uint8)[:, None]
    point = np.full((x.size, 1), 46, dtype=np.uint8)
    return np.hstack([sign, digits[:, :cut], point, digits[:, cut:]])


def _split27(v: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Veltkamp split: v = hi + lo, each with at most 26 significant bits."""
    t = 134217729.0 * v  # 2**27 + 1
    hi = t - (t - v)
    return hi, v - hi


def _scaled_exact(a: NDArray[np.float64], decimals: int) -> NDArray[np.int64]:
    """round(a * 10**decimals) as the exact decimal value of each float rounds (half to even),
    like Python's ``f"{a:.{decimals}f}"``, for 0 <= a < 1e12.

    The integer part is split off exactly; the fraction times 10**decimals is an
    error-free product (Dekker: rounded product plus its exact error), and the
    error decides the ties that the rounded product alone would get wrong.
    """
    whole = np.floor(a)
    frac = a - whole  # exact
    scale = 10.0**decimals
    prod = frac * scale
    fh, fl = _split27(frac)
    sh, sl = _split27(np.array(scale))
    err = ((fh * sh - prod) + fh * sl + fl * sh) + fl * sl  # frac * scale == prod + err exactly
    low = np.floor(prod)
    tie = prod - low == 0.5
    rounded = np.where(tie & (err > 0), low + 1.0, np.where(tie & (err < 0), low, np.rint(prod)))
    return whole.astype(np.int64) * 10**decimals + rounded.astype(np.int64)


def _optional_attr(name: str, values: Sequence[str] | None, n: int, what: str) -> list[NDArray[np.uint8]]:
    """`` name="value"`` where a value is given, nothing where it is empty."""
    if values is None:
        return []
    field, lens = _ascii_field(values, what)
    present = (lens > 0)[:, None]
    return [_const_field(f' {name}="', n) * present, field, _const_field('"', n) * present]


def _cgpoints_text(points: Sequence[XPoint] | XPoints) -> str:
    """``<CgPoints>`` with one ``<CgPoint>`` a line, laid out as byte matrices by numpy."""
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
    if len(set(points.names)) != n:
        seen: set[str] = set()
        dup = next(v for v in points.names if v in seen or seen.add(v))  # type: ignore[func-returns-value]
        raise JobFileError(f"point {dup!r}: written twice; CgPoint names must be unique")
    elev = np.full(n, np.nan) if points.elevation is None else np.asarray(points.elevation, dtype=float)
    has_z = ~np.isnan(elev)[:, None]
    fields = [
        _const_field('    <CgPoint name="', n),
        _ascii_field(points.names, "point name")[0],
        _const_field('"', n),
        *_optional_attr("code", points.codes, n, "point code"),
        *_optional_attr("desc", points.descs, n, "point desc"),
        _const_field(">", n),
        _fixed_field(points.northing, _POINT_DECIMALS, "points"),
        _const_field(" ", n),
        _fixed_field(points.easting, _POINT_DECIMALS, "points"),
        _const_field(" ", n) * has_z,
        _fixed_field(np.where(has_z[:, 0], elev, 0.0), _POINT_DECIMALS, "points") * has_z,
        _const_field("</CgPoint>\n", n),
    ]
    rows = np.hstack(fields).ravel()
    return "  <CgPoints>\n" + rows[rows != 0].tobytes().decode("utf-8") + "  </CgPoints>\n"


def _renumber(el: XElement, index: int) -> XElement:
    return replace(el, index=index)


def _pt(parent: _ET.Element, tag: str, n: float, e: float) -> None:
    _ET.SubElement(parent, tag).text = f"{_num(n)} {_num(e)}"


def _write_element(geom: _ET.Element, el: XElement, m: XMeasured) -> None:
    base = {"name": _text(el.name, "element name")} if el.name else {}
    if isinstance(el, XLine):
        attrs = {**base, "dir": _dir(m.az_start), "length": _len(m.length), "staStart": _len(m.sta_start)}
        x = _ET.SubElement(geom, "Line", attrs)
        _pt(x, "Start", el.start_n, el.start_e)
        _pt(x, "End", el.end_n, el.end_e)
    elif isinstance(el, XCurve):
        r = float(m.radius_start or 0.0)
        delta = math.degrees(m.length / r)
        chord = 2.0 * r * math.sin(m.length / r / 2.0)
        x = _ET.SubElement(
            geom,
            "Curve",
            {
                **base,
                "rot": "cw" if el.rot == 1 else "ccw",
                "chord": _len(chord),
                "crvType": "arc",
                "delta": _ang(delta),
                "dirEnd": _dir(m.az_end),
                "dirStart": _dir(m.az_start),
                "length": _len(m.length),
                "radius": _len(r),
                "staStart": _len(m.sta_start),
            },
        )
        _pt(x, "Start", el.start_n, el.start_e)
        _pt(x, "Center", el.center_n, el.center_e)
        _pt(x, "End", el.end_n, el.end_e)
    else:
        curvatures = sum(1.0 / r for r in (el.radius_start, el.radius_end) if r is not None)
        theta = math.degrees(m.length * curvatures / 2.0)  # the clothoid's deflection
        chord = math.hypot(el.end_n - el.start_n, el.end_e - el.start_e)
        x = _ET.SubElement(
            geom,
            "Spiral",
            {
                **base,
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
            },
        )
        _pt(x, "Start", el.start_n, el.start_e)
        _pt(x, "PI", el.pi_n, el.pi_e)
        _pt(x, "End", el.end_n, el.end_e)


def _write_pvi(parent: _ET.Element, v: XPVI) -> None:
    text = f"{_num(v.station)} {_num(v.elevation)}"
    if v.kind == "pvi":
        x = _ET.SubElement(parent, "PVI")
    elif v.kind == "para":
        x = _ET.SubElement(parent, "ParaCurve", {"length": _num(v.length)})
    elif v.kind == "unsym":
        if v.length_in is None or v.length_out is None:
            raise GeometryError(f"PVI at station {_fmt(v.station)}: an unsymmetrical curve needs length_in and length_out")
        x = _ET.SubElement(parent, "UnsymParaCurve", {"lengthIn": _num(v.length_in), "lengthOut": _num(v.length_out)})
    elif v.kind == "circ":
        if v.radius is None:
            raise GeometryError(f"PVI at station {_fmt(v.station)}: a circular vertical curve needs its radius")
        x = _ET.SubElement(parent, "CircCurve", {"length": _num(v.length), "radius": _num(v.radius)})
    else:
        raise GeometryError(f"PVI at station {_fmt(v.station)}: kind {v.kind!r}, expected pvi, para, unsym or circ")
    x.text = text
