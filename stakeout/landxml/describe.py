"""What ``stakeout inspect`` prints of a LandXML file: a plain-text summary for choosing ``name`` keys."""

from __future__ import annotations

from ..errors import GeometryError
from .records import KINDS, UNIT_WORDS, XDesign, fmt, kind_of, shown
from .validation import station_at, validate_geometry

__all__ = ["describe"]

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
        f'units: {u.unit_key} ({UNIT_WORDS[u.unit_key]}, <{system} linearUnit="{u.linear_unit}">)',
        f"sha256: {design.sha256}",
    ]
    cs = design.coordinate_system
    if cs is not None:
        lines.append(f"coordinate system: epsgCode {cs.epsg_code or '-'}, name {cs.name or '-'}")
    if design.application:
        lines.append(f"written by: {shown(design.application)}")
    lines.append(f"alignments: {len(design.alignments)}")
    for a in design.alignments:
        counts = {k.tag: 0 for k in KINDS.values()}
        for el in a.elements:
            counts[kind_of(el).tag] += 1
        kinds = ", ".join(f"{v} {k}" for k, v in counts.items())
        try:
            measured = validate_geometry(a)
            total = sum(m.length for m in measured)
            end = a.sta_start + total
            rng = (
                f"stations {fmt(a.sta_start)} to {fmt(station_at(a, end))} "
                f"(internal {fmt(a.sta_start)} to {fmt(end)}), length {fmt(total)}"
            )
        except GeometryError as exc:
            rng = f"staStart {fmt(a.sta_start)}; geometry error: {exc}"
        lines.append(f"  alignment {a.name!r}: {rng}; elements: {kinds}")
        for k, eq in enumerate(a.equations, start=1):
            back = "" if eq.sta_back is None else f", back {fmt(eq.sta_back)}"
            inc = "" if eq.increment == 1 else ", decreasing"
            lines.append(f"    equation {k}: internal {fmt(eq.sta_internal)}{back}, ahead {fmt(eq.sta_ahead)}{inc}")
        for se in a.superelevations:
            span = "no stations" if se.first is None or se.last is None else f"internal {fmt(se.first)} to {fmt(se.last)}"
            rate = "no FullSuperelev" if se.full_superelev is None else f"FullSuperelev {fmt(se.full_superelev)} %"
            lines.append(f"    superelevation {se.index}: {span}, {rate}")
        for p in design.profiles:
            if p.alignment_name != a.name:
                continue
            if p.pvis:
                span = f"internal stations {fmt(p.pvis[0].station)} to {fmt(p.pvis[-1].station)}"
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


