"""The built alignment: elements, key points, curves; evaluation and inverse.

Everything here works on numpy arrays.  Positions along the alignment are
internal stations (the POB's station plus the distance along the
centreline, no station equation applied); :class:`stakeout.stations.Stationing`
turns them into printed stations.  Conventions: lengths in job units;
azimuths in degrees clockwise from grid north; offsets perpendicular to the
alignment, negative left and positive right looking up-station; ``turn``
+1 right, -1 left.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..angles import normalize_azimuth, sincosd
from ..errors import GeometryError
from .curves import CompoundTangents
from .elements import Element
from .index import ElementGrid, build_grid
from .kernels import ElementArrays, Kernel

__all__ = ["Alignment", "Curve", "KeyPoint", "Position", "Location", "FEATURE_ORDER", "STATION_TOLERANCE"]

#: Order in which coinciding key-point features are listed (outputs contract).
FEATURE_ORDER = ("POB", "AP", "PT", "ST", "PC", "TS", "PCC", "PRC", "SC", "CS", "EQ", "SE", "WC",
                 "PVC", "PVI", "PVT", "HP", "LP", "POE")

#: Stations closer than this (job units) are the same station.
STATION_TOLERANCE = 1e-6

_CHUNK_PAIRS = 250_000  # point x element pairs handled at once by the inverse (about 80 MiB of temporaries;
# 2 million took 650 MiB and ran slower: the temporaries no longer stay in cache)

F = NDArray[np.float64]


class Position(NamedTuple):
    """Grid coordinates (job units) and the tangent azimuth (degrees) at points."""

    northing: F
    easting: F
    azimuth: F


class Location(NamedTuple):
    """Where points lie against the alignment.

    ``station`` is the internal station, ``offset`` the signed offset
    (negative left), ``distance`` the distance to the nearest point of the
    alignment (job units).
    """

    station: F
    offset: F
    distance: F


@dataclass(frozen=True)
class KeyPoint:
    """A named point on the centreline: POB, PC, PCC, PRC, PT, AP, POE, ..."""

    station: float
    northing: float
    easting: float
    features: tuple[str, ...]


@dataclass(frozen=True)
class Curve:
    """A maximal run of curving elements turning the same way (a PRC starts a new one).

    ``pi_*`` and ``tangents`` are ``None`` when the total angle is 180
    degrees or more (the tangents then meet behind the curve).
    """

    number: int
    elements: tuple[int, ...]
    turn: int
    delta: float
    pc_station: float
    pt_station: float
    pi_station: float | None
    pi_northing: float | None
    pi_easting: float | None
    tangents: CompoundTangents | None


@dataclass(frozen=True)
class Alignment:
    """A horizontal alignment, ready to evaluate."""

    name: str
    elements: tuple[Element, ...]
    key_points: tuple[KeyPoint, ...]
    curves: tuple[Curve, ...]
    _arrays: ElementArrays = field(repr=False, compare=False)
    warnings: tuple[str, ...] = ()

    # ---- construction ---------------------------------------------------------
    @classmethod
    def from_elements(cls, name: str, elements: list[Element], curves: tuple[Curve, ...],
                      key_points: tuple[KeyPoint, ...], warnings: tuple[str, ...] = ()) -> "Alignment":
        """Assemble an alignment and its evaluation arrays."""
        params = np.array([el.kernel_params() for el in elements], dtype=np.float64).reshape(len(elements), -1)
        az0 = np.array([el.start_azimuth for el in elements])
        sin0, cos0 = sincosd(az0)
        kernels: list[Kernel] = []
        for el in elements:
            if el.kernel not in kernels:
                kernels.append(el.kernel)
        start = np.array([el.start for el in elements])
        aps = [kp for kp in key_points if "AP" in kp.features]
        ap_back = []
        ap_ahead = []
        for kp in aps:
            i = int(np.searchsorted(start, kp.station - STATION_TOLERANCE, side="right")) - 1
            ap_back.append(elements[i].end_azimuth)
            ap_ahead.append(elements[i + 1].start_azimuth)
        arr = ElementArrays(
            start=start,
            length=np.array([el.length for el in elements]),
            n0=np.array([el.start_northing for el in elements]),
            e0=np.array([el.start_easting for el in elements]),
            n1=np.array([el.end_northing for el in elements]),
            e1=np.array([el.end_easting for el in elements]),
            az0=az0, sin0=sin0, cos0=cos0,
            k0=params[:, 0], k1=params[:, 1],
            kernels=kernels,
            kernel_of=np.array([kernels.index(el.kernel) for el in elements], dtype=np.int64),
            ap_station=np.array([kp.station for kp in aps]),
            ap_n=np.array([kp.northing for kp in aps]),
            ap_e=np.array([kp.easting for kp in aps]),
            ap_back=np.array(ap_back),
            ap_ahead=np.array(ap_ahead),
        )
        return cls(name, tuple(elements), key_points, curves, arr, warnings)

    # ---- basic facts ------------------------------------------------------------
    @property
    def start_station(self) -> float:
        """Internal station of the POB."""
        return self.elements[0].start

    @property
    def end_station(self) -> float:
        """Internal station of the POE."""
        return self.elements[-1].end

    @property
    def length(self) -> float:
        """Total length along the centreline."""
        return self.end_station - self.start_station

    def element_at(self, stations: ArrayLike) -> NDArray[np.int64]:
        """Index of the element each internal station lies on (the later one at a join)."""
        a = self._arrays
        s = np.asarray(stations, dtype=float)
        return np.clip(np.searchsorted(a.start, s, side="right") - 1, 0, len(self.elements) - 1)

    # ---- evaluation ---------------------------------------------------------------
    def evaluate(self, stations: ArrayLike, offsets: ArrayLike = 0.0, *, miter: bool = True) -> Position:
        """Coordinates and direction at internal stations and offsets.

        Parameters
        ----------
        stations : array of float
            Internal stations in job units, within the alignment.
        offsets : array of float
            Perpendicular offsets in job units, negative left, positive
            right; broadcast against ``stations``.
        miter : bool
            At an angle point, put an offset stake where the two offset
            lines meet (job-file contract) instead of square to the
            ahead tangent.

        Returns
        -------
        Position
            Grid coordinates and the tangent azimuth (degrees) there.

        Raises
        ------
        GeometryError
            If a station lies off the alignment.
        """
        a = self._arrays
        s, o = np.broadcast_arrays(np.asarray(stations, dtype=float), np.asarray(offsets, dtype=float))
        lo, hi = self.start_station, self.end_station
        bad = (s < lo - STATION_TOLERANCE) | (s > hi + STATION_TOLERANCE) | ~np.isfinite(s)
        if np.any(bad):
            raise GeometryError(
                f"station {float(s[bad].flat[0]):.4f} is off the alignment ({lo:.4f} to {hi:.4f})"
            )
        idx = self.element_at(s)
        ds = s - a.start[idx]
        kernels = a.kernels
        if len(kernels) == 1:
            north, east, az = kernels[0].evaluate(a, idx, ds, o)
        else:
            north, east, az = (np.empty(s.shape) for _ in range(3))
            which = a.kernel_of[idx]
            for kj, kern in enumerate(kernels):  # one step per kind of element, vectorised inside
                m = which == kj
                north[m], east[m], az[m] = kern.evaluate(a, idx[m], ds[m], o[m])
        if miter and a.ap_station.size:
            j = np.clip(np.searchsorted(a.ap_station, s), 0, a.ap_station.size - 1)
            hit = np.abs(a.ap_station[j] - s) <= STATION_TOLERANCE
            if np.any(hit):
                jj = j[hit]
                s1, c1 = sincosd(a.ap_back[jj])
                s2, c2 = sincosd(a.ap_ahead[jj])
                # right normals (east, north) = (cos az, -sin az); the offset
                # lines meet at o * (n1 + n2) / (1 + n1.n2)
                denom = 1.0 + (c1 * c2 + s1 * s2)
                oh = o[hit]
                east[hit] = a.ap_e[jj] + oh * (c1 + c2) / denom
                north[hit] = a.ap_n[jj] - oh * (s1 + s2) / denom
        return Position(north, east, np.asarray(normalize_azimuth(az)))

    # ---- inverse ------------------------------------------------------------------
    def locate(self, northing: ArrayLike, easting: ArrayLike) -> Location:
        """Internal station and offset of points against the alignment.

        Each point is referred to the element whose nearest point is
        closest.  A point square to an element gets its perpendicular
        offset; one beyond the ends of every element it is near (outside an
        angle point, past an end arc) gets the distance to the nearest end,
        signed by side.  Tangents at the very start and end are extended, so
        a point before the POB or past the POE gets a station outside the
        alignment.

        Candidate elements come from a uniform grid over the elements'
        bounding boxes (:mod:`.index`); a point with no element within one
        grid cell is compared against every element, so the answer is
        always the nearest element.

        Parameters
        ----------
        northing, easting : array of float
            Grid coordinates, job units.
        """
        n, e = np.broadcast_arrays(np.asarray(northing, dtype=float), np.asarray(easting, dtype=float))
        shape = n.shape
        n = n.ravel()
        e = e.ravel()
        out = np.full((3, n.size), np.nan)  # a point without finite coordinates has no station
        todo = np.flatnonzero(np.isfinite(n) & np.isfinite(e))
        grid = self._grid()
        if grid is not None and n.size:
            fin = todo
            keys = grid.keys(n[fin], e[fin])
            uniq, inv = np.unique(keys, return_inverse=True)
            set_of_cell = np.array([grid.cell_set.get(k, -1) for k in uniq.tolist()], dtype=np.int64)
            set_of_pt = set_of_cell[inv]
            missed = fin[set_of_pt < 0]
            sid = set_of_pt[set_of_pt >= 0]
            hit = fin[set_of_pt >= 0]
            res = self._locate_candidates(n[hit], e[hit], grid.flat, grid.first[sid], grid.size[sid])
            # nearer than a cell: no element outside the candidates can be nearer, except the first and
            # last tangents, which extend beyond the grid's boxes
            ok = (res[2] <= grid.g) & (self._beyond_ends(n[hit], e[hit]) >= res[2])
            out[:, hit[ok]] = res[:, ok]
            todo = np.concatenate([missed, hit[~ok]])
        if todo.size:
            out[:, todo] = self._locate_all(n[todo], e[todo])
        return Location(out[0].reshape(shape), out[1].reshape(shape), out[2].reshape(shape))

    def curve_externals(self) -> F:
        """Distance from each curve's PI to the nearest point of the curve's own elements
        (job units; NaN for a curve without a PI), one entry per curve, computed once.

        All curves in one vectorised pass of the inverse, each PI against its curve's
        elements only.
        """
        cached = self._arrays.externals
        if cached is None:
            out = np.full(len(self.curves), np.nan)
            has = [k for k, c in enumerate(self.curves) if c.pi_northing is not None and c.pi_easting is not None]
            if has:
                n = np.array([self.curves[k].pi_northing for k in has], dtype=float)
                e = np.array([self.curves[k].pi_easting for k in has], dtype=float)
                runs = [self.curves[k].elements for k in has]
                out[has] = self._curve_distances(n, e, runs)
            cached = self._arrays.externals = out
        return cached

    def _curve_distances(self, n: F, e: F, runs: list[tuple[int, ...]]) -> F:
        """Distance from point ``k`` to the nearest point of the elements ``runs[k]`` (one pass
        of the inverse over every (point, element) pair).
        """
        size = np.array([len(r) for r in runs], dtype=np.int64)
        flat = np.array([i for r in runs for i in r], dtype=np.int64)
        first = np.cumsum(size) - size
        out: F = self._locate_candidates(n, e, flat, first, size)[2]
        return out

    def _grid(self) -> ElementGrid | None:
        cached = self._arrays.grid
        if cached is None:
            def sample(s: F) -> tuple[F, F]:
                p = self.evaluate(s, miter=False)
                return p.northing, p.easting

            cached = (build_grid(self.elements, self.length, sample),)
            self._arrays.grid = cached
        return cached[0]

    def _middles(self) -> tuple[F, F]:
        """Northing and easting of every element's middle point (computed once)."""
        cached = self._arrays.middles
        if cached is None:
            a = self._arrays
            p = self.evaluate(a.start + a.length / 2.0, miter=False)
            cached = (p.northing, p.easting)
            self._arrays.middles = cached
        return cached

    def _beyond_ends(self, n: F, e: F) -> F:
        """Distance from each point to the first tangent extended back where the point lies
        before the start, and to the last extended ahead where it lies past the end; infinite
        elsewhere, or where the alignment does not begin or end on a tangent.
        """
        a = self._arrays
        out = np.full(n.size, np.inf)
        last = len(self.elements) - 1
        for i, (end_n, end_e), sign in ((0, (a.n0, a.e0), -1.0), (last, (a.n1, a.e1), 1.0)):
            if a.k0[i] != 0.0 or a.k1[i] != 0.0:
                continue
            dn, de = n - end_n[i], e - end_e[i]
            along = de * a.sin0[i] + dn * a.cos0[i]
            across = np.abs(de * a.cos0[i] - dn * a.sin0[i])
            out = np.where(along * sign > 0.0, np.minimum(out, across), out)
        return out

    def _locate_all(self, n: F, e: F) -> F:
        """:meth:`locate` with every element a candidate of every point (no grid):
        rows station, offset, distance.
        """
        nel = len(self.elements)
        return self._locate_candidates(n, e, np.arange(nel), np.zeros(n.size, np.int64), np.full(n.size, nel))

    def _locate_candidates(self, n: F, e: F, flat: NDArray[np.int64], first: NDArray[np.int64],
                           size: NDArray[np.int64]) -> F:
        """Nearest element of each point among its candidates ``flat[first:first + size]``:
        rows station, offset, distance.  Points go in chunks of at most
        :data:`_CHUNK_PAIRS` (point, element) pairs, each chunk vectorised.
        """
        out = np.empty((3, n.size))
        if not n.size:
            return out
        ends = np.cumsum(size)
        i = 0
        while i < n.size:
            j = max(i + 1, int(np.searchsorted(ends, ends[i] - size[i] + _CHUNK_PAIRS, side="right")))
            cnt = size[i:j]
            pi = np.repeat(np.arange(j - i), cnt)
            start = np.cumsum(cnt) - cnt
            el = flat[np.repeat(first[i:j] - start, cnt) + np.arange(pi.size)]
            out[:, i:j] = self._locate_pairs(n[i:j], e[i:j], pi, el, start)
            i = j
        return out

    def _locate_pairs(self, n: F, e: F, pi: NDArray[np.int64], el: NDArray[np.int64],
                      start: NDArray[np.int64]) -> F:
        """Nearest of the (point ``pi``, element ``el``) pairs for each point: rows
        station, offset, distance.  Pairs are grouped by point in point order,
        point ``k``'s from ``start[k]``; every point has at least one.

        The cheapest kernel (lines and arcs) is solved on all its pairs.
        Each dearer kernel (clothoids) is solved only on the pairs that can
        beat what the point already has: every point of an element lies
        within half its length of its middle point (by arc length, so by
        distance too), so a pair whose distance to the middle less half the
        length exceeds the point's best distance so far (or another pair's
        distance to its middle plus half its length) is skipped; the
        extended first and last tangents are never skipped.  Ties go to the
        first kernel, then the first element, as in element order.
        """
        a = self._arrays
        nel = len(self.elements)
        kernels = a.kernels
        which = a.kernel_of[el]
        pn, pe = n[pi], e[pi]
        s = np.zeros(el.size)
        clamped = np.zeros(el.size, dtype=bool)
        qn = np.zeros(el.size)
        qe = np.zeros(el.size)
        dist = np.full(el.size, np.inf)
        order = sorted(range(len(kernels)), key=lambda k: kernels[k].cost)
        for step, j in enumerate(order):  # one step per kind of element, vectorised inside
            m = np.flatnonzero(which == j) if len(kernels) > 1 else np.arange(el.size)
            if step and m.size:  # a dearer kernel: only the pairs that can beat the best so far
                mn, me = self._middles()
                dm = np.hypot(pn[m] - mn[el[m]], pe[m] - me[el[m]])
                half = a.length[el[m]] / 2.0
                bound = dist.copy()
                bound[m] = dm + half
                limit = np.minimum.reduceat(bound, start)[pi[m]]
                m = m[(dm - half <= limit) | (el[m] == 0) | (el[m] == nel - 1)]
            if m.size:
                em = el[m]
                # the tangents at the very start and end extend beyond the alignment
                lo = np.where(em == 0, -np.inf, 0.0)
                hi = np.where(em == nel - 1, np.inf, a.length[em])
                s[m], clamped[m], qn[m], qe[m], dist[m] = kernels[j].nearest(a, em, pn[m], pe[m], lo, hi)
        # the nearest pair of each point; where several are as near, the lowest (kernel, element)
        chosen = np.flatnonzero(dist == np.minimum.reduceat(dist, start)[pi])
        if chosen.size > n.size:
            chosen = chosen[np.lexsort((which[chosen] * nel + el[chosen], pi[chosen]))]
            chosen = chosen[np.r_[True, pi[chosen][1:] != pi[chosen][:-1]]]
        elb, sb = el[chosen], s[chosen]
        # signed offset: component on the right normal at the nearest point
        st = np.empty(n.size)
        ct = np.empty(n.size)
        owner = which[chosen]
        for j, kern in enumerate(kernels):  # one step per kind of element
            mk = owner == j
            if np.any(mk):
                st[mk], ct[mk] = kern.direction(a, elb[mk], sb[mk])
        across = (e - qe[chosen]) * ct - (n - qn[chosen]) * st
        d = dist[chosen]
        sign = np.where(across < 0.0, -1.0, 1.0)
        offset = np.where(clamped[chosen], sign * d, across)
        return np.stack([a.start[elb] + sb, offset, d])
