"""Cross-section areas and earthwork volumes by average end areas (numpy, no I/O).

At a station with both catch points the design section runs from the left
catch through the left slope's vertices, the template (the stakes between
the hinges, straight between them), the right slope's vertices to the right
catch; the ground section is the TIN cut along the same line
(:meth:`stakeout.ground.Ground.sections`).  Between the two polylines, over
their common offsets, design above ground is fill and ground above design is
cut; each is integrated exactly (both lines are straight between the merged
breakpoints, and a piece whose difference changes sign is split at its root).

Volumes between consecutive such stations are the average of the two end
areas times the distance between them along the alignment (internal
stations; no curvature correction), in cubic job units, with running totals.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .ground import Ground
from .slopestakes import SlopeStakes, slope_vertices

#: Stations whose sections are worked out at once (their ground sections are the temporaries).
_STATION_BLOCK = 16384

__all__ = ["AreaOutlines", "CrossSections", "Volumes", "area_outlines", "areas_between", "cross_sections",
           "average_end_volumes"]

F64 = NDArray[np.float64]
I64 = NDArray[np.int64]


def _interp(first: I64, x: F64, y: F64, qs: I64, qx: F64) -> F64:
    """Values at ``qx`` of the polylines ``qs`` (laid end to end: polyline ``i`` is
    ``x[first[i]:first[i + 1]]``, increasing), each query clamped to its polyline.
    """
    lo, hi = x[first[qs]], x[first[qs + 1] - 1]
    qx = np.clip(qx, lo, hi)
    k = len(first) - 1
    base_s = np.repeat(np.arange(k, dtype=np.int64), np.diff(first))
    s = np.concatenate((base_s, qs))
    xx = np.concatenate((x, qx))
    isq = np.concatenate((np.zeros(len(x), dtype=bool), np.ones(len(qx), dtype=bool)))
    yy = np.concatenate((y, np.zeros(len(qx))))
    o = np.lexsort((isq, xx, s))
    idx = np.arange(len(o))
    b = ~isq[o]
    prev = np.maximum.accumulate(np.where(b, idx, -1))
    nxt = np.minimum.accumulate(np.where(b, idx, len(o))[::-1])[::-1]
    qpos = np.flatnonzero(~b)
    p, q = prev[qpos], np.minimum(nxt[qpos], len(o) - 1)
    same = s[o][q] == s[o][p]
    x0, x1 = xx[o][p], xx[o][q]
    dx = np.where(same & (x1 > x0), x1 - x0, 1.0)
    w = np.where(same & (x1 > x0), (xx[o][qpos] - x0) / dx, 0.0)
    out = np.empty(len(qx))
    out[o[qpos] - len(x)] = yy[o][p] + w * (yy[o][q] - yy[o][p])
    return out


def _merged(first_d: I64, x_d: F64, z_d: F64, first_g: I64, x_g: F64, z_g: F64) -> tuple[I64, F64, F64, F64]:
    """Every section's breakpoints over the offsets both polylines cover (see :func:`areas_between`).

    Returns
    -------
    s, x, zd, zg : arrays
        Section index, offset (increasing within a section, no repeats), and
        the design and ground elevations there; a section whose polylines
        share no offsets has no breakpoints.
    """
    k = len(first_d) - 1
    a = np.maximum(x_d[first_d[:-1]], x_g[first_g[:-1]])
    b = np.minimum(x_d[first_d[1:] - 1], x_g[first_g[1:] - 1])
    sd = np.repeat(np.arange(k, dtype=np.int64), np.diff(first_d))
    sg = np.repeat(np.arange(k, dtype=np.int64), np.diff(first_g))
    s = np.concatenate((sd, sg, np.arange(k), np.arange(k)))
    x = np.concatenate((x_d, x_g, a, b))
    keep = (x >= a[s]) & (x <= b[s]) & (a[s] < b[s])
    s, x = s[keep], x[keep]
    o = np.lexsort((x, s))
    s, x = s[o], x[o]
    new = np.r_[True, (s[1:] != s[:-1]) | (x[1:] > x[:-1])]
    s, x = s[new], x[new]
    return s, x, _interp(first_d, x_d, z_d, s, x), _interp(first_g, x_g, z_g, s, x)


def areas_between(first_d: I64, x_d: F64, z_d: F64, first_g: I64, x_g: F64, z_g: F64) -> tuple[F64, F64]:
    """Cut and fill areas between design and ground polylines, section by section.

    Parameters
    ----------
    first_d, x_d, z_d : arrays
        Design polylines laid end to end (section ``i``:
        ``x_d[first_d[i]:first_d[i + 1]]``, offsets increasing; elevations ``z_d``).
    first_g, x_g, z_g : arrays
        Ground polylines, the same way.

    Returns
    -------
    cut, fill : array of float
        Per section, square units: the area where the ground lies above the
        design (cut) and below it (fill), over the offsets both cover
        (0 where they share none).
    """
    k = len(first_d) - 1
    s, x, zd, zg = _merged(first_d, x_d, z_d, first_g, x_g, z_g)
    f = zd - zg  # design - ground
    pair = s[1:] == s[:-1]
    h = (x[1:] - x[:-1])[pair]
    f1, f2 = f[:-1][pair], f[1:][pair]
    ps = s[:-1][pair]
    fill = _positive_part(f1, f2, h)
    cut = _positive_part(-f1, -f2, h)
    return np.bincount(ps, cut, minlength=k).astype(np.float64), np.bincount(ps, fill, minlength=k).astype(np.float64)


def _positive_part(f1: F64, f2: F64, h: F64) -> F64:
    """Integral over a piece of width ``h`` of max(f, 0), ``f`` straight from ``f1`` to ``f2``.

    Both ends positive: the trapezoid ``h (f1 + f2) / 2``; one positive end
    ``P`` and one negative ``-N``: the triangle up to the root,
    ``h P^2 / (2 (P + N))``.  Both formulas are ``h (p1 + p2)^2 / (2 (|f1| + |f2|))``
    with ``p = max(f, 0)``.
    """
    p = np.maximum(f1, 0.0) + np.maximum(f2, 0.0)
    d = np.abs(f1) + np.abs(f2)
    return np.where(d > 0, h * p * p / (2.0 * np.where(d > 0, d, 1.0)), 0.0)


@dataclass(frozen=True)
class CrossSections:
    """Each station's design and ground sections and their areas.

    ``ok`` marks the stations with both catch points whose ground is
    continuous between them; elsewhere the areas are NaN and the polylines
    empty.  Polylines are laid end to end by station (offsets signed, job
    units; ``design_*`` from catch to catch, ``ground_*`` the TIN along it).
    """

    ok: NDArray[np.bool_]
    cut_area: F64
    fill_area: F64
    design_first: I64
    design_offset: F64
    design_z: F64
    ground_first: I64
    ground_offset: F64
    ground_z: F64

    @staticmethod
    def joined(parts: "Sequence[CrossSections]") -> "CrossSections":
        """The sections of consecutive blocks of stations as one."""
        def firsts(got: list[I64]) -> I64:
            base = np.cumsum([0] + [int(f[-1]) for f in got])
            return np.concatenate([f[:-1] + b for f, b in zip(got, base)] + [base[-1:]]).astype(np.int64)

        cat = np.concatenate
        return CrossSections(cat([p.ok for p in parts]), cat([p.cut_area for p in parts]),
                             cat([p.fill_area for p in parts]), firsts([p.design_first for p in parts]),
                             cat([p.design_offset for p in parts]), cat([p.design_z for p in parts]),
                             firsts([p.ground_first for p in parts]), cat([p.ground_offset for p in parts]),
                             cat([p.ground_z for p in parts]))


def cross_sections(ground: Ground, tmpl_station: I64, tmpl_offset: F64, tmpl_z: F64, left: SlopeStakes,
                   left_hinge_offset: F64, right: SlopeStakes, right_hinge_offset: F64) -> CrossSections:
    """Design and ground sections, and their cut and fill areas, at ``k`` stations, worked out a
    block of stations at a time (each station is its own; the template's rows in station order).

    Parameters
    ----------
    ground : Ground
        The existing ground.
    tmpl_station, tmpl_offset, tmpl_z : arrays
        The template's stakes (station index ``0 .. k-1``, signed offset, design
        elevation); those from the left hinge to the right hinge are used.
    left, right : SlopeStakes
        The slope stakes of each station's left and right hinge (``k`` rays each).
    left_hinge_offset, right_hinge_offset : array of float
        Each station's hinge offsets (signed, job units).

    Returns
    -------
    CrossSections
        Areas in square job units.
    """
    k = len(left_hinge_offset)
    if k <= _STATION_BLOCK or (np.diff(tmpl_station) < 0).any():
        return _cross_sections(ground, tmpl_station, tmpl_offset, tmpl_z, left, left_hinge_offset, right,
                               right_hinge_offset)
    parts = []
    for a in range(0, k, _STATION_BLOCK):
        b = min(k, a + _STATION_BLOCK)
        t0, t1 = np.searchsorted(tmpl_station, [a, b])
        parts.append(_cross_sections(ground, tmpl_station[t0:t1] - a, tmpl_offset[t0:t1], tmpl_z[t0:t1],
                                     left.take(slice(a, b)), left_hinge_offset[a:b], right.take(slice(a, b)),
                                     right_hinge_offset[a:b]))
    return CrossSections.joined(parts)


def _cross_sections(ground: Ground, tmpl_station: I64, tmpl_offset: F64, tmpl_z: F64, left: SlopeStakes,
                    left_hinge_offset: F64, right: SlopeStakes, right_hinge_offset: F64) -> CrossSections:
    """:func:`cross_sections` of one block of stations."""
    k = len(left_hinge_offset)
    both = ~np.isnan(left.catch_dist) & ~np.isnan(right.catch_dist)
    # the ground from the left catch to the right catch
    dn, de = right.catch_n - left.catch_n, right.catch_e - left.catch_e
    length = np.hypot(dn, de)
    sel = np.flatnonzero(both & (length > 0))
    sec = ground.sections(left.catch_n[sel], left.catch_e[sel], dn[sel] / length[sel], de[sel] / length[sel],
                          length[sel])
    ok = np.zeros(k, dtype=bool)
    ok[sel[~sec.left_tin]] = True
    # design: left slope (outside in), template, right slope
    lr, lt, lz = slope_vertices(left)
    rr, rt, rz = slope_vertices(right)
    inner = (tmpl_offset >= left_hinge_offset[tmpl_station]) & (tmpl_offset <= right_hinge_offset[tmpl_station])
    st = np.concatenate((lr, tmpl_station[inner], rr))
    off = np.concatenate((left_hinge_offset[lr] - lt, tmpl_offset[inner], right_hinge_offset[rr] + rt))
    z = np.concatenate((lz, tmpl_z[inner], rz))
    keep = ok[st]
    st, off, z = st[keep], off[keep], z[keep]
    o = np.lexsort((off, st))
    st, off, z = st[o], off[o], z[o]
    d_first = np.searchsorted(st, np.arange(k + 1)).astype(np.int64)
    # ground polylines of the stations kept, offsets from the left catch's
    cnt = np.zeros(k, dtype=np.int64)
    okr = ~sec.left_tin
    cnt[sel[okr]] = np.diff(sec.first)[okr]
    g_first = np.zeros(k + 1, dtype=np.int64)
    np.cumsum(cnt, out=g_first[1:])
    take = np.repeat(okr, np.diff(sec.first))
    ray = np.repeat(np.arange(len(sel), dtype=np.int64), np.diff(sec.first))[take]
    g_off = sec.dist[take] + (left_hinge_offset - left.catch_dist)[sel[ray]]
    g_z = sec.z[take]
    cut = np.full(k, np.nan)
    fill = np.full(k, np.nan)
    idx = np.flatnonzero(ok)
    if idx.size:
        c, f = areas_between(_compact(d_first, idx), off, z, _compact(g_first, idx), g_off, g_z)
        cut[idx], fill[idx] = c, f
    return CrossSections(ok, cut, fill, d_first, off, z, g_first, g_off, g_z)


def _compact(first: I64, idx: I64) -> I64:
    """The ``first`` array of the polylines ``idx`` alone (they are the only non-empty ones, in order)."""
    out: I64 = np.r_[first[idx], first[idx[-1] + 1]].astype(np.int64)
    return out


@dataclass(frozen=True)
class AreaOutlines:
    """The cut and fill areas of some sections as polygons, in (offset, elevation), job units.

    Polygon ``p`` has the vertices ``offset[first[p]:first[p + 1]]``,
    ``z[first[p]:first[p + 1]]`` (an open ring: the first vertex is not
    repeated at the end): forward along the ground, back along the design
    line.  ``section[p]`` is its section's position among the stations asked
    for, ``cut[p]`` is True for cut (ground above design), False for fill.
    Polygons run section by section, left to right.
    """

    section: I64
    cut: NDArray[np.bool_]
    first: I64
    offset: F64
    z: F64


def area_outlines(cs: CrossSections, stations: I64) -> AreaOutlines:
    """The polygons whose areas are ``cs.cut_area`` and ``cs.fill_area`` at ``stations``.

    The breakpoints are those :func:`areas_between` integrates over (both
    polylines over the offsets they share), with each piece whose difference
    changes sign split at its root; every maximal run of pieces with the
    ground above the design is one cut polygon, below it one fill polygon.
    A polygon's area (shoelace) is the sum of the pieces' exact integrals.

    Parameters
    ----------
    cs : CrossSections
        The sections.
    stations : array of int
        Station indices, each with ``cs.ok`` (both catch points, ground between).

    Returns
    -------
    AreaOutlines
    """
    idx = np.asarray(stations, dtype=np.int64)
    if not bool(np.all(cs.ok[idx])):
        raise ValueError("area_outlines: every station must have a section (cs.ok)")
    fd, xd, zd0 = _gather(cs.design_first, cs.design_offset, cs.design_z, idx)
    fg, xg, zg0 = _gather(cs.ground_first, cs.ground_offset, cs.ground_z, idx)
    s, x, zd, zg = _merged(fd, xd, zd0, fg, xg, zg0)
    f = zd - zg
    # a difference within rounding of zero is zero (at a catch point the lines meet)
    f[np.abs(f) <= 1e-9 * max(1.0, float(np.abs(zd).max(initial=0.0)))] = 0.0
    # split at the roots: a piece whose difference changes sign gets the point where it is zero
    j = np.flatnonzero((s[1:] == s[:-1]) & (f[:-1] * f[1:] < 0))
    t = f[j] / (f[j] - f[j + 1])
    zr = zd[j] + t * (zd[j + 1] - zd[j])
    o = np.argsort(np.r_[2 * np.arange(len(s)), 2 * j + 1], kind="stable")
    s, x = np.r_[s, s[j]][o], np.r_[x, x[j] + t * (x[j + 1] - x[j])][o]
    zd, zg, f = np.r_[zd, zr][o], np.r_[zg, zr][o], np.r_[f, np.zeros(len(j))][o]
    # runs of pieces of one kind between the points where the lines meet (or the section's ends)
    pair, zero = s[1:] == s[:-1], f == 0.0
    starts, ends, kinds = [], [], []
    for cut, piece in ((True, pair & ((f[:-1] < 0) | (f[1:] < 0))), (False, pair & ((f[:-1] > 0) | (f[1:] > 0)))):
        before, after = np.r_[False, piece[:-1]], np.r_[piece[1:], False]
        starts.append(np.flatnonzero(piece & (~before | zero[:-1])))
        ends.append(np.flatnonzero(piece & (~after | zero[1:])))
        kinds.append(np.full(starts[-1].size, cut))
    a, b, kind = np.concatenate(starts), np.concatenate(ends), np.concatenate(kinds)
    order = np.lexsort((x[a], s[a]))
    a, b, kind = a[order], b[order], kind[order]
    # a run's ring: forward along the ground over its points a .. b + 1, back along the design,
    # leaving out a design point that is the ground point already there (an end where they meet)
    n = b - a + 2
    back_first = b + 1 - zero[b + 1]
    nb = back_first - (a + zero[a]) + 1
    first = np.r_[0, np.cumsum(n + nb)].astype(np.int64)
    run = np.repeat(np.arange(a.size, dtype=np.int64), n + nb)
    local = np.arange(first[-1], dtype=np.int64) - first[run]
    forward = local < n[run]
    pt = np.where(forward, a[run] + local, back_first[run] - (local - n[run]))
    return AreaOutlines(s[a], kind, first, x[pt], np.where(forward, zg[pt], zd[pt]))


def _gather(first: I64, x: F64, z: F64, idx: I64) -> tuple[I64, F64, F64]:
    """The polylines ``idx`` (laid end to end by ``first``) alone, in that order, with their own ``first``."""
    lo, count = first[idx], first[idx + 1] - first[idx]
    out = np.r_[0, np.cumsum(count)].astype(np.int64)
    take = np.repeat(lo - out[:-1], count) + np.arange(out[-1], dtype=np.int64)
    return out, x[take], z[take]


@dataclass(frozen=True)
class Volumes:
    """Average-end-area volumes between consecutive sections (cubic job units):
    ``cut``/``fill`` from the previous section to this one (0 for the first),
    and the running totals.
    """

    cut: F64
    fill: F64
    cumulative_cut: F64
    cumulative_fill: F64


def average_end_volumes(stations: F64, cut_area: F64, fill_area: F64) -> Volumes:
    """Volumes by average end areas, ``V = (A1 + A2) / 2 * L``.

    Parameters
    ----------
    stations : array of float
        Internal stations of the sections (increasing, job units): ``L`` is
        their difference, the distance along the alignment.
    cut_area, fill_area : array of float
        Each section's areas, square job units.

    Returns
    -------
    Volumes
        Per section; the first section's volumes are 0.
    """
    s = np.asarray(stations, dtype=np.float64)
    length = np.diff(s)
    vc = np.r_[0.0, 0.5 * (cut_area[1:] + cut_area[:-1]) * length] if len(s) else np.zeros(0)
    vf = np.r_[0.0, 0.5 * (fill_area[1:] + fill_area[:-1]) * length] if len(s) else np.zeros(0)
    return Volumes(vc, vf, np.cumsum(vc), np.cumsum(vf))
