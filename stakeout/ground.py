"""The existing ground: a TIN (triangulated irregular network), its elevation
at any point and its profile along a horizontal ray (numpy, no I/O but the
ground CSV reader).

The ground is the TIN's triangles, planar inside each face and undefined
outside them: a face left out (an invisible LandXML face) is a hole.  Faces
are index triples into the points; northings, eastings and elevations are in
job units.  Two look-ups, both on whole arrays:

* :meth:`Ground.elevation` - the ground elevation at points: each point is
  compared only with the faces whose bounding box reaches its cell of a
  uniform grid (as the alignment inverse's :mod:`stakeout.alignment.index`),
  and interpolated exactly on the plane of the face holding it (a point on a
  shared edge or vertex takes either face: the same value, the TIN being
  continuous there); NaN outside the TIN or in a hole;
* :meth:`Ground.sections` - the ground along rays (a vertical plane through
  a point in a horizontal direction): the polyline through the ray's
  crossings of triangle edges, exact, no sampling, up to where the ray leaves
  the TIN (reported) or a given distance.

A ground from points (:meth:`Ground.from_points`) is triangulated by
Delaunay (``scipy.spatial.Delaunay``): a point cloud carries no breaklines,
so a ridge or a ditch between points is only as sharp as the points give it,
and the hull is convex (a concave edge of the survey is bridged by long
triangles).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from .errors import JobFileError, StakedFileError
from .limits import MAX_COORDINATE, MAX_HEIGHT

__all__ = ["Ground", "Sections", "Section", "read_ground_csv", "EDGE_TOL"]

#: A point this close to a face (job units) is on it: the TIN's edges are shared
#: to rounding, and 1e-9 is far below the 4th decimal printed.
EDGE_TOL = 1e-9
#: Faces with an area under this fraction of their longest edge squared are slivers
#: of zero area (Delaunay hull slivers, collapsed faces): they cover no ground.
SLIVER = 1e-12
#: Most (cell, face) entries of the grid, per face (the cell grows until they fit).
_ENTRIES_PER_FACE = 16
#: A face whose box is at most this many times the median face's goes in the finest grid; the
#: larger ones (Delaunay's long faces across the inside of a bend, the hull's) go in coarser grids
#: of their own, so they never make the cells of the ordinary faces coarse.
_LEVEL_RATIO = 4.0
#: Points located at once (their candidate faces, a dozen each, are the temporaries).
_LOOKUP_BLOCK = 65536

F64 = NDArray[np.float64]
I64 = NDArray[np.int64]


@dataclass(frozen=True)
class Section:
    """The ground along one ray: ``dist`` (job units from the ray's start,
    increasing) and ``z`` at the section's breakpoints; ``end`` is how far
    the ground was found (the ray's length, or where it leaves the TIN) and
    ``left_tin`` says whether it left the TIN (or a hole) before its length.
    A ray starting off the ground has no breakpoints, ``end`` 0, ``left_tin``.
    """

    dist: F64
    z: F64
    end: float
    left_tin: bool


@dataclass(frozen=True)
class Sections:
    """The ground along many rays at once, laid end to end: ray ``i``'s
    breakpoints are ``dist[first[i]:first[i + 1]]`` and ``z[...]`` (distances
    from the ray's origin, increasing, the first at the ray's start distance
    when the ground is there); ``end[i]`` is how far the ground reaches along
    the ray (its end, or where it leaves the TIN), ``left_tin[i]`` whether it
    left the TIN before the ray's end.
    """

    first: I64
    dist: F64
    z: F64
    end: F64
    left_tin: NDArray[np.bool_]

    def __len__(self) -> int:
        return len(self.first) - 1

    def ray(self, i: int) -> Section:
        """The section of ray ``i``."""
        a, b = int(self.first[i]), int(self.first[i + 1])
        return Section(self.dist[a:b], self.z[a:b], float(self.end[i]), bool(self.left_tin[i]))


@dataclass(frozen=True)
class _Grid:
    g: float
    e0: float
    n0: float
    nx: int
    ny: int
    keys: I64  # the cells (iy * nx + ix) some face reaches, sorted: only those are stored
    start: I64  # the faces of keys[k]: faces[start[k]:start[k + 1]]
    faces: I64


@dataclass(frozen=True, eq=False)
class Ground:
    """A TIN: points (``n``, ``e``, ``z``, job units) and faces (index
    triples, counter-clockwise in plan after construction).  Build it with
    :meth:`from_faces` or :meth:`from_points`; ``name`` says where it came
    from in messages.
    """

    n: F64
    e: F64
    z: F64
    faces: I64
    name: str
    dropped: int  # zero-area faces left out
    _grids: tuple[_Grid, ...] = field(repr=False)  # finest first: faces by size, each face in one
    _plane: F64 = field(repr=False)  # per face: e0, n0, z0, dz/de, dz/dn
    _tri: F64 = field(repr=False)  # per face: e0, n0, e1, n1, e2, n2 (one gather a face)
    _nb: I64 = field(repr=False)  # per face and edge k (vertex k to k + 1): the face across it, -1 none

    # ------------------------------------------------------------------ construction
    @classmethod
    def from_faces(cls, n: F64, e: F64, z: F64, faces: I64, name: str = "ground") -> "Ground":
        """A TIN from points and faces (holes are faces not given).

        Parameters
        ----------
        n, e, z : array of float
            Northing, easting, elevation of each point, job units.
        faces : array of int, shape (m, 3)
            Indices into the points, in either orientation.
        name : str
            The source as named in errors (a file, a key).

        Raises
        ------
        JobFileError
            No face, an index out of range, a face naming a point twice,
            non-finite or out-of-range numbers.
        """
        n = np.ascontiguousarray(n, dtype=np.float64)
        e = np.ascontiguousarray(e, dtype=np.float64)
        z = np.ascontiguousarray(z, dtype=np.float64)
        f = np.ascontiguousarray(faces, dtype=np.int64).reshape(-1, 3)
        if not (len(n) == len(e) == len(z)):
            raise JobFileError(f"{name}: northing, easting and elevation arrays differ in length")
        for arr, what, bound in ((n, "northing", MAX_COORDINATE), (e, "easting", MAX_COORDINATE),
                                 (z, "elevation", MAX_HEIGHT)):
            bad = np.flatnonzero(~np.isfinite(arr) | (np.abs(arr) > bound))
            if bad.size:
                raise JobFileError(f"{name}: point {bad[0] + 1} has {what} {float(arr[bad[0]])!r}; "
                                   f"it must be finite and within -{bound:,.0f} to {bound:,.0f} job units")
        if len(f) == 0:
            raise JobFileError(f"{name}: no triangles; a ground needs at least one face of three points")
        bad = np.flatnonzero((f < 0).any(axis=1) | (f >= len(n)).any(axis=1))
        if bad.size:
            raise JobFileError(f"{name}: face {bad[0] + 1} names point index {f[bad[0]].tolist()} but there are "
                               f"{len(n)} points")
        bad = np.flatnonzero((f[:, 0] == f[:, 1]) | (f[:, 1] == f[:, 2]) | (f[:, 0] == f[:, 2]))
        if bad.size:
            raise JobFileError(f"{name}: face {bad[0] + 1} names a point twice ({f[bad[0]].tolist()})")
        # plan orientation and size, in coordinates relative to the face's first vertex
        de1, dn1 = e[f[:, 1]] - e[f[:, 0]], n[f[:, 1]] - n[f[:, 0]]
        de2, dn2 = e[f[:, 2]] - e[f[:, 0]], n[f[:, 2]] - n[f[:, 0]]
        det = de1 * dn2 - de2 * dn1
        longest = np.maximum(np.maximum(de1 * de1 + dn1 * dn1, de2 * de2 + dn2 * dn2),
                             (de2 - de1) ** 2 + (dn2 - dn1) ** 2)
        keep = np.abs(det) > SLIVER * longest
        dropped = int(len(f) - np.count_nonzero(keep))
        if not keep.any():
            raise JobFileError(f"{name}: every face has zero area in plan (points in a line); not a ground surface")
        f = f[keep]
        cw = det[keep] < 0
        f[cw] = f[cw][:, [0, 2, 1]]
        return cls._built(n, e, z, f, name, dropped)

    @classmethod
    def from_points(cls, n: F64, e: F64, z: F64, name: str = "ground",
                    ids: list[str] | None = None, lines: list[int] | None = None) -> "Ground":
        """A TIN by Delaunay triangulation of ground points (no breaklines).

        Parameters
        ----------
        n, e, z : array of float
            The points, job units.
        name : str
            The source as named in errors.
        ids, lines : list, optional
            Point ids and line numbers, to name a duplicate in the error.

        Raises
        ------
        JobFileError
            Fewer than three points, two points at the same northing and
            easting, or points that do not span an area (all in a line).
        """
        from scipy.spatial import Delaunay, QhullError

        n = np.asarray(n, dtype=np.float64)
        e = np.asarray(e, dtype=np.float64)
        z = np.asarray(z, dtype=np.float64)
        if len(n) < 3:
            raise JobFileError(f"{name}: {len(n)} ground point(s); a ground needs at least three")

        def who(i: int) -> str:
            s = f"point {ids[i]!r}" if ids is not None else f"point {i + 1}"
            return s + (f" (line {lines[i]})" if lines is not None else "")

        order = np.lexsort((e, n))
        same = np.flatnonzero((n[order][1:] == n[order][:-1]) & (e[order][1:] == e[order][:-1]))
        if same.size:
            i, j = sorted((int(order[same[0]]), int(order[same[0] + 1])))
            raise JobFileError(f"{name}: {who(j)} lies at the same northing and easting as {who(i)}; "
                               "a ground has one elevation at each place (remove one)")
        xy = np.column_stack((e - e.mean(), n - n.mean()))  # centred: qhull works near the origin
        try:
            tri = Delaunay(xy)
        except QhullError:
            raise JobFileError(f"{name}: the ground points do not span an area (all in a line?); "
                               "cannot triangulate them") from None
        if len(tri.coplanar):
            i = int(tri.coplanar[0, 0])
            raise JobFileError(f"{name}: {who(i)} is left out of the triangulation (it nearly coincides with "
                               "another point); remove one of them")
        return cls.from_faces(n, e, z, tri.simplices.astype(np.int64), name)

    @classmethod
    def _built(cls, n: F64, e: F64, z: F64, f: I64, name: str, dropped: int) -> "Ground":
        e0, n0, z0 = e[f[:, 0]], n[f[:, 0]], z[f[:, 0]]
        de1, dn1, dz1 = e[f[:, 1]] - e0, n[f[:, 1]] - n0, z[f[:, 1]] - z0
        de2, dn2, dz2 = e[f[:, 2]] - e0, n[f[:, 2]] - n0, z[f[:, 2]] - z0
        det = de1 * dn2 - de2 * dn1
        gx = (dz1 * dn2 - dz2 * dn1) / det  # dz/de
        gy = (de1 * dz2 - de2 * dz1) / det  # dz/dn
        plane = np.column_stack((e0, n0, z0, gx, gy))
        grid = _build_grids(n, e, f)
        tri = np.column_stack((e[f[:, 0]], n[f[:, 0]], e[f[:, 1]], n[f[:, 1]], e[f[:, 2]], n[f[:, 2]]))
        return cls(n, e, z, f, name, dropped, grid, plane, tri, _neighbours(f, len(n)))

    # ------------------------------------------------------------------ facts
    @property
    def cell_size(self) -> float:
        """Side of the locator's grid cells, job units (about one face's size)."""
        return self._grids[0].g

    @property
    def face_count(self) -> int:
        """Number of faces (holes and zero-area faces not counted)."""
        return len(self.faces)

    def extent(self) -> tuple[float, float, float, float]:
        """``(n_min, e_min, n_max, e_max)`` of the points used by faces."""
        used = np.unique(self.faces)
        return (float(self.n[used].min()), float(self.e[used].min()),
                float(self.n[used].max()), float(self.e[used].max()))

    def elevation_range(self) -> tuple[float, float]:
        """Lowest and highest elevation of the points used by faces."""
        used = np.unique(self.faces)
        return float(self.z[used].min()), float(self.z[used].max())

    # ------------------------------------------------------------------ look-ups
    @staticmethod
    def _candidates(gr: _Grid, cells: I64) -> tuple[I64, I64]:
        """(index into ``cells``, face) of every face registered in each cell of grid ``gr`` (-1: none)."""
        slot = np.searchsorted(gr.keys, cells).clip(0, max(len(gr.keys) - 1, 0))
        ok = (cells >= 0) & (len(gr.keys) > 0)
        if len(gr.keys):
            ok &= gr.keys[slot] == cells
        c = np.where(ok, slot, 0)
        cnt = np.where(ok, gr.start[c + 1] - gr.start[c], 0)
        owner = np.repeat(np.arange(len(cells), dtype=np.int64), cnt)
        pos = np.arange(int(cnt.sum()), dtype=np.int64) - np.repeat(np.cumsum(cnt) - cnt, cnt)
        return owner, gr.faces[np.repeat(gr.start[c], cnt) + pos]

    @staticmethod
    def _cell(gr: _Grid, n: F64, e: F64) -> I64:
        ix = np.floor((e - gr.e0) / gr.g)
        iy = np.floor((n - gr.n0) / gr.g)
        ok = (ix >= 0) & (ix < gr.nx) & (iy >= 0) & (iy < gr.ny)
        return np.where(ok, iy * gr.nx + ix, -1).astype(np.int64)

    def face_at(self, n: F64, e: F64) -> I64:
        """Index of a face holding each point (on its edge included), -1 off the ground.

        The grids are asked finest first; a point a grid's faces hold is not asked again.
        """
        n, e = np.broadcast_arrays(np.asarray(n, dtype=np.float64), np.asarray(e, dtype=np.float64))
        out = np.full(n.shape, -1, dtype=np.int64)
        flat_n, flat_e = n.ravel(), e.ravel()
        res = out.ravel()
        finite = np.flatnonzero(np.isfinite(flat_n) & np.isfinite(flat_e))
        for a in range(0, finite.size, _LOOKUP_BLOCK):  # a block of points at a time: bounded temporaries
            todo = finite[a:a + _LOOKUP_BLOCK]
            for gr in self._grids:
                if not todo.size:
                    break
                tn, te = flat_n[todo], flat_e[todo]
                pt, fc = self._candidates(gr, self._cell(gr, tn, te))
                inside = self._inside(fc, tn[pt], te[pt])
                pt, fc = pt[inside], fc[inside]
                first = np.ones(len(pt), dtype=bool)
                first[1:] = pt[1:] != pt[:-1]  # candidates come grouped by point: keep each point's first face
                res[todo[pt[first]]] = fc[first]
                todo = todo[res[todo] < 0]
        return res.reshape(n.shape)  # a single point gives a 0-d array

    def _inside(self, fc: I64, pn: F64, pe: F64) -> NDArray[np.bool_]:
        """Whether each point lies in (or within EDGE_TOL of) its face."""
        f = self.faces[fc]
        ok = np.ones(len(fc), dtype=bool)
        for k in range(3):  # the three edges of every face at once
            a, b = f[:, k], f[:, (k + 1) % 3]
            ee, en = self.e[b] - self.e[a], self.n[b] - self.n[a]
            cross = ee * (pn - self.n[a]) - en * (pe - self.e[a])  # > 0: left of the edge (inside, CCW)
            ok &= cross >= -EDGE_TOL * np.hypot(ee, en)
        return ok

    def _plane_z(self, fc: I64, pn: F64, pe: F64) -> F64:
        p = self._plane[fc]
        return p[:, 2] + p[:, 3] * (pe - p[:, 0]) + p[:, 4] * (pn - p[:, 1])

    def elevation(self, n: F64, e: F64) -> F64:
        """Ground elevation at points (job units); NaN outside the TIN or in a hole.

        Parameters
        ----------
        n, e : array of float
            Northings and eastings, job units (any shape, the same).

        Returns
        -------
        array of float
            The elevation on the plane of the face holding each point.
        """
        n = np.asarray(n, dtype=np.float64)
        e = np.asarray(e, dtype=np.float64)
        fc = self.face_at(n, e)
        out = np.full(fc.shape, np.nan)
        hit = fc >= 0
        out[hit] = self._plane_z(fc[hit], np.broadcast_to(n, fc.shape)[hit], np.broadcast_to(e, fc.shape)[hit])
        return out

    def section(self, n0: float, e0: float, dn: float, de: float, max_dist: float) -> Section:
        """The ground along one ray (see :meth:`sections`)."""
        s = self.sections(np.array([n0]), np.array([e0]), np.array([dn]), np.array([de]), np.array([max_dist]))
        return s.ray(0)

    def sections(self, n0: F64, e0: F64, dn: F64, de: F64, max_dist: F64,
                 start: F64 | None = None) -> Sections:
        """The ground along rays: exact polylines through the rays' crossings of triangle edges.

        Parameters
        ----------
        n0, e0 : array of float
            Origin of each ray, job units.
        dn, de : array of float
            Horizontal unit direction of each ray (northing, easting parts).
        max_dist : array of float
            How far along each ray, job units.
        start : array of float, optional
            Where along each ray to begin (default 0): the section covers
            ``start`` to ``max_dist``, distances still counted from the origin.

        Returns
        -------
        Sections
            Per ray the breakpoints (distance, elevation) from ``start`` up to
            ``max_dist`` or to where the ray leaves the TIN (``left_tin``).
        """
        n0, e0, dn, de = (np.atleast_1d(np.asarray(v, dtype=np.float64)) for v in (n0, e0, dn, de))
        t1 = np.broadcast_to(np.asarray(max_dist, dtype=np.float64), n0.shape).copy()
        t0 = np.zeros_like(t1) if start is None else np.broadcast_to(np.asarray(start, dtype=np.float64),
                                                                      n0.shape).copy()
        ray, bt, bz, end, left, failed = self._walk(n0, e0, dn, de, t0, t1)
        if failed.any():  # a walk that circled a vertex: these rays by the grid instead
            idx = np.flatnonzero(failed)
            g = self._sections_grid(n0[idx], e0[idx], dn[idx], de[idx], t1[idx], t0[idx])
            keep = ~failed[ray]
            gr = idx[np.repeat(np.arange(len(idx)), np.diff(g.first))]
            ray, bt, bz = np.r_[ray[keep], gr], np.r_[bt[keep], g.dist], np.r_[bz[keep], g.z]
            end[idx], left[idx] = g.end, g.left_tin
        return _assemble(len(n0), ray, bt, bz, end, left)

    def _walk(self, n0: F64, e0: F64, dn: F64, de: F64, t0: F64, t1: F64
              ) -> tuple[I64, F64, F64, F64, NDArray[np.bool_], NDArray[np.bool_]]:
        """Walk every ray from face to face across shared edges (all rays a step at a time).

        Returns the breakpoints (ray, distance, elevation), each ray's end and
        whether it left the TIN, and the rays whose walk stalled (circling a
        vertex the ray passes exactly through), to be done by the grid.
        """
        r = len(n0)
        f = self.face_at(n0 + t0 * dn, e0 + t0 * de)
        end = t0.copy()
        left = np.ones(r, dtype=bool)
        failed = np.zeros(r, dtype=bool)
        idx = np.flatnonzero(f >= 0)
        cur = t0.copy()
        stall = np.zeros(r, dtype=np.int64)
        rays = [idx]
        ts = [t0[idx]]
        zs = [self._plane_z(f[idx], n0[idx] + t0[idx] * dn[idx], e0[idx] + t0[idx] * de[idx])]
        while idx.size:
            ff = f[idx]
            tri = self._tri[ff]
            on, oe, rn, re = n0[idx], e0[idx], dn[idx], de[idx]
            texit = np.full(len(idx), np.inf)
            kexit = np.full(len(idx), -1, dtype=np.int64)
            best = np.full(len(idx), np.inf)
            nbs = self._nb[ff]
            for k in range(3):
                _, _, alpha, beta = _edge_terms(tri, k, on, oe, rn, re)
                with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                    tk = np.where(beta < 0, -alpha / np.where(beta < 0, beta, -1.0), np.inf)
                # through a vertex (two edges at once) the edge with a face beyond wins: a ray along
                # the border of the TIN or of a hole stays on the ground, as the border is
                key = tk + np.where(nbs[:, k] < 0, 16 * EDGE_TOL, 0.0)
                better = key < best
                best = np.where(better, key, best)
                texit = np.where(better, tk, texit)
                kexit = np.where(better, k, kexit)
            texit = np.maximum(texit, cur[idx])  # never back along the ray
            done = texit >= t1[idx]
            texit = np.minimum(texit, t1[idx])
            kk = np.maximum(kexit, 0)
            rows = np.arange(len(idx))
            ae, an = tri[rows, 2 * kk], tri[rows, 2 * kk + 1]
            be, bn = tri[rows, (2 * kk + 2) % 6], tri[rows, (2 * kk + 3) % 6]
            el = np.hypot(be - ae, bn - an)
            u = ((oe + texit * re - ae) * (be - ae) + (on + texit * rn - an) * (bn - an)) / el
            # the exit point's elevation along its edge (the same from the faces on both sides, and
            # well conditioned on a sliver, where a face's plane is not); the ray's end on its face's plane
            za, zb = self.z[self.faces[ff, kk]], self.z[self.faces[ff, (kk + 1) % 3]]
            w = np.clip(u / el, 0.0, 1.0)
            zexit = np.where(done | (kexit < 0), self._plane_z(ff, on + texit * rn, oe + texit * re),
                             za + w * (zb - za))
            rays.append(idx)
            ts.append(texit)
            zs.append(zexit)
            nxt = np.where(done | (kexit < 0), -1, nbs[rows, kk])
            fin = done | (nxt < 0)
            end[idx[fin]] = texit[fin]
            left[idx[done]] = False
            # leaving through a vertex onto the border: another face at that vertex may carry the ray
            # on (along the border of a hole): the grid decides those
            corner = ~done & (nxt < 0) & ((u < 1e3 * EDGE_TOL) | (el - u < 1e3 * EDGE_TOL))
            bad = (kexit < 0) | corner
            moved = texit > cur[idx] + EDGE_TOL
            stall[idx] = np.where(moved, 0, stall[idx] + 1)
            failed[idx[bad | (stall[idx] > 8)]] = True
            cur[idx] = texit
            go = ~fin & ~bad & (stall[idx] <= 8)
            f[idx[go]] = nxt[go]
            idx = idx[go]
        return np.concatenate(rays), np.concatenate(ts), np.concatenate(zs), end, left, failed

    def _sections_grid(self, n0: F64, e0: F64, dn: F64, de: F64, max_dist: F64,
                       start: F64 | None = None) -> Sections:
        """:meth:`sections` by the grid: every face near each ray clipped to it (robust, slower)."""
        n0, e0, dn, de = (np.atleast_1d(np.asarray(v, dtype=np.float64)) for v in (n0, e0, dn, de))
        t1 = np.broadcast_to(np.asarray(max_dist, dtype=np.float64), n0.shape).copy()
        t0 = np.zeros_like(t1) if start is None else np.broadcast_to(np.asarray(start, dtype=np.float64),
                                                                      n0.shape).copy()
        r = len(n0)
        rays, fcs = [], []
        for gr in self._grids:  # each face is in one grid
            ray, cell = self._ray_cells(gr, n0 + t0 * dn, e0 + t0 * de, dn, de, t1 - t0)
            own, fc = self._candidates(gr, cell)
            rays.append(ray[own])
            fcs.append(fc)
        ray, fc = np.concatenate(rays), np.concatenate(fcs)
        # faces the ray's line crosses: vertices not all on one side of it (cheap; most candidates go)
        on, oe, rn, re = n0[ray], e0[ray], dn[ray], de[ray]
        tri = self._tri[fc]
        side = [rn * (tri[:, 2 * j] - oe) - re * (tri[:, 2 * j + 1] - on) for j in range(3)]
        keep = ((np.minimum(np.minimum(side[0], side[1]), side[2]) <= EDGE_TOL)
                & (np.maximum(np.maximum(side[0], side[1]), side[2]) >= -EDGE_TOL))
        ray, fc, tri = ray[keep], fc[keep], tri[keep]
        on, oe, rn, re = on[keep], oe[keep], rn[keep], re[keep]
        # clip each (ray, face) pair's segment [t0, t1] to the face: three half-planes
        lo, hi = t0[ray].copy(), t1[ray].copy()
        ok = np.ones(len(fc), dtype=bool)
        for k in range(3):
            ee, en, alpha, beta = _edge_terms(tri, k, on, oe, rn, re)
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                tcut = -alpha / beta  # exact: neighbouring faces meet at the same distance
            lo = np.where(beta > 0, np.maximum(lo, tcut), lo)
            hi = np.where(beta < 0, np.minimum(hi, tcut), hi)
            ok &= (beta != 0) | (alpha >= -EDGE_TOL * np.hypot(ee, en))
        ok &= lo <= hi
        ray, fc, lo, hi = ray[ok], fc[ok], lo[ok], hi[ok]
        lo = np.maximum(lo, t0[ray])
        hi = np.minimum(hi, t1[ray])
        # coverage: sort the intervals by ray and entry; the ground ends at the first gap
        o = np.lexsort((lo, ray))
        ray, fc, lo, hi = ray[o], fc[o], lo[o], hi[o]
        end = t0.copy()  # rays with no face at their start: the ground ends at once
        left = np.ones(r, dtype=bool)
        if len(ray):
            grp = np.ones(len(ray), dtype=bool)
            grp[1:] = ray[1:] != ray[:-1]
            gstart = np.flatnonzero(grp)
            # running maximum of the exits within each ray (offset by ray so groups do not mix)
            big = (np.abs(t1).max() + np.abs(t0).max() + 1.0) * 4.0
            key = hi + ray * big
            runmax = np.maximum.accumulate(key) - ray * big
            prev = np.empty_like(runmax)
            prev[1:] = runmax[:-1]
            prev[gstart] = t0[ray[gstart]]  # the first face of a ray must reach its start
            gap = lo > prev + EDGE_TOL
            gidx = np.flatnonzero(gap)
            # end of each ray's ground: the first gap's prev, else the ray's last running maximum
            last = np.r_[gstart[1:], len(ray)] - 1
            end[ray[gstart]] = runmax[last]
            fg_ray, fg_at = np.unique(ray[gidx], return_index=True)
            end[fg_ray] = prev[gidx[fg_at]]
            left[:] = True
            left[ray[gstart]] = False
            left[fg_ray] = True
            left |= end < t1 - EDGE_TOL
            keep = lo <= end[ray] + EDGE_TOL
            ray, fc, lo, hi = ray[keep], fc[keep], lo[keep], np.minimum(hi[keep], end[ray[keep]])
        end = np.where(left, end, t1)
        # breakpoints: every entry and exit, on its face's plane
        bray = np.concatenate((ray, ray))
        bt = np.concatenate((lo, hi))
        bf = np.concatenate((fc, fc))
        bz = self._point_z(bf, n0[bray] + bt * dn[bray], e0[bray] + bt * de[bray])
        return _assemble(r, bray, bt, bz, end, left)

    def _point_z(self, fc: I64, pn: F64, pe: F64) -> F64:
        """Elevation of points of faces ``fc``: along the nearest edge where a point lies on one
        (as the walk takes it: the same from both faces, well conditioned on a sliver), else on
        the face's plane.
        """
        tri = self._tri[fc]
        best = np.full(len(fc), np.inf)
        zedge = np.zeros(len(fc))
        for k in range(3):
            ae, an = tri[:, 2 * k], tri[:, 2 * k + 1]
            ee, en = tri[:, (2 * k + 2) % 6] - ae, tri[:, (2 * k + 3) % 6] - an
            el2 = ee * ee + en * en
            dist = np.abs(ee * (pn - an) - en * (pe - ae)) / np.sqrt(el2)
            w = np.clip(((pe - ae) * ee + (pn - an) * en) / el2, 0.0, 1.0)
            za, zb = self.z[self.faces[fc, k]], self.z[self.faces[fc, (k + 1) % 3]]
            closer = dist < best
            best = np.where(closer, dist, best)
            zedge = np.where(closer, za + w * (zb - za), zedge)
        return np.where(best <= 16 * EDGE_TOL, zedge, self._plane_z(fc, pn, pe))

    @staticmethod
    def _ray_cells(gr: _Grid, n0: F64, e0: F64, dn: F64, de: F64, length: F64) -> tuple[I64, I64]:
        """(ray, cell) of every cell of grid ``gr`` each ray segment passes through (exact traversal).

        The cell boundaries a segment crosses split it into pieces; the cell of
        each piece's middle is a cell it passes through.
        """
        x0, y0 = (e0 - gr.e0) / gr.g, (n0 - gr.n0) / gr.g
        lx, ly = de * length / gr.g, dn * length / gr.g
        x1, y1 = x0 + lx, y0 + ly
        r = len(n0)
        rid = np.arange(r, dtype=np.int64)
        parts_t = [np.zeros(r), np.ones(r)]
        parts_r = [rid, rid]
        for a, b, d in ((x0, x1, lx), (y0, y1, ly)):
            k0 = np.ceil(np.minimum(a, b))
            k1 = np.floor(np.maximum(a, b))
            cnt = np.maximum(k1 - k0 + 1, 0).astype(np.int64)
            cnt = np.where(d != 0, cnt, 0)
            rr = np.repeat(rid, cnt)
            pos = np.arange(int(cnt.sum()), dtype=np.float64) - np.repeat(np.cumsum(cnt) - cnt, cnt)
            line = np.repeat(k0, cnt) + pos
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                parts_t.append((line - a[rr]) / d[rr])
            parts_r.append(rr)
        t = np.concatenate(parts_t)
        rr = np.concatenate(parts_r)
        o = np.lexsort((t, rr))
        t, rr = np.clip(t[o], 0.0, 1.0), rr[o]
        same = rr[1:] == rr[:-1]
        pr, tm = rr[:-1][same], 0.5 * (t[1:] + t[:-1])[same]
        # the cell of each piece's middle (faces are registered EDGE_TOL beyond their boxes, so a
        # segment along a cell boundary also meets the faces on the other side of it)
        ix = np.floor(x0[pr] + tm * lx[pr])
        iy = np.floor(y0[pr] + tm * ly[pr])
        ok = (ix >= 0) & (ix < gr.nx) & (iy >= 0) & (iy < gr.ny)
        return pr[ok], (iy * gr.nx + ix)[ok].astype(np.int64)


def _edge_terms(tri: F64, k: int, on: F64, oe: F64, rn: F64, re: F64) -> tuple[F64, F64, F64, F64]:
    """Edge ``k`` of faces ``tri`` against rays from (on, oe) heading (rn, re).

    Returns the edge vector (east, north) and ``alpha + t beta``: twice the
    signed area of the edge and the ray's point at distance ``t``, positive
    on the face's side (inside, the faces being counter-clockwise).
    """
    ae, an = tri[:, 2 * k], tri[:, 2 * k + 1]
    ee, en = tri[:, (2 * k + 2) % 6] - ae, tri[:, (2 * k + 3) % 6] - an
    return ee, en, ee * (on - an) - en * (oe - ae), ee * rn - en * re


def _assemble(r: int, ray: I64, t: F64, z: F64, end: F64, left: NDArray[np.bool_]) -> Sections:
    """Sections from breakpoints in any order: sorted by ray and distance, one per distance."""
    o = np.lexsort((t, ray))
    ray, t, z = ray[o], t[o], z[o]
    new = np.ones(len(t), dtype=bool)
    new[1:] = (ray[1:] != ray[:-1]) | (t[1:] - t[:-1] > EDGE_TOL)
    ray, t, z = ray[new], t[new], z[new]
    first = np.searchsorted(ray, np.arange(r + 1))
    return Sections(first.astype(np.int64), t, z, end, left)


def _neighbours(f: I64, npts: int) -> I64:
    """For each face and edge ``k`` (vertex ``k`` to ``k + 1``) the face sharing that edge, -1 on the border.

    An edge shared by more than two faces (not a proper TIN) pairs its faces in
    sort order; a walk that goes astray there stalls and falls back to the grid.
    """
    a = f.ravel()
    b = f[:, [1, 2, 0]].ravel()
    key = np.minimum(a, b) * np.int64(npts) + np.maximum(a, b)
    o = np.argsort(key, kind="stable")
    ks = key[o]
    pair = np.flatnonzero(ks[1:] == ks[:-1])
    nb = np.full(len(a), -1, dtype=np.int64)
    nb[o[pair]] = o[pair + 1] // 3
    nb[o[pair + 1]] = o[pair] // 3
    return nb.reshape(-1, 3)


def _build_grids(n: F64, e: F64, f: I64) -> tuple[_Grid, ...]:
    """The locator's grids, finest first: the faces whose box is within :data:`_LEVEL_RATIO` of
    the median face's in the first, the rest split again by the same rule.

    Delaunay fills the inside of a bend and the hull with long faces a thousand times the
    size of the surveyed ones; in one grid they would set the cell size (or fill every cell
    they cross), and every lookup on the corridor would test dozens of faces. By size, each
    grid's faces are alike, so a cell holds a few of them; a point is found in the first grid
    unless it lies in one of the long faces.
    """
    fe, fn = e[f], n[f]
    x0, x1 = fe.min(axis=1), fe.max(axis=1)
    y0, y1 = fn.min(axis=1), fn.max(axis=1)
    size = np.maximum(x1 - x0, y1 - y0)
    left = np.arange(len(f), dtype=np.int64)
    grids = []
    while left.size:  # at least half the faces left go in each grid (the median is in it)
        here = size[left] <= _LEVEL_RATIO * float(np.median(size[left]))
        ids = left[here]
        grids.append(_build_grid(x0[ids], x1[ids], y0[ids], y1[ids], ids))
        left = left[~here]
    return tuple(grids)


def _build_grid(x0: F64, x1: F64, y0: F64, y1: F64, ids: I64) -> _Grid:
    """A uniform grid over the boxes (``x`` east, ``y`` north) of faces ``ids``: each cell lists
    the faces reaching it.

    Only the cells some face reaches are stored (their ids sorted, looked up by binary
    search), so a long narrow TIN along a corridor costs what its faces cost, not what its
    bounding box would: the cell size follows the faces, never the box.
    """
    m = len(ids)
    emin, nmin = float(x0.min()), float(y0.min())
    w = max(float(x1.max()) - emin, 1e-9)
    h = max(float(y1.max()) - nmin, 1e-9)
    # about one face's box a cell: a point meets a few candidates (cells no face reaches are not stored,
    # so the box's empty parts cost nothing); a cell id iy * nx + ix stays exact in an int64 and a float
    g = max(float(np.mean(np.maximum(x1 - x0, y1 - y0))), math.sqrt(w * h) * 2.0 ** -24, 1e-9)
    while True:
        nx, ny = int(w / g) + 1, int(h / g) + 1
        ix0 = np.floor((x0 - EDGE_TOL - emin) / g).clip(0, nx - 1).astype(np.int64)
        ix1 = np.floor((x1 + EDGE_TOL - emin) / g).clip(0, nx - 1).astype(np.int64)
        iy0 = np.floor((y0 - EDGE_TOL - nmin) / g).clip(0, ny - 1).astype(np.int64)
        iy1 = np.floor((y1 + EDGE_TOL - nmin) / g).clip(0, ny - 1).astype(np.int64)
        cols, rows = ix1 - ix0 + 1, iy1 - iy0 + 1
        cnt = cols * rows
        total = int(cnt.sum())
        if total <= _ENTRIES_PER_FACE * m + 4096 or g > 1e12:
            break
        g *= 1.5
    fid = np.repeat(np.arange(m, dtype=np.int64), cnt)
    k = np.arange(total, dtype=np.int64) - np.repeat(np.cumsum(cnt) - cnt, cnt)
    cw = cols[fid]
    cell = (iy0[fid] + k // cw) * nx + ix0[fid] + k % cw
    o = np.argsort(cell, kind="stable")
    cell = cell[o]
    keys, first = np.unique(cell, return_index=True)
    start = np.append(first, total).astype(np.int64)
    return _Grid(g, emin, nmin, nx, ny, keys.astype(np.int64), start, ids[fid[o]])


def read_ground_csv(path: str | Path, key: str = "ground.file") -> Ground:
    """Read ground points ``point,northing,easting,elevation[,description]`` and triangulate them.

    The file is read by the staked-file reader's rules
    (:func:`stakeout.shots.read_shots`: a header row detected by its column
    names, encodings, delimiters, plain-ASCII numbers, line numbers in
    errors, at most 256 MiB); every row needs an elevation, coordinates lie
    within ``MAX_COORDINATE`` and elevations within ``MAX_HEIGHT`` (job units).

    Parameters
    ----------
    path : str or Path
        The CSV file.
    key : str
        The job-file key that named it, for messages.

    Returns
    -------
    Ground
        The Delaunay triangulation of the points (no breaklines).

    Raises
    ------
    JobFileError
        Unreadable file, a malformed row (by line number), a missing
        elevation, an out-of-range coordinate, duplicate points, or points
        that do not span an area.
    """
    from .shots import read_shots

    p = Path(path)
    head = f"{key} = {str(path)!r}"
    try:
        shots = read_shots(p)
    except StakedFileError as exc:
        msg, sf = str(exc), f"staked file {str(p)!r}"
        msg = msg[len(sf):] if msg.startswith(sf) else f": {msg}"
        if "; give the order with --columns" in msg:  # the job file has no --columns: name them instead
            msg = msg[:msg.index("; give the order with --columns")] + (
                "; name the columns in the header instead: point,northing,easting,elevation")
        raise JobFileError(head + msg.replace("staked file", "ground file").replace("no shots", "no ground points")
                           .replace("shots", "ground points").replace("staked-points", "ground-points")) from None
    missing = np.flatnonzero(np.isnan(shots.elevation))
    if missing.size:
        i = int(missing[0])
        raise JobFileError(f"{head} line {shots.line[i]}: point {shots.point[i]!r} has no elevation; every ground "
                           "point needs one")
    for arr, what in ((shots.northing, "northing"), (shots.easting, "easting")):
        bad = np.flatnonzero(np.abs(arr) > MAX_COORDINATE)
        if bad.size:
            i = int(bad[0])
            raise JobFileError(f"{head} line {shots.line[i]}: {what} {float(arr[i])!r} is out of range; coordinates must "
                               f"lie within -{MAX_COORDINATE:,.0f} to {MAX_COORDINATE:,.0f} job units")
    return Ground.from_points(shots.northing, shots.easting, shots.elevation, head, shots.point, shots.line)
