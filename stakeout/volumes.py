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

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .ground import Ground
from .slopestakes import SlopeStakes, slope_vertices

__all__ = ["CrossSections", "Volumes", "areas_between", "cross_sections", "average_end_volumes"]

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
    f = _interp(first_d, x_d, z_d, s, x) - _interp(first_g, x_g, z_g, s, x)  # design - ground
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


def cross_sections(ground: Ground, tmpl_station: I64, tmpl_offset: F64, tmpl_z: F64, left: SlopeStakes,
                   left_hinge_offset: F64, right: SlopeStakes, right_hinge_offset: F64) -> CrossSections:
    """Design and ground sections, and their cut and fill areas, at ``k`` stations.

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
