"""The ground work of a staked alignment: cut and fill at every stake, slope stakes, sections, volumes.

From the :class:`~stakeout.staking.StakePoints` (positions, design
elevations, directions), the :class:`~stakeout.ground.Ground` and the
``[slope_stakes]`` table this gathers, on whole arrays, what the outputs
need (numpy, no I/O):

* each stake's ground elevation and cut/fill (design - ground, positive
  fill; NaN without a design elevation or off the ground);
* per staked station and side (station order, left before right), the
  hinge stake, the section square to the alignment outward from it, its
  catch point and reference stake (:func:`stakeout.slopestakes.slope_stakes`);
* the design and ground sections from catch to catch, their cut and fill
  areas, and average-end-area volumes over the internal-station distance
  between consecutive stations with both catch points.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray

from .angles import sincosd
from .alignment import Alignment
from .errors import JobFileError
from .ground import Ground
from .slopestakes import SlopeStakes, SlopeStaking
from .staking import MoreStakes, StakePoints
from .volumes import CrossSections, Volumes, average_end_volumes, cross_sections

__all__ = ["Earthwork", "SlopeRows", "earthwork", "catch_and_reference_stakes", "placed", "ground_beyond_catch"]

F64 = NDArray[np.float64]
I64 = NDArray[np.int64]


@dataclass(frozen=True)
class SlopeRows:
    """One row per staked station and side (station order, left before right).

    ``station`` indexes the stake plan's stations; ``hinge`` is the hinge
    stake's index among the stakes; offsets are signed (negative left) like
    every offset; ``result`` holds the catch and reference stakes
    (:class:`~stakeout.slopestakes.SlopeStakes`, NaN where there is none).
    """

    station: I64
    side: tuple[str, ...]
    hinge: I64
    hinge_offset: F64
    catch_offset: F64
    reference_offset: F64
    result: SlopeStakes
    #: Table indices of the catch and reference stakes (-1 without a catch point); set by :func:`placed`.
    catch_point: I64 | None = None
    reference_point: I64 | None = None


@dataclass(frozen=True)
class Earthwork:
    """Everything the ground adds to a build (see the module docstring).

    ``sections`` and ``volumes`` are None unless both sides are staked;
    ``volume_stations`` are the station indices of the volume rows.
    """

    ground_elevation: F64
    cut_fill: F64
    slopes: SlopeRows | None
    sections: CrossSections | None
    volume_stations: I64
    volumes: Volumes | None


def earthwork(stakes: StakePoints, ground: Ground, spec: SlopeStaking | None,
              alignment: Alignment | None = None) -> Earthwork:
    """Ground elevations, cut/fill, slope stakes, sections and volumes of a stake plan.

    Parameters
    ----------
    stakes : StakePoints
        The stake plan (station by station, offsets left to right).
    ground : Ground
        The existing ground.
    spec : SlopeStaking or None
        ``[slope_stakes]``; None: only ground elevations and cut/fill.
    alignment : Alignment, optional
        The alignment: each section starts from its hinge exactly where it
        lies (without it, from the hinge stake's rounded coordinates).

    Returns
    -------
    Earthwork

    Raises
    ------
    JobFileError
        Slope stakes without design elevations, or a hinge code that names
        no offset line.
    """
    gz = ground.elevation(stakes.northing, stakes.easting)
    cf = stakes.elevation - gz if stakes.elevation is not None else np.full(len(stakes), np.nan)
    if spec is None:
        return Earthwork(gz, cf, None, None, np.zeros(0, dtype=np.int64), None)
    if stakes.elevation is None:
        raise JobFileError("slope_stakes: needs design elevations ([profile] or staking.elevation) at the hinges")
    k, m = stakes.stations.size, stakes.offsets.size
    sts, sides, hinges = [], [], []
    for side, sd in spec.sides():
        if sd.hinge not in stakes.codes:
            raise JobFileError(f"slope_stakes.{side}.hinge = {sd.hinge!r}: no offset line has this code; use one "
                               f"of {', '.join(repr(c) for c in stakes.codes)}")
        j = stakes.codes.index(sd.hinge)
        sts.append(np.arange(k, dtype=np.int64))
        sides.append(np.full(k, side == "left"))
        hinges.append(np.arange(k, dtype=np.int64) * m + j)
    st = np.concatenate(sts)
    left = np.concatenate(sides)
    hinge = np.concatenate(hinges)
    o = np.lexsort((~left, st))  # station order, left first
    st, left, hinge = st[o], left[o], hinge[o]
    s, c = sincosd(stakes.azimuth[hinge])
    dn = np.where(left, s, -s)  # square to the alignment: right is azimuth + 90 degrees
    de = np.where(left, -c, c)
    hn, he = stakes.northing[hinge], stakes.easting[hinge]
    if alignment is not None:  # from the hinge exactly where it lies, not from its 4-decimal stake coordinates
        hn, he, _ = alignment.evaluate(stakes.station[hinge], stakes.offset[hinge])
    res = spec.solve(ground, left, hn, he, stakes.elevation[hinge], dn, de)
    sign = np.where(left, -1.0, 1.0)
    h_off = stakes.offset[hinge]
    rows = SlopeRows(st, tuple("left" if x else "right" for x in left.tolist()), hinge, h_off,
                     h_off + sign * res.catch_dist, h_off + sign * res.ref_dist, res)
    if spec.left is None or spec.right is None:
        return Earthwork(gz, cf, rows, None, np.zeros(0, dtype=np.int64), None)
    li, ri = np.flatnonzero(left), np.flatnonzero(~left)  # one of each a station, in station order
    crossed = np.flatnonzero(h_off[li] >= h_off[ri])
    if crossed.size:
        i = int(st[li[crossed[0]]])
        raise JobFileError(f"slope_stakes.left.hinge = {spec.left.hinge!r}: lies at or right of the right hinge "
                           f"{spec.right.hinge!r} at {stakes.labels[i]} (offsets {h_off[li[crossed[0]]]:.4f} and "
                           f"{h_off[ri[crossed[0]]]:.4f}); the left hinge must lie left of the right one")
    lres, rres = res.take(li), res.take(ri)
    cs = cross_sections(ground, np.repeat(np.arange(k, dtype=np.int64), m), stakes.offset, stakes.elevation,
                        lres, h_off[li], rres, h_off[ri])
    vst = np.flatnonzero(cs.ok)
    vol = average_end_volumes(stakes.stations[vst], cs.cut_area[vst], cs.fill_area[vst])
    return Earthwork(gz, cf, rows, cs, vst, vol)


def catch_and_reference_stakes(plan: StakePoints, ew: Earthwork) -> MoreStakes:
    """The catch and reference stakes as stakes of the table (:func:`~stakeout.staking.with_stakes`).

    Each follows its station's grid stakes, left to right by offset: left
    ``REF``, left ``CATCH``, right ``CATCH``, right ``REF`` (job-file
    contract); a catch stake's elevation is its ground, a reference stake has
    none.  Code: the hinge's code and ``-C``/``-R``; direction: the hinge's.
    Rows without a catch point add none.
    """
    r = ew.slopes
    if r is None:
        return _no_stakes()
    res = r.result
    left = np.array([s == "left" for s in r.side], dtype=bool)
    has = ~np.isnan(res.catch_n)
    m = plan.offsets.size
    hinge_code = np.array(plan.codes, dtype=object)[r.hinge % m]
    nan = np.full(left.size, np.nan)
    pairs = {  # per row (catch, reference), swapped on the left
        "station": (r.station, r.station),
        "offset": (r.catch_offset, r.reference_offset),
        "northing": (res.catch_n, res.ref_n),
        "easting": (res.catch_e, res.ref_e),
        "elevation": (res.catch_z, nan),
        "azimuth": (plan.azimuth[r.hinge], plan.azimuth[r.hinge]),
        "feature": (np.full(left.size, "CATCH", dtype=object), np.full(left.size, "REF", dtype=object)),
        "code": (hinge_code + "-C", hinge_code + "-R"),
    }
    keep = np.repeat(has, 2)
    out = {}
    for k, (a, b) in pairs.items():
        out[k] = np.column_stack([np.where(left, b, a), np.where(left, a, b)]).ravel()[keep]
    j = int(keep.sum())
    st = out["station"].astype(np.int64)
    return MoreStakes(after=st, station=plan.stations[st], offset=out["offset"].astype(np.float64),
                      northing=out["northing"].astype(np.float64), easting=out["easting"].astype(np.float64),
                      azimuth=out["azimuth"].astype(np.float64), elevation=out["elevation"].astype(np.float64),
                      code=tuple(out["code"].tolist()), feature=tuple(out["feature"].tolist()),
                      description=(None,) * j, name=(None,) * j)


def _no_stakes() -> MoreStakes:
    z = np.zeros(0)
    return MoreStakes(np.zeros(0, dtype=np.int64), z, z, z, z, z, z, (), (), (), ())


def placed(ew: Earthwork, table: StakePoints, ground: Ground, first_more: int) -> Earthwork:
    """``ew`` (computed on the grid plan) laid onto the stake table.

    Hinges become table indices, the catch and reference stakes get theirs
    (``first_more`` is where the catch and reference stakes start among the
    added stakes, in the order :func:`catch_and_reference_stakes` gives),
    and ground elevation and cut/fill run over every stake of the table: a
    catch stake's ground is its own elevation (cut/fill 0), a reference
    stake's cut/fill is empty (it has no design elevation), a listed point
    gets the ground where it lies.
    """
    grid = table.grid_index
    n = len(table)
    gz = np.full(n, np.nan)
    cf = np.full(n, np.nan)
    gz[grid] = ew.ground_elevation
    cf[grid] = ew.cut_fill
    off = np.ones(n, dtype=bool)
    off[grid] = False
    rows = ew.slopes
    if rows is not None:
        has = ~np.isnan(rows.result.catch_n)
        catch = np.full(has.size, -1, dtype=np.int64)
        ref = np.full(has.size, -1, dtype=np.int64)
        added = table.layout.added if table.layout is not None else np.zeros(0, dtype=np.int64)  # none: no catch
        at = added[first_more:first_more + int(2 * has.sum())]  # in the order they were given
        left = np.array([s == "left" for s in rows.side], dtype=bool)
        pair = 2 * (np.cumsum(has) - has)
        catch[has] = at[np.where(left, pair + 1, pair)[has]]
        ref[has] = at[np.where(left, pair, pair + 1)[has]]
        gz[catch[has]] = rows.result.catch_z[has]
        cf[catch[has]] = 0.0
        gz[ref[has]] = rows.result.ref_ground[has]
        off[catch[has]] = False
        off[ref[has]] = False
        rows = replace(rows, hinge=grid[rows.hinge], catch_point=catch, reference_point=ref)
    if off.any():  # listed points: the ground where they lie
        k = np.flatnonzero(off)
        gz[k] = ground.elevation(table.northing[k], table.easting[k])
        if table.elevation is not None:
            cf[k] = table.elevation[k] - gz[k]
    return replace(ew, ground_elevation=gz, cut_fill=cf, slopes=rows)


def ground_beyond_catch(ground: Ground, rows: SlopeRows, idx: I64) -> tuple[I64, F64, F64]:
    """The ground from the catch point out to the reference stake, for the slope-stake rows ``idx``.

    Parameters
    ----------
    ground : Ground
        The existing ground.
    rows : SlopeRows
        The slope stakes.
    idx : array of int
        Rows to trace (a row without a catch point gets an empty polyline).

    Returns
    -------
    first, offset, z : arrays
        Polylines laid end to end (row ``idx[i]``: ``offset[first[i]:first[i + 1]]``),
        signed offsets and ground elevations, job units; each the TIN cut along
        the section from the catch outward, as far as the ground reaches.
    """
    res = rows.result
    has = ~np.isnan(res.catch_n[idx]) & ~np.isnan(res.ref_n[idx])
    sel = idx[has]
    dn, de = res.ref_n[sel] - res.catch_n[sel], res.ref_e[sel] - res.catch_e[sel]
    length = np.hypot(dn, de)
    step = np.where(length > 0, length, 1.0)
    sec = ground.sections(res.catch_n[sel], res.catch_e[sel], dn / step, de / step, length)
    cnt = np.zeros(idx.size, dtype=np.int64)
    cnt[has] = np.diff(sec.first)
    first = np.r_[0, np.cumsum(cnt)].astype(np.int64)
    ray = np.repeat(np.arange(sel.size, dtype=np.int64), np.diff(sec.first))
    sign = np.sign(rows.reference_offset[sel] - rows.catch_offset[sel])  # outward: -1 on the left
    return first, rows.catch_offset[sel][ray] + sign[ray] * sec.dist, sec.z
