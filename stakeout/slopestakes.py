"""Slope stakes: where the side slope from a hinge meets the ground (numpy, no I/O).

At each staked station and side the section runs square to the alignment
from the hinge stake outward.  The ground at the hinge decides the side:

* **fill** when the ground lies at or below the hinge: the design line falls
  at ``fill_slope`` (run per unit rise, 4.0 is 4:1);
* **cut** when it lies above: the design line falls at ``foreslope`` to
  ``ditch_depth`` below the hinge, runs level for ``ditch_width``, then rises
  at ``cut_slope``; without a ditch the cut slope rises from the hinge.

The catch point is the first point beyond the hinge where the design line
meets the ground section (:meth:`stakeout.ground.Ground.sections`, the TIN
cut by the section's vertical plane): both are polylines, so the catch is
found exactly, as the first root of their (piecewise linear) difference, not
by sampling.  No catch within ``max_width``, or the section leaving the TIN
first, is a note; nothing is guessed.  The reference stake lies
``reference_offset`` beyond the catch on the same line.

The rays of every station and side are solved together: the sections are
cut in rounds of growing length (most catches lie near the hinge), each
round one vectorised pass over the rays still open.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, fields

import numpy as np
from numpy.typing import NDArray

from .ground import Ground, Sections
from .numbers import fixed_strings

__all__ = ["SideSlopes", "SlopeStaking", "SlopeStakes", "DesignLines", "slope_stakes", "slope_vertices",
           "lath_marking", "NOTE_NO_CATCH", "NOTE_OUTSIDE"]

F64 = NDArray[np.float64]
#: An array, or one number for every ray.
Num = NDArray[np.float64] | float

NOTE_NO_CATCH = "no catch within max_width"
NOTE_OUTSIDE = "outside the ground surface"
#: First round's reach, in grid cells of the ground (then four times longer a round).
_FIRST_ROUND_CELLS = 16.0
#: Rays worked out at once (their ground sections are the temporaries).
_RAY_BLOCK = 32768


@dataclass(frozen=True)
class SideSlopes:
    """One side's slopes (``[slope_stakes] left`` / ``right``); slopes are run per
    unit rise, depths and widths in job units; ``ditch_depth`` None: no ditch.
    """

    hinge: str
    fill_slope: float
    cut_slope: float
    foreslope: float | None = None
    ditch_depth: float | None = None
    ditch_width: float = 0.0


@dataclass(frozen=True)
class SlopeStaking:
    """``[slope_stakes]``: the sides staked, the reference stake's distance
    beyond the catch and the farthest catch from its hinge (job units).
    """

    left: SideSlopes | None
    right: SideSlopes | None
    reference_offset: float
    max_width: float

    def sides(self) -> tuple[tuple[str, SideSlopes], ...]:
        """``(side, slopes)`` of the sides given, left first."""
        return tuple((s, v) for s, v in (("left", self.left), ("right", self.right)) if v is not None)

    def solve(self, ground: Ground, left: NDArray[np.bool_], n: F64, e: F64, z: F64, dn: F64, de: F64
              ) -> "SlopeStakes":
        """:func:`slope_stakes` of hinge stakes on either side, each with its side's slopes.

        Parameters
        ----------
        ground : Ground
            The existing ground.
        left : array of bool
            True for a left-side hinge (its side must be given), False for a right one.
        n, e, z, dn, de : arrays
            Hinge stakes and outward unit directions, as :func:`slope_stakes` takes them.

        Returns
        -------
        SlopeStakes
            Per hinge, in the order given.
        """
        cols = []
        for name in ("fill_slope", "cut_slope", "foreslope", "ditch_depth", "ditch_width"):
            vals = [0.0 if sd is None or getattr(sd, name) is None else float(getattr(sd, name))
                    for sd in (self.left, self.right)]
            cols.append(np.where(left, vals[0], vals[1]))
        fs, cs, fore, dd, dw = cols
        return slope_stakes(ground, n, e, z, dn, de, fs, cs, fore, dd, dw, self.max_width, self.reference_offset)


@dataclass(frozen=True)
class DesignLines:
    """The design line of each ray, ``D(t) = z - r1 min(t, t1) + s3 max(t - t2, 0)``
    for ``t`` the horizontal distance from the hinge: fill ``r1 = 1/fill_slope``,
    ``t1 = inf``; cut with a ditch ``r1 = 1/foreslope``, ``t1 = foreslope *
    ditch_depth``, ``t2 = t1 + ditch_width``, ``s3 = 1/cut_slope``; cut without
    one ``t1 = t2 = 0``.
    """

    z: F64
    r1: F64
    t1: F64
    t2: F64
    s3: F64

    def at(self, t: F64, ray: NDArray[np.int64] | None = None) -> F64:
        """Design elevation at distances ``t`` from the hinge (of rays ``ray``, default every ray in order)."""
        sel = slice(None) if ray is None else ray
        return (self.z[sel] - self.r1[sel] * np.minimum(t, self.t1[sel])
                + self.s3[sel] * np.maximum(t - self.t2[sel], 0.0))


@dataclass(frozen=True)
class SlopeStakes:
    """The answer per ray (station and side), arrays in ray order; NaN where empty.

    ``kind`` is ``cut``, ``fill`` or empty (hinge off the ground);
    ``catch_dist`` and ``ref_dist`` are horizontal distances from the hinge
    (``ref_dist`` is ``hd_to_hinge``); ``vd_to_hinge`` is the hinge
    elevation minus the ground at the reference stake; ``note`` is empty, or
    :data:`NOTE_NO_CATCH` / :data:`NOTE_OUTSIDE`.
    """

    ground_at_hinge: F64
    kind: NDArray[np.str_]
    catch_dist: F64
    catch_n: F64
    catch_e: F64
    catch_z: F64
    ref_dist: F64
    ref_n: F64
    ref_e: F64
    ref_ground: F64
    vd_to_hinge: F64
    note: NDArray[np.str_]
    lines: DesignLines

    @property
    def catch_cut_fill(self) -> F64:
        """Hinge elevation minus catch elevation (positive: fill down to the catch)."""
        return self.lines.z - self.catch_z

    def take(self, idx: NDArray[np.int64] | slice) -> "SlopeStakes":
        """The rays ``idx`` of this result (every array field, and the design lines)."""
        lines = DesignLines(*(getattr(self.lines, f.name)[idx] for f in fields(DesignLines)))
        vals = {f.name: getattr(self, f.name)[idx] for f in fields(SlopeStakes) if f.name != "lines"}
        return SlopeStakes(lines=lines, **vals)

    @staticmethod
    def joined(parts: "Sequence[SlopeStakes]") -> "SlopeStakes":
        """Results of consecutive blocks of rays as one."""
        if len(parts) == 1:
            return parts[0]
        lines = DesignLines(*(np.concatenate([getattr(p.lines, f.name) for p in parts]) for f in fields(DesignLines)))
        vals = {f.name: np.concatenate([getattr(p, f.name) for p in parts])
                for f in fields(SlopeStakes) if f.name != "lines"}
        return SlopeStakes(lines=lines, **vals)


def _design_lines(z: F64, cut: NDArray[np.bool_], fill_slope: F64, cut_slope: F64, foreslope: F64,
                  ditch_depth: F64, ditch_width: F64) -> DesignLines:
    ditch = cut & (ditch_depth > 0)
    inf = np.full(z.shape, np.inf)
    with np.errstate(divide="ignore", invalid="ignore"):
        r1 = np.where(cut, np.where(ditch, 1.0 / foreslope, 0.0), 1.0 / fill_slope)
        t1 = np.where(cut, np.where(ditch, foreslope * ditch_depth, 0.0), inf)
        t2 = np.where(cut, np.where(ditch, foreslope * ditch_depth + ditch_width, 0.0), inf)
        s3 = np.where(cut, 1.0 / cut_slope, 0.0)
    return DesignLines(z, r1, t1, t2, s3)


def slope_stakes(ground: Ground, n: Num, e: Num, z: Num, dn: Num, de: Num, fill_slope: Num, cut_slope: Num,
                 foreslope: Num, ditch_depth: Num, ditch_width: Num, max_width: Num,
                 reference_offset: Num) -> SlopeStakes:
    """Catch points and reference stakes of many rays (one per station and side).

    Parameters
    ----------
    ground : Ground
        The existing ground.
    n, e, z : array of float
        The hinge stake: northing, easting, design elevation (job units).
    dn, de : array of float
        Outward horizontal unit direction, square to the alignment.
    fill_slope, cut_slope, foreslope : array of float
        Slopes as run per unit rise (``foreslope`` only read where a ditch is).
    ditch_depth, ditch_width : array of float
        Ditch below the hinge and its level width (job units); depth 0: no ditch.
    max_width : array of float
        Farthest catch from the hinge, horizontally (job units).
    reference_offset : array of float
        The reference stake's distance beyond the catch (job units).

    Returns
    -------
    SlopeStakes
        Per ray, in the order given (worked out a block of rays at a time: each ray is its own).
    """
    arrs = np.broadcast_arrays(*(np.atleast_1d(np.asarray(v, dtype=np.float64)) for v in (
        n, e, z, dn, de, fill_slope, cut_slope, foreslope, ditch_depth, ditch_width, max_width, reference_offset)))
    r = len(arrs[0])
    if r <= _RAY_BLOCK:
        return _slope_stakes(ground, *arrs)
    return SlopeStakes.joined([_slope_stakes(ground, *(a[b:b + _RAY_BLOCK] for a in arrs))
                               for b in range(0, r, _RAY_BLOCK)])


def _slope_stakes(ground: Ground, *arrs: F64) -> SlopeStakes:
    """:func:`slope_stakes` of one block of rays (arrays of one length)."""
    n, e, z, dn, de, fill_slope, cut_slope, foreslope, ditch_depth, ditch_width, max_width, reference_offset = arrs
    r = len(n)
    gh = ground.elevation(n, e)
    on = ~np.isnan(gh)
    cut = on & (gh > z)
    lines = _design_lines(z, cut, fill_slope, cut_slope, foreslope, ditch_depth, ditch_width)
    kind = np.where(on, np.where(cut, "cut", "fill"), "").astype("<U4")
    note = np.where(on, "", NOTE_OUTSIDE).astype(f"<U{max(len(NOTE_NO_CATCH), len(NOTE_OUTSIDE))}")
    t_catch = np.full(r, np.nan)
    z_catch = np.full(r, np.nan)
    sign = np.where(cut, -1.0, 1.0)  # design minus ground, made positive on the hinge's side
    a = np.zeros(r)
    step = _FIRST_ROUND_CELLS * ground.cell_size
    open_ = np.flatnonzero(on)
    while open_.size:
        b = np.minimum(a[open_] + step, max_width[open_])
        s = ground.sections(n[open_], e[open_], dn[open_], de[open_], b, start=a[open_])
        found, tc, zc = _first_root(s, lines, open_, sign[open_])
        t_catch[open_[found]] = tc[found]
        z_catch[open_[found]] = zc[found]
        rest = ~found
        left = rest & s.left_tin
        note[open_[left]] = NOTE_OUTSIDE
        far = rest & ~s.left_tin & (b >= max_width[open_])
        note[open_[far]] = NOTE_NO_CATCH
        go = rest & ~left & ~far
        a[open_[go]] = b[go]
        open_ = open_[go]
        step *= 4.0
    has = ~np.isnan(t_catch)
    cn, ce = n + t_catch * dn, e + t_catch * de
    t_ref = np.where(has, t_catch + reference_offset, np.nan)
    rn, re_ = n + t_ref * dn, e + t_ref * de
    rg = np.full(r, np.nan)
    if has.any():
        rg[has] = ground.elevation(rn[has], re_[has])
    return SlopeStakes(gh, kind, t_catch, cn, ce, z_catch, t_ref, rn, re_, rg, z - rg, note, lines)


def _first_root(s: Sections, lines: DesignLines, rays: NDArray[np.int64], sign: F64
                ) -> tuple[NDArray[np.bool_], F64, F64]:
    """Per ray of the round: whether the design line meets the ground in the section's
    reach, and where (distance from the hinge, ground elevation).

    The ground breakpoints and the design line's own breakpoints (inside the
    reach) are merged; between consecutive ones both lines are straight, so the
    first sign change of (design - ground) is found and solved exactly.
    """
    k = len(s)
    cnt = np.diff(s.first)
    gray = np.repeat(np.arange(k, dtype=np.int64), cnt)
    gt, gz = s.dist, s.z
    # design breakpoints strictly inside each ray's ground (first and last breakpoints are ground)
    lo = np.zeros(k)
    lo[cnt > 0] = s.dist[s.first[:-1][cnt > 0]]
    dts, drs = [], []
    for bp in (lines.t1[rays], lines.t2[rays]):
        inside = (cnt > 1) & (bp > lo) & (bp < s.end) & np.isfinite(bp)
        dts.append(bp[inside])
        drs.append(np.flatnonzero(inside))
    dt = np.concatenate(dts)
    dr = np.concatenate(drs)
    t = np.concatenate((gt, dt))
    ray = np.concatenate((gray, dr))
    isg = np.concatenate((np.ones(len(gt), dtype=bool), np.zeros(len(dt), dtype=bool)))
    zz = np.concatenate((gz, np.full(len(dt), np.nan)))
    o = np.lexsort((~isg, t, ray))
    t, ray, isg, zz = t[o], ray[o], isg[o], zz[o]
    idx = np.arange(len(t))
    prev_g = np.maximum.accumulate(np.where(isg, idx, -1))
    next_g = np.minimum.accumulate(np.where(isg, idx, len(t))[::-1])[::-1]
    d = ~isg
    if d.any():
        p, q = prev_g[d], next_g[d]
        w = (t[d] - t[p]) / (t[q] - t[p])
        zz[d] = zz[p] + w * (zz[q] - zz[p])
    f = (lines.at(t, rays[ray]) - zz) * sign[ray]
    hit = f <= 0.0
    found = np.zeros(k, dtype=bool)
    tc = np.full(k, np.nan)
    zc = np.full(k, np.nan)
    if hit.any():
        hi = np.flatnonzero(hit)
        rr, at = np.unique(ray[hi], return_index=True)
        i = hi[at]  # first breakpoint of each ray where design - ground has crossed zero
        start = np.r_[True, ray[1:] != ray[:-1]][i]  # already met at the reach's start
        j = np.where(start, i, i - 1)
        fj, fi = f[j], f[i]
        denom = fj - fi
        w = np.where(start | (denom == 0), 1.0, fj / np.where(denom == 0, 1.0, denom))
        tc[rr] = t[j] + w * (t[i] - t[j])
        zc[rr] = zz[j] + w * (zz[i] - zz[j])
        found[rr] = True
    return found, tc, zc


def slope_vertices(res: SlopeStakes) -> tuple[NDArray[np.int64], F64, F64]:
    """The design line's vertices beyond each hinge up to its catch: ``(ray, t, z)``.

    For every ray with a catch point: the ditch's corners lying before the
    catch (cut with a ditch), then the catch itself, by distance from the
    hinge (the hinge itself not included).
    """
    has = np.flatnonzero(~np.isnan(res.catch_dist))
    rays, ts = [], []
    for bp in (res.lines.t1, res.lines.t2):
        b = bp[has]
        ok = np.isfinite(b) & (b > 0) & (b < res.catch_dist[has])
        rays.append(has[ok])
        ts.append(b[ok])
    rays.append(has)
    ts.append(res.catch_dist[has])
    ray = np.concatenate(rays)
    t = np.concatenate(ts)
    o = np.lexsort((t, ray))
    ray, t = ray[o], t[o]
    z = res.lines.at(t, ray)
    last = np.r_[ray[1:] != ray[:-1], True] if len(ray) else np.zeros(0, dtype=bool)
    z[last] = res.catch_z[ray[last]]  # the catch lies on the ground: its elevation from the ground
    return ray, t, z


def lath_marking(vertical: F64, horizontal: F64, decimals: int = 2) -> list[str]:
    """What a crew writes on a slope or reference stake's lath: ``C 3.42 @ 26.40``.

    Parameters
    ----------
    vertical : array of float
        Hinge elevation minus the ground at the stake (``catch_cut_fill`` or
        ``vd_to_hinge``), job units: positive is fill (``F``), negative cut (``C``).
    horizontal : array of float
        Horizontal distance from the stake to the hinge, job units.
    decimals : int
        Decimals printed (rounded as every printed number, :mod:`stakeout.numbers`).

    Returns
    -------
    list of str
        One marking per stake; empty where either number is missing (NaN).
    """
    v = np.asarray(vertical, dtype=np.float64).ravel()
    h = np.asarray(horizontal, dtype=np.float64).ravel()
    vs = fixed_strings(np.abs(v), decimals)
    hs = fixed_strings(h, decimals)
    return ["" if np.isnan(a) or np.isnan(b) else f"{'C' if a < 0 else 'F'} {x} @ {y}"
            for a, b, x, y in zip(v.tolist(), h.tolist(), vs, hs)]
