"""Automatic choice of instrument setups among control points (numpy, no I/O).

The rule (job-file contract, ``[setup] occupied = "auto"``):

1. *Candidates* are the control points that have another control point
   within ``max_backsight`` (inclusive; a second point on the very same
   spot does not count: it gives no direction).
2. *Greedy cover*: repeatedly take the candidate that reaches the most
   stakes not yet reached, a stake being reached when it lies within
   ``max_distance`` (inclusive); ties go to the smaller id in string order.
   Stop when every stake is reached.  A stake no candidate reaches is an
   error naming it.
3. Each stake goes to the *nearest* chosen setup (ties by id).  A chosen
   setup that is then nearest to no stake is dropped: it is not needed
   (the others reach all its stakes, and more closely).
4. Each setup backsights the *farthest* other control point within
   ``max_backsight`` (ties by id).

With a predicted precision and a tolerance (``[instrument]`` and ``[check]
horizontal_tolerance``) two steps change: in step 2 a candidate reaches a
stake within ``max_distance`` only when the stake's predicted r95 from it
(with the backsight step 4 gives that candidate) is within the tolerance —
except a stake no candidate reaches so, which any candidate within
``max_distance`` reaches (the sheet flags it); in step 3 each stake goes to
the chosen setup that reaches it with the smallest r95 (ties by id).

Distances are compared squared (``dN*dN + dE*dE``), so equal distances
tie exactly wherever the coordinates make the squares exact.  The result
does not depend on the order in which the control points are listed.  Only control points within
``max_distance`` of a stake can serve one, so only they are candidates; they and their
backsights are found by a grid of cells (each point looks into its cell and the eight
around it), never by all pairs of control points.  The reach is the list of (stake, candidate)
pairs within ``max_distance`` found the same way, never a stakes-by-candidates matrix; the greedy
cover keeps each candidate's count of stakes not yet reached and lowers only the counts of the
candidates that reach the stakes a choice reaches, so its cost grows with the pairs, not with
stakes x candidates x setups.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import GeometryError, JobFileError

__all__ = ["Setup", "SetupPlan", "choose_setups", "R95"]

#: Predicted r95 of stakes from setups: ``r95(occ_n, occ_e, bs_n, bs_e, stake_n, stake_e)`` on
#: broadcast arrays (job units), e.g. :func:`stakeout.precision.predict_precision`'s ``r95``.
R95 = Callable[[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.float64],
                NDArray[np.float64], NDArray[np.float64]], NDArray[np.float64]]


@dataclass(frozen=True)
class Setup:
    """One chosen setup.

    Attributes
    ----------
    occupied_id, backsight_id : str
        Control point ids of the occupied point and its backsight.
    occupied_n, occupied_e, backsight_n, backsight_e : float
        Their grid northings and eastings (job units).
    stake_count : int
        Number of stakes set out from this setup.
    farthest_sight : float
        Longest grid distance from the occupied point to one of its stakes
        (job units).
    """

    occupied_id: str
    occupied_n: float
    occupied_e: float
    backsight_id: str
    backsight_n: float
    backsight_e: float
    stake_count: int
    farthest_sight: float


@dataclass(frozen=True)
class SetupPlan:
    """The chosen setups, in the order the greedy cover chose them.

    Attributes
    ----------
    setups : tuple of Setup
        The setups in order of choice.
    setup_index : ndarray of int64
        For each stake, in stake order, the index into ``setups`` of the
        setup it is set out from.
    """

    setups: tuple[Setup, ...]
    setup_index: NDArray[np.int64]

    def per_stake(
        self,
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
        """Occupied and backsight coordinates of each stake's setup.

        Returns
        -------
        occ_n, occ_e, bs_n, bs_e : ndarray
            Grid northing and easting (job units), one per stake, ready for
            :func:`stakeout.precision.predict_precision`.
        """
        cols = np.array(
            [(s.occupied_n, s.occupied_e, s.backsight_n, s.backsight_e) for s in self.setups], dtype=float
        ).reshape(-1, 4)
        per = cols[self.setup_index]
        return per[:, 0], per[:, 1], per[:, 2], per[:, 3]


def _positive(value: float, key: str) -> float:
    try:
        out = float(value)
    except (TypeError, ValueError):
        out = math.nan
    if isinstance(value, bool) or not math.isfinite(out) or out <= 0:
        raise JobFileError(f"{key} = {value!r}: must be a number above 0")
    return out


def _ranges(lo: NDArray[np.int64], cnt: NDArray[np.int64]) -> NDArray[np.int64]:
    """``lo[i], ..., lo[i] + cnt[i] - 1`` for every ``i``, concatenated."""
    before = np.cumsum(cnt) - cnt
    return (np.repeat(lo - before, cnt) + np.arange(int(cnt.sum()))).astype(np.int64)


#: Query points handled at once by :func:`_pairs_within` (bounds memory).
_QUERIES_AT_ONCE = 1 << 14


def _pairs_within(qn: NDArray[np.float64], qe: NDArray[np.float64], pn: NDArray[np.float64],
                  pe: NDArray[np.float64], radius: float, r2: float,
                  first_only: bool = False) -> tuple[NDArray[np.int64], NDArray[np.int64], NDArray[np.float64]]:
    """Every (query, point) pair within ``radius`` (squared distance at most ``r2``, the square
    as the caller compares it), by a grid of cells of side at least ``radius``: each query
    looks only into its cell and the eight around it.

    Returns
    -------
    (q, p, d2)
        Query index, point index and squared distance of each pair, grouped by query in
        query order (``first_only``: one pair per query that has any).
    """
    empty = (np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64), np.zeros(0))
    if qn.size == 0 or pn.size == 0:
        return empty
    n0, e0 = float(min(pn.min(), qn.min())), float(min(pe.min(), qe.min()))
    extent = max(float(max(pn.max(), qn.max())) - n0, float(max(pe.max(), qe.max())) - e0, radius)
    g = max(radius * (1.0 + 1e-9), extent / 2.0**24)  # 2**24 cells a side at most: keys fit in int64
    px = np.floor((pe - e0) / g).astype(np.int64)
    py = np.floor((pn - n0) / g).astype(np.int64)
    rows = int(py.max()) + 3
    key = (px + 1) * rows + (py + 1)
    order = np.argsort(key, kind="stable")
    skey = key[order]
    qx = np.floor((qe - e0) / g).astype(np.int64)
    qy = np.floor((qn - n0) / g).astype(np.int64)
    out_q, out_p, out_d = [], [], []
    for c in range(0, qn.size, _QUERIES_AT_ONCE):  # chunks bound memory; each is vectorised
        sl = slice(c, c + _QUERIES_AT_ONCE)
        parts_q, parts_p = [], []
        for dx in (-1, 0, 1):
            for dy in (-1, 0, 1):
                k = (qx[sl] + dx + 1) * rows + (qy[sl] + dy + 1)
                lo = np.searchsorted(skey, k, side="left")
                cnt = np.searchsorted(skey, k, side="right") - lo
                parts_q.append(np.repeat(np.arange(c, c + k.size, dtype=np.int64), cnt))
                parts_p.append(order[_ranges(lo, cnt)])
        q = np.concatenate(parts_q)
        p = np.concatenate(parts_p)
        dn, de = pn[p] - qn[q], pe[p] - qe[q]
        d2 = dn * dn + de * de
        keep = d2 <= r2
        q, p, d2 = q[keep], p[keep], d2[keep]
        o = np.argsort(q, kind="stable")
        q, p, d2 = q[o], p[o], d2[o]
        if first_only and q.size:
            head = np.r_[True, q[1:] != q[:-1]]
            q, p, d2 = q[head], p[head], d2[head]
        out_q.append(q)
        out_p.append(p)
        out_d.append(d2)
    return np.concatenate(out_q), np.concatenate(out_p), np.concatenate(out_d)


def _shares_a_small_cell(n: NDArray[np.float64], e: NDArray[np.float64], radius: float) -> NDArray[np.bool_]:
    """Points whose square cell of diagonal just under ``radius`` holds another point at another
    spot: that point is within ``radius`` of them.  (False everywhere when the extent would
    need more than 2**24 cells a side.)
    """
    out = np.zeros(n.size, dtype=bool)
    side = radius / math.sqrt(2.0) * (1.0 - 1e-9)
    if n.size < 2 or not side > 0:
        return out
    n0, e0 = float(n.min()), float(e.min())
    if max(float(n.max()) - n0, float(e.max()) - e0) / side >= 2.0**24:
        return out
    ix = np.floor((e - e0) / side).astype(np.int64)
    iy = np.floor((n - n0) / side).astype(np.int64)
    key = ix * (int(iy.max()) + 1) + iy
    o = np.lexsort((e, n, key))
    k, sn_, se_ = key[o], n[o], e[o]
    new_spot = np.r_[True, (k[1:] != k[:-1]) | (sn_[1:] != sn_[:-1]) | (se_[1:] != se_[:-1])]
    starts = np.flatnonzero(np.r_[True, k[1:] != k[:-1]])
    spots = np.add.reduceat(new_spot.astype(np.int64), starts)
    size = np.diff(np.r_[starts, k.size])
    out[o] = np.repeat(spots >= 2, size)
    return out


def _backsights(cn: NDArray[np.float64], ce: NDArray[np.float64], occ: NDArray[np.int64],
                mb2: float) -> NDArray[np.int64]:
    """Backsight of each occupied point ``occ`` (indices in id order): the farthest other
    control point within max_backsight, the smallest id of equals; each has one (a candidate).
    """
    q, p, d2 = _pairs_within(cn[occ], ce[occ], cn, ce, math.sqrt(mb2), mb2)
    ok = ((cn[occ][q] != cn[p]) | (ce[occ][q] != ce[p])) & (d2 <= mb2)
    q, p, d2 = q[ok], p[ok], d2[ok]
    first = np.lexsort((p, -d2, q))  # per occupied point: farthest first, then the smallest id
    first = first[np.r_[True, q[first][1:] != q[first][:-1]]] if first.size else first
    out = np.zeros(occ.size, dtype=np.int64)
    out[q[first]] = p[first]
    return out


def choose_setups(
    control_ids: Sequence[str],
    control_n: ArrayLike,
    control_e: ArrayLike,
    stake_n: ArrayLike,
    stake_e: ArrayLike,
    max_distance: float,
    max_backsight: float,
    stake_ids: Sequence[str] | None = None,
    r95: R95 | None = None,
    tolerance: float | None = None,
) -> SetupPlan:
    """Choose setups among control points to reach every stake.

    Parameters
    ----------
    control_ids : sequence of str
        Control point ids, unique; ties are broken by their string order.
    control_n, control_e : array
        Control point grid northings and eastings (job units).
    stake_n, stake_e : array
        Stake grid northings and eastings (job units).
    max_distance : float
        Longest sight from a setup to a stake (job units, inclusive):
        ``[setup] max_distance``.
    max_backsight : float
        Longest backsight (job units, inclusive): ``[setup] max_backsight``.
    stake_ids : sequence of str, optional
        Stake point ids, used only to name a stake in an error.
    r95, tolerance : optional
        Both given: the predicted r95 of stakes from setups and the
        horizontal tolerance (job units); a candidate then reaches a stake
        only within the tolerance (see the module's rule), and each stake
        goes to the chosen setup with the smallest r95.

    Returns
    -------
    SetupPlan
        The setups in the order chosen and each stake's setup index.

    Raises
    ------
    GeometryError
        If some stake is out of ``max_distance`` of every control point that
        has a backsight within ``max_backsight``; names the first such stake.
    JobFileError
        For a duplicate control id, or a distance limit that is not a
        number above 0.
    """
    md2 = _positive(max_distance, "setup.max_distance") ** 2
    mb2 = _positive(max_backsight, "setup.max_backsight") ** 2
    ids = [str(i) for i in control_ids]
    cn_in = np.asarray(control_n, dtype=float).ravel()
    ce_in = np.asarray(control_e, dtype=float).ravel()
    sn = np.asarray(stake_n, dtype=float).ravel()
    se = np.asarray(stake_e, dtype=float).ravel()
    if not (len(ids) == cn_in.size == ce_in.size):
        raise ValueError(
            f"control ids, northings and eastings differ in length: {len(ids)}, {cn_in.size}, {ce_in.size}"
        )
    if sn.size != se.size:
        raise ValueError(f"stake northings and eastings differ in length: {sn.size}, {se.size}")
    if stake_ids is not None and len(stake_ids) != sn.size:
        raise ValueError(f"stake ids and coordinates differ in length: {len(stake_ids)}, {sn.size}")
    # everything below works in id order, so "first of equals" is "smallest id"
    order = sorted(range(len(ids)), key=ids.__getitem__)
    sid = [ids[i] for i in order]
    for a, b in itertools.pairwise(sid):
        if a == b:
            raise JobFileError(f"control.point id = {a!r}: appears more than once")
    n_stakes = sn.size
    if n_stakes == 0:
        return SetupPlan((), np.zeros(0, dtype=np.int64))
    cn, ce = cn_in[order], ce_in[order]
    n_ctrl = cn.size

    # 1. candidates: the control points within max_distance of some stake (no other can serve one) that
    # have another control point within max_backsight (not on the same spot); both found by a grid of
    # cells, so the cost grows with the points near each one, not with the square of their number
    near_stake = np.zeros(n_ctrl, dtype=bool)
    ps, pp, pd2 = _pairs_within(sn, se, cn, ce, math.sqrt(md2), md2)  # stakes are few: they do the looking
    near_stake[pp] = True
    has_bs = _shares_a_small_cell(cn, ce, math.sqrt(mb2)) & near_stake  # dense areas: no pairs needed
    rel = np.flatnonzero(near_stake & ~has_bs)
    qi, p, d2 = _pairs_within(cn[rel], ce[rel], cn, ce, math.sqrt(mb2), mb2)
    ok = ((cn[rel][qi] != cn[p]) | (ce[rel][qi] != ce[p])) & (d2 <= mb2)
    has_bs[rel[qi[ok]]] = True
    cand = np.flatnonzero(has_bs)  # indices into id order, ascending = id order
    by_precision = r95 is not None and tolerance is not None
    # each candidate's backsight (step 4), needed up front when precision decides the reach
    cand_bs = _backsights(cn, ce, cand, mb2) if by_precision else np.zeros(0, dtype=np.int64)

    # 2. reach: the (stake, candidate) pairs within max_distance (grouped by stake), the same squared
    # distances a stakes x candidates matrix holds, but only the pairs the grid finds near each stake
    position = np.full(n_ctrl, -1, dtype=np.int64)
    position[cand] = np.arange(cand.size)
    is_cand = position[pp] >= 0
    ps, pc, pd2 = ps[is_cand], position[pp[is_cand]], pd2[is_cand]
    cost = pd2  # what picks a stake's setup in step 3: the distance (squared), or the r95
    if by_precision:
        assert r95 is not None and tolerance is not None
        occ_c, bs_c = cand[pc], cand_bs[pc]
        cost = np.asarray(r95(cn[occ_c], ce[occ_c], cn[bs_c], ce[bs_c], sn[ps], se[ps]), dtype=float)
        within = cost <= tolerance
        within_tol = np.zeros(n_stakes, dtype=bool)  # stakes some candidate reaches within the tolerance
        within_tol[ps[within]] = True
        keep = within | ~within_tol[ps]  # within the tolerance, or by distance alone where none is
        ps, pc, cost = ps[keep], pc[keep], cost[keep]
    reachable = np.zeros(n_stakes, dtype=bool)
    reachable[ps] = True
    if not reachable.all():
        i = int(np.argmin(reachable))
        name = repr(str(stake_ids[i])) if stake_ids is not None else f"#{i + 1}"
        raise GeometryError(
            f"stake {name} at N {float(sn[i])!r} E {float(se[i])!r}: no control point within "
            f"setup.max_distance = {max_distance!r} has a backsight within setup.max_backsight = {max_backsight!r}"
        )

    # greedy cover: each candidate's count of stakes not yet reached, lowered for every candidate
    # that reaches a stake when a choice reaches it; argmax returns the first of equal counts, i.e.
    # the smallest id
    counts = np.bincount(pc, minlength=cand.size)
    by_cand = np.argsort(pc, kind="stable")
    cand_pairs = counts.copy()
    cand_first = np.cumsum(cand_pairs) - cand_pairs
    stake_count_pairs = np.bincount(ps, minlength=n_stakes)
    stake_first = np.cumsum(stake_count_pairs) - stake_count_pairs
    unreached = np.ones(n_stakes, dtype=bool)
    left = n_stakes
    chosen: list[int] = []  # positions in cand, in order of choice
    while left:
        best = int(np.argmax(counts))
        chosen.append(best)
        mine = ps[by_cand[cand_first[best]:cand_first[best] + cand_pairs[best]]]
        new = mine[unreached[mine]]
        unreached[new] = False
        left -= new.size
        np.subtract.at(counts, pc[_ranges(stake_first[new], stake_count_pairs[new])], 1)

    # 3. nearest chosen setup (with a precision rule: the one reaching it with the
    # smallest r95); ties by id: among each stake's pairs with a chosen setup, the least cost,
    # then the smallest id.  Every stake has one: a chosen setup reached it.
    chosen_at = np.full(cand.size, -1, dtype=np.int64)
    chosen_at[np.asarray(chosen, dtype=np.int64)] = np.arange(len(chosen))
    mine_ = chosen_at[pc] >= 0
    s_, c_, q_ = ps[mine_], pc[mine_], cost[mine_]
    first = np.lexsort((c_, q_, s_))
    first = first[np.r_[True, s_[first][1:] != s_[first][:-1]]]
    nearest = chosen_at[c_[first]]
    counts_all = np.bincount(nearest, minlength=len(chosen))
    kept = [k for k in range(len(chosen)) if counts_all[k] > 0]  # drop setups nearest to no stake
    renumber = np.full(len(chosen), -1, dtype=np.int64)
    renumber[kept] = np.arange(len(kept))
    setup_index = renumber[nearest]

    occ = cand[[chosen[k] for k in kept]]  # id-order indices of the kept setups, in order of choice
    dist = np.sqrt((sn - cn[occ][setup_index]) ** 2 + (se - ce[occ][setup_index]) ** 2)
    farthest = np.zeros(len(kept))
    np.maximum.at(farthest, setup_index, dist)
    stake_count = np.bincount(setup_index, minlength=len(kept))

    # 4. backsight: the farthest other control point within max_backsight
    bs = _backsights(cn, ce, occ, mb2)

    setups = tuple(
        Setup(
            occupied_id=sid[o],
            occupied_n=float(cn[o]),
            occupied_e=float(ce[o]),
            backsight_id=sid[b],
            backsight_n=float(cn[b]),
            backsight_e=float(ce[b]),
            stake_count=int(c),
            farthest_sight=float(f),
        )
        for o, b, c, f in zip(occ.tolist(), bs.tolist(), stake_count.tolist(), farthest.tolist())
    )
    return SetupPlan(setups, setup_index)
