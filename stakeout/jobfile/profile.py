"""``[profile]``: the vertical alignment, PVI by PVI."""

from __future__ import annotations

from ..errors import JobFileError
from ..job import JobInfo, ProfileInput, ProfilePVI
from ..limits import MAX_HEIGHT
from ..textsafety import check_free_text
from .reader import Table, station_ref

__all__ = ["read_profile"]


def read_profile(top: Table, info: JobInfo) -> ProfileInput | None:
    """``[profile]`` with its ``[[profile.pvi]]`` (stations, elevations, vertical curves)."""
    t = top.table("profile", ("name", "pvi", "landxml"))
    if t is None:
        return None
    if t.has("landxml"):
        return None  # read from the design file by the caller
    pvis = []
    for p in t.tables("pvi", ("station", "elevation", "curve_length", "curve_length_back", "curve_length_ahead"),
                      required=True):
        sym = p.number("curve_length", nonnegative=True)
        back = p.number("curve_length_back", nonnegative=True)
        ahead = p.number("curve_length_ahead", nonnegative=True)
        if sym is not None and (back is not None or ahead is not None):
            raise JobFileError(f"{p.path}: give `curve_length` (symmetric) or `curve_length_back` with "
                               "`curve_length_ahead` (unsymmetrical), not both")
        if (back is None) != (ahead is None):
            missing = p.key("curve_length_ahead" if ahead is None else "curve_length_back")
            raise JobFileError(f"{missing}: missing; an unsymmetrical curve needs both lengths")
        if sym is not None:
            back = ahead = sym / 2.0
        at = station_ref(p.raw("station", required=True), info.station_length, p.key("station"))
        elevation = float(p.number("elevation", required=True, bound=MAX_HEIGHT) or 0.0)
        pvis.append(ProfilePVI(at, elevation, back or 0.0, ahead or 0.0, p.path, symmetric=sym is not None))
    if len(pvis) < 2:
        raise JobFileError("profile.pvi: needs at least two PVIs, where the profile starts and ends")
    return ProfileInput(check_free_text(t.text("name") or "", "profile.name"), tuple(pvis))
