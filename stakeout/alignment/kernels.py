"""Vectorised kernels: evaluate and project points on whole arrays of elements.

A kernel works on the per-element arrays (:class:`ElementArrays`) an :class:`~.alignment.Alignment`
keeps (``n0``, ``e0``, ``az0``, ``sin0``, ``cos0`` at each element's start,
``k0``/``k1`` signed curvature at its ends, ``length``) and on numpy arrays
of points; it never loops over points.  Each element class names its
kernel; lines and arcs share the constant-curvature kernel.

Conventions: azimuths in degrees clockwise from grid north; offsets
negative left, positive right; curvature positive turning right.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, NamedTuple

import numpy as np
from numpy.typing import NDArray

from ..angles import sincosd

if TYPE_CHECKING:  # pragma: no cover - the inverse's cache, typed only
    from .index import ElementGrid

__all__ = ["ElementArrays", "Kernel", "Nearest", "ConstantCurvature", "CONSTANT_CURVATURE", "Clothoid", "CLOTHOID"]

F = NDArray[np.float64]


@dataclass
class ElementArrays:
    """One entry per element, in order, for the evaluation and the inverse; the inverse's
    caches (filled on first use).

    ``start``/``length`` internal station and length; ``n0, e0``/``n1, e1`` the ends;
    ``az0`` the start azimuth (degrees) with its sine and cosine; ``k0``/``k1`` the kernel
    parameters (the curvature at each end); ``kernel_of`` the index in ``kernels`` of each
    element's kernel; ``ap_*`` the angle points: station, coordinates and the azimuths back
    and ahead.
    """

    start: F
    length: F
    n0: F
    e0: F
    n1: F
    e1: F
    az0: F
    sin0: F
    cos0: F
    k0: F
    k1: F
    kernels: list[Kernel]
    kernel_of: NDArray[np.int64]
    ap_station: F
    ap_n: F
    ap_e: F
    ap_back: F
    ap_ahead: F
    grid: tuple[ElementGrid | None] | None = None  # a tuple, so that "no grid" is cached too
    middles: tuple[F, F] | None = None
    externals: F | None = None  # per curve, PI to the curve (Alignment.curve_externals)


class Nearest(NamedTuple):
    """Nearest points of elements to points, one entry per (point, element) pair.

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

    #: Relative cost of :meth:`nearest` a pair: the inverse solves the cheaper kernels first, and
    #: their exact distances rule out pairs of the dearer ones.
    cost = 1.0

    def evaluate(self, a: ElementArrays, idx: NDArray[np.int64], ds: F, o: F) -> tuple[F, F, F]:
        """Northing, easting and azimuth (degrees, not normalised) at ``ds``
        along elements ``idx`` and offsets ``o``.
        """
        raise NotImplementedError

    def nearest(self, a: ElementArrays, el: NDArray[np.int64], n: F, e: F, lo: F, hi: F) -> Nearest:
        """Nearest point of element ``el[i]`` to the point ``(n[i], e[i])``,
        the distance along clamped to ``[lo[i], hi[i]]``, for every pair ``i``.
        """
        raise NotImplementedError


    def direction(self, a: ElementArrays, idx: NDArray[np.int64], s: F) -> tuple[F, F]:
        """Sine and cosine of the tangent azimuth at ``s`` along elements ``idx``."""
        raise NotImplementedError


class ConstantCurvature(Kernel):
    """Lines (curvature 0) and circular arcs: closed forms.

    A point at distance ``ds`` from the start lies on the chord of half the
    turn: chord = 2 sin(k ds / 2) / k (``ds`` on a line); directions are
    formed by angle addition from the element's exact start direction, so a
    line keeps its direction exactly.
    """

    def evaluate(self, a: ElementArrays, idx: NDArray[np.int64], ds: F, o: F) -> tuple[F, F, F]:
        k = a.k0[idx]
        half = 0.5 * k * ds  # half the turn from the element's start, radians
        sh, ch = np.sin(half), np.cos(half)
        # chord = 2 sin(half) / k, and just ds on lines (k = 0)
        chord = np.where(k == 0.0, ds, 2.0 * sh / np.where(k == 0.0, 1.0, k))
        s0, c0 = a.sin0[idx], a.cos0[idx]
        sm, cm = s0 * ch + c0 * sh, c0 * ch - s0 * sh  # at the chord: start + half
        s2, c2 = 2.0 * sh * ch, 1.0 - 2.0 * sh * sh  # the whole turn
        st, ct = s0 * c2 + c0 * s2, c0 * c2 - s0 * s2
        az = a.az0[idx] + np.degrees(2.0 * half)
        north = a.n0[idx] + chord * cm - o * st
        east = a.e0[idx] + chord * sm + o * ct
        return north, east, az

    def nearest(self, a: ElementArrays, el: NDArray[np.int64], n: F, e: F, lo: F, hi: F) -> Nearest:
        k = a.k0[el]
        az0, n0, e0 = a.az0[el], a.n0[el], a.e0[el]
        # lines: along the element's exact start direction
        s_loc = (e - e0) * a.sin0[el] + (n - n0) * a.cos0[el]
        lo, hi = lo.copy(), hi.copy()
        arc = np.flatnonzero(k != 0.0)
        if arc.size:  # arcs: the angle swept from the start radius, about the centre
            ka, sa, ca = k[arc], a.sin0[el[arc]], a.cos0[el[arc]]
            r = 1.0 / np.abs(ka)
            turn = np.sign(ka)
            # centre = start + turn * R * right normal; right normal (E, N) = (cos, -sin)
            c_e = e0[arc] + turn * r * ca
            c_n = n0[arc] - turn * r * sa
            phi = np.degrees(np.arctan2(e[arc] - c_e, n[arc] - c_n))
            start_radial = az0[arc] - 90.0 * turn  # direction centre -> start
            length = a.length[el[arc]]
            swept_deg = np.degrees(np.abs(ka) * length)
            u = np.mod((phi - start_radial) * turn, 360.0)
            u = np.mod(u - swept_deg / 2.0 + 180.0, 360.0) - 180.0 + swept_deg / 2.0
            s_loc[arc] = np.radians(u) * r
            lo[arc], hi[arc] = 0.0, length  # an arc never extends past its ends
        s_c = np.clip(s_loc, lo, hi)
        clamped = s_c != s_loc
        # the element's point at s_c: along the start direction on a line, along the chord on an arc
        chord = s_c.copy()
        sm, cm = a.sin0[el], a.cos0[el]
        if arc.size:
            sa_c = s_c[arc]
            chord[arc] = sa_c * np.sinc(k[arc] * sa_c / (2.0 * np.pi))
            sm[arc], cm[arc] = sincosd(az0[arc] + np.degrees(k[arc] * sa_c) / 2.0)
        qn = n0 + chord * cm
        qe = e0 + chord * sm
        return Nearest(s_c, clamped, qn, qe, np.hypot(n - qn, e - qe))

    def direction(self, a: ElementArrays, idx: NDArray[np.int64], s: F) -> tuple[F, F]:
        return sincosd(a.az0[idx] + np.degrees(a.k0[idx] * s))


CONSTANT_CURVATURE = ConstantCurvature()


class Clothoid(Kernel):
    """Clothoids: curvature linear in length, from ``k0`` to ``k1``.

    Positions by fixed-node Gauss-Legendre quadrature of the heading and the
    inverse by a safeguarded Newton iteration on the osculating circle
    (:mod:`.clothoid`), both on whole arrays.
    """

    cost = 10.0

    def evaluate(self, a: ElementArrays, idx: NDArray[np.int64], ds: F, o: F) -> tuple[F, F, F]:
        from .clothoid import clothoid_points

        n, e, az = clothoid_points(ds, o, a.n0[idx], a.e0[idx], a.az0[idx], a.k0[idx], a.k1[idx],
                                   a.length[idx])
        return n, e, az

    def nearest(self, a: ElementArrays, el: NDArray[np.int64], n: F, e: F, lo: F, hi: F) -> Nearest:
        from .clothoid import clothoid_project

        length = a.length[el]
        s, off, dist = clothoid_project(n, e, a.n0[el], a.e0[el], a.az0[el], a.k0[el], a.k1[el],
                                        length)
        # the foot: back from the point along the normal by the offset, or the end it clamped to
        st, ct = self.direction(a, el, s)
        at_start, at_end = s <= 0.0, s >= length
        qn = np.where(at_start, a.n0[el], np.where(at_end, a.n1[el], n + off * st))
        qe = np.where(at_start, a.e0[el], np.where(at_end, a.e1[el], e - off * ct))
        return Nearest(s, at_start | at_end, qn, qe, dist)

    def direction(self, a: ElementArrays, idx: NDArray[np.int64], s: F) -> tuple[F, F]:
        k0, k1, length = a.k0[idx], a.k1[idx], a.length[idx]
        tau = k0 * s + (k1 - k0) * s * s / (2.0 * length)
        return sincosd(a.az0[idx] + np.degrees(tau))


CLOTHOID = Clothoid()
