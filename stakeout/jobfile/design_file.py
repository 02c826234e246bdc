"""Alignments and profiles taken from a LandXML 1.2 design file.

``[alignment] landxml = "file.xml"`` (with ``name`` choosing the
``<Alignment>``) and ``[profile] landxml = ...`` replace the inline forms.
The file supplies geometry only: each element is anchored at the point the
file gives for its start, its length, direction and curvature measured from
the file's points (:func:`stakeout.landxml.validate_geometry`; attributes are
cross-checks).  The job file stays the one place that says what is staked.
"""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING
from pathlib import Path

from ..alignment.specs import AnchoredSpec, ArcSpec, FixedSpec, LineSpec, SpiralSpec
from ..errors import JobFileError
from ..job import DesignFile, JobInfo, ProfileInput, ProfilePVI
from ..stations import StationRef
from ..textsafety import check_free_text
from .reader import Table

if TYPE_CHECKING:
    from ..landxml import XElement, XMeasured, XProfile

__all__ = ["read_alignment_file", "read_profile_file", "LandXMLAlignment"]


class LandXMLAlignment:
    """What an alignment read from a design file brings: its spec, equations and file record."""

    def __init__(self, spec: FixedSpec, equations: tuple[tuple[float, float, str], ...], record: DesignFile):
        self.spec = spec
        self.equations = equations
        self.record = record


def _path(t: Table, base: Path) -> Path:
    text = t.text("landxml", required=True)
    assert text is not None
    p = Path(text)
    return p if p.is_absolute() else base / p


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


def read_alignment_file(t: Table, info: JobInfo, base: Path) -> LandXMLAlignment:
    """``[alignment] landxml``: the chosen ``<Alignment>`` as anchored elements, with its equations."""
    from .. import landxml

    path = _path(t, base)
    design = landxml.read_landxml(path)
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
    record = DesignFile("alignment", str(t.text("landxml")), design.sha256, design.not_used, xa.name)
    return LandXMLAlignment(FixedSpec(check_free_text(xa.name or "CL", "alignment.landxml name"), xa.sta_start,
                                      tuple(elements)), tuple(equations), record)


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


def read_profile_file(t: Table, alignment_name: str, base: Path) -> tuple[ProfileInput, DesignFile]:
    """``[profile] landxml``: the chosen ``<ProfAlign>``, its PVIs at internal stations."""
    from .. import landxml

    path = _path(t, base)
    design = landxml.read_landxml(path)
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
    record = DesignFile("profile", str(t.text("landxml")), design.sha256, design.not_used, xp.name)
    return ProfileInput(xp.name, tuple(pvis), internal=True), record
