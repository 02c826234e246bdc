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

__all__ = ["XSurface", "read_surface", "parse_surface"]

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


class _Surfaces:
    def __init__(self, where: str, name: str | None) -> None:
        self.where = where
        self.want = name
        self.surfaces: list[str] = []

    def err(self, what: str) -> JobFileError:
        return JobFileError(f"{self.where}: {what}")

    def read(self, data: bytes, job_unit_key: str, digest: str) -> XSurface:
        stack: list[_ET.Element] = []
        names: list[str] = []  # the open elements' local names ("#other" outside the namespace)
        units: list[tuple[str, str]] = []
        taking = False  # inside the surface chosen
        chosen: str | None = None
        surf_type: str | None = None
        pid: list[str] = []
        ptxt: list[str] = []
        ftxt: list[str] = []
        invisible = 0
        ns = ""
        for event, el in _DET.iterparse(io.BytesIO(data), events=("start", "end"), forbid_dtd=True,
                                        forbid_entities=True, forbid_external=True):
            e_ns, local = _split(el.tag)
            if event == "start":
                if not stack:
                    if local != "LandXML" or e_ns not in ("", LANDXML_NS):
                        shown_tag = f"{{{e_ns}}}{local}" if e_ns else local
                        raise self.err(f"root element {shown_tag!r} is not <LandXML> of LandXML 1.2 ({LANDXML_NS})")
                    ns = e_ns
                if e_ns == ns and local == "Surface" and names[-1:] == ["Surfaces"] and len(names) == 2:
                    nm = el.get("name", "")
                    self.surfaces.append(nm)
                    taking = (nm == self.want) if self.want is not None else chosen is None
                    if taking:
                        if chosen is not None and self.want is not None:
                            raise self.err(f"two <Surface name={shown(nm)!r}>; name the one to read uniquely")
                        chosen = nm
                if taking and e_ns == ns and local == "Definition" and names[-1:] == ["Surface"]:
                    surf_type = el.get("surfType", "")
                stack.append(el)
                names.append(local if e_ns == ns else "#other")
                continue
            stack.pop()
            names.pop()
            parent = stack[-1] if stack else None
            if e_ns == ns and local in ("Metric", "Imperial") and names[-1:] == ["Units"] and len(names) == 2:
                units.append((local, el.get("linearUnit", "")))
            elif taking and e_ns == ns and local == "P" and names[-2:] == ["Definition", "Pnts"]:
                pid.append(el.get("id", ""))
                ptxt.append(el.text or "")
            elif taking and e_ns == ns and local == "F" and names[-2:] == ["Definition", "Faces"]:
                if el.get("i", "0").strip() in ("1", "true"):
                    invisible += 1
                else:
                    ftxt.append(el.text or "")
            elif e_ns == ns and local == "Surface" and names[-1:] == ["Surfaces"]:
                taking = False
            if parent is not None and len(stack) >= 2:
                el.clear()
                if names[-1:] in (["Pnts"], ["Faces"]) and len(parent) > 4096:
                    del parent[:]  # every point or face so far has ended and been taken: they leave the tree
        return self.build(units, job_unit_key, chosen, surf_type, pid, ptxt, ftxt, invisible, digest)

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
