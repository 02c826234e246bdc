"""Reading LandXML 1.2: a file into the plain records of :mod:`.records`.
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
"""

from __future__ import annotations

import gc
import hashlib
import itertools
import math
import os
import re
import xml.etree.ElementTree as _ET  # the tree's types only: parsing is defusedxml's
from collections.abc import Iterator, Sequence

import defusedxml.ElementTree as _DET
import numpy as np
from defusedxml import DefusedXmlException

from ..errors import JobFileError
from ..limits import read_regular_file
from .records import (
    ANGLE_POINT_CODE,
    LANDXML_NS,
    MAX_FILE_BYTES,
    UNIT_WORDS,
    XPVI,
    XAlignment,
    XCurve,
    XDesign,
    XElement,
    XEquation,
    XLine,
    XPoint,
    XProfile,
    XSpiral,
    XUnits,
)

__all__ = ["read_landxml", "parse_landxml", "pick_alignment", "pick_profile", "check_units"]

_NEWLINE = b"\n"
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
            s, e = pts["Start"], pts["End"]
            if local == "Line":
                out.append(XLine(index, name, s[0], s[1], e[0], e[1], self.opt_double(child, "length", where), sta,
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
            f"({UNIT_WORDS[u.unit_key]}) but the job's units = {job_unit_key!r}; they must match"
        )

