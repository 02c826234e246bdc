"""Reading LandXML 1.2: a file into the plain records of :mod:`.records`.

* Hardened parsing: ``defusedxml.ElementTree`` with ``forbid_dtd=True`` (and
  ``forbid_entities``/``forbid_external``), so a document type declaration,
  entity expansion ("billion laughs") and external entities are refused.
  Files larger than :data:`MAX_FILE_BYTES` (256 MiB, room for the export
  of a build of about three million stakes) and anything that is not a
  regular file are refused before a byte is read (``limits.read_regular_file``:
  a FIFO never hangs).  Malformed XML is a
  :class:`~stakeout.errors.JobFileError` naming the line and column.
* Memory: the parse streams.  Points become plain rows as each ``<CgPoint>``
  ends and leave the tree; of content a staking job does not use only the
  top two levels are kept.  Reading takes about 7 times the file's size for a
  file of points (a 160 MB file of 1.2 million points and 1.2 million surface
  points: 1.2 GB), so a file at the 256 MiB cap takes about 2 GB.
* Encodings: UTF-8, UTF-16, US-ASCII and ISO-8859-1 go to the parser as they
  are; any other encoding Python knows (Shift_JIS, code pages) is decoded
  first; an unknown one, or bytes not in the declared encoding, are refused
  naming it.
* Bounds: every number meets the bound of its typed kind
  (:mod:`stakeout.limits`: stations and coordinates within 1e9, lengths
  within 1e9, elevations within 1e5), refused naming element and attribute.
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
* Content a staking job does not use (cant, cross-sections, surfaces, pipe
  networks, features, ground profiles, ...) is listed in
  :attr:`XDesign.not_used` as short descriptions and counted per element name
  in :attr:`XDesign.unused_kinds`; ``<Application>`` is kept as
  :attr:`XDesign.application`.  An alignment's ``<Superelevation>`` elements
  are read (:class:`XSuperelevation`; the job file decides whether a job
  applies them) and so is ``<CoordinateSystem>`` (compared with the job's
  ``crs`` by the job-file reader).
"""

from __future__ import annotations

import codecs
import gc
import hashlib
import io
import math
import os
import re
import warnings
import xml.etree.ElementTree as _ET  # the tree's types only: parsing is defusedxml's
from collections.abc import Iterator, Sequence
from typing import Protocol

import defusedxml.ElementTree as _DET
import numpy as np
from defusedxml import DefusedXmlException

from ..errors import JobFileError
from ..limits import (
    MAX_COORDINATE,
    MAX_CROSS_SLOPE,
    MAX_HEIGHT,
    check_coordinate,
    check_height,
    check_length,
    check_station_value,
    read_regular_file,
    unicode_bom,
)
from .records import (
    ANGLE_POINT_CODE,
    LANDXML_NS,
    MAX_FILE_BYTES,
    SE_STATION_ELEMENTS,
    UNIT_WORDS,
    XPVI,
    XAlignment,
    XCoordinateSystem,
    XCurve,
    XDesign,
    XElement,
    XEquation,
    XLine,
    XPoint,
    XProfile,
    XSpiral,
    XSuperelevation,
    XUnits,
    fmt,
    shown,
)

__all__ = ["read_landxml", "parse_landxml", "pick_alignment", "pick_profile", "check_units", "SurfaceTaker"]

_NEWLINE = b"\n"
# what the stream keeps of an element (see _Reader.stream)
_KEEP, _CG, _POINT, _SHALLOW_TOP, _SHALLOW, _DROP = range(6)
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
_ANGULAR = ("radians", "grads", "decimal degrees", "decimal dd.mm.ss")
_PVI_KIND = {"PVI": "pvi", "ParaCurve": "para", "UnsymParaCurve": "unsym", "CircCurve": "circ"}
_NEEDS = {"Line": ("Start", "End"), "Curve": ("Start", "Center", "End"), "Spiral": ("Start", "PI", "End")}
_XSI_NIL = "{http://www.w3.org/2001/XMLSchema-instance}nil"
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
    data = read_regular_file(p, "LandXML file", MAX_FILE_BYTES)
    return parse_landxml(data, source=p)


def parse_landxml(data: bytes, source: str = "LandXML data", surface: SurfaceTaker | None = None) -> XDesign:
    """Parse LandXML 1.2 from bytes (what :func:`read_landxml` does after reading).

    Parameters
    ----------
    data : bytes
        The document (at most :data:`MAX_FILE_BYTES`).
    source : str
        Name of the file, used in error messages.
    surface : SurfaceTaker, optional
        Also shown every element of the same pass (``start`` as it begins, ``end`` as it ends,
        before it is cleared): a ground ``<Surface>`` in the design file is taken without a
        second parse.  What it raises stops it, not the parse: it keeps the error.

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
        return _parse(data, source, digest, surface)
    finally:
        if paused:
            gc.enable()


_DECLARED = re.compile(rb"""\A(?:\xef\xbb\xbf)?<\?xml[^>]*?\sencoding\s*=\s*["']([^"']{0,64})["']""")
_DECLARED_TEXT = re.compile(r"""\A(\ufeff?<\?xml[^>]*?\sencoding\s*=\s*["'])[^"']*(["'])""")
_EXPAT_NATIVE = frozenset({"utf-8", "utf-16", "utf-16-le", "utf-16-be", "ascii", "latin-1", "iso8859-1"})


def _as_parser_can_read(data: bytes, source: str) -> bytes:
    """The document in an encoding the parser reads: one it does not (Shift_JIS, another multi-byte
    encoding, a Windows code page) is decoded by Python's codec and handed on as UTF-8; an encoding
    Python does not know, or bytes that are not in the declared one, are refused by name.
    """
    bom = unicode_bom(data)
    if bom in ("UTF-16", "UTF-32"):  # the mark decides (the parser reads no UTF-32 at all)
        try:
            text = data.decode(bom.lower())
        except UnicodeDecodeError as exc:
            raise JobFileError(f"{source}: byte {exc.start}: not {bom}, which its byte-order mark announces; "
                               "save the file as UTF-8") from None
        return _DECLARED_TEXT.sub(r"\1UTF-8\2", text, count=1).encode("utf-8")
    if bom is None and data.strip() and not data.lstrip(b" \t\r\n").startswith(b"<"):
        raise JobFileError(f"{source}: does not begin with '<' as an XML file does (is it in an encoding such as "
                           "EBCDIC or UTF-32 without a byte-order mark?); save the file as UTF-8")
    m = _DECLARED.match(data[:512])
    if m is None:
        return data
    declared = m.group(1).decode("ascii", "replace")
    try:
        codec = codecs.lookup(declared).name
    except LookupError:
        raise JobFileError(f"{source}: the XML declaration names encoding {declared!r}, which is unknown; "
                           "save the file as UTF-8") from None
    if codec in _EXPAT_NATIVE:
        return data
    try:
        text = data.decode(codec)
    except LookupError:  # a codec that is no text encoding (rot13, base64)
        raise JobFileError(f"{source}: encoding {declared!r} of the XML declaration is not a text encoding; "
                           "save the file as UTF-8") from None
    except UnicodeDecodeError as exc:
        line = data.count(_NEWLINE, 0, exc.start) + 1
        raise JobFileError(f"{source}: line {line}: bytes that are not {declared!r}, the encoding the XML "
                           "declaration names; save the file as UTF-8") from None
    start, end = m.span(1)
    head = data[:start].decode("ascii", "replace") + "UTF-8" + data[end:m.end()].decode("ascii", "replace")
    return (head + text[len(data[:m.end()].decode(codec)):]).encode("utf-8")


def _parse(data: bytes, source: str, digest: str, surface: SurfaceTaker | None = None) -> XDesign:
    data = _as_parser_can_read(data, source)
    reader = _Reader(source, surface)
    try:
        root = reader.stream(data)
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
    except (ValueError, LookupError) as exc:  # what the parser itself says of an encoding
        raise JobFileError(f"{source}: cannot be read as XML ({shown(str(exc))}); save the file as UTF-8") from None
    return reader.read(root, digest)


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


class SurfaceTaker(Protocol):
    """What :func:`parse_landxml` shows every element to (``surface.py``'s collector of a TIN)."""

    error: JobFileError | None

    def start(self, el: _ET.Element) -> None: ...

    def end(self, el: _ET.Element) -> None: ...


class _Reader:
    """One pass over a parsed document."""

    def __init__(self, source: str, surface: SurfaceTaker | None = None) -> None:
        self.source = source
        self.surface = surface
        self.ns = ""
        self.angular = "radians"
        self.angular_declared = True
        self.cg_by_name: dict[str, tuple[float, float, float | None]] = {}
        self.unused: list[tuple[str, str, str]] = []  # (context, label, element name)
        # per top-level <CgPoints>: its points (name, text, code, desc, pntRef) and what it holds besides
        self.cg_rows: dict[int, list[tuple[str, str, str, str, str | None]]] = {}
        self.cg_unused: dict[int, list[tuple[str, str, str]]] = {}

    # -- streaming ------------------------------------------------------------

    def stream(self, data: bytes) -> _ET.Element:
        """Parse incrementally, keeping only what the reader needs.

        The points of ``<CgPoints>`` are taken as plain rows when each ends
        and dropped from the tree; of the content a staking job does not use
        (surfaces, pipe networks, ...) only the top two levels are kept, for
        the list of what is not used.  A 250 MB file of points or surfaces
        is so read in a fraction of the memory its whole tree would take.
        """
        stack: list[_ET.Element] = []
        zones: list[int] = []
        done: list[int] = []  # children already ended and consumed, at the front of each open element
        top = 0
        root: _ET.Element | None = None
        taker = self.surface
        for event, el in _DET.iterparse(io.BytesIO(data), events=("start", "end"), forbid_dtd=True,
                                        forbid_entities=True, forbid_external=True):
            if taker is not None:
                try:
                    (taker.start if event == "start" else taker.end)(el)
                except JobFileError as exc:  # the surface's own error, for when the ground is read
                    taker.error = exc
                    taker = None
            if event == "start":
                if root is None:
                    root = el
                    self.ns = _split(el.tag)[0]
                    zone = _KEEP
                else:
                    zone = self.zone(el, zones[-1], len(stack))
                    if zone == _CG and len(stack) == 1:
                        top = id(el)
                        self.cg_rows[top], self.cg_unused[top] = [], []
                stack.append(el)
                zones.append(zone)
                done.append(0)
                continue
            stack.pop()
            zone = zones.pop()
            done.pop()
            if not stack or zones[-1] not in (_CG, _SHALLOW, _DROP):
                continue
            parent = stack[-1]
            if zones[-1] == _CG:
                self.cg_child(el, zone, parent, top)
            el.clear()
            done[-1] += 1
            if done[-1] >= 4096:  # the front of the parent's children is what has been consumed
                del parent[: done[-1]]
                done[-1] = 0
        assert root is not None
        return root

    def zone(self, el: _ET.Element, parent_zone: int, depth: int) -> int:
        """What the stream keeps of an element, from its parent's zone and its depth (the root is 0)."""
        ns, local = _split(el.tag)
        mine = ns == self.ns
        if parent_zone == _KEEP and depth == 1:
            if mine and local == "CgPoints":
                return _CG
            return _KEEP if mine and local in ("Units", "Application", "Alignments") else _SHALLOW_TOP
        if parent_zone == _CG:
            if mine and local == "CgPoints":
                return _CG
            return _POINT if mine and local == "CgPoint" else _KEEP
        if parent_zone == _SHALLOW_TOP:
            return _SHALLOW
        if parent_zone in (_SHALLOW, _DROP):
            return _DROP
        return _KEEP

    def cg_child(self, el: _ET.Element, zone: int, parent: _ET.Element, top: int) -> None:
        """A child of a ``<CgPoints>`` has ended: a point becomes a row, anything else a note."""
        if zone == _POINT:
            self.cg_rows[top].append((el.get("name", ""), el.text or "", el.get("code", ""), el.get("desc", ""),
                                      el.get("pntRef")))
        elif zone != _CG:  # a nested collection's content went into the rows already
            ctx = f"CgPoints {parent.get('name') or ''}".rstrip()
            holder = _ET.Element("holder")
            holder.append(el)
            kept = self.unused
            self.unused = self.cg_unused[top]
            try:
                for local, child in self.children(holder, ctx):
                    self.note(ctx, local, child)
            finally:
                self.unused = kept

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
                self.unused.append((context, f"extension element {local!r} ({ns or 'no namespace'})",
                                    f"extension {local}"))
                continue
            yield local, child

    def note(self, context: str, local: str, el: _ET.Element) -> None:
        if local in _COLLECTIONS:
            inner = [_label(c_local, c) for c_local, c in self.children(el, context)]
            shown = ", ".join(inner[:5]) + (f", +{len(inner) - 5} more" if len(inner) > 5 else "")
            self.unused.append((context, f"{_label(local, el)} ({shown})" if inner else _label(local, el), local))
        else:
            self.unused.append((context, _label(local, el), local))

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

    # the bounds of typed numbers (stakeout/limits.py) hold for numbers from a design file too
    def station(self, v: float, what: str) -> float:
        return check_station_value(v, f"{self.source}: {what}")

    def height(self, v: float, what: str) -> float:
        return check_height(v, f"{self.source}: {what}")

    def length(self, v: float | None, what: str) -> float | None:
        return None if v is None else check_length(v, f"{self.source}: {what}", allow_zero=True, signed=True)

    def opt_length(self, el: _ET.Element, attr: str, what: str) -> float | None:
        return self.length(self.opt_double(el, attr, what), f"{what} {attr}")

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
        for v, axis in zip(vals, ("northing", "easting"), strict=False):  # an elevation here is not used
            check_coordinate(v, f"{self.source}: {what} {axis}")
        return vals[0], vals[1], (vals[2] if len(vals) == 3 else None)

    # -- document -------------------------------------------------------------

    def read(self, root: _ET.Element, digest: str) -> XDesign:
        ns, local = _split(root.tag)
        if local != "LandXML" or ns not in ("", LANDXML_NS):
            tag = f"{{{ns}}}{local}" if ns else local
            raise self.err(f"root element {tag!r} is not <LandXML> of LandXML 1.2 ({LANDXML_NS})")
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
                self.unused.extend(self.cg_unused.get(id(el), ()))
                self.cgpoints(self.cg_rows.get(id(el), []), points)
        alignments: list[XAlignment] = []
        profiles: list[XProfile] = []
        application = ""
        crs: XCoordinateSystem | None = None
        for local, el in top:
            if local in ("Units", "CgPoints"):
                continue
            if local == "Application":
                application = application or el.get("name", "")
            elif local == "CoordinateSystem" and crs is None:  # the schema allows one
                # compared with the job's crs by the job-file reader, or listed there as not used
                crs = XCoordinateSystem(shown(el.get("epsgCode", "").strip()), shown(el.get("name", "").strip()),
                                        el.get("ogcWktCode", "").strip())  # the WKT goes to pyproj, never shown
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
            unused_kinds=_count_kinds(self.unused),
            coordinate_system=crs,
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

    def cgpoints(self, rows: list[tuple[str, str, str, str, str | None]], out: list[XPoint]) -> None:
        # all coordinates at once (a file may hold the million stakes of a build)
        names = [r[0] for r in rows]
        texts = [r[1] for r in rows]
        counts = np.fromiter((len(t.split()) for t in texts), dtype=np.int64, count=len(texts))
        odd = np.flatnonzero((counts == 1) | (counts > 3))
        if odd.size:
            text = rows[int(odd[0])][1]
            raise self.err(f"CgPoint {names[int(odd[0])]!r} = {text!r}: expected 'northing easting [elevation]'")
        joined = " ".join(texts)  # one string and one array: no Python object per number
        numbers = None
        # xs:double has digits, sign, point, exponent and INF; the conversion refuses malformed numbers
        if not _NOT_DOUBLE_CHAR.search(joined):
            with warnings.catch_warnings():
                warnings.simplefilter("error")  # numpy warns (and stops) at text it cannot read
                try:
                    numbers = np.fromstring(joined, dtype=float, sep=" ")
                except (ValueError, DeprecationWarning):
                    numbers = None
        if numbers is None or numbers.size != int(counts.sum()):
            for name, text in zip(names, texts, strict=True):  # only to name the culprit
                for t in text.split():
                    self.double(t, f"CgPoint {name!r}")
            raise self.err("CgPoints: coordinates that are not numbers")
        del joined
        vals = np.concatenate([numbers, np.full(3, np.nan)])  # padded for the gathers
        first = np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(np.int64)
        has = counts > 0
        nn = np.where(has, vals[first], np.nan)
        ee = np.where(has, vals[first + 1], np.nan)
        zz = np.where(counts == 3, vals[first + 2], np.nan)
        finite = np.isfinite(nn) & np.isfinite(ee) & (np.isfinite(zz) | (counts == 2))
        if not finite[has].all():
            i = int(np.flatnonzero(has & ~finite)[0])
            raise self.err(f"CgPoint {names[i]!r} = {rows[i][1]!r}: coordinates must be finite")
        with np.errstate(invalid="ignore"):
            far = (np.abs(nn) > MAX_COORDINATE) | (np.abs(ee) > MAX_COORDINATE) | (np.abs(zz) > MAX_HEIGHT)
        if far[has].any():
            i = int(np.flatnonzero(has & far)[0])
            raise self.err(f"CgPoint {names[i]!r} = {rows[i][1]!r}: out of range; coordinates must lie within "
                           f"-{MAX_COORDINATE:,.0f} to {MAX_COORDINATE:,.0f} and elevations within "
                           f"-{MAX_HEIGHT:,.0f} to {MAX_HEIGHT:,.0f} file units")
        # names with coordinates first (the first of a name wins), so a CgPoint may refer to another
        for i in reversed(np.flatnonzero(has & np.array([bool(n) for n in names], dtype=bool)).tolist()):
            self.cg_by_name[names[i]] = (float(nn[i]), float(ee[i]), None if counts[i] == 2 else float(zz[i]))
        for i in np.flatnonzero(~has).tolist():  # pntRef only: rare
            ref = rows[i][4]
            stand_in = _ET.Element("CgPoint", {} if ref is None else {"pntRef": ref})
            stand_in.text = rows[i][1]
            nn[i], ee[i], z = self.point(stand_in, f"CgPoint {names[i]!r}")
            zz[i] = np.nan if z is None else z
        zs: list[float | None] = [None if math.isnan(z) else z for z in zz.tolist()]
        out.extend(
            XPoint(name, n, e, z, r[2], r[3])
            for name, n, e, z, r in zip(names, nn.tolist(), ee.tolist(), zs, rows, strict=True)
        )

    def alignment(self, el: _ET.Element, position: int, profiles: list[XProfile]) -> XAlignment:
        name = el.get("name", "")
        what = f"alignment {name!r}" if name else f"alignment {position}"
        sta_start = self.station(self.double(el.get("staStart"), f"{what} staStart"), f"{what} staStart")
        length = self.opt_length(el, "length", what)
        elements: tuple[XElement, ...] = ()
        unsupported: list[str] = []
        equations: list[XEquation] = []
        n_geom = 0
        supers: list[XSuperelevation] = []
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
            elif local == "Superelevation":
                supers.append(self.superelevation(child, what, len(supers) + 1))
            else:
                self.note(what, local, child)
        if n_geom == 0:
            unsupported.append("no <CoordGeom>")
        return XAlignment(name, sta_start, elements, tuple(equations), length, tuple(unsupported), tuple(supers))

    def superelevation(self, el: _ET.Element, what: str, position: int) -> XSuperelevation:
        """A ``<Superelevation>``: its station elements and ``FullSuperelev`` (LandXML 1.2 schema).

        Each station element is nillable and may repeat (the schema's choice is unbounded): a nil or
        empty one is absent; two that differ contradict each other and are refused naming the element.
        Stations meet the station bound, the rate the cross-slope bound (percent).
        """
        where = f"{what}, Superelevation {position}"
        attrs = {}
        for attr in ("staStart", "staEnd"):
            v = self.opt_double(el, attr, where)
            attrs[attr] = None if v is None else self.station(v, f"{where} {attr}")
        got: dict[str, float] = {}
        adverse = False
        for local, child in self.children(el, where):
            if local == "AdverseSE":
                adverse = (child.text or "").strip() == "adverse"
                continue
            if local not in SE_STATION_ELEMENTS and local != "FullSuperelev":
                self.note(where, local, child)
                continue
            text = (child.text or "").strip()
            if not text or child.get(_XSI_NIL, "").strip() in ("true", "1"):
                continue
            v = self.double(text, f"{where} {local}")
            if local == "FullSuperelev":
                if not (math.isfinite(v) and abs(v) <= MAX_CROSS_SLOPE):
                    raise self.err(f"{where} FullSuperelev = {text!r}: out of range; a superelevation rate lies "
                                   f"within -{MAX_CROSS_SLOPE:g} to {MAX_CROSS_SLOPE:g} percent")
            else:
                self.station(v, f"{where} {local}")
            if local in got and got[local] != v:
                raise self.err(f"{where}: two <{local}> that differ ({fmt(got[local])} and {fmt(v)})")
            got[local] = v
        return XSuperelevation(position, attrs["staStart"], attrs["staEnd"],
                               tuple(got.get(k) for k in SE_STATION_ELEMENTS), got.get("FullSuperelev"), adverse)

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
            angle_point = False
            for p_local, p_el in self.children(child, where):
                if p_local in ("Start", "End", "Center", "PI"):
                    pts.setdefault(p_local, self.point(p_el, f"{where} {p_local}"))
                elif local == "Line" and p_local == "Feature" and p_el.get("code") == ANGLE_POINT_CODE:
                    angle_point = True
                else:
                    self.note(where, p_local, p_el)
            for key in _NEEDS[local]:
                if key not in pts:
                    raise self.err(f"{where}: no <{key}>")
            sta = self.opt_double(child, "staStart", where)
            if sta is not None:
                self.station(sta, f"{where} staStart")
            s, e = pts["Start"], pts["End"]
            if local == "Line":
                out.append(XLine(index, name, s[0], s[1], e[0], e[1], self.opt_length(child, "length", where), sta,
                                 angle_point))
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
                        radius_attr=self.opt_length(child, "radius", where),
                        length_attr=self.opt_length(child, "length", where),
                        delta_attr=self.delta_deg(child, where, s, c, e, rot),
                        chord_attr=self.opt_length(child, "chord", where),
                        sta_start_attr=sta,
                    )
                )
            else:
                pi = pts["PI"]
                radii = []
                for attr in ("radiusStart", "radiusEnd"):
                    r = abs(self.double(child.get(attr), f"{where} {attr}"))
                    radii.append(None if math.isinf(r) else self.length(r, f"{where} {attr}"))
                out.append(
                    XSpiral(
                        index, name, s[0], s[1], pi[0], pi[1], e[0], e[1], radii[0], radii[1], rot,
                        length_attr=self.opt_length(child, "length", where),
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
            if v is not None:
                self.station(v, f"{where} {key}")
        for local, child in self.children(el, where):
            self.note(where, local, child)
        return XEquation(internal, ahead, back, 1 if inc_txt == "increasing" else -1)

    def pvi_length(self, k: _ET.Element, attr: str, at: str) -> float:
        v = self.double(k.get(attr), f"{at} {attr}")
        if math.isfinite(v) and v < 0.0:
            raise self.err(f"{at}: curve lengths must be finite and not negative ({attr} = {fmt(v)})")
        return check_length(v, f"{self.source}: {at} {attr}", allow_zero=True)

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
                self.station(sta, f"{at} station")
                self.height(elev, f"{at} elevation")
                if pvis and not sta > pvis[-1].station:
                    raise self.err(f"{at}: station {sta!r} does not increase (previous {pvis[-1].station!r})")
                if kind == "pvi":
                    pvis.append(XPVI(sta, elev))
                elif kind == "para":
                    length = self.pvi_length(k, "length", at)
                    pvis.append(XPVI(sta, elev, "para", length, length / 2.0, length / 2.0))
                elif kind == "unsym":
                    lin = self.pvi_length(k, "lengthIn", at)
                    lout = self.pvi_length(k, "lengthOut", at)
                    pvis.append(XPVI(sta, elev, "unsym", lin + lout, lin, lout))
                else:
                    length = self.pvi_length(k, "length", at)
                    radius = self.double(k.get("radius"), f"{at} radius")
                    check_length(radius, f"{self.source}: {at} radius", signed=True)
                    pvis.append(XPVI(sta, elev, "circ", length, None, None, radius))
                for bad in (pvis[-1].length, pvis[-1].length_in, pvis[-1].length_out):
                    if bad is not None and not (math.isfinite(bad) and bad >= 0.0):
                        raise self.err(f"{at}: curve lengths must be finite and not negative")
            self.check_circular_curves(pvis, where)
            out.append(XProfile(name, a_name, tuple(pvis)))

    def check_circular_curves(self, pvis: list[XPVI], where: str) -> None:
        """A ``CircCurve``'s ``length`` against its radius and the grades on either side.

        The arc turns from the grade in to the grade out: its length along the arc is
        ``R |atan(g_out) - atan(g_in)|``; its horizontal length ``R |sin(atan g_out) - sin(atan g_in)|``
        is accepted too (files in use write either), each within 0.001 file units and 1e-9 of the length.
        """
        for i in range(1, len(pvis) - 1):
            v = pvis[i]
            if v.kind != "circ" or v.radius is None:
                continue
            g_in = (v.elevation - pvis[i - 1].elevation) / (v.station - pvis[i - 1].station)
            g_out = (pvis[i + 1].elevation - v.elevation) / (pvis[i + 1].station - v.station)
            r = abs(v.radius)
            along = r * abs(math.atan(g_out) - math.atan(g_in))
            level = r * abs(math.sin(math.atan(g_out)) - math.sin(math.atan(g_in)))
            slack = 0.001 + 1e-9 * max(along, v.length)
            if min(abs(v.length - along), abs(v.length - level)) > slack:
                grades = " and ".join(f"{'+' if g >= 0 else ''}{fmt(g * 100.0)}%" for g in (g_in, g_out))
                raise self.err(f"{where}, CircCurve {i + 1} (station {fmt(v.station)}): length = {fmt(v.length)} "
                               f"contradicts radius {fmt(r)} and the grades {grades}, which give {fmt(along)} "
                               "along the arc")


def _summarise(entries: list[tuple[str, str, str]]) -> tuple[str, ...]:
    """'context: label' strings, repeats folded into 'x N', in first-seen order."""
    counts: dict[tuple[str, str], int] = {}
    for ctx, label, _kind in entries:
        counts[(ctx, label)] = counts.get((ctx, label), 0) + 1
    return tuple(shown(f"{ctx}: {lab}") + (f" x{n}" if n > 1 else "") for (ctx, lab), n in counts.items())


def _count_kinds(entries: list[tuple[str, str, str]]) -> tuple[tuple[str, int], ...]:
    """How many elements of each name are not used, in first-seen order (``(("Feature", 15), ("Cant", 1))``)."""
    counts: dict[str, int] = {}
    for _ctx, _label, kind in entries:
        counts[kind] = counts.get(kind, 0) + 1
    return tuple(counts.items())


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
            f"({UNIT_WORDS[u.unit_key]}) but the job's units = {job_unit_key!r}; they must match"
        )

