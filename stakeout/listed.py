"""Stakes listed by station and offset (``staking.points``): where each lies (numpy, no I/O).

Each row of the points list (:class:`~stakeout.job.ListedPoints`) is one
stake on the alignment:

* without a skew, at its station and at its offset square to the
  alignment (the point every offset line puts there, mitred at an angle
  point);
* with a skew ``k`` (degrees, positive clockwise in plan), on the straight
  line through the centreline point at its station turned ``k`` clockwise
  from the square line, ``offset`` measured along that line: the point
  ``C(s) + offset * (sin(az + 90 + k), cos(az + 90 + k))`` (east, north),
  ``az`` the alignment's azimuth at ``s`` (at an angle point, the ahead
  tangent's).  Its own station and square offset are where it actually
  lies: the alignment's inverse (:meth:`Alignment.locate`, the nearest
  point of the alignment) of its coordinates as written (rounded to 4
  decimals, like every stake).

Elevation: the row's when given; else the design's where the stake lies
(:func:`design_elevation`); NaN where the job has no elevations.

Everything works on whole arrays: no loop over rows.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .alignment import STATION_TOLERANCE, Alignment
from .angles import sincosd
from .crosssection import SectionPlan, plan_sections, section
from .errors import JobFileError
from .job import ListedPoints, Staking
from .limits import MAX_POINT_NUMBER
from .numbers import round_to
from .profile import Profile
from .staking import COORDINATE_DECIMALS, MAX_ID_CHARS
from .stations import StationRef, Stationing

__all__ = ["ListedStakes", "place_listed", "listed_stakes", "design_elevation", "resolve_stations",
           "number_listed", "OWN_STATION_TOLERANCE"]

F = NDArray[np.float64]

#: How far (job units) a skewed stake's own station may fall before the POB or past the POE and
#: still be taken as at the end: the rounding of its coordinates to 4 decimals moves it by up to 7e-5.
OWN_STATION_TOLERANCE = 1e-4
#: Within this (job units) a station read in two regions is the same point (as ``Stationing.to_internal``).
_REGION_TOLERANCE = 1e-9


@dataclass(frozen=True)
class ListedStakes:
    """The listed stakes, one entry per row of the points list, in file order.

    Attributes
    ----------
    station : ndarray
        Internal station where each stake lies (a skewed one's own station).
    offset : ndarray
        Offset square to the alignment where it lies (negative left), job units.
    northing, easting : ndarray
        Grid coordinates, rounded to :data:`COORDINATE_DECIMALS` like every stake.
    azimuth : ndarray
        The alignment's azimuth at ``station`` (degrees, clockwise from grid north).
    elevation : ndarray
        The row's elevation when given, else the design elevation there; NaN
        where neither (a job without elevations).
    elevation_given : ndarray of bool
        True where the row gave its elevation.
    skew : ndarray
        The row's skew, degrees (0 where not given).
    code, description : tuple of str
        From the row.
    id : tuple of str
        The row's own point id, ``""`` where it gives none (see :func:`number_listed`).
    line : tuple of int
        Each row's line number in the file, for messages.
    key : str
        ``staking.points = 'file.csv'``, for messages.
    """

    station: F
    offset: F
    northing: F
    easting: F
    azimuth: F
    elevation: F
    elevation_given: NDArray[np.bool_]
    skew: F
    code: tuple[str, ...]
    description: tuple[str, ...]
    id: tuple[str, ...]
    line: tuple[int, ...]
    key: str

    def __len__(self) -> int:
        return int(self.station.size)


def resolve_stations(stationing: Stationing, refs: Sequence[StationRef]) -> F:
    """Internal stations of many stations given in the job file, at once.

    The same reading as :meth:`Stationing.to_internal`, vectorised: each
    station is read in its ``region``, or in the one region where it lies.
    A station that needs a message (in two regions without a ``region``,
    in the gap of an equation, a region that does not exist or does not
    hold it) or lies off the alignment is handed to ``to_internal``, which
    raises its error or returns the value read beyond the ends (for the
    caller's range check).

    Parameters
    ----------
    stationing : Stationing
        The alignment's stationing.
    refs : sequence of StationRef
        Stations as given.

    Returns
    -------
    ndarray
        Internal stations, one per ref.

    Raises
    ------
    JobFileError
        As :meth:`Stationing.to_internal`.
    """
    v = np.array([r.value for r in refs], dtype=np.float64)
    reg = np.array([0 if r.region is None else r.region for r in refs], dtype=np.int64)
    eqs = stationing.equations
    bounds = np.array([stationing.start] + [eq.internal for eq in eqs] + [stationing.end], dtype=np.float64)
    shifts = np.array([0.0] + [eq.ahead - eq.internal for eq in eqs], dtype=np.float64)
    nreg = shifts.size
    lo, hi = bounds[:-1], bounds[1:]
    x = v[:, None] - shifts[None, :]  # each value read in every region
    inside = (lo - _REGION_TOLERANCE <= x) & (x <= hi + _REGION_TOLERANCE)
    count = inside.sum(axis=1)
    first = np.argmax(inside, axis=1)
    last = nreg - 1 - np.argmax(inside[:, ::-1], axis=1)
    rows = np.arange(v.size)
    # an equation's back station that is also its ahead region's start is one point: the ahead one
    same = (count == 2) & (np.abs(x[rows, first] - x[rows, last]) <= _REGION_TOLERANCE)
    pick = np.where(same, last, first)
    clean = (count == 1) | same
    if nreg == 1:
        clean = clean | (count == 0)  # off the ends: read as given, for the range check
    given = reg > 0
    r0 = np.clip(reg - 1, 0, nreg - 1)
    xr = v - shifts[r0]
    in_region = ((reg >= 1) & (reg <= nreg) & ((reg == 1) | (lo[r0] - _REGION_TOLERANCE <= xr))
                 & ((reg == nreg) | (xr <= hi[r0] + _REGION_TOLERANCE)))
    out = np.where(given, xr, x[rows, pick])
    clean = np.where(given, in_region, clean)
    bad = np.flatnonzero(~clean)
    if bad.size:  # only rows that need a message (or lie off the alignment)
        out[bad] = [stationing.to_internal(refs[i]) for i in bad.tolist()]
    return out


def design_elevation(sections: SectionPlan | None, stations: F, offsets: F, centre: F | None) -> F:
    """Design elevation at (internal station, square offset) pairs, by the offset lines.

    At each station the section's lines (:func:`stakeout.crosssection.section`:
    widened offsets, cross slopes, superelevation) and the centreline
    (offset 0 at ``centre``; a line at offset 0 stands for it) are ordered
    left to right; a point between two of them is linear between them; a
    point beyond the outermost line on its side takes that line's segment
    slope continued (the segment from its inner neighbour to it); on a side
    with no line but the centreline, and with only a centreline, the
    centreline's elevation (level).  Where two lines coincide at the
    station (a widening's start), the outer one governs beyond them, level.

    Parameters
    ----------
    sections : SectionPlan or None
        The job's cross-section; None: the centreline only.
    stations, offsets : ndarray
        Internal stations and square offsets (negative left), shape (n,).
    centre : ndarray or None
        The centreline elevation at each station, or None (no elevations).

    Returns
    -------
    ndarray
        Elevations, job units; all NaN when ``centre`` is None.
    """
    n = stations.size
    p = np.asarray(offsets, dtype=np.float64)
    if centre is None:
        return np.full(n, np.nan)
    if sections is None or not sections.lines:
        return np.asarray(centre, dtype=np.float64).copy()
    sec = section(sections, stations, centre)
    assert sec.elevation is not None
    rows = np.arange(n)
    at0 = sec.offset == 0.0
    z0 = np.where(at0.any(axis=1), sec.elevation[rows, np.argmax(at0, axis=1)], centre)
    o = np.concatenate([sec.offset, np.zeros((n, 1))], axis=1)
    z = np.concatenate([sec.elevation, z0[:, None]], axis=1)
    order = np.argsort(o, axis=1, kind="stable")
    o = np.take_along_axis(o, order, axis=1)
    z = np.take_along_axis(z, order, axis=1)
    k = o.shape[1]
    j = (o <= p[:, None]).sum(axis=1)  # lines at or left of each point
    a = np.clip(j - 1, 0, k - 2)
    b = a + 1
    oa, ob, za, zb = o[rows, a], o[rows, b], z[rows, a], z[rows, b]
    w = ob - oa
    t = np.where(w > 0, (p - oa) / np.where(w > 0, w, 1.0), 0.0)
    out = za + (zb - za) * t
    left, right = j == 0, j == k
    out = np.where(left & ((w <= 0) | (o[:, 0] >= 0)), z[:, 0], out)
    out = np.where(right & ((w <= 0) | (o[:, -1] <= 0)), z[:, -1], out)
    return out


def _centre(profile: Profile | None, elevation: float | None, stations: F) -> F | None:
    """The centreline elevation at internal stations: the profile's, else ``staking.elevation``, else None."""
    if profile is not None:
        return profile.elevation(stations)
    if elevation is not None:
        return np.full(stations.shape, float(elevation))
    return None


def _row_error(rows: ListedPoints, i: int, what: str) -> JobFileError:
    return JobFileError(f"{rows.key} line {rows.line[i]}: {what}")


def _inside_radius(alignment: Alignment, stations: F, offsets: F) -> NDArray[np.bool_]:
    """Offsets on the inside of a curving element at or past its smallest radius (no stake can follow it)."""
    turn = np.array([el.turn or 0 for el in alignment.elements], dtype=np.float64)
    r_min = np.array([min([r for r in (el.radius_start, el.radius_end) if r is not None], default=np.inf)
                      for el in alignment.elements], dtype=np.float64)
    el = alignment.element_at(stations)
    out: NDArray[np.bool_] = (turn[el] != 0) & (offsets * turn[el] >= r_min[el])
    return out


def place_listed(alignment: Alignment, stationing: Stationing, rows: ListedPoints, *,
                 sections: SectionPlan | None = None, profile: Profile | None = None,
                 elevation: float | None = None) -> ListedStakes:
    """Place every listed stake: where it lies, its azimuth and its elevation.

    Parameters
    ----------
    alignment : Alignment
        The built alignment.
    stationing : Stationing
        Its stationing: reads each row's station (and ``region``).
    rows : ListedPoints
        ``staking.points``.
    sections : SectionPlan, optional
        The job's cross-section (the design's ``SectionPlan``); None: the
        centreline only.
    profile : Profile, optional
        The vertical alignment: the centreline elevation.
    elevation : float, optional
        ``staking.elevation``: a level centreline where there is no profile.

    Returns
    -------
    ListedStakes
        One entry per row, in file order.

    Raises
    ------
    JobFileError
        Naming ``staking.points``, the file, the row's line and value: a
        station not on the alignment (or not in its region), an offset on
        the inside of a curve at or past its centre, a skewed stake whose
        own station falls off the alignment or that lies nearer another
        part of the alignment (farther than pi x offset along it from its
        station), or a stake needing a design elevation beyond the profile.
    """
    s_row = resolve_stations(stationing, rows.station)
    lo, hi = alignment.start_station, alignment.end_station
    off = np.flatnonzero((s_row < lo - STATION_TOLERANCE) | (s_row > hi + STATION_TOLERANCE))
    if off.size:
        ref = rows.station[int(off[0])]
        raise JobFileError(f"{ref.where} = {stationing.format_value(ref.value)!r}: off the alignment, which runs "
                           f"from {stationing.label(lo)} to {stationing.label(hi)}")
    s_row = np.clip(s_row, lo, hi)
    o_row = np.array(rows.offset, dtype=np.float64)
    skew = np.array(rows.skew, dtype=np.float64)
    skewed = (skew != 0.0) & (o_row != 0.0)  # a skewed line still passes through the centreline point
    past = np.flatnonzero(_inside_radius(alignment, s_row, o_row) & ~skewed)
    if past.size:
        i = int(past[0])
        raise _row_error(rows, i, f"offset {rows.offset[i]!r} at {stationing.label(float(s_row[i]))} lies on the "
                         "inside of a curve at or past its centre; no stake can be set square to the alignment there")
    # unskewed: exactly as every offset line's stakes; skewed: along the turned straight line
    north, east, az = alignment.evaluate(s_row, np.where(skewed, 0.0, o_row))
    sin_d, cos_d = sincosd(az + 90.0 + skew)
    d = np.where(skewed, o_row, 0.0)
    north = round_to(north + d * cos_d, COORDINATE_DECIMALS)
    east = round_to(east + d * sin_d, COORDINATE_DECIMALS)
    station, offset = s_row.copy(), o_row.copy()
    sk = np.flatnonzero(skewed)
    if sk.size:
        loc = alignment.locate(north[sk], east[sk])
        far = np.flatnonzero((loc.station < lo - OWN_STATION_TOLERANCE) | (loc.station > hi + OWN_STATION_TOLERANCE))
        if far.size:
            i = int(sk[far[0]])
            own = float(loc.station[far[0]])
            raise _row_error(rows, i, f"skew {rows.skew[i]!r} puts the stake at {stationing.label(float(s_row[i]))} "
                             f"offset {rows.offset[i]!r} off the alignment ({abs(own - (lo if own < lo else hi)):.4f} "
                             f"{'before' if own < lo else 'past'} its {'start' if own < lo else 'end'}, which is at "
                             f"{stationing.label(lo if own < lo else hi)}); no station of the alignment is square to it")
        # The part of the alignment the row refers to: its nearest point F lies within 2|offset| of the
        # centreline point P at the row's station (|P - F| <= |P - Q| + |Q - F| <= 2|offset|), which on a
        # curve of radius R > |offset| is at most 2 R asin(|offset| / R) <= pi |offset| along it.
        # Farther along, another part of the alignment (a loop's return) is nearer: refused.
        other = np.flatnonzero(np.abs(loc.station - s_row[sk]) > np.pi * np.abs(o_row[sk]) + OWN_STATION_TOLERANCE)
        if other.size:
            i = int(sk[other[0]])
            raise _row_error(rows, i, f"skew {rows.skew[i]!r} puts the stake at {stationing.label(float(s_row[i]))} "
                             f"offset {rows.offset[i]!r} nearer another part of the alignment (at "
                             f"{stationing.label(float(loc.station[other[0]]))}) than the one at its station; "
                             "give the stake by its own station and square offset, without a skew")
        station[sk] = np.clip(loc.station, lo, hi)
        offset[sk] = loc.offset
        az = az.copy()
        az[sk] = alignment.evaluate(station[sk]).azimuth
    z = np.array(rows.elevation, dtype=np.float64)
    given = ~np.isnan(z)
    need = np.flatnonzero(~given)
    if need.size and profile is not None:
        beyond = np.flatnonzero(~profile.covers(station[need]))
        if beyond.size:
            i = int(need[beyond[0]])
            raise _row_error(rows, i, f"the stake at {stationing.label(float(station[i]))} lies beyond the profile, "
                             f"which runs from {stationing.label(profile.start)} to {stationing.label(profile.end)}; "
                             "extend the profile or give the row's elevation")
    if need.size:
        centre = _centre(profile, elevation, station[need])
        z[need] = design_elevation(sections, station[need], offset[need], centre)
    return ListedStakes(
        station=station, offset=offset, northing=north, easting=east, azimuth=np.asarray(az, dtype=np.float64),
        elevation=z, elevation_given=given, skew=skew, code=rows.code, description=rows.description,
        id=tuple("" if pid is None else pid for pid in rows.id), line=rows.line, key=rows.key,
    )


def listed_stakes(alignment: Alignment, stationing: Stationing, profile: Profile | None,
                  sections: SectionPlan | None, staking: Staking) -> ListedStakes | None:
    """The job's listed stakes (None without ``staking.points``), from what the design builds.

    ``sections`` None: the plain offset lines of ``staking.offsets`` (no
    superelevation rows).  The centreline elevation is the profile's, else
    ``staking.elevation``.
    """
    if staking.points is None:
        return None
    if sections is None:
        sections = plan_sections(staking.offsets, (), stationing)
    return place_listed(alignment, stationing, staking.points, sections=sections, profile=profile,
                        elevation=staking.elevation)


def number_listed(stakes: ListedStakes, first_free: int, prefix: str) -> tuple[NDArray[np.int64], list[str]]:
    """Point ids of the listed stakes: a row's own id, else the next number.

    Rows without an id are numbered ``first_free``, ``first_free + 1``, ...
    by station, then offset, where they lie (both rounded to 4 decimals,
    so that float noise of a skewed stake's inverse never decides), ties in
    file order.

    Parameters
    ----------
    stakes : ListedStakes
        From :func:`place_listed`.
    first_free : int
        The first number after the alignment's other stakes.
    prefix : str
        ``staking.point_prefix``.

    Returns
    -------
    order : ndarray of int
        Indices (file order) of the rows without an id, in numbering order:
        ``order[k]`` gets ``first_free + k``.
    ids : list of str
        Every row's point id, in file order.

    Raises
    ------
    JobFileError
        Numbers beyond the point-number range, an id longer than
        :data:`MAX_ID_CHARS`, or a row's own id equal to a number given to
        another row.
    """
    own = np.array(stakes.id, dtype=object)
    unnamed = np.flatnonzero(own == "")
    st = round_to(stakes.station[unnamed], COORDINATE_DECIMALS)
    of = round_to(stakes.offset[unnamed], COORDINATE_DECIMALS)
    order = unnamed[np.lexsort((of, st))]  # stable: ties keep file order
    if not order.size:
        return order.astype(np.int64), list(stakes.id)
    count = int(order.size)
    where = f"{stakes.key}: the rows without an id ({count:,}), numbered from {first_free:,} after the alignment's stakes,"
    if first_free + count - 1 > MAX_POINT_NUMBER:
        raise JobFileError(f"{where} would run to {first_free + count - 1:,}; point numbers end at "
                           f"{MAX_POINT_NUMBER:,} (lower staking.first_point, or give the rows ids)")
    last = f"{prefix}{first_free + count - 1}"
    if len(last) > MAX_ID_CHARS:
        raise JobFileError(f"{where} end at the point id {last!r} of {len(last)} characters; ids may have at most "
                           f"{MAX_ID_CHARS} (shorten staking.point_prefix, lower staking.first_point, or give the "
                           "rows ids)")
    numbered = [f"{prefix}{k}" for k in range(first_free, first_free + int(order.size))]
    own[order] = numbered
    clash = np.flatnonzero(np.isin(np.array(stakes.id, dtype=np.str_), np.array(numbered, dtype=np.str_)))
    if clash.size:
        i = int(clash[0])
        j = int(order[numbered.index(stakes.id[i])])
        raise JobFileError(f"{stakes.key} line {stakes.line[i]}: id {stakes.id[i]!r} is also the number given to "
                           f"line {stakes.line[j]} (a row without an id); give that row an id or change this one")
    return order.astype(np.int64), [str(x) for x in own.tolist()]
