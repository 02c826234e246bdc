"""Staked shots against design (numpy, no I/O).

Matching (outputs contract), shots taken in file order:

1. **By number.**  A shot whose id is a design point's id is matched to it.
   A point shot again later in the file (a re-stake) is governed by its
   *last* shot; the earlier ones are ``superseded`` (reported with their
   residuals, not a failure).
2. **Control.**  A shot whose id is a control point's id (the occupied
   point, a point backsight: :func:`job_control_points`) is a check on
   control, ``control``: its residual is against the control coordinates,
   and it needs attention only beyond the tolerances.  An id that names
   both a design point and a control point goes to the nearer of the two
   (a tie to the design point).
3. **By position.**  A shot whose id is neither is matched to the nearest
   design point or control point within the search radius (the nearer of
   the two; a tie to the design point).  A design point already taken (by
   number, or by an earlier shot by position) makes the shot a
   ``duplicate``, reported with its residuals.  Beyond reach of both it is
   ``unmatched``.

Nothing is dropped.  ``ok`` and ``out`` are the governing shots of design
points, within or beyond tolerance.  The design points still to set
(:attr:`CheckResult.restake`) are those whose governing shot is ``out`` —
including a point whose earlier shot was good and whose later one is
out — and those no shot reached.

Nearest-point search uses :class:`PointIndex`, a quadtree of the design
points laid out as one array in Morton order: each shot descends only into
the cells that may hold a point nearer than one it has already seen, so a
check costs about the number of shots times the depth of the tree and the
points near each shot, not shots times design points.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from functools import cached_property

import numpy as np
from numpy.typing import NDArray

from .alignment import Alignment
from .errors import StakedFileError
from .job import Job
from .shots import Shots
from .staking import StakePoints

__all__ = ["CheckResult", "check_shots", "STATUSES", "ControlRow", "job_control_points", "PointIndex",
           "nearest_within", "design_index_of_ids", "check_column_order", "Matches", "match_shots",
           "locate_near", "along_across"]

STATUSES = ("ok", "out", "misnumbered", "superseded", "duplicate", "control", "unmatched")
_STATUS_CODE = {s: i for i, s in enumerate(STATUSES)}

#: A control point as the check takes it: id, northing, easting (job units),
#: elevation (job units) or ``None``.
ControlRow = tuple[str, float, float, float | None]

#: Query points searched at once: bounds memory.
_QUERIES_AT_ONCE = 1 << 15


@dataclass(frozen=True)
class CheckResult:
    """Per-shot results in file order; residuals are NaN where not defined.

    ``design_index`` is the matched design point (-1 for none),
    ``control_index`` the matched control point (-1 for none);
    ``matched_by`` is ``number``, ``nearest`` or empty; ``fails`` names
    the tolerance an ``out`` or ``control`` shot fails (``horizontal``,
    ``vertical``, ``both``) and is empty otherwise; ``related`` is, for a
    ``superseded`` or ``duplicate`` shot, the index of the shot that
    governs its design point (-1 otherwise).  Stations are internal
    stations; ``d_*`` are shot minus design (or control).
    """

    design_index: NDArray[np.int64]
    control_index: NDArray[np.int64]
    control_ids: tuple[str, ...]
    matched_by: list[str]
    station: NDArray[np.float64]
    offset: NDArray[np.float64]
    d_northing: NDArray[np.float64]
    d_easting: NDArray[np.float64]
    horizontal_error: NDArray[np.float64]
    d_station: NDArray[np.float64]
    d_offset: NDArray[np.float64]
    d_elevation: NDArray[np.float64]
    status: list[str]
    fails: list[str]
    related: NDArray[np.int64]
    not_staked: NDArray[np.int64]  # design indices no shot matched, point order
    restake: NDArray[np.int64]  # design indices still to set (out, or not staked), point order
    horizontal_tolerance: float
    vertical_tolerance: float | None
    search_radius: float
    #: Shot minus design point along and square to the alignment's direction at the design point
    #: (grid units, positive ahead and right); NaN for shots not matched to a design point.
    d_along: NDArray[np.float64]
    d_across: NDArray[np.float64]
    #: ``d_along``/``d_across`` as ground distances (divided by the combined factor at the stake):
    #: what the crew moves the stake by.
    ground_along: NDArray[np.float64]
    ground_across: NDArray[np.float64]
    #: Shots on the ground beside a stake (``[check] ground_codes``): checked horizontally only,
    #: their cut or fill reported for marking, never a restake for their elevation.
    ground: NDArray[np.bool_] | None = None
    #: For a ``misnumbered`` shot the design index of the number it was stored under (-1 otherwise).
    stored_as: NDArray[np.int64] | None = None
    #: With several alignments: the alignment (index in job order) each shot's station and offset are
    #: on, that of the design point it matched, else the nearest; None with one alignment.
    located_on: NDArray[np.int64] | None = None

    def counts(self) -> dict[str, int]:
        """Number of shots per status; ``misnumbered`` only where some shot is (the other statuses always)."""
        counts = {s: self.status.count(s) for s in STATUSES}
        if not counts["misnumbered"]:
            del counts["misnumbered"]
        return counts

    def needs_attention(self, k: int) -> bool:
        """Whether shot ``k`` needs a person: out, misnumbered, duplicate, unmatched, or control beyond
        tolerance (:attr:`attention`).
        """
        return bool(self.attention[k])

    def among(self, statuses: Sequence[str]) -> NDArray[np.bool_]:
        """Whether each shot's status is one of ``statuses`` (every shot at once)."""
        out: NDArray[np.bool_] = np.isin(self._status_codes, [_STATUS_CODE[s] for s in statuses])
        return out

    @cached_property
    def _status_codes(self) -> NDArray[np.int8]:
        return np.fromiter(map(_STATUS_CODE.__getitem__, self.status), dtype=np.int8, count=len(self.status))

    @cached_property
    def attention(self) -> NDArray[np.bool_]:
        """Whether each shot needs a person: out, misnumbered, duplicate, unmatched, or control beyond
        tolerance.
        """
        fails = np.fromiter(map(bool, self.fails), dtype=bool, count=len(self.fails))
        beyond: NDArray[np.bool_] = self.among(["control"]) & fails
        return self.among(["out", "misnumbered", "duplicate", "unmatched"]) | beyond

    @cached_property
    def within(self) -> NDArray[np.bool_]:
        """The shots within tolerance: ``ok``, or ``control`` and not beyond tolerance."""
        return self.among(["ok", "control"]) & ~self.attention

    @cached_property
    def governing(self) -> NDArray[np.bool_]:
        """The shots that govern their design point: ``ok`` or ``out``."""
        return self.among(["ok", "out"])

    @property
    def all_ok(self) -> bool:
        """True when no shot needs attention (exit code 0)."""
        return not bool(self.attention.any())


def job_control_points(job: Job) -> list[ControlRow]:
    """The control points of a job, as :func:`check_shots` takes them.

    The ``[control]`` points (file, LandXML points, inline), then the
    points of every listed setup (occupied, and a backsight given as a
    point) not already among them.

    Parameters
    ----------
    job : Job
        The read job.

    Returns
    -------
    list of (id, northing, easting, elevation)
        Coordinates and elevation in job units; elevation ``None`` where
        the job gives none.  In the job's order, each id once.
    """
    return [(cp.id, cp.northing, cp.easting, cp.elevation) for cp in job.control_points()]


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


# ---- ids ----------------------------------------------------------------------------------------------
def design_index_of_ids(ids: Sequence[str], prefix: str, first_point: int, count: int) -> NDArray[np.int64]:
    """The design point each id names exactly (``prefix`` + number), -1 for none.

    Design points are numbered ``first_point`` upwards in point order, so an
    id is parsed rather than looked up; ``P012`` does not name ``P12``.

    Parameters
    ----------
    ids : sequence of str
        Shot ids as read.
    prefix : str
        The job's ``point_prefix``.
    first_point : int
        Number of the first design point.
    count : int
        Number of design points.
    """
    a = _id_array(ids, len(prefix) + 19)
    if a.size == 0:
        return np.zeros(0, dtype=np.int64)
    has = np.char.startswith(a, prefix) if prefix else np.ones(a.size, dtype=bool)
    rest = np.char.replace(a, prefix, "", 1) if prefix else a
    rest = np.where(has, rest, "")
    ascii_digits = (np.char.str_len(rest) > 0) & (np.char.str_len(np.char.strip(rest, "0123456789")) == 0)
    ok = has & ascii_digits & (np.char.str_len(rest) <= 18)
    num = np.where(ok, rest, "0").astype(np.int64)
    ok &= np.char.add(prefix, num.astype(str)) == a  # the canonical spelling only
    idx = num - first_point
    ok &= (idx >= 0) & (idx < count)
    return np.where(ok, idx, -1).astype(np.int64)


def stake_index_of_ids(ids: Sequence[str], stakes: StakePoints) -> NDArray[np.int64]:
    """The stake each id names exactly, -1 for none: a numbered stake by its number
    (:func:`design_index_of_ids`), a stake the job named by its id.
    """
    idx = design_index_of_ids(ids, stakes.prefix, stakes.first_point, stakes.numbered)
    if stakes.layout is not None and stakes.layout.names:
        at = {name: stakes.numbered + j for j, name in enumerate(stakes.layout.names)}
        given = np.array([at.get(p, -1) for p in ids], dtype=np.int64)
        idx = np.where(idx >= 0, idx, given)
    return idx


def _id_array(ids: Sequence[str], longest: int) -> NDArray[np.str_]:
    """Ids as a numpy string array; an id longer than ``longest`` (which can
    name nothing) becomes empty (which names nothing), so one long id does
    not widen every element.
    """
    return np.asarray([p if len(p) <= longest else "" for p in ids], dtype=str)


def _control_index_of_ids(ids: Sequence[str], control_ids: Sequence[str]) -> NDArray[np.int64]:
    if len(ids) == 0 or not control_ids:
        return np.full(len(ids), -1, dtype=np.int64)
    a = _id_array(ids, max(len(c) for c in control_ids))
    c = np.asarray(list(control_ids), dtype=str)
    o = np.argsort(c, kind="stable")
    at = np.minimum(np.searchsorted(c[o], a), c.size - 1)
    return np.where(c[o][at] == a, o[at], -1).astype(np.int64)


# ---- swapped columns -----------------------------------------------------------------------------------
def check_column_order(design_n: NDArray[np.float64], design_e: NDArray[np.float64],
                       control: Sequence[ControlRow], shots: Shots, search_radius: float, name: str) -> None:
    """Refuse a staked file read with northing and easting swapped.

    The job's extent is the box of its design and control points, padded
    by a quarter of its larger side and the search radius.  When most shots
    lie outside it as read but most would lie inside it with northing and
    easting swapped, the file was exported easting-first (or ``--columns``
    has them the wrong way round).

    Raises
    ------
    StakedFileError
        Naming the counts, the extent and the ``--columns`` to give.
    """
    n = np.concatenate([design_n, np.array([c[1] for c in control], dtype=np.float64)])
    e = np.concatenate([design_e, np.array([c[2] for c in control], dtype=np.float64)])
    m = len(shots)
    if n.size == 0 or m == 0:
        return
    n0, n1, e0, e1 = float(n.min()), float(n.max()), float(e.min()), float(e.max())
    pad = 0.25 * max(n1 - n0, e1 - e0) + search_radius

    def inside(qn: NDArray[np.float64], qe: NDArray[np.float64]) -> int:
        return int(np.count_nonzero((qn >= n0 - pad) & (qn <= n1 + pad) & (qe >= e0 - pad) & (qe <= e1 + pad)))

    outside = m - inside(shots.northing, shots.easting)
    swapped = inside(shots.easting, shots.northing)
    if 2 * outside <= m or 2 * swapped <= m:
        return
    cols = list(shots.columns)
    i, j = cols.index("northing"), cols.index("easting")
    cols[i], cols[j] = cols[j], cols[i]
    how = {"header": "as its header names them", "--columns": "as --columns gave them"}.get(
        shots.columns_from, "in the default order")
    raise StakedFileError(
        f"staked file {name!r}: {outside} of {m} shots lie far outside the job (northing {n0:.1f} to {n1:.1f}, "
        f"easting {e0:.1f} to {e1:.1f}) but {swapped} would lie inside it with northing and easting swapped; "
        f"the columns were read as {','.join(shots.columns)} ({how}); if the file is easting first, give "
        f"--columns {','.join(cols)}"
    )


# ---- the check --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Matches:
    """How shots (file order) are matched, before any residual.

    ``design_index``/``control_index``: the design or control point matched
    (-1 for none; at most one of the two); ``by_number``: matched by id
    (else by position); ``superseded``/``duplicate`` as in the module
    docstring; ``related``: for those two, the shot governing the design
    point (-1 otherwise); ``governor``: for each design point, its
    governing shot (-1: not staked).
    """

    design_index: NDArray[np.int64]
    control_index: NDArray[np.int64]
    by_number: NDArray[np.bool_]
    superseded: NDArray[np.bool_]
    duplicate: NDArray[np.bool_]
    related: NDArray[np.int64]
    governor: NDArray[np.int64]


def match_shots(ids: Sequence[str], northing: NDArray[np.float64], easting: NDArray[np.float64], prefix: str,
                first_point: int, design_northing: NDArray[np.float64], design_easting: NDArray[np.float64],
                control: Sequence[ControlRow], radius: float, by_id: NDArray[np.int64] | None = None) -> Matches:
    """Match shots to design and control points (the rules of the module docstring).

    Parameters
    ----------
    ids : sequence of str
        Shot ids, file order.
    northing, easting : array of float
        Shot coordinates, job units.
    prefix, first_point : str, int
        Design point ids are ``prefix`` + (``first_point`` + index).
    design_northing, design_easting : array of float
        Design points in point order, job units.
    control : sequence of (id, northing, easting, elevation)
        Control points, job units.
    radius : float
        Search radius for shots matched by position, job units.
    by_id : array of int, optional
        The design point each id names (-1: none), found by the caller
        (:func:`stake_index_of_ids`: listed points' own ids, the stakes of
        several alignments); ``prefix`` and ``first_point`` are then not used.
    """
    sn = np.asarray(northing, dtype=np.float64)
    se = np.asarray(easting, dtype=np.float64)
    m, nd = sn.size, design_northing.size
    cn = np.array([c[1] for c in control], dtype=np.float64)
    ce = np.array([c[2] for c in control], dtype=np.float64)

    # ids: a design point's, a control point's, or both (then the nearer; a tie to the design point)
    num = design_index_of_ids(ids, prefix, first_point, nd) if by_id is None else by_id
    cid = _control_index_of_ids(ids, [c[0] for c in control])
    both = (num >= 0) & (cid >= 0)
    if np.any(both):
        sd, sc = np.where(both, num, 0), np.where(both, cid, 0)
        to_ctl = both & (np.hypot(sn - cn[sc], se - ce[sc])
                         < np.hypot(sn - design_northing[sd], se - design_easting[sd]))
        num = np.where(to_ctl, -1, num)
        cid = np.where(both & ~to_ctl, -1, cid)

    # by position: the nearer of the nearest design and control points within reach
    rest = np.flatnonzero((num < 0) & (cid < 0))
    near = np.full(m, -1, dtype=np.int64)
    near_c = np.full(m, -1, dtype=np.int64)
    if rest.size:
        pi, pd = nearest_within(design_northing, design_easting, sn[rest], se[rest], radius)
        ci, cd = nearest_within(cn, ce, sn[rest], se[rest], radius)
        to_ctl = (ci >= 0) & ((pi < 0) | (cd < np.where(pi >= 0, pd, np.inf)))
        near[rest] = np.where(to_ctl, -1, pi)
        near_c[rest] = np.where(to_ctl, ci, -1)
    di = np.where(num >= 0, num, near)
    by_number = (num >= 0) | (cid >= 0)

    # who governs each design point: its last shot by number, else its first by position
    governor = np.full(nd, -1, dtype=np.int64)
    k_num = np.flatnonzero(num >= 0)
    np.maximum.at(governor, di[k_num], k_num)  # the last shot of each number governs
    superseded = (num >= 0) & (governor[np.where(num >= 0, di, 0)] != np.arange(m))
    k_near = np.flatnonzero(near >= 0)
    dup = np.zeros(m, dtype=bool)
    if k_near.size:
        d_near = di[k_near]
        is_first = np.zeros(k_near.size, dtype=bool)
        is_first[np.unique(d_near, return_index=True)[1]] = True  # first shot by position of each point
        takes = is_first & (governor[d_near] < 0)
        governor[d_near[takes]] = k_near[takes]
        dup[k_near[~takes]] = True
    related = np.where(superseded | dup, governor[np.where(di >= 0, di, 0)], -1).astype(np.int64)
    return Matches(di.astype(np.int64), np.where(cid >= 0, cid, near_c).astype(np.int64), by_number,
                   superseded, dup, related, governor)


#: Newton steps of :func:`locate_near` at most (each step on all points at once).
_NEAR_STEPS = 12


def _from_within(alignment: Alignment, northing: NDArray[np.float64], easting: NDArray[np.float64],
                 station: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Northing and easting from the alignment's centreline point at ``station`` held within its ends."""
    inside = np.clip(np.nan_to_num(station, nan=alignment.start_station), alignment.start_station,
                     alignment.end_station)
    pos = alignment.evaluate(inside, 0.0)
    return northing - pos.northing, easting - pos.easting


def locate_near(alignment: Alignment, northing: NDArray[np.float64], easting: NDArray[np.float64],
                station: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Internal station and offset of points, each found near a given internal station.

    Unlike :meth:`Alignment.locate` (the nearest element anywhere), the
    foot of each point's perpendicular is followed from ``station`` along
    the alignment (Newton steps on the along-component, with the curvature
    from the change of direction), so a point near a loop's crossing stays
    on the branch of its design point.  Beyond the ends the end tangent is
    extended, as :meth:`Alignment.locate` does.

    Parameters
    ----------
    alignment : Alignment
        The alignment.
    northing, easting : array of float
        The points, job units (finite).
    station : array of float
        Internal station to start from for each point (the design point's).

    Returns
    -------
    (station, offset)
        Internal station and signed offset (negative left), job units.
    """
    lo, hi = alignment.start_station, alignment.end_station
    s = np.clip(np.asarray(station, dtype=np.float64), lo, hi)
    n = np.asarray(northing, dtype=np.float64)
    e = np.asarray(easting, dtype=np.float64)
    h = max(1e-6, 1e-9 * max(abs(lo), abs(hi)))
    active = np.arange(s.size)  # the points still moving: one that a step left exactly where it was stays there
    for _ in range(_NEAR_STEPS):  # one step on every moving point at once
        sa = s[active]
        p = alignment.evaluate(sa, miter=False)
        sn, cs = np.sin(np.radians(p.azimuth)), np.cos(np.radians(p.azimuth))
        dn, de = n[active] - p.northing, e[active] - p.easting
        along, across = dn * cs + de * sn, de * cs - dn * sn
        ahead = np.clip(sa + h, lo, hi)
        behind = np.clip(sa - h, lo, hi)
        turn = (alignment.evaluate(ahead, miter=False).azimuth - alignment.evaluate(behind, miter=False).azimuth
                + 180.0) % 360.0 - 180.0
        width = ahead - behind
        kappa = np.where(width > 0, np.radians(turn) / np.where(width > 0, width, 1.0), 0.0)
        step = along / np.maximum(1.0 - kappa * across, 0.1)
        new = np.clip(sa + step, lo, hi)
        moved = np.abs(new - sa)
        s[active] = new
        if not np.any(moved > 1e-10 * (1.0 + np.abs(new))):
            break
        active = active[moved != 0.0]
    p = alignment.evaluate(s, miter=False)
    sn, cs = np.sin(np.radians(p.azimuth)), np.cos(np.radians(p.azimuth))
    dn, de = n - p.northing, e - p.easting
    along, across = dn * cs + de * sn, de * cs - dn * sn
    # past an end: along the extended end tangent
    beyond = ((s <= lo) & (along < 0.0)) | ((s >= hi) & (along > 0.0))
    return np.where(beyond, s + along, s), across


def along_across(azimuth: NDArray[np.float64], d_northing: NDArray[np.float64],
                 d_easting: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """A residual along and square to a direction (degrees clockwise from grid north):
    positive ahead and right, in the residual's units.
    """
    az = np.radians(azimuth)
    sn, cs = np.sin(az), np.cos(az)
    return d_northing * cs + d_easting * sn, d_easting * cs - d_northing * sn


def check_shots(alignment: Alignment, design: StakePoints, design_elevation: NDArray[np.float64] | None,
                shots: Shots, horizontal_tolerance: float, vertical_tolerance: float | None,
                search_radius: float | None = None, control: Sequence[ControlRow] = (),
                combined_factor: NDArray[np.float64] | float = 1.0,
                ground_codes: Sequence[str] = (),
                more: Sequence[tuple[Alignment, StakePoints, NDArray[np.float64] | None,
                                     NDArray[np.float64] | float]] = ()) -> CheckResult:
    """Match shots to design and control points; residuals and status.

    Parameters
    ----------
    alignment : Alignment
        The built alignment (stations and offsets of shots, internal stations).
    design : StakePoints
        The design points, in point order.
    design_elevation : array of float or None
        Design elevation of every design point (job units), or None.
    shots : Shots
        The staked shots, file order.
    horizontal_tolerance, vertical_tolerance : float
        Job units; vertical None: elevations are not checked.
    search_radius : float, optional
        Job units; default 10 x the horizontal tolerance.
    control : sequence of (id, northing, easting, elevation)
        The job's control points (job units; elevation None where unknown),
        e.g. :func:`job_control_points`.
    combined_factor : float or array of float
        Grid / ground at each design point (one number for all): the
        moves are ground distances.
    ground_codes : sequence of str
        ``[check] ground_codes``: a shot whose description's first word is
        one of these (any case) is a shot on the ground beside its stake,
        checked horizontally only.
    more : sequence of (alignment, design, design_elevation, combined_factor)
        The other alignments of a job with several, in job order: every
        shot is matched against the stakes of all of them (design indices
        run over the alignments in order) and located on the alignment of
        the stake it matched, else on the nearest.

    Returns
    -------
    CheckResult
        Per-shot results in file order (see the module docstring).
    """
    radius = 10.0 * horizontal_tolerance if search_radius is None else search_radius
    parts = [(alignment, design, design_elevation, combined_factor), *more]
    sizes = [len(p[1]) for p in parts]
    starts = np.concatenate([[0], np.cumsum(sizes)]).astype(np.int64)
    m, nd = len(shots), int(starts[-1])
    sn, se = shots.northing, shots.easting
    # the design point each id names: a numbered stake by its number, a listed one by its own id (with several
    # alignments, the stakes of every one as one set of design points)
    by_id = np.full(m, -1, dtype=np.int64)
    for j, (_, sp, _, _) in enumerate(parts):
        hit = stake_index_of_ids(shots.point, sp)
        by_id = np.where(hit >= 0, hit + starts[j], by_id)
    if more:
        elevations = [p[2] if p[2] is not None else np.full(len(p[1]), np.nan) for p in parts]
        design_elevation = None if all(p[2] is None for p in parts) else np.concatenate(elevations)
        combined_factor = np.concatenate([np.broadcast_to(np.asarray(p[3], dtype=np.float64), (len(p[1]),))
                                          for p in parts])
    dn_all = np.concatenate([p[1].northing for p in parts]) if more else design.northing
    de_all = np.concatenate([p[1].easting for p in parts]) if more else design.easting
    mt = match_shots(shots.point, sn, se, design.prefix, design.first_point, dn_all, de_all, control, radius,
                     by_id=by_id)
    mt, stored_as = _misnumbered(mt, sn, se, dn_all, de_all, horizontal_tolerance)
    ground = ground_shots(shots.description, ground_codes)
    di, ci = mt.design_index, mt.control_index
    to_design, to_control = di >= 0, ci >= 0
    matched = to_design | to_control

    # residuals against the design point or the control point matched
    sd, sc = np.where(to_design, di, 0), np.where(to_control, ci, 0)
    tn = np.where(to_design, dn_all[sd], np.nan)
    te = np.where(to_design, de_all[sd], np.nan)
    tz = np.where(to_design, design_elevation[sd], np.nan) if design_elevation is not None else np.full(m, np.nan)
    if control:
        cn = np.array([c[1] for c in control], dtype=np.float64)
        ce = np.array([c[2] for c in control], dtype=np.float64)
        cz = np.array([np.nan if c[3] is None else c[3] for c in control], dtype=np.float64)
        tn = np.where(to_control, cn[sc], tn)
        te = np.where(to_control, ce[sc], te)
        tz = np.where(to_control, cz[sc], tz)
    # a shot of a design point is located near the design point's station (never on another branch of a
    # loop); a control shot or an unmatched one against the whole alignment
    located_on = None
    if more:  # on the alignment of the stake matched, else the nearest alignment (to the control point shot)
        qn, qe = np.where(to_control, tn, sn), np.where(to_control, te, se)
        at_q = [p[0].locate(qn, qe) for p in parts]
        at_s = [p[0].locate(sn, se) for p in parts]
        # how far each alignment is: from its nearest point within its ends (the inverse extends the end
        # tangents, so a point far past one alignment's end can have a small offset from it)
        away = np.stack([np.hypot(*_from_within(p[0], qn, qe, a[0])) for p, a in zip(parts, at_q)])
        nearest = np.argmin(np.where(np.isnan(away), np.inf, away), axis=0)
        matched_part = np.searchsorted(starts, np.where(to_design, di, 0), side="right") - 1
        located_on = np.where(to_design, matched_part, nearest).astype(np.int64)
        cols = np.arange(m)

        def pick(arrays: list[NDArray[np.float64]]) -> NDArray[np.float64]:
            return np.stack(arrays)[located_on, cols] if m else np.zeros(0)

        st, off = pick([a[0] for a in at_s]), pick([a[1] for a in at_s])
        dst, doff = pick([a[0] for a in at_q]), pick([a[1] for a in at_q])
    else:
        st, off, _ = alignment.locate(sn, se)
        dst, doff, _ = alignment.locate(np.where(to_control, tn, sn), np.where(to_control, te, se))
    nan = np.full(m, np.nan)
    dn, de = sn - tn, se - te
    d_along, d_across = nan.copy(), nan.copy()
    ground_along, ground_across = nan.copy(), nan.copy()
    k_all = np.flatnonzero(to_design & np.isfinite(sn) & np.isfinite(se))
    az_all = np.concatenate([p[1].azimuth for p in parts]) if more else design.azimuth
    st_all = np.concatenate([p[1].station for p in parts]) if more else design.station
    for part_k, (part_alignment, _, _, _) in enumerate(parts):  # one step per alignment, vectorised over shots
        k = k_all if not more else k_all[(di[k_all] >= starts[part_k]) & (di[k_all] < starts[part_k + 1])]
        if not k.size:
            continue
        ds = st_all[di[k]]
        st[k], off[k] = locate_near(part_alignment, sn[k], se[k], ds)
        dst[k], doff[k] = locate_near(part_alignment, tn[k], te[k], ds)
        d_along[k], d_across[k] = along_across(az_all[di[k]], dn[k], de[k])  # its own direction
        cf = np.broadcast_to(np.asarray(combined_factor, dtype=np.float64), (nd,))[di[k]]
        ground_along[k], ground_across[k] = d_along[k] / cf, d_across[k] / cf
    hz = np.hypot(dn, de)
    dz = shots.elevation - tz
    with np.errstate(invalid="ignore"):
        h_bad = hz > horizontal_tolerance
        v_bad = (np.isfinite(dz) & (np.abs(dz) > vertical_tolerance) & ~(ground & to_design)
                 if vertical_tolerance is not None else np.zeros(m, dtype=bool))
    bad = h_bad | v_bad
    misnumbered = stored_as >= 0
    status = np.select([~matched, to_control, misnumbered, mt.superseded, mt.duplicate, bad],
                       ["unmatched", "control", "misnumbered", "superseded", "duplicate", "out"], "ok").tolist()
    word = np.select([h_bad & v_bad, h_bad, v_bad], ["both", "horizontal", "vertical"], "")
    fails = np.where(np.isin(np.array(status), ["out", "control"]), word, "").tolist()
    how = np.where(~matched, "", np.where(misnumbered, "position",
                                          np.where(mt.by_number, "number", "nearest"))).tolist()

    staked = mt.governor >= 0
    gov_out = np.zeros(nd, dtype=bool)
    gov_out[staked] = bad[mt.governor[staked]]
    return CheckResult(
        design_index=di, control_index=ci, control_ids=tuple(c[0] for c in control), matched_by=how,
        station=st, offset=off, d_northing=dn, d_easting=de, horizontal_error=hz,
        d_station=np.where(matched, st - dst, nan), d_offset=np.where(matched, off - doff, nan),
        d_elevation=dz, status=status, fails=fails, related=mt.related,
        not_staked=np.flatnonzero(~staked).astype(np.int64),
        restake=np.flatnonzero(~staked | gov_out).astype(np.int64),
        horizontal_tolerance=horizontal_tolerance, vertical_tolerance=vertical_tolerance, search_radius=radius,
        d_along=d_along, d_across=d_across, ground_along=ground_along, ground_across=ground_across,
        ground=ground, stored_as=stored_as, located_on=located_on,
    )


def ground_shots(descriptions: Sequence[str], codes: Sequence[str]) -> NDArray[np.bool_]:
    """Shots whose description's first whitespace-separated word is one of ``codes`` (any case)."""
    wanted = {c.casefold() for c in codes}
    if not wanted:
        return np.zeros(len(descriptions), dtype=bool)
    return np.array([bool(d.split()) and d.split()[0].casefold() in wanted for d in descriptions], dtype=bool)


def _misnumbered(mt: Matches, sn: NDArray[np.float64], se: NDArray[np.float64], design_n: NDArray[np.float64],
                 design_e: NDArray[np.float64], tolerance: float) -> tuple[Matches, NDArray[np.int64]]:
    """Shots keyed with the wrong number (outputs contract, "A shot keyed with the wrong number").

    A shot matched by number to a design point it is out of tolerance of,
    which lies within the tolerance of another design point no other shot
    matched, is moved to that point (which then counts as staked); the
    returned array holds, for each such shot, the design index of the number
    it was stored under (-1 for every other shot).
    """
    m = sn.size
    stored_as = np.full(m, -1, dtype=np.int64)
    di = mt.design_index
    cand = np.flatnonzero(mt.by_number & (di >= 0) & (mt.control_index < 0) & ~mt.superseded & ~mt.duplicate
                          & np.isfinite(sn) & np.isfinite(se))
    if cand.size:
        off = np.hypot(sn[cand] - design_n[di[cand]], se[cand] - design_e[di[cand]]) > tolerance
        cand = cand[off]
    if not cand.size:
        return mt, stored_as
    near, _ = nearest_within(design_n, design_e, sn[cand], se[cand], tolerance)
    ok = (near >= 0) & (near != di[cand])
    cand, near = cand[ok], near[ok]
    ok = mt.governor[near] < 0  # no other shot matched it
    cand, near = cand[ok], near[ok]
    # two shots on one free point: the first (file order) takes it
    _, first = np.unique(near, return_index=True)
    cand, near = cand[first], near[first]
    if not cand.size:
        return mt, stored_as
    stored_as[cand] = di[cand]
    new_di = di.copy()
    new_di[cand] = near
    governor = mt.governor.copy()
    governor[near] = cand
    # the number it was stored under: governed by it no longer (its earlier shots, if any, are what is left)
    old = di[cand]
    still = np.isin(np.arange(governor.size), old)
    governor[still & np.isin(governor, cand)] = -1
    # ... and the last of those earlier shots by number governs it again (no longer superseded)
    moved = np.zeros(m, dtype=bool)
    moved[cand] = True
    earlier = np.flatnonzero(mt.by_number & (di >= 0) & np.isin(di, old) & ~moved & ~mt.duplicate)
    np.maximum.at(governor, di[earlier], earlier)
    superseded = mt.superseded.copy()
    superseded[earlier] = governor[di[earlier]] != earlier
    related = np.where(superseded | mt.duplicate, governor[np.where(new_di >= 0, new_di, 0)], -1).astype(np.int64)
    by_number = mt.by_number.copy()
    by_number[cand] = False
    return Matches(new_di, mt.control_index, by_number, superseded, mt.duplicate, related, governor), stored_as
