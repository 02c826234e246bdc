"""Reading a TIN ``<Surface>`` of LandXML 1.2: the existing ground.

``<Surfaces><Surface name="EG"><Definition surfType="TIN"><Pnts><P id="1">N E Z</P>...
</Pnts><Faces><F>1 2 3</F>...</Faces></Definition></Surface></Surfaces>``.  A face
``<F i="1">`` is invisible: a hole, left out.  Parsed with the same hardening
as the design reader (:mod:`.reader`: defusedxml without DTDs or entities,
the size limit, the encodings) in a streaming pass of its own: each ``<P>``
and ``<F>`` becomes a plain row as it ends and leaves the tree, so a surface
of a million faces is read without its whole tree.

Checked: the root is ``<LandXML>`` (1.2 namespace or none); ``<Units>`` name
metres or feet as for alignments, and must match the job's; the surface is
the one named (or the only one); its ``surfType`` is ``TIN``; point ids are
unique; a face names three points given; coordinates within ``MAX_COORDINATE``
and elevations within ``MAX_HEIGHT`` (file units, which are the job's).
"""

from __future__ import annotations

import hashlib
import io
import os
import re
import xml.etree.ElementTree as _ET  # the tree's types only: parsing is defusedxml's
from dataclasses import dataclass

import defusedxml.ElementTree as _DET
import numpy as np
from defusedxml import DefusedXmlException
from numpy.typing import NDArray

from ..errors import JobFileError
from ..limits import MAX_COORDINATE, MAX_HEIGHT, read_regular_file
from .reader import _DOUBLE, _LINEAR, _as_parser_can_read, _split
from .records import LANDXML_NS, MAX_FILE_BYTES, UNIT_WORDS, shown

__all__ = ["XSurface", "read_surface", "parse_surface", "describe_surfaces"]

_NEWLINE = b"\n"


@dataclass(frozen=True, eq=False)
class XSurface:
    """A TIN surface as read: its name, points (N, E, Z in file units), visible faces
    (index triples into the points), how many invisible faces were left out, the
    file's unit key (``m``, ``ft``, ``us_ft``) and SHA-256.
    """

    name: str
    n: NDArray[np.float64]
    e: NDArray[np.float64]
    z: NDArray[np.float64]
    faces: NDArray[np.int64]
    invisible: int
    unit_key: str
    sha256: str


def read_surface(path: str | os.PathLike[str], name: str | None, job_unit_key: str, where: str) -> XSurface:
    """Read the TIN surface ``name`` (or the only one) of a LandXML file.

    Parameters
    ----------
    path : path
        The LandXML file (at most :data:`MAX_FILE_BYTES`, a regular file).
    name : str or None
        The ``<Surface name>`` to read; None when the file has one surface.
    job_unit_key : str
        The job's ``units`` (``m``, ``ft``, ``us_ft``): the file's must match.
    where : str
        The job-file key that named the file, for messages.

    Returns
    -------
    XSurface

    Raises
    ------
    JobFileError
        Unreadable or malformed file, units that are not the job's, no such
        surface (the names there listed), not a TIN, a bad point or face.
    """
    data = read_regular_file(os.fspath(path), where, MAX_FILE_BYTES)
    return parse_surface(data, name, job_unit_key, where)


def parse_surface(data: bytes, name: str | None, job_unit_key: str, where: str) -> XSurface:
    """:func:`read_surface` from the file's bytes."""
    digest = hashlib.sha256(data).hexdigest()
    text = _as_parser_can_read(data, where)
    try:
        return _Surfaces(where, name).read(text, job_unit_key, digest)
    except _ET.ParseError as exc:
        line, col = exc.position
        reason = re.sub(r":\s*line \d+, column \d+\s*$", "", str(exc))
        raise JobFileError(f"{where}: malformed XML at line {line}, column {col + 1}: {reason}") from None
    except DefusedXmlException as exc:
        raise JobFileError(f"{where}: refused {type(exc).__name__}: document type declarations, entities and "
                           "external references are not accepted") from None
    except (ValueError, LookupError) as exc:
        if isinstance(exc, JobFileError):
            raise
        raise JobFileError(f"{where}: cannot be read as XML ({shown(str(exc))}); save the file as UTF-8") from None


def describe_surfaces(data: bytes, unit_key: str, where: str = "LandXML file") -> list[str]:
    """What ``stakeout inspect`` prints of a file's ``<Surface>`` elements: for each, its
    points, visible and invisible faces, extent and elevation range (file units), or
    why it cannot be read as a ground, in place.

    Parameters
    ----------
    data : bytes
        The file's bytes.
    unit_key : str
        The file's own units (``m``, ``ft``, ``us_ft``).
    where : str
        The file, for messages.

    Returns
    -------
    list of str
        ``surfaces: N`` and a line per surface (nothing without surfaces).
    """
    from .records import fmt

    names = _Surfaces(where, "\x00")  # a name no surface has: one pass collects the names
    try:
        names.read(_as_parser_can_read(data, where), unit_key, "")
    except (JobFileError, _ET.ParseError, DefusedXmlException, ValueError, LookupError):
        pass
    if not names.surfaces:
        return []
    lines = [f"surfaces: {len(names.surfaces)}"]
    for nm in names.surfaces:
        try:
            s = parse_surface(data, nm, unit_key, where)
        except JobFileError as exc:
            lines.append(f"  surface {shown(nm)!r}: cannot be read as a ground: {exc}")
            continue
        holes = f" ({s.invisible} invisible: holes)" if s.invisible else ""
        lines.append(f"  surface {shown(nm)!r}: TIN, {s.n.size} points, {len(s.faces)} faces{holes}; "
                     f"northing {fmt(s.n.min())} to {fmt(s.n.max())}, easting {fmt(s.e.min())} to "
                     f"{fmt(s.e.max())}; elevation {fmt(s.z.min())} to {fmt(s.z.max())}")
    return lines


class _Surfaces:
    """The surfaces of one file, taken element by element as a stream ends them.

    :meth:`start` and :meth:`end` see every element of the document in order (:meth:`end`
    before the element is cleared), by :meth:`read`'s own pass or by the design reader's
    (:func:`stakeout.landxml.parse_landxml` with ``surface=``: a file that holds the job's
    alignment and its ground is parsed once); :meth:`finish` then checks what was taken
    and builds the surface.
    """

    def __init__(self, where: str, name: str | None) -> None:
        self.where = where
        self.want = name
        self.surfaces: list[str] = []
        self.stack: list[_ET.Element] = []
        self.names: list[str] = []  # the open elements' local names ("#other" outside the namespace)
        self.units: list[tuple[str, str]] = []
        self.taking = False  # inside the surface chosen
        self.chosen: str | None = None
        self.surf_type: str | None = None
        self.pid: list[str] = []
        self.ptxt: list[str] = []
        self.ftxt: list[str] = []
        self.invisible = 0
        self.ns = ""
        #: What stopped the taking in a design reader's pass (raised by :meth:`finish`).
        self.error: JobFileError | None = None

    def err(self, what: str) -> JobFileError:
        return JobFileError(f"{self.where}: {what}")

    def start(self, el: _ET.Element) -> None:
        """An element begins."""
        e_ns, local = _split(el.tag)
        names = self.names
        if not self.stack:
            if local != "LandXML" or e_ns not in ("", LANDXML_NS):
                shown_tag = f"{{{e_ns}}}{local}" if e_ns else local
                raise self.err(f"root element {shown_tag!r} is not <LandXML> of LandXML 1.2 ({LANDXML_NS})")
            self.ns = e_ns
        ns = self.ns
        if e_ns == ns and local == "Surface" and names[-1:] == ["Surfaces"] and len(names) == 2:
            nm = el.get("name", "")
            self.surfaces.append(nm)
            self.taking = (nm == self.want) if self.want is not None else self.chosen is None
            if self.taking:
                if self.chosen is not None and self.want is not None:
                    raise self.err(f"two <Surface name={shown(nm)!r}>; name the one to read uniquely")
                self.chosen = nm
        if self.taking and e_ns == ns and local == "Definition" and names[-1:] == ["Surface"]:
            self.surf_type = el.get("surfType", "")
        self.stack.append(el)
        names.append(local if e_ns == ns else "#other")

    def end(self, el: _ET.Element) -> None:
        """An element ends (its text and attributes still there)."""
        e_ns, local = _split(el.tag)
        self.stack.pop()
        names = self.names
        names.pop()
        ns = self.ns
        if e_ns != ns:
            return
        if local in ("Metric", "Imperial") and names[-1:] == ["Units"] and len(names) == 2:
            self.units.append((local, el.get("linearUnit", "")))
        elif self.taking and local == "P" and names[-2:] == ["Definition", "Pnts"]:
            self.pid.append(el.get("id", ""))
            self.ptxt.append(el.text or "")
        elif self.taking and local == "F" and names[-2:] == ["Definition", "Faces"]:
            if el.get("i", "0").strip() in ("1", "true"):
                self.invisible += 1
            else:
                self.ftxt.append(el.text or "")
        elif local == "Surface" and names[-1:] == ["Surfaces"]:
            self.taking = False

    def read(self, data: bytes, job_unit_key: str, digest: str) -> XSurface:
        stack = self.stack
        for event, el in _DET.iterparse(io.BytesIO(data), events=("start", "end"), forbid_dtd=True,
                                        forbid_entities=True, forbid_external=True):
            if event == "start":
                self.start(el)
                continue
            self.end(el)
            if len(stack) >= 2:
                parent = stack[-1]
                el.clear()
                if self.names[-1:] in (["Pnts"], ["Faces"]) and len(parent) > 4096:
                    del parent[:]  # every point or face so far has ended and been taken: they leave the tree
        return self.finish(job_unit_key, digest)

    def finish(self, job_unit_key: str, digest: str) -> XSurface:
        """The surface taken, checked against the job's units (see :func:`read_surface`)."""
        if self.error is not None:
            raise self.error
        return self.build(self.units, job_unit_key, self.chosen, self.surf_type, self.pid, self.ptxt, self.ftxt,
                          self.invisible, digest)

    def build(self, units: list[tuple[str, str]], job_unit_key: str, chosen: str | None, surf_type: str | None,
              pid: list[str], ptxt: list[str], ftxt: list[str], invisible: int, digest: str) -> XSurface:
        if not units:
            raise self.err("no <Units>: the file must say whether it is in metres or feet")
        keys = {_LINEAR.get(u) for u in units}
        if None in keys:
            system, linear = next(u for u in units if _LINEAR.get(u) is None)
            raise self.err(f"<{system} linearUnit={linear!r}>: a staking job is in meter (Metric), foot or "
                           "USSurveyFoot (Imperial)")
        if len(keys) > 1:
            raise self.err("several <Units> that disagree")
        key = keys.pop()
        assert key is not None
        if key != job_unit_key:
            system, linear = units[0]
            raise self.err(f'the file\'s units are <{system} linearUnit="{linear}"> ({UNIT_WORDS[key]}) but the '
                           f"job's units = {job_unit_key!r}; they must match")
        listed = ", ".join(repr(shown(n)) for n in self.surfaces) or "none"
        if chosen is None:
            if self.want is not None:
                raise self.err(f"no <Surface name={shown(self.want)!r}>; the file has {listed}")
            raise self.err("no <Surface>: the file holds no ground surface")
        if self.want is None and len(self.surfaces) > 1:
            raise self.err(f"{len(self.surfaces)} surfaces ({listed}); say which with `name = ...`")
        label = f"<Surface name={shown(chosen)!r}>"
        if surf_type != "TIN":
            raise self.err(f"{label}: surfType = {shown(surf_type or '')!r}; only a TIN surface "
                           '(<Definition surfType="TIN">) is read')
        if not pid:
            raise self.err(f"{label}: no <P> points in <Pnts>")
        index: dict[str, int] = {}
        for k, p in enumerate(pid):
            p = p.strip()
            if not p:
                raise self.err(f"{label}: <P> {k + 1} has no id")
            if index.setdefault(p, k) != k:
                raise self.err(f"{label}: <P id={shown(p)!r}> given twice")
        vals = np.full((len(ptxt), 3), np.nan)
        for k, t in enumerate(ptxt):
            parts = t.split()
            if len(parts) != 3 or not all(_DOUBLE.fullmatch(x) for x in parts):
                raise self.err(f"{label}: <P id={shown(pid[k])!r}> = {shown(t.strip())!r}: expected "
                               "'northing easting elevation'")
            vals[k] = [float(x) for x in parts]
        far = ((~np.isfinite(vals)).any(axis=1) | (np.abs(vals[:, :2]) > MAX_COORDINATE).any(axis=1)
               | (np.abs(vals[:, 2]) > MAX_HEIGHT))
        if far.any():
            k = int(np.argmax(far))
            raise self.err(f"{label}: <P id={shown(pid[k])!r}> = {shown(ptxt[k].strip())!r}: out of range; "
                           f"coordinates lie within -{MAX_COORDINATE:,.0f} to {MAX_COORDINATE:,.0f} and elevations "
                           f"within -{MAX_HEIGHT:,.0f} to {MAX_HEIGHT:,.0f} file units")
        faces = np.empty((len(ftxt), 3), dtype=np.int64)
        for k, t in enumerate(ftxt):
            parts = t.split()
            try:
                if len(parts) != 3:
                    raise KeyError
                faces[k] = [index[x] for x in parts]
            except KeyError:
                raise self.err(f"{label}: <F> {k + 1} = {shown(t.strip())!r}: expected the ids of three <P> "
                               "points given in <Pnts>") from None
        if not len(faces):
            raise self.err(f"{label}: no visible <F> faces; a ground needs at least one triangle")
        return XSurface(chosen, vals[:, 0].copy(), vals[:, 1].copy(), vals[:, 2].copy(), faces, invisible, key, digest)
