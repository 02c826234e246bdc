"""Staked shots against design (numpy, no I/O).

Matching (outputs contract): shots are taken in file order, first by point
number, then, for numbers no design point has, by the nearest design point
within the search radius.  A shot whose design point is already matched is
a ``duplicate`` (reported with its residuals); one with no design point
within reach is ``unmatched``.  Nothing is dropped.

Nearest-point search uses :class:`PointIndex`, a quadtree of the design
points laid out as one array in Morton order: each shot descends only into
the cells that may hold a point nearer than one it has already seen, so a
check costs about the number of shots times the depth of the tree and the
points near each shot, not shots times design points.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .alignment import Alignment
from .shots import Shots
from .staking import StakePoints

__all__ = ["CheckResult", "check_shots", "STATUSES", "PointIndex", "nearest_within"]

#: Query points searched at once: bounds memory.
_QUERIES_AT_ONCE = 1 << 15

STATUSES = ("ok", "out", "duplicate", "unmatched")


@dataclass(frozen=True)
class CheckResult:
    """Per-shot results in file order; residuals are NaN where not defined."""

    design_index: NDArray[np.int64]  # -1 when unmatched
    matched_by: list[str]  # "number", "nearest" or ""
    station: NDArray[np.float64]
    offset: NDArray[np.float64]
    d_northing: NDArray[np.float64]
    d_easting: NDArray[np.float64]
    horizontal_error: NDArray[np.float64]
    d_station: NDArray[np.float64]
    d_offset: NDArray[np.float64]
    d_elevation: NDArray[np.float64]
    status: list[str]
    not_staked: list[int]  # design indices that no shot matched
    horizontal_tolerance: float
    vertical_tolerance: float | None
    search_radius: float

    def counts(self) -> dict[str, int]:
        """Number of shots per status."""
        return {s: self.status.count(s) for s in STATUSES}

    @property
    def all_ok(self) -> bool:
        """True when every shot is within tolerance (exit code 0)."""
        return all(s == "ok" for s in self.status)


# ---- nearest point within a radius ----------------------------------------------------------------
def _spread_bits(v: NDArray[np.int64]) -> NDArray[np.uint64]:
    """The bits of ``v`` (< 2**32) moved to the even bit positions."""
    x = v.astype(np.uint64) & np.uint64(0xFFFFFFFF)
    for shift, mask in ((16, 0x0000FFFF0000FFFF), (8, 0x00FF00FF00FF00FF), (4, 0x0F0F0F0F0F0F0F0F),
                        (2, 0x3333333333333333), (1, 0x5555555555555555)):
        x = (x | (x << np.uint64(shift))) & np.uint64(mask)
    return x


def _group_starts(q: NDArray[np.int64] | NDArray[np.uint64]) -> NDArray[np.int64]:
    """Where each run of equal values starts in a non-decreasing array."""
    return np.flatnonzero(np.r_[True, q[1:] != q[:-1]]) if q.size else np.zeros(0, dtype=np.int64)


@dataclass(frozen=True)
class PointIndex:
    """A quadtree of points laid out as one array sorted by Morton (Z-order) code.

    Points are binned in square cells of side ``g`` (job units) from
    ``(e0, n0)``; the Morton code of a cell interleaves the bits of its
    column and row, so a cell of level ``L`` (side ``g * 2**L``) holds the
    points of one contiguous run of ``order``.  ``starts[L]`` are the runs'
    starts for the occupied cells of level ``L``, ``column[L]``/``row[L]``
    their position, and ``children[L]`` where each cell's occupied
    quarter-cells begin in level ``L - 1`` (one sentinel at the end).
    """

    northing: NDArray[np.float64]
    easting: NDArray[np.float64]
    g: float
    e0: float
    n0: float
    order: NDArray[np.int64]
    starts: tuple[NDArray[np.int64], ...]
    column: tuple[NDArray[np.int64], ...]
    row: tuple[NDArray[np.int64], ...]
    children: tuple[NDArray[np.int64], ...]

    @classmethod
    def build(cls, northing: NDArray[np.float64], easting: NDArray[np.float64], radius: float) -> PointIndex:
        """Index points (job units; at least one) for searches within ``radius`` (job units, > 0).

        The finest cell is about twice the typical spacing of consecutive
        points (in a stake set, neighbours), at most the radius.
        """
        pn = np.asarray(northing, dtype=np.float64).ravel()
        pe = np.asarray(easting, dtype=np.float64).ravel()
        e0, n0 = float(pe.min()), float(pn.min())
        extent = max(float(pn.max()) - n0, float(pe.max()) - e0)
        spacing = float(np.median(np.hypot(np.diff(pn), np.diff(pe)))) if pn.size > 1 else radius
        g = min(radius, 2.0 * spacing) if spacing > 0 else radius
        g = max(g, extent / 2.0**24)  # columns and rows below 2**25
        ix = np.floor((pe - e0) / g).astype(np.int64)
        iy = np.floor((pn - n0) / g).astype(np.int64)
        z = _spread_bits(ix) | (_spread_bits(iy) << np.uint64(1))
        order = np.argsort(z, kind="stable")
        zs = z[order]
        top = max(int(ix.max()), int(iy.max()), 1).bit_length()
        starts, column, row, children = [], [], [], []
        at = _group_starts(zs)  # level 0: runs of equal codes
        for level in range(top + 1):  # one step per level, vectorised inside
            if level:
                c = zs[at] >> np.uint64(2 * level)
                parent = at[_group_starts(c)]
                children.append(np.r_[np.searchsorted(at, parent), at.size].astype(np.int64))
                at = parent
            starts.append(at.astype(np.int64))
            column.append(ix[order[at]] >> level)
            row.append(iy[order[at]] >> level)
        children.insert(0, np.zeros(0, dtype=np.int64))
        return cls(pn, pe, g, e0, n0, order.astype(np.int64), tuple(starts), tuple(column), tuple(row),
                   tuple(children))

    def nearest_within(self, qn: NDArray[np.float64], qe: NDArray[np.float64],
                       radius: float) -> tuple[NDArray[np.int64], NDArray[np.float64]]:
        """The nearest indexed point within ``radius`` of each query point.

        From the root down, each query keeps the cells that may hold a point
        nearer than the nearest point it has seen (each cell's first point
        is one) and than the radius; at the finest level it compares with
        the points of the cells kept.

        Parameters
        ----------
        qn, qe : array of float
            Query northings and eastings, job units.
        radius : float
            Search radius, job units; a point at exactly this distance counts.

        Returns
        -------
        (index, distance)
            Index of the nearest point (-1 where none is within the radius;
            a tie goes to the lower index, as ``argmin`` does) and its
            distance ``hypot(dn, de)`` (NaN where none).
        """
        qn = np.asarray(qn, dtype=np.float64).ravel()
        qe = np.asarray(qe, dtype=np.float64).ravel()
        idx = np.full(qn.size, -1, dtype=np.int64)
        dist = np.full(qn.size, np.nan)
        pn, pe = self.northing, self.easting
        near = np.flatnonzero((qn >= pn.min() - radius) & (qn <= pn.max() + radius)
                              & (qe >= pe.min() - radius) & (qe <= pe.max() + radius))
        for c in range(0, near.size, _QUERIES_AT_ONCE):  # chunks bound memory; each is vectorised
            qs = near[c:c + _QUERIES_AT_ONCE]
            i, d = self._search(qn[qs], qe[qs], radius)
            idx[qs], dist[qs] = i, d
        return idx, dist

    def _search(self, qn: NDArray[np.float64], qe: NDArray[np.float64],
                radius: float) -> tuple[NDArray[np.int64], NDArray[np.float64]]:
        pn, pe, order = self.northing, self.easting, self.order
        # slack for the rounding of cell bounds: far below any distance that matters
        slack = 1e-12 * (abs(self.e0) + abs(self.n0) + self.g * 2.0**26)
        m = qn.size
        best = np.full(m, np.inf)  # distance to the nearest point seen: a bound on the answer
        q = np.arange(m, dtype=np.int64)  # (query, cell) pairs, grouped by query
        cell = np.zeros(m, dtype=np.int64)
        for level in range(len(self.starts) - 1, -1, -1):  # one step per level, vectorised inside
            side = self.g * 2.0**level
            x0 = self.e0 + self.column[level][cell] * side
            y0 = self.n0 + self.row[level][cell] * side
            lb = np.hypot(np.maximum(np.maximum(x0 - qe[q], qe[q] - (x0 + side)), 0.0),
                          np.maximum(np.maximum(y0 - qn[q], qn[q] - (y0 + side)), 0.0))
            first = order[self.starts[level][cell]]
            ub = np.hypot(qn[q] - pn[first], qe[q] - pe[first])
            if q.size:
                heads = _group_starts(q)
                best[q[heads]] = np.minimum(best[q[heads]], np.minimum.reduceat(ub, heads))
            keep = lb - slack <= np.minimum(best[q], radius)
            q, cell = q[keep], cell[keep]
            if level == 0:
                break
            lo = self.children[level][cell]
            cnt = self.children[level][cell + 1] - lo
            q, cell = np.repeat(q, cnt), _ranges(lo, cnt)
        # the points of the finest cells kept
        lo = self.starts[0][cell]
        hi = np.r_[self.starts[0], order.size][cell + 1]
        q = np.repeat(q, hi - lo)
        p = order[_ranges(lo, hi - lo)]
        d = np.hypot(qn[q] - pn[p], qe[q] - pe[p])
        keep = d <= radius
        q, p, d = q[keep], p[keep], d[keep]
        idx = np.full(m, -1, dtype=np.int64)
        dist = np.full(m, np.nan)
        if q.size:
            heads = _group_starts(q)
            dmin = np.minimum.reduceat(d, heads)
            size = np.diff(np.r_[heads, q.size])
            tie = d == np.repeat(dmin, size)
            pmin = np.minimum.reduceat(np.where(tie, p, np.iinfo(np.int64).max), heads)
            idx[q[heads]], dist[q[heads]] = pmin, dmin
        return idx, dist


def _ranges(lo: NDArray[np.int64], cnt: NDArray[np.int64]) -> NDArray[np.int64]:
    """``lo[i], lo[i] + 1, ..., lo[i] + cnt[i] - 1`` for every ``i``, concatenated."""
    total = int(cnt.sum())
    before = np.cumsum(cnt) - cnt
    return (np.repeat(lo - before, cnt) + np.arange(total)).astype(np.int64)


def nearest_within(pn: NDArray[np.float64], pe: NDArray[np.float64], qn: NDArray[np.float64],
                   qe: NDArray[np.float64], radius: float) -> tuple[NDArray[np.int64], NDArray[np.float64]]:
    """The nearest of the points ``(pn, pe)`` within ``radius`` of each query point.

    Parameters
    ----------
    pn, pe : array of float
        Northings and eastings of the points searched, job units.
    qn, qe : array of float
        Northings and eastings of the query points, job units.
    radius : float
        Search radius, job units (> 0); a point at exactly this distance counts.

    Returns
    -------
    (index, distance)
        As :meth:`PointIndex.nearest_within`: -1 and NaN where no point is
        within the radius; a tie goes to the lower index.
    """
    qn = np.asarray(qn, dtype=np.float64).ravel()
    if np.asarray(pn).size == 0 or qn.size == 0:
        return np.full(qn.size, -1, dtype=np.int64), np.full(qn.size, np.nan)
    return PointIndex.build(pn, pe, radius).nearest_within(qn, qe, radius)


def check_shots(alignment: Alignment, design: StakePoints, design_elevation: NDArray[np.float64] | None,
                shots: Shots, horizontal_tolerance: float, vertical_tolerance: float | None,
                search_radius: float | None = None) -> CheckResult:
    """Match shots to design points and compute residuals and status.

    Parameters
    ----------
    alignment, design : the built alignment and its stake points.
    design_elevation : design elevations per design point, or None.
    shots : the staked shots, file order.
    horizontal_tolerance, vertical_tolerance : job units.
    search_radius : job units; default 10 x the horizontal tolerance.
    """
    radius = 10.0 * horizontal_tolerance if search_radius is None else search_radius
    m = len(shots)
    by_id = {p: i for i, p in enumerate(design.point)}
    idx = np.full(m, -1, dtype=np.int64)
    how = [""] * m
    taken = np.zeros(len(design), dtype=bool)
    dup = np.zeros(m, dtype=bool)
    for k, pid in enumerate(shots.point):  # pass 1: by point number, in file order
        i = by_id.get(pid)
        if i is None:
            continue
        idx[k], how[k] = i, "number"
        dup[k] = taken[i]
        taken[i] = True
    rest = np.where(idx < 0)[0]
    if rest.size:
        near, _ = nearest_within(design.northing, design.easting, shots.northing[rest], shots.easting[rest], radius)
        for k, i in zip(rest.tolist(), near.tolist()):  # pass 2: nearest, in file order
            if i >= 0:
                idx[k], how[k] = i, "nearest"
                dup[k] = taken[i]
                taken[i] = True
    matched = idx >= 0
    safe = np.where(matched, idx, 0)
    st, off, _ = alignment.locate(shots.northing, shots.easting)
    dst, doff, _ = alignment.locate(design.northing[safe], design.easting[safe])
    nan = np.full(m, np.nan)
    dn = np.where(matched, shots.northing - design.northing[safe], nan)
    de = np.where(matched, shots.easting - design.easting[safe], nan)
    hz = np.hypot(dn, de)
    if design_elevation is not None:
        dz = np.where(matched, shots.elevation - design_elevation[safe], nan)
    else:
        dz = nan
    with np.errstate(invalid="ignore"):
        bad = hz > horizontal_tolerance
        if vertical_tolerance is not None:
            bad |= np.isfinite(dz) & (np.abs(dz) > vertical_tolerance)
    status = np.where(~matched, "unmatched", np.where(dup, "duplicate", np.where(bad, "out", "ok"))).tolist()
    return CheckResult(
        design_index=idx, matched_by=how, station=st, offset=off, d_northing=dn, d_easting=de,
        horizontal_error=hz, d_station=np.where(matched, st - dst, nan), d_offset=np.where(matched, off - doff, nan),
        d_elevation=dz, status=status, not_staked=np.where(~taken)[0].tolist(),
        horizontal_tolerance=horizontal_tolerance, vertical_tolerance=vertical_tolerance, search_radius=radius,
    )
