"""Invented grounds for the ground, slope-stake and volume tests.

* ``jittered``: a Delaunay TIN of a jittered grid (scipy builds it);
* ``grid_tin``: a regular grid split into triangles along one diagonal, so
  that a ground piecewise linear in the easting with breaks on grid columns
  (a fold, a ridge) is reproduced exactly by the TIN;
* ``plane``: elevations on one plane.
"""

from __future__ import annotations

import numpy as np

from stakeout.ground import Ground

N0, E0 = 1_840_000.0, 6_485_000.0  # grid coordinates of the invented site (US feet-sized numbers)


def plane(a: float, gx: float, gy: float):
    """z = a + gx (e - E0) + gy (n - N0)."""
    return lambda n, e: a + gx * (np.asarray(e) - E0) + gy * (np.asarray(n) - N0)


def jittered(k: int, spacing: float, zfun, seed: int = 1, jitter: float = 0.3) -> Ground:
    """Delaunay TIN of a ``k`` x ``k`` jittered grid starting at (N0, E0)."""
    rng = np.random.default_rng(seed)
    gx, gy = np.meshgrid(np.arange(k, dtype=float), np.arange(k, dtype=float))
    e = E0 + spacing * (gx + rng.uniform(-jitter, jitter, gx.shape)).ravel()
    n = N0 + spacing * (gy + rng.uniform(-jitter, jitter, gy.shape)).ravel()
    return Ground.from_points(n, e, zfun(n, e), "test ground")


def grid_faces(nx: int, ny: int) -> np.ndarray:
    """Faces of an ``nx`` x ``ny`` point grid (row-major, easting fastest), two a square."""
    i, j = np.meshgrid(np.arange(nx - 1), np.arange(ny - 1))
    a = (j * nx + i).ravel()
    b, c, d = a + 1, a + nx, a + nx + 1
    return np.concatenate((np.c_[a, b, d], np.c_[a, d, c]))


def grid_tin(nx: int, ny: int, spacing: float, zfun, drop=None) -> Ground:
    """A regular-grid TIN from (N0, E0); ``drop`` (face indices) makes holes."""
    gx, gy = np.meshgrid(np.arange(nx, dtype=float), np.arange(ny, dtype=float))
    e, n = E0 + spacing * gx.ravel(), N0 + spacing * gy.ravel()
    f = grid_faces(nx, ny)
    if drop is not None:
        f = np.delete(f, drop, axis=0)
    return Ground.from_faces(n, e, zfun(n, e), f, "test ground")
