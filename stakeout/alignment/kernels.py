"""Vectorised kernels: evaluate and project points on whole arrays of elements.

A kernel works on the per-element arrays an :class:`~.alignment.Alignment`
keeps (``n0``, ``e0``, ``az0``, ``sin0``, ``cos0`` at each element's start,
``k0``/``k1`` signed curvature at its ends, ``length``) and on numpy arrays
of points; it never loops over points.  Each element class names its
kernel; lines and arcs share the constant-curvature kernel.

Conventions: azimuths in degrees clockwise from grid north; offsets
negative left, positive right; curvature positive turning right.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import NDArray

from ..angles import sincosd

__all__ = ["Kernel", "Nearest", "ConstantCurvature", "CONSTANT_CURVATURE", "Clothoid", "CLOTHOID"]

Arrays = dict[str, NDArray[np.float64]]
F = NDArray[np.float64]


class Nearest(NamedTuple):
    """Nearest points of candidate elements, one row per point, one column per candidate.

    ``s`` is the distance along the element (clamped to it, except that the
    first and last tangents extend), ``clamped`` whether clamping moved it,
    ``northing``/``easting`` the element's point there and ``distance`` the
    distance to it.
    """

    s: F
    clamped: NDArray[np.bool_]
    northing: F
    easting: F
    distance: F


class Kernel:
    """Interface of a kernel (see the module docstring)."""

    def evaluate(self, a: Arrays, idx: NDArray[np.int64], ds: F, o: F) -> tuple[F, F, F]:
        """Northing, easting and azimuth (degrees, not normalised) at ``ds``
        along elements ``idx`` and offsets ``o``.
        """
        raise NotImplementedError

    def nearest(self, a: Arrays, sel: NDArray[np.int64], n: F, e: F, lo: F, hi: F,
                cap: F | None = None) -> Nearest:
        """Nearest point of each element ``sel`` to each point (n, e), with the
        distance along clamped to [lo, hi] per element.

        ``cap`` (per point, if given) is a distance already found on other
        elements: a kernel may skip pairs that cannot come nearer (their
        distance is then infinite).
        """
        raise NotImplementedError

    def direction(self, a: Arrays, idx: NDArray[np.int64], s: F) -> tuple[F, F]:
        """Sine and cosine of the tangent azimuth at ``s`` along elements ``idx``."""
        raise NotImplementedError


class ConstantCurvature(Kernel):
    """Lines (curvature 0) and circular arcs: closed forms.

    A point at distance ``ds`` from the start lies on the chord of half the
    turn: chord = 2 sin(k ds / 2) / k (``ds`` on a line); directions are
    formed by angle addition from the element's exact start direction, so a
    line keeps its direction exactly.
    """

    def evaluate(self, a: Arrays, idx: NDArray[np.int64], ds: F, o: F) -> tuple[F, F, F]:
        k = a["k0"][idx]
        half = 0.5 * k * ds  # half the turn from the element's start, radians
        sh, ch = np.sin(half), np.cos(half)
        # chord = 2 sin(half) / k, and just ds on lines (k = 0)
        chord = np.where(k == 0.0, ds, 2.0 * sh / np.where(k == 0.0, 1.0, k))
        s0, c0 = a["sin0"][idx], a["cos0"][idx]
        sm, cm = s0 * ch + c0 * sh, c0 * ch - s0 * sh  # at the chord: start + half
        s2, c2 = 2.0 * sh * ch, 1.0 - 2.0 * sh * sh  # the whole turn
        st, ct = s0 * c2 + c0 * s2, c0 * c2 - s0 * s2
        az = a["az0"][idx] + np.degrees(2.0 * half)
        north = a["n0"][idx] + chord * cm - o * st
        east = a["e0"][idx] + chord * sm + o * ct
        return north, east, az

    def nearest(self, a: Arrays, sel: NDArray[np.int64], n: F, e: F, lo: F, hi: F,
                cap: F | None = None) -> Nearest:
        k = a["k0"][sel]
        length = a["length"][sel]
        az0 = a["az0"][sel]
        n0, e0 = a["n0"][sel][None, :], a["e0"][sel][None, :]
        sa, ca = a["sin0"][sel], a["cos0"][sel]  # exact start directions, computed once
        dn = n[:, None] - n0
        de = e[:, None] - e0
        is_arc = k != 0.0
        # lines: along the element's direction
        along = de * sa + dn * ca
        # arcs: angle swept from the start radius, about the centre
        r = np.where(is_arc, 1.0 / np.abs(np.where(is_arc, k, 1.0)), 0.0)
        turn = np.sign(k)
        # centre = start + turn * R * right normal; right normal (E, N) = (cos, -sin)
        c_e = a["e0"][sel] + turn * r * ca
        c_n = a["n0"][sel] - turn * r * sa
        phi = np.degrees(np.arctan2(e[:, None] - c_e[None, :], n[:, None] - c_n[None, :]))
        start_radial = az0 - 90.0 * turn  # direction centre -> start
        swept_deg = np.where(is_arc, np.degrees(np.abs(k) * length), 0.0)
        u = np.mod((phi - start_radial[None, :]) * turn[None, :], 360.0)
        u = np.mod(u - swept_deg / 2.0 + 180.0, 360.0) - 180.0 + swept_deg / 2.0
        s_loc = np.where(is_arc[None, :], np.radians(u) * r, along)
        # an arc never extends past its ends
        lo = np.where(is_arc, 0.0, lo)
        hi = np.where(is_arc, length, hi)
        s_c = np.clip(s_loc, lo[None, :], hi[None, :])
        clamped = s_c != s_loc
        # the element's point at s_c and the distance to it
        turn_deg = np.degrees(k[None, :] * s_c)
        chord = s_c * np.sinc(k[None, :] * s_c / (2.0 * np.pi))
        sm, cm = sincosd(az0[None, :] + turn_deg / 2.0)
        qn = n0 + chord * cm
        qe = e0 + chord * sm
        dist = np.hypot(n[:, None] - qn, e[:, None] - qe)
        return Nearest(s_c, clamped, qn, qe, dist)

    def direction(self, a: Arrays, idx: NDArray[np.int64], s: F) -> tuple[F, F]:
        return sincosd(a["az0"][idx] + np.degrees(a["k0"][idx] * s))


CONSTANT_CURVATURE = ConstantCurvature()


class Clothoid(Kernel):
    """Clothoids: curvature linear in length, from ``k0`` to ``k1``.

    Positions by fixed-node Gauss-Legendre quadrature of the heading and the
    inverse by a safeguarded Newton iteration on the osculating circle
    (:mod:`.clothoid`), both on whole arrays.
    """

    def evaluate(self, a: Arrays, idx: NDArray[np.int64], ds: F, o: F) -> tuple[F, F, F]:
        from .clothoid import clothoid_points

        n, e, az = clothoid_points(ds, o, a["n0"][idx], a["e0"][idx], a["az0"][idx], a["k0"][idx], a["k1"][idx],
                                   a["length"][idx])
        return n, e, az

    def nearest(self, a: Arrays, sel: NDArray[np.int64], n: F, e: F, lo: F, hi: F,
                cap: F | None = None) -> Nearest:
        from .clothoid import clothoid_project

        length = a["length"][sel]
        mn, me = self._mid(a)
        # every point of a spiral lies within L/2 of its middle point (by arc length, so by distance too):
        # a pair whose lower bound exceeds another pair's upper bound (or ``cap``) cannot be the nearest
        dm = np.hypot(n[:, None] - mn[sel][None, :], e[:, None] - me[sel][None, :])
        lower = dm - length[None, :] / 2.0
        limit = np.min(dm + length[None, :] / 2.0, axis=1)
        if cap is not None:
            limit = np.minimum(limit, cap)
        pi, kj = np.nonzero(lower <= limit[:, None])
        el = sel[kj]
        s_f, off_f, dist_f = clothoid_project(n[pi], e[pi], a["n0"][el], a["e0"][el], a["az0"][el], a["k0"][el],
                                              a["k1"][el], a["length"][el])
        shape = (n.size, sel.size)
        s_c = np.zeros(shape)
        dist = np.full(shape, np.inf)
        qn = np.zeros(shape)
        qe = np.zeros(shape)
        s_c[pi, kj] = s_f
        dist[pi, kj] = dist_f
        # the foot: back from the point along the normal by the offset, or the end it clamped to
        st, ct = self.direction(a, el, s_f)
        at_start, at_end = s_f <= 0.0, s_f >= a["length"][el]
        qn[pi, kj] = np.where(at_start, a["n0"][el], np.where(at_end, a["n1"][el], n[pi] + off_f * st))
        qe[pi, kj] = np.where(at_start, a["e0"][el], np.where(at_end, a["e1"][el], e[pi] - off_f * ct))
        clamped = (s_c <= 0.0) | (s_c >= length[None, :])
        return Nearest(s_c, clamped, qn, qe, dist)

    @staticmethod
    def _mid(a: Arrays) -> tuple[F, F]:
        """Middle points of every element (computed once per alignment)."""
        cached = a.get("_mid")
        if cached is None:
            from .clothoid import clothoid_points

            half = a["length"] / 2.0
            mn, me, _ = clothoid_points(half, 0.0, a["n0"], a["e0"], a["az0"], a["k0"], a["k1"], a["length"])
            cached = np.stack([mn, me])
            a["_mid"] = cached
        return cached[0], cached[1]

    def direction(self, a: Arrays, idx: NDArray[np.int64], s: F) -> tuple[F, F]:
        k0, k1, length = a["k0"][idx], a["k1"][idx], a["length"][idx]
        tau = k0 * s + (k1 - k0) * s * s / (2.0 * length)
        return sincosd(a["az0"][idx] + np.degrees(tau))


CLOTHOID = Clothoid()
