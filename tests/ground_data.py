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


def rolling_ground_csv(path, e_end: float = 2151.0):
    """A rolling ground of jittered points (seed 7) around northing 1000, from easting 1950 to
    ``e_end``, written as a ground CSV (4 decimals); returns the points ``n, e, z`` unrounded.
    """
    from pathlib import Path

    rng = np.random.default_rng(7)
    n, e = np.meshgrid(np.arange(900.0, 1101.0, 8.0), np.arange(1950.0, e_end, 8.0))
    n = n.ravel() + rng.uniform(-2.5, 2.5, n.size)
    e = e.ravel() + rng.uniform(-2.5, 2.5, e.size)
    z = 51.0 + 1.5 * np.sin((n - 1000.0) / 9.0) + 0.8 * np.cos((e - 2000.0) / 13.0)
    Path(path).write_text(
        "point,northing,easting,elevation\n"
        + "\n".join(f"G{i + 1},{a:.4f},{b:.4f},{c:.4f}" for i, (a, b, c) in enumerate(zip(n, e, z))) + "\n",
        encoding="utf-8")
    return n, e, z
