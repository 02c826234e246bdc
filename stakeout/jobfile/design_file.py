"""Alignments, profiles and superelevation taken from a LandXML 1.2 design file.

``[alignment] landxml = "file.xml"`` (with ``name`` choosing the
``<Alignment>``) and ``[profile] landxml = ...`` replace the inline forms.
The file supplies geometry only: each element is anchored at the point the
file gives for its start, its length, direction and curvature measured from
the file's points (:func:`stakeout.landxml.validate_geometry`; attributes are
cross-checks).  The job file stays the one place that says what is staked.

A file the job names several times (alignment, profile, superelevation,
control, and the ground ``<Surface>``) is parsed once: :class:`DesignFiles` keeps each parse keyed
by the resolved path and the SHA-256 of its bytes; the surface of the job's ``[ground] landxml``,
when that file is also a design file, is taken in the same pass (:meth:`DesignFiles.surface`).  Its ``<CoordinateSystem>`` is
compared with the job's ``crs`` once (:func:`stakeout.crs.compare_crs`);
what the job does not use of it is counted per element name
(:func:`summarise_not_used`) and reported once per file.
"""

from __future__ import annotations

import hashlib
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING

from ..alignment.specs import AnchoredSpec, ArcSpec, FixedSpec, LineSpec, SpiralSpec
from ..errors import JobFileError
from ..job import DesignFile, JobInfo, ProfileInput, ProfilePVI, SuperelevationPeriod
from ..stations import StationRef
from ..limits import read_regular_file
from ..textsafety import check_free_text
from .reader import Table

if TYPE_CHECKING:
    from ..landxml import XAlignment, XDesign, XElement, XMeasured, XProfile
    from ..landxml.surface import XSurface, _Surfaces

__all__ = ["read_alignment_file", "read_profile_file", "read_superelevation_file", "LandXMLAlignment",
           "DesignFiles", "summarise_not_used"]


class DesignFiles:
    """The design files of one job, each parsed once (keyed by resolved path and SHA-256).

    The first read of a file also compares its ``<CoordinateSystem>`` with the job's ``crs``: a
    different CRS is an error naming both; one that cannot be compared (no ``crs`` in the job, or a
    code or name pyproj does not resolve) is counted as not used.
    """

    def __init__(self, info: JobInfo, base: Path, ground: tuple[str, str | None] | None = None):
        """``ground``: the job's ``[ground] landxml`` and ``name``, when it gives them (a design file
        that is this file also takes its surface in the one pass).
        """
        self.info = info
        self.base = base
        self._parsed: dict[tuple[str, str], XDesign] = {}
        self.crs_unused: dict[str, bool] = {}  # sha256 -> its <CoordinateSystem> could not be compared
        self.ground = ground
        self._ground_path = _resolved(self.path(ground[0])) if ground is not None else None
        self._surfaces: dict[tuple[str, str], _Surfaces] = {}

    def path(self, given: str) -> Path:
        p = Path(given)
        return p if p.is_absolute() else self.base / p

    def read(self, given: str, key: str) -> XDesign:
        """The parsed file ``given`` (relative to the job file); ``key`` names the job-file key in errors."""
        from .. import landxml

        path = self.path(given)
        try:
            data = read_regular_file(path, "LandXML file", landxml.MAX_FILE_BYTES)
            cache_key = (_resolved(path), hashlib.sha256(data).hexdigest())
            design = self._parsed.get(cache_key)
            if design is None:
                taker = self._surface_taker(cache_key[0])
                if taker is None:
                    design = landxml.parse_landxml(data, source=str(path))
                else:
                    design = landxml.parse_landxml(data, source=str(path), surface=taker)
                    self._surfaces[cache_key] = taker
        except JobFileError as exc:
            raise JobFileError(f"{key} = {given!r}: {exc}") from None
        if cache_key not in self._parsed:
            del data
            self._check_crs(design, key)
            self._parsed[cache_key] = design
        return design

    def _surface_taker(self, resolved: str) -> _Surfaces | None:
        """A collector of the job's ground surface, when the file at ``resolved`` is the ground's."""
        if self.ground is None or resolved != self._ground_path:
            return None
        from ..landxml.surface import _Surfaces

        given, name = self.ground
        return _Surfaces(f"ground.landxml = {given!r}", name)

    def surface(self, given: str, name: str | None, unit_key: str, key: str) -> XSurface:
        """The ground ``<Surface>`` ``name`` of the file ``given``: taken in the pass that parsed the
        file as a design file when it was one (the same path and bytes), else read on its own.
        """
        from ..landxml.records import MAX_FILE_BYTES
        from ..landxml.surface import parse_surface

        path = self.path(given)
        data = read_regular_file(path, key, MAX_FILE_BYTES)
        digest = hashlib.sha256(data).hexdigest()
        taker = self._surfaces.get((_resolved(path), digest))
        if taker is not None and taker.want == name and self.ground == (given, name):
            del data
            return taker.finish(unit_key, digest)
        return parse_surface(data, name, unit_key, key)

    def parsed(self, sha256: str) -> XDesign | None:
        """The parse of the file with these bytes, if the job read it."""
        return next((d for (_p, h), d in self._parsed.items() if h == sha256), None)

    def _check_crs(self, design: XDesign, key: str) -> None:
        cs = design.coordinate_system
        if cs is None:
            return
        job_crs = self.info.crs
        compared = None
        if job_crs is not None and (cs.epsg_code or cs.name or cs.ogc_wkt):
            from ..crs import compare_crs  # pyproj only when there is something to compare

            compared = compare_crs(job_crs, cs.epsg_code, cs.name, cs.ogc_wkt)
        if compared is None:
            self.crs_unused[design.sha256] = True
            return
        same, shown = compared
        if not same:
            raise JobFileError(f"{key}: the file's <CoordinateSystem> is {shown} but job.crs = {job_crs!r}; "
                               "the design file and the job must be in one CRS")


def _resolved(path: Path) -> str:
    """The path made absolute with links resolved; the path as given where it cannot be."""
    try:
        return str(path.resolve())
    except (OSError, ValueError, RuntimeError):
        return str(path)


def summarise_not_used(kinds: tuple[tuple[str, int], ...] | list[tuple[str, int]]) -> tuple[str, ...]:
    """``(("Feature", 15), ("Cant", 1))`` as ``("15 Feature", "1 Cant")``: one entry per element name."""
    return tuple(f"{n} {kind}" for kind, n in kinds)


class LandXMLAlignment:
    """What an alignment read from a design file brings: its spec, equations, file record, and the
    chosen ``<Alignment>`` (its ``<Superelevation>`` elements are applied or reported by the caller).
    """

    def __init__(self, spec: FixedSpec, equations: tuple[tuple[float, float, str], ...], record: DesignFile,
                 source: XAlignment | None = None, design: XDesign | None = None):
        self.spec = spec
        self.equations = equations
        self.record = record
        self.source = source
        self.design = design


def _given(t: Table) -> str:
    text = t.text("landxml", required=True)
    assert text is not None
    return text


_SAME = 1e-6  # relative: radii, centres and rates of curvature change this close are the same curve


def _close(a: float, b: float) -> bool:
    return abs(a - b) <= _SAME * max(abs(a), abs(b))


def _curvature(radius: float | None, turn: int) -> float:
    return 0.0 if radius is None else turn / radius


def _continues(x0: XElement, m0: XMeasured, x1: XElement, m1: XMeasured) -> bool:
    """Whether element 1 is the same arc or clothoid as element 0, carried on (a curve written in pieces)."""
    if m0.kind != m1.kind or m0.turn != m1.turn or m0.kind == "line":
        return False
    if m0.kind == "arc":
        from ..landxml import XCurve

        assert isinstance(x0, XCurve) and isinstance(x1, XCurve) and m0.radius_start and m1.radius_start
        tol = _SAME * m0.radius_start  # centres: within a millionth of the radius
        return (_close(m0.radius_start, m1.radius_start) and abs(x0.center_n - x1.center_n) <= tol
                and abs(x0.center_e - x1.center_e) <= tol)
    k0, k1 = _curvature(m0.radius_start, m0.turn), _curvature(m0.radius_end, m0.turn)
    k2, k3 = _curvature(m1.radius_start, m1.turn), _curvature(m1.radius_end, m1.turn)
    return k1 != 0.0 and _close(k1, k2) and _close((k1 - k0) / m0.length, (k3 - k2) / m1.length)


def _whole(xs: tuple[XElement, ...], ms: tuple[XMeasured, ...]) -> list[tuple[XElement, XMeasured]]:
    """The elements with a curve written in pieces (one circle, or one clothoid, as the export writes an
    arc of more than a half turn) taken back as one element: the join of two pieces is no key point.
    """
    out: list[tuple[XElement, XMeasured]] = []
    for x, m in zip(xs, ms, strict=True):
        if out and _continues(out[-1][0], out[-1][1], x, m):
            x0, m0 = out[-1]
            out[-1] = (x0, replace(m0, length=m0.length + m.length, az_end=m.az_end, radius_end=m.radius_end))
        else:
            out.append((x, m))
    return out


def read_alignment_file(t: Table, info: JobInfo, files: DesignFiles) -> LandXMLAlignment:
    """``[alignment] landxml``: the chosen ``<Alignment>`` as anchored elements, with its equations."""
    from .. import landxml

    design = files.read(_given(t), "alignment.landxml")
    landxml.check_units(design, info.unit.key, "alignment.landxml")
    name = t.text("name")
    xa = landxml.pick_alignment(design, name)
    measured = landxml.validate_geometry(xa)
    elements = []
    for x, m in _whole(xa.elements, measured):
        where = f"alignment.landxml element {m.index}" + (f" ({m.name!r})" if m.name else "")
        spec: LineSpec | ArcSpec | SpiralSpec
        if m.kind == "line":
            spec = LineSpec(m.length, where)
        elif m.kind == "arc":
            assert m.radius_start is not None
            spec = ArcSpec(m.radius_start, m.turn, None, m.length, where)
        else:
            spec = SpiralSpec(m.length, m.turn, m.radius_start, m.radius_end, where)
        elements.append(AnchoredSpec(x.start_n, x.start_e, m.az_start, spec))
    equations = []
    shift = 0.0
    for i, eq in enumerate(xa.equations):
        if eq.increment != 1:
            raise JobFileError(f"alignment.landxml StaEquation {i + 1}: decreasing stationing (staIncrement) is "
                               "not supported; stations must increase along the alignment")
        back = eq.sta_internal + shift
        equations.append((back, eq.sta_ahead, f"alignment.landxml StaEquation {i + 1}"))
        shift = eq.sta_ahead - eq.sta_internal
    record = DesignFile("alignment", str(t.text("landxml")), design.sha256, (), xa.name)
    return LandXMLAlignment(FixedSpec(check_free_text(xa.name or "CL", "alignment.landxml name"), xa.sta_start,
                                      tuple(elements)), tuple(equations), record, xa, design)


_PVI_TAG = {"pvi": "PVI", "para": "ParaCurve", "unsym": "UnsymParaCurve", "circ": "CircCurve"}
_PROFILE_SLACK = 1e-6  # file units: as the profile's own check of curve extents


def _check_profile_extents(xp: XProfile) -> None:
    """What the profile builder would refuse, said in the file's terms (its elements and attributes).

    At least two PVIs; no vertical curve at the first or last; a parabola's ``lengthIn``/``lengthOut``
    (half of ``length``) within its neighbouring PVIs and clear of the curve before.
    """
    head = f"profile.landxml <ProfAlign {xp.name!r}>"
    v = xp.pvis
    if len(v) < 2:
        raise JobFileError(f"{head}: {len(v)} PVI; a profile needs at least two (where it starts and ends)")
    for i in (0, len(v) - 1):
        if v[i].kind != "pvi":
            raise JobFileError(f"{head} {_PVI_TAG[v[i].kind]} {i + 1} (station {v[i].station:.6g}): the first "
                               "and last PVI are the profile's ends and cannot carry a vertical curve")
    prev_end = v[0].station
    for i in range(1, len(v) - 1):
        here = v[i]
        if here.kind not in ("para", "unsym") or here.length_in is None or here.length_out is None:
            prev_end = here.station
            continue
        key = f"{head} {_PVI_TAG[here.kind]} {i + 1}"
        lin, lout = ("length", "length") if here.kind == "para" else ("lengthIn", "lengthOut")
        begin, end = here.station - here.length_in, here.station + here.length_out
        if begin < prev_end - _PROFILE_SLACK:
            before = "the curve before ends" if prev_end > v[i - 1].station else f"PVI {i} is"
            raise JobFileError(f"{key} {lin} = {here.length if lin == 'length' else here.length_in:.6g}: the "
                               f"vertical curve begins at {begin:.6g}, before {before} at {prev_end:.6g}")
        if end > v[i + 1].station + _PROFILE_SLACK:
            raise JobFileError(f"{key} {lout} = {here.length if lout == 'length' else here.length_out:.6g}: the "
                               f"vertical curve ends at {end:.6g}, past PVI {i + 2} at {v[i + 1].station:.6g}")
        prev_end = end


def read_profile_file(t: Table, alignment_name: str, files: DesignFiles) -> tuple[ProfileInput, DesignFile]:
    """``[profile] landxml``: the chosen ``<ProfAlign>``, its PVIs at internal stations."""
    from .. import landxml

    design = files.read(_given(t), "profile.landxml")
    name = t.text("name")
    xp = landxml.pick_profile(design, alignment_name, name)
    _check_profile_extents(xp)
    pvis = []
    for i, v in enumerate(xp.pvis):
        where = f"profile.landxml <ProfAlign {xp.name!r}> {_PVI_TAG[v.kind]} {i + 1}"
        at = StationRef(v.station, None, where)
        if v.kind == "circ":
            assert v.radius is not None
            pvis.append(ProfilePVI(at, v.elevation, where=where, radius=abs(v.radius)))
        else:
            back = v.length_in or 0.0
            ahead = v.length_out or 0.0
            pvis.append(ProfilePVI(at, v.elevation, back, ahead, where, symmetric=v.kind == "para"))
    record = DesignFile("profile", str(t.text("landxml")), design.sha256, (), xp.name)
    return ProfileInput(xp.name, tuple(pvis), internal=True), record


def periods_of(xa: XAlignment, key: str) -> tuple[SuperelevationPeriod, ...]:
    """An alignment's ``<Superelevation>`` elements as periods (the outside is left to the alignment).

    Raises
    ------
    JobFileError
        A transition station outside the element's own ``staStart``/``staEnd``, or an adverse
        superelevation, naming the element.
    """
    from ..crosssection import ORDER_TOLERANCE
    from ..landxml.records import SE_STATION_ELEMENTS

    out = []
    for se in xa.superelevations:
        where = f"{key} <Superelevation> {se.index} of alignment {xa.name!r}"
        sts = dict(zip(SE_STATION_ELEMENTS, se.stations, strict=True))
        if se.adverse:  # the contract's rows bank toward the curve's centre; an adverse one would be wrong
            raise JobFileError(f"{where}: <AdverseSE>adverse</AdverseSE> (banked away from the curve's centre) is "
                               "not derived from a design file; give its rows as [[superelevation]]")
        lo = -float("inf") if se.sta_start is None else se.sta_start - ORDER_TOLERANCE
        hi = float("inf") if se.sta_end is None else se.sta_end + ORDER_TOLERANCE
        for name, v in sts.items():
            if v is not None and not lo <= v <= hi:
                raise JobFileError(f"{where}: {name} {v:.6g} lies outside the element's staStart {se.sta_start!r} "
                                   f"to staEnd {se.sta_end!r}; the stations contradict each other")
        b0, b1, f0, f1, s0, s1 = se.stations
        out.append(SuperelevationPeriod(b0, b1, f0, f1, s0, s1, se.full_superelev, None, where))
    return tuple(out)


def read_superelevation_file(given: str, info: JobInfo, alignment_name: str | None, files: DesignFiles
                             ) -> tuple[tuple[SuperelevationPeriod, ...], DesignFile]:
    """``[superelevation] landxml``: the ``<Superelevation>`` elements of the job's alignment in the file
    (the alignment of that name, or the file's only alignment when the job's alignment is not from it).

    Raises
    ------
    JobFileError
        Other units, no such alignment, or an alignment without ``<Superelevation>``.
    """
    from .. import landxml

    key = "superelevation.landxml"
    design = files.read(given, key)
    landxml.check_units(design, info.unit.key, key)
    names = [a.name for a in design.alignments]
    if alignment_name not in names and len(names) != 1:
        shown = ", ".join(repr(n) for n in names) or "none"
        raise JobFileError(f"{key} = {given!r}: the file holds {len(names)} alignments ({shown}) and none is the "
                           f"job's alignment {alignment_name or ''!r}; take the alignment from that file too")
    xa = landxml.pick_alignment(design, alignment_name if alignment_name in names else None)
    if not xa.superelevations:
        raise JobFileError(f"{key} = {given!r}: alignment {xa.name!r} has no <Superelevation>; give the rows as "
                           "[[superelevation]] or leave the table out")
    return periods_of(xa, key), DesignFile("superelevation", given, design.sha256, (), xa.name)
