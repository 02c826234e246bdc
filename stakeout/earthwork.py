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

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .angles import sincosd
from .errors import JobFileError
from .ground import Ground
from .slopestakes import SlopeStakes, SlopeStaking
from .staking import StakePoints
from .volumes import CrossSections, Volumes, average_end_volumes, cross_sections

__all__ = ["Earthwork", "SlopeRows", "earthwork", "ground_beyond_catch"]

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


def earthwork(stakes: StakePoints, ground: Ground, spec: SlopeStaking | None) -> Earthwork:
    """Ground elevations, cut/fill, slope stakes, sections and volumes of a stake plan.

    Parameters
    ----------
    stakes : StakePoints
        The stake plan (station by station, offsets left to right).
    ground : Ground
        The existing ground.
    spec : SlopeStaking or None
        ``[slope_stakes]``; None: only ground elevations and cut/fill.

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
    res = spec.solve(ground, left, stakes.northing[hinge], stakes.easting[hinge], stakes.elevation[hinge], dn, de)
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
    lres, rres = _take(res, li), _take(res, ri)
    cs = cross_sections(ground, np.repeat(np.arange(k, dtype=np.int64), m), stakes.offset, stakes.elevation,
                        lres, h_off[li], rres, h_off[ri])
    vst = np.flatnonzero(cs.ok)
    vol = average_end_volumes(stakes.stations[vst], cs.cut_area[vst], cs.fill_area[vst])
    return Earthwork(gz, cf, rows, cs, vst, vol)


def _take(res: SlopeStakes, idx: I64) -> SlopeStakes:
    """The rays ``idx`` of a result (every array field, and the design lines)."""
    from dataclasses import fields, replace

    from .slopestakes import DesignLines

    lines = DesignLines(*(getattr(res.lines, f.name)[idx] for f in fields(DesignLines)))
    vals = {f.name: getattr(res, f.name)[idx] for f in fields(SlopeStakes) if f.name != "lines"}
    return replace(res, lines=lines, **vals)


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
