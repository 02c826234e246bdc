"""Clothoids (Euler spirals): evaluation, inverse, and the figures of spiral tables.

Conventions
-----------
Local frame of an element: ``x`` along its start tangent, ``y`` square to it,
positive to the RIGHT (so ``y > 0`` where the element turns right).  Signed
curvature ``k`` is positive turning right (clockwise), ``k = turn / radius``
in 1/job unit.  A clothoid's curvature is linear in arc length ``s``::

    k(s)   = k0 + (k1 - k0) s / L
    tau(s) = k0 s + (k1 - k0) s^2 / (2 L)        heading change, radians, + clockwise
    x(s)   = int_0^s cos tau(u) du,   y(s) = int_0^s sin tau(u) du

Grid position: ``N = n0 + x cos(az0) - y sin(az0)``,
``E = e0 + x sin(az0) + y cos(az0)``; azimuths are degrees clockwise from
grid north; offsets are perpendicular, negative left, positive right looking
up-station.  Lengths, offsets and coordinates are in job units.

How the integral is computed (and why)
--------------------------------------
``x + i y = int_0^s exp(i tau(u)) du`` with ``tau`` quadratic.  Closed forms
through Fresnel integrals (completing the square) lose every digit when the
curvature changes little along the element (a spiral between two nearly equal
arcs, or an arc), and series in ``tau`` need many terms in two variables once
the start curvature is not zero.  Gauss-Legendre quadrature needs neither: the
integrand is entire, and an ``n``-point rule integrates ``exp(i phi(t))`` over
a panel with an error that falls like ``M^(2n) / (2n)!`` where ``M`` bounds
the phase change across the panel.  With 8 nodes and panels on which
``max|k| * panel length <= 2`` radians, the error measured against an
80-point rule over random quadratic phases is below ``2e-12`` of the panel
length (the required tolerance is ``1e-9`` of the element length).  A road
spiral (``theta = L / 2R`` up to 1 radian) takes one panel: 16 sines and
cosines per point.  Larger heading changes take ``ceil(max|k| s / 2)``
panels, chosen per point; points are grouped by panel count (a loop over the
few distinct counts, never over points).  Arcs (``k0 == k1``) and lines fall
out of the same rule to rounding.

The inverse (:func:`clothoid_project`) solves ``f(s) = (P - C(s)) . T(s) = 0``
where ``C`` is the point of the spiral at ``s``, ``T = (cos tau, sin tau)``
its unit tangent and ``N = (-sin tau, cos tau)`` its unit normal to the
right (local frame).  Since ``C' = T`` and ``T' = k(s) N``::

    f'(s) = -1 + k(s) * ((P - C(s)) . N(s)) = -(1 - k d)

with ``d`` the signed offset of ``P`` from the tangent line at ``s``
(positive right; the sign is ``+`` because both ``k`` and ``N`` are taken
positive to the right).  It is ``-1`` on a line, and zero at the centre of
curvature (``d = 1/k`` on the inside), where every point of the osculating
circle is equally near.  The step taken is Newton's step on the osculating
circle: ``ds = atan2(k f, 1 - k d) / k`` (``ds = f`` where ``k = 0``), which
equals the plain Newton step ``-f / f' = f / (1 - k d)`` to first order, so
it keeps Newton's quadratic convergence, but it is exact for an arc whatever
the offset and never jumps more than half the osculating circle where
``1 - k d`` is small.  Iterates are clamped to ``[0, L]``.  Where the
distance along the spiral may have several minima (spirals turning more
than a quarter turn, points farther than about a radius on the concave
side) the start, or a second search, comes from samples along the spiral;
see :func:`clothoid_project`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..angles import normalize_azimuth, sincosd
from ..errors import GeometryError

__all__ = [
    "clothoid_xy",
    "clothoid_points",
    "clothoid_project",
    "SpiralFigures",
    "spiral_figures",
    "SpiralCurveTangents",
    "spiral_curve_tangents",
]

FloatArray = NDArray[np.float64]

_NODES = 8  # Gauss-Legendre nodes per panel
_LEG_X, _LEG_W = np.polynomial.legendre.leggauss(_NODES)
_FRACTIONS = tuple(float(v) for v in (1.0 + _LEG_X) / 2.0)  # node positions in a panel, 0..1
_WEIGHTS = tuple(float(v) for v in _LEG_W / 2.0)  # weights for a panel of unit length
_PANEL_PHASE = 2.0  # radians: largest max|k| * panel length a panel may carry
_MAX_PANELS = 4096  # a heading change of some 8000 radians: not a road
_CHUNK = 16_384  # points per block; keeps the temporaries in cache
_GUESS_TURN = 0.5 * np.pi  # inverse: spirals turning more than this start from samples
_SAMPLE_TURN = 0.25  # radians of turning between those samples
_FAR = 0.9  # inverse: points farther than this many smallest radii may be searched again
_FINE_TURN = 0.125  # radians of turning between the samples of that search
_STEP_TOLERANCE = 1e-10  # inverse: stop when every step (or the error it leaves) is below this fraction of L


# ---- the integral -------------------------------------------------------------------


def _gauss(s: FloatArray, k0: FloatArray, c: FloatArray, panels: int,
           start: FloatArray | None = None) -> tuple[FloatArray, FloatArray]:
    """Integrals of cos tau and sin tau by ``panels`` equal Gauss-Legendre panels.

    Over [0, s], or over [start, start + s] when ``start`` is given (1-D arrays).
    """
    h = s / panels
    hc = 0.5 * c
    x = np.zeros_like(s)
    y = np.zeros_like(s)
    u = np.empty_like(s)
    tau = np.empty_like(s)
    tmp = np.empty_like(s)
    for j in range(panels):  # fixed small count, each step over every point
        for frac, w in zip(_FRACTIONS, _WEIGHTS):
            np.multiply(h, j + frac, out=u)
            if start is not None:
                u += start
            np.multiply(hc, u, out=tau)
            tau += k0
            tau *= u
            np.cos(tau, out=tmp)
            tmp *= w
            x += tmp
            np.sin(tau, out=tmp)
            tmp *= w
            y += tmp
    x *= h
    y *= h
    return x, y


def _xy_flat(s: FloatArray, k0: FloatArray, c: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray]:
    """x, y, tau for 1-D arrays of equal size; ``c`` = dk/ds."""
    tau = s * (k0 + 0.5 * c * s)
    phase = np.maximum(np.abs(k0), np.abs(k0 + c * s)) * np.abs(s)
    panels = np.ceil(phase / _PANEL_PHASE)
    panels = np.where(np.isfinite(panels) & (panels > 1.0), panels, 1.0)
    most = float(panels.max()) if panels.size else 1.0
    if most <= 1.0:
        x, y = _gauss(s, k0, c, 1)
        return x, y, tau
    if most > _MAX_PANELS:
        bad = int(np.argmax(panels))
        raise GeometryError(
            f"clothoid turning {float(phase[bad]):.1f} rad (max |k| times s = {float(s[bad]):.3f}) is too large"
        )
    x = np.empty_like(s)
    y = np.empty_like(s)
    counts = panels.astype(np.int64)
    for p in np.unique(counts).tolist():  # one pass per distinct panel count
        idx = np.flatnonzero(counts == p)
        x[idx], y[idx] = _gauss(s[idx], k0[idx], c[idx], int(p))
    return x, y, tau


def _rate(k0: FloatArray, k1: FloatArray, length: FloatArray) -> FloatArray:
    """dk/ds; raises for a length that is not positive and finite, or too short for its change of curvature."""
    bad = ~(np.isfinite(length) & (length > 0.0))
    if np.any(bad):
        raise GeometryError(f"clothoid length = {float(length[bad].flat[0])!r}: must be positive and finite")
    with np.errstate(over="ignore", invalid="ignore"):
        c = (k1 - k0) / length
    bad = ~np.isfinite(c)
    if np.any(bad):
        raise GeometryError(
            f"clothoid length = {float(length[bad].flat[0])!r}: too short for its curvature "
            f"{float(k0[bad].flat[0])!r} to {float(k1[bad].flat[0])!r}"
        )
    return c


def _as_float(v: ArrayLike) -> FloatArray:
    return np.asarray(v, dtype=np.float64)


def clothoid_xy(
    s: ArrayLike, k0: ArrayLike, k1: ArrayLike, length: ArrayLike
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Local position and heading change along a clothoid.

    Parameters
    ----------
    s : array of float
        Arc length from the element's start, job units (normally in
        ``[0, length]``; values outside follow the same curvature law).
    k0, k1 : array of float
        Signed curvature at the start and at the end, 1/job unit, positive
        turning right (clockwise).  ``k0 == k1`` is an arc, both zero a line.
    length : array of float
        Element length, job units, positive.

    All arguments broadcast together.

    Returns
    -------
    x, y, tau : arrays
        ``x`` along the start tangent and ``y`` square to it, positive right
        (job units), and the heading change ``tau`` in radians, positive
        clockwise.  Accurate to about ``1e-12`` of ``s``.

    Raises
    ------
    GeometryError
        For a length that is not positive, or a heading change beyond some
        thousands of radians.
    """
    sb, a0, a1, lb = np.broadcast_arrays(_as_float(s), _as_float(k0), _as_float(k1), _as_float(length))
    shape = sb.shape
    c = _rate(a0, a1, lb)
    sf, kf, cf = sb.ravel(), a0.ravel(), np.ravel(c)
    out = np.empty((3, sf.size))
    for i in range(0, sf.size, _CHUNK):  # blocks bound the temporaries; each is vectorised
        sl = slice(i, i + _CHUNK)
        out[0, sl], out[1, sl], out[2, sl] = _xy_flat(sf[sl], kf[sl], cf[sl])
    return out[0].reshape(shape), out[1].reshape(shape), out[2].reshape(shape)


# ---- grid points ----------------------------------------------------------------------


def clothoid_points(
    s: ArrayLike,
    offsets: ArrayLike,
    n0: ArrayLike,
    e0: ArrayLike,
    az0_deg: ArrayLike,
    k0: ArrayLike,
    k1: ArrayLike,
    length: ArrayLike,
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Grid coordinates of points at arc lengths and offsets on clothoids.

    Parameters
    ----------
    s : array of float
        Arc length from the element's start, job units.
    offsets : array of float
        Offset along the normal at ``s``, job units, negative left and
        positive right looking up-station.
    n0, e0 : array of float
        Grid northing and easting of the element's start, job units.
    az0_deg : array of float
        Azimuth of the start tangent, degrees clockwise from grid north.
    k0, k1 : array of float
        Signed curvature at start and end, 1/job unit, positive right.
    length : array of float
        Element length, job units.

    All arguments broadcast together.

    Returns
    -------
    northing, easting, azimuth : arrays
        Grid coordinates of each point (job units) and the azimuth of the
        tangent at ``s`` (degrees clockwise from grid north, in ``[0, 360)``).
    """
    x, y, tau = clothoid_xy(s, k0, k1, length)
    s0, c0 = sincosd(az0_deg)  # exact at multiples of 90 degrees
    st, ct = np.sin(tau), np.cos(tau)
    sa = s0 * ct + c0 * st  # sin and cos of the azimuth at s, by angle addition
    ca = c0 * ct - s0 * st
    o = _as_float(offsets)
    north = _as_float(n0) + x * c0 - y * s0 - o * sa
    east = _as_float(e0) + x * s0 + y * c0 + o * ca
    az = np.asarray(normalize_azimuth(_as_float(az0_deg) + np.degrees(tau)))
    north, east, az = np.broadcast_arrays(north, east, az)
    return np.array(north), np.array(east), np.array(az)


# ---- inverse ----------------------------------------------------------------------------


def _circle_step(f: FloatArray, d: FloatArray, k: FloatArray) -> FloatArray:
    """Arc length to the foot of P on the osculating circle: atan2(k f, 1 - k d) / k, f where k = 0."""
    nz = k != 0.0
    return np.where(nz, np.arctan2(k * f, 1.0 - k * d) / np.where(nz, k, 1.0), f)


def _turning(k0: FloatArray, c: FloatArray, length: FloatArray) -> FloatArray:
    """Total turning int_0^L |k(s)| ds, radians (an inflection inside counts both ways)."""
    k1 = k0 + c * length
    same = k0 * k1 >= 0.0
    span = np.abs(k1 - k0)
    through = (k0 * k0 + k1 * k1) / (2.0 * np.where(span > 0.0, span, 1.0)) * length
    return np.where(same, 0.5 * (np.abs(k0) + np.abs(k1)) * length, through)


def _sampled_start(px: FloatArray, py: FloatArray, k0: FloatArray, c: FloatArray,
                   length: FloatArray, steps: int) -> FloatArray:
    """Starting arc lengths from ``steps + 1`` samples spread evenly along each element.

    Each sample is scored by the distance to its osculating circle where the
    foot on that circle lies within half a sample spacing of it (and on the
    element), else by the distance to the sample itself; the best sample's
    foot is the start.
    """
    cell = length / steps
    half_cell = 0.5 * cell
    best = np.full_like(px, np.inf)
    best_s = np.zeros_like(px)
    x = np.zeros_like(px)
    y = np.zeros_like(px)
    for j in range(steps + 1):  # a fixed number of samples, each over every point
        sj = length * (j / steps)
        if j:  # one panel per cell (a cell turns at most about _SAMPLE_TURN), summed along
            gx, gy = _gauss(cell, k0, c, 1, start=length * ((j - 1) / steps))
            x += gx
            y += gy
        tau = sj * (k0 + 0.5 * c * sj)
        ct, st = np.cos(tau), np.sin(tau)
        dx, dy = px - x, py - y
        f = dx * ct + dy * st
        d = dy * ct - dx * st
        k = k0 + c * sj
        step = _circle_step(f, d, k)
        # | |P - centre| - R |, written without the cancellation at small k
        circle = np.abs(k * (f * f + d * d) - 2.0 * d) / (np.hypot(k * f, k * d - 1.0) + 1.0)
        foot = sj + step
        near = (np.abs(step) <= half_cell) & (foot >= 0.0) & (foot <= length)
        dj = np.where(near, circle, np.hypot(dx, dy))
        nearer = dj < best
        best = np.where(nearer, dj, best)
        best_s = np.where(nearer, np.where(near, foot, sj), best_s)
    return np.clip(best_s, 0.0, length)


def _arc_start(px: FloatArray, py: FloatArray, k0: FloatArray, c: FloatArray, length: FloatArray) -> FloatArray:
    """Starting arc lengths: the foot on the arc of the element's mean curvature.

    The arc leaves the element's start along its start tangent; of its feet
    (one per turn) the one nearest the element's middle is taken.
    """
    km = k0 + 0.5 * c * length
    s_arc = _circle_step(px, py, km)
    nz = km != 0.0
    period = 2.0 * np.pi / np.abs(np.where(nz, km, 1.0))
    mid = 0.5 * length
    wrapped = mid + np.mod(s_arc - mid + 0.5 * period, period) - 0.5 * period
    return np.clip(np.where(nz, wrapped, s_arc), 0.0, length)


def _iterate(px: FloatArray, py: FloatArray, k0: FloatArray, c: FloatArray, length: FloatArray,
             s: FloatArray, iterations: int, lo: FloatArray | float = 0.0,
             hi: FloatArray | None = None) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
    """Newton steps on the osculating circle from ``s``, clamped to [lo, hi] (default [0, L]).

    Returns ``s`` and ``x, y, tau`` for it.  The iteration stops once every
    step is below the tolerance, or leaves an error (estimated from Newton's
    quadratic convergence) below it; that last step is taken without
    evaluating the spiral again: the point is moved along its tangent by the
    step and bent by the curvature (second order: exact to the step cubed
    times the curvature's rate or its square).
    """
    tol = _STEP_TOLERANCE * length + 1e-12
    top = length if hi is None else hi
    for _ in range(iterations):  # a fixed maximum; each pass is vectorised
        x, y, tau = _xy_flat(s, k0, c)
        ct, st = np.cos(tau), np.sin(tau)
        dx, dy = px - x, py - y
        f = dx * ct + dy * st  # along the tangent at s
        d = dy * ct - dx * st  # along the right normal at s
        k = k0 + c * s
        s_new = np.clip(s + _circle_step(f, d, k), lo, top)
        step = s_new - s
        # error left after this step: the osculating circle matches f and f'
        # here and misses f'' by c d and the position by c step^3 / 6, so about
        # |c| (|d| step^2 / 2 + |step|^3 / 6) / |1 - k d|; a margin of 10 on that
        a = np.abs(step)
        left = 10.0 * np.abs(c) * (0.5 * np.abs(d) + a / 6.0) * a * a / np.maximum(np.abs(1.0 - k * d), 1e-3)
        # and the point moved without a new evaluation (below) must stay exact
        moved = (k * k + np.abs(c)) * a * a * a / 6.0
        if not np.any(((a > tol) & (left > tol)) | (moved > 1e-2 * tol)):
            bend = 0.5 * k * step * step  # along the osculating circle, to second order
            return s_new, x + step * ct - bend * st, y + step * st + bend * ct, tau + (k + 0.5 * c * step) * step
        s = s_new
    x, y, tau = _xy_flat(s, k0, c)
    return s, x, y, tau


def _foot(px: FloatArray, py: FloatArray, length: FloatArray,
          s: FloatArray, x: FloatArray, y: FloatArray, tau: FloatArray,
          x_end: FloatArray, y_end: FloatArray, tau_end: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray]:
    """s, offset, distance at ``s`` (where the spiral is at x, y, tau); an end point clearly nearer replaces it."""
    ct, st = np.cos(tau), np.sin(tau)
    dx, dy = px - x, py - y
    d = dy * ct - dx * st
    dist = np.hypot(dx, dy)
    at_end = (s <= 0.0) | (s >= length)
    offset = np.where(at_end, np.where(d < 0.0, -dist, dist), d)
    d_start = np.hypot(px, py)
    ex, ey = px - x_end, py - y_end
    d_end = np.hypot(ex, ey)
    across_end = ey * np.cos(tau_end) - ex * np.sin(tau_end)
    # only an end clearly nearer: near an end the two differ by the square of
    # the distance between them, lost to rounding within a few micro-units
    margin = 1e-9 * (length + dist)
    use_start = (d_start < dist - margin) & (d_start <= d_end)
    use_end = (d_end < dist - margin) & ~use_start
    s = np.where(use_start, 0.0, np.where(use_end, length, s))
    offset = np.where(use_start, np.where(py < 0.0, -d_start, d_start), offset)
    offset = np.where(use_end, np.where(across_end < 0.0, -d_end, d_end), offset)
    dist = np.where(use_start, d_start, np.where(use_end, d_end, dist))
    return s, offset, dist


def _bracket(px: FloatArray, py: FloatArray, k0: FloatArray, c: FloatArray, length: FloatArray,
             turning: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray]:
    """A short interval around the nearest point: (lo, hi, best s).

    Samples every ``_FINE_TURN`` radians of turning (at least 8), scored as
    in :func:`_sampled_start`; then twice 9 samples across the interval
    either side of the best so far, scored by plain distance.  Plain
    distances need no derivative, so the interval holds where Newton's
    model fails (a point beyond a centre of curvature, where a foot nearby
    is a maximum of the distance along the spiral).
    """
    steps = int(min(max(8.0, np.ceil(float(turning.max()) / _FINE_TURN)), _MAX_PANELS))
    s_best = _sampled_start(px, py, k0, c, length, steps)
    cell = length / steps
    lo = np.maximum(s_best - cell, 0.0)
    hi = np.minimum(s_best + cell, length)
    x, y, _ = _xy_flat(s_best, k0, c)
    best = np.hypot(px - x, py - y)
    for _ in range(2):  # two refinements, 9 samples each
        width = hi - lo
        for i in range(9):
            si = lo + width * (i / 8.0)
            xi, yi, _ = _xy_flat(si, k0, c)
            di = np.hypot(px - xi, py - yi)
            nearer = di < best
            best = np.where(nearer, di, best)
            s_best = np.where(nearer, si, s_best)
        lo, hi = np.maximum(s_best - width / 8.0, lo), np.minimum(s_best + width / 8.0, hi)
    return lo, hi, s_best


def _sample_count(turning: FloatArray) -> int:
    """Samples for :func:`_sampled_start`: one per ``_SAMPLE_TURN`` of the largest turning, at least 4."""
    return int(min(max(4.0, np.ceil(float(turning.max()) / _SAMPLE_TURN)), _MAX_PANELS))


def _project_flat(
    px: FloatArray, py: FloatArray, k0: FloatArray, c: FloatArray, length: FloatArray,
    x_end: FloatArray, y_end: FloatArray, tau_end: FloatArray, guess: FloatArray | None, iterations: int,
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Inverse for 1-D arrays of local coordinates; see :func:`clothoid_project`."""
    if guess is not None:
        ev = _iterate(px, py, k0, c, length, np.clip(guess, 0.0, length), iterations)
        return _foot(px, py, length, *ev, x_end, y_end, tau_end)
    turning = _turning(k0, c, length)
    s = _arc_start(px, py, k0, c, length)
    # the mean-curvature arc drifts away from a spiral turning much, and
    # several parts of such a spiral may face the point: start from samples
    wide = np.flatnonzero(turning > _GUESS_TURN)
    if wide.size:
        s[wide] = _sampled_start(px[wide], py[wide], k0[wide], c[wide], length[wide],
                                 _sample_count(turning[wide]))
    ev = _iterate(px, py, k0, c, length, s, iterations)
    s, offset, dist = _foot(px, py, length, *ev, x_end, y_end, tau_end)
    # Farther than the smallest radius the distance along the spiral may have
    # other minima, or the iterate may sit beyond a centre of curvature: on
    # the concave side, on a spiral with an inflection, or on one turning more
    # than a quarter turn, search again by distances and keep the nearer
    # answer.  The convex side of a spiral turning less than a quarter turn
    # one way is left out (no point there beyond a centre of curvature at its
    # foot, and the first answer held in every brute-force check, see
    # clothoid_project): the search costs some 30 evaluations per point.
    kmax = np.maximum(np.abs(k0), np.abs(k0 + c * length))
    turn = np.sign(k0 + (k0 + c * length))
    awkward = (offset * turn > 0.0) | (k0 * (k0 + c * length) < 0.0) | (turning > _GUESS_TURN)
    idx = np.flatnonzero((dist * kmax > _FAR) & awkward)
    if idx.size:
        sub = (px[idx], py[idx], k0[idx], c[idx], length[idx])
        lo, hi, s2 = _bracket(*sub, turning[idx])
        ev = _iterate(*sub, s2, iterations, lo, hi)
        s2, o2, d2 = _foot(px[idx], py[idx], length[idx], *ev, x_end[idx], y_end[idx], tau_end[idx])
        better = d2 < dist[idx]
        sel = idx[better]
        s[sel], offset[sel], dist[sel] = s2[better], o2[better], d2[better]
    return s, offset, dist


def clothoid_project(
    n: ArrayLike,
    e: ArrayLike,
    n0: ArrayLike,
    e0: ArrayLike,
    az0_deg: ArrayLike,
    k0: ArrayLike,
    k1: ArrayLike,
    length: ArrayLike,
    s_guess: ArrayLike | None = None,
    iterations: int = 24,
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Nearest point of clothoids to grid points: arc length, offset, distance.

    Each point is compared with the element it is broadcast against, so one
    call handles many point/element pairs (flatten them, or broadcast points
    of shape ``(m, 1)`` against elements of shape ``(k,)``).

    The iteration (Newton on the osculating circle, see the module notes)
    starts from the foot on the arc of the element's mean curvature; for a
    spiral turning more than a quarter turn in all, from the best of samples
    every 0.25 radian of turning, each scored by the distance to its
    osculating circle.  It stops when every step is below ``1e-10`` of the
    element length or leaves an error (from Newton's quadratic convergence)
    below that, or after ``iterations`` passes; a road spiral takes two
    evaluations of the spiral per point.  The foot is then compared with
    both end points, and an end clearly nearer replaces it.  A point ending
    farther than 0.9 of the element's smallest radius, on the concave side
    (or on a spiral with an inflection or turning more than a quarter turn),
    is searched again by distances to samples every 0.125 radian of turning,
    refined twice, then iterated within the interval found, and the nearer
    answer kept.

    Parameters
    ----------
    n, e : array of float
        Grid northing and easting of the points, job units.
    n0, e0 : array of float
        Grid northing and easting of each element's start, job units.
    az0_deg : array of float
        Azimuth of each element's start tangent, degrees clockwise from grid
        north.
    k0, k1 : array of float
        Signed curvature at start and end, 1/job unit, positive right.
    length : array of float
        Element length, job units.
    s_guess : array of float, optional
        Starting arc lengths, job units (clamped to ``[0, length]``).
    iterations : int
        Most iterations made.

    Returns
    -------
    s, offset, distance : arrays
        Arc length of the nearest point in ``[0, length]`` (job units); the
        offset of the point, negative left and positive right of the
        tangent there; and the distance to the nearest point.  Where ``s``
        is an end of the element, ``offset`` is the distance to that end
        point, signed by the side of the end tangent.

    Raises
    ------
    GeometryError
        For a length that is not positive.

    Notes
    -----
    Checked against a brute-force search over 4001 samples per spiral, for
    200,000 random spirals turning up to 20 radians (tangent spirals,
    spirals between arcs, spirals through an inflection) and a random point
    each, up to 20 radii away: the distance found was never more than the
    nearest sample's (by more than 1e-11).  Two parts of a spiral at the
    same distance to within the samples' spacing are told apart only by the
    osculating-circle scores, so a near tie may still go to the wrong part.
    """
    el = np.broadcast_arrays(_as_float(n0), _as_float(e0), _as_float(az0_deg),
                             _as_float(k0), _as_float(k1), _as_float(length))
    en0, ee0, eaz, ek0, ek1, elen = el
    c_el = _rate(ek0, ek1, elen)
    x_end, y_end, tau_end = clothoid_xy(elen, ek0, ek1, elen)  # per element, not per point
    s0, c0 = sincosd(eaz)
    dn = _as_float(n) - en0
    de = _as_float(e) - ee0
    px = dn * c0 + de * s0  # local frame: along the start tangent, and to its right
    py = de * c0 - dn * s0
    arrays = [px, py, ek0, c_el, elen, x_end, y_end, tau_end]
    if s_guess is not None:
        arrays.append(_as_float(s_guess))
    full = np.broadcast_arrays(*arrays)
    shape = full[0].shape
    flat = [a.ravel() for a in full]
    out = np.empty((3, flat[0].size))
    for i in range(0, flat[0].size, _CHUNK):  # blocks bound the temporaries; each is vectorised
        sl = slice(i, i + _CHUNK)
        q = [a[sl] for a in flat]
        guess = q[8] if s_guess is not None else None
        out[0, sl], out[1, sl], out[2, sl] = _project_flat(
            q[0], q[1], q[2], q[3], q[4], q[5], q[6], q[7], guess, iterations
        )
    return out[0].reshape(shape), out[1].reshape(shape), out[2].reshape(shape)


# ---- table figures ------------------------------------------------------------------------


@dataclass(frozen=True)
class SpiralFigures:
    """Figures of one spiral for ``spirals.csv`` (job units and degrees).

    ``theta_deg`` is the central angle ``L (1/R_start + 1/R_end) / 2``.  For
    a spiral with a tangent end, ``x`` and ``y`` locate its other end from
    the tangent end, along and square to that tangent (``y`` toward the
    curve, positive); ``p`` = y - R(1 - cos theta) is the shift of the arc,
    ``k`` = x - R sin theta the abscissa of the shifted centre, and
    ``long_tangent`` = x - y / tan theta, ``short_tangent`` = y / sin theta
    the spiral's own tangents (``None`` when theta is 180 degrees or more,
    where they do not meet ahead of the spiral).  For a spiral between two
    arcs, ``x`` and ``y`` locate its end from its start along and square to
    its start tangent, and ``p``, ``k`` and the tangents are ``None``.
    """

    theta_deg: float
    x: float
    y: float
    p: float | None
    k: float | None
    long_tangent: float | None
    short_tangent: float | None


def _check_radius(name: str, key: str, radius: float | None) -> float:
    """Curvature magnitude 1/R (0 for None); raises for a radius that is not positive."""
    if radius is None:
        return 0.0
    if not (math.isfinite(radius) and radius > 0.0):
        raise GeometryError(f"{name}: {key} = {radius!r} must be positive")
    return 1.0 / radius


def spiral_figures(
    length: float, radius_start: float | None, radius_end: float | None, *, name: str = "spiral"
) -> SpiralFigures:
    """Central angle, end coordinates, shift and tangents of one spiral.

    Parameters
    ----------
    length : float
        Spiral length, job units.
    radius_start, radius_end : float or None
        Radii (job units, positive, both of the spiral's own turn) at the
        start and the end; ``None`` is infinite (a tangent).
    name : str
        The element's name, used in error messages.

    Returns
    -------
    SpiralFigures

    Raises
    ------
    GeometryError
        For a length or radius that is not positive, or both radii infinite.
    """
    if not (math.isfinite(length) and length > 0.0):
        raise GeometryError(f"{name}: length = {length!r} must be positive")
    a0 = _check_radius(name, "radius_start", radius_start)
    a1 = _check_radius(name, "radius_end", radius_end)
    if a0 == 0.0 and a1 == 0.0:
        raise GeometryError(f"{name}: a spiral needs radius_start or radius_end (both are infinite)")
    theta = length * (a0 + a1) / 2.0
    if theta == 0.0:
        raise GeometryError(f"{name}: length = {length!r} is too short for its radii")
    if a0 != 0.0 and a1 != 0.0:
        xb, yb, _ = clothoid_xy(length, a0, a1, length)
        return SpiralFigures(math.degrees(theta), float(xb), float(yb), None, None, None, None)
    # a tangent spiral: measured from the tangent end; an exit spiral run
    # backwards from its tangent end is the entry spiral of the same L and R
    radius = 1.0 / (a0 + a1)
    xa, ya, _ = clothoid_xy(length, 0.0, a0 + a1, length)
    x, y = float(xa), float(ya)
    p = y - radius * (1.0 - math.cos(theta))
    k = x - radius * math.sin(theta)
    if theta >= math.pi:
        lt = st = None
    else:
        lt = x - y / math.tan(theta)
        st = y / math.sin(theta)
    return SpiralFigures(math.degrees(theta), x, y, p, k, lt, st)


class SpiralCurveTangents(NamedTuple):
    """Tangent lengths and external distance of a curve with spirals (job units)."""

    t_back: float  #: PI to TS (to the PC when there is no entry spiral)
    t_ahead: float  #: PI to ST (to the PT when there is no exit spiral)
    external: float  #: PI to the nearest point of the curve


def spiral_curve_tangents(
    radius: float, delta_total_deg: float, ls_in: float, ls_out: float, *, name: str = "curve"
) -> SpiralCurveTangents:
    """Tangents and external of a simple curve with spirals at the PI.

    Parameters
    ----------
    radius : float
        Radius of the circular arc, job units.
    delta_total_deg : float
        Total deflection I at the PI, degrees (unsigned), below 180.
    ls_in, ls_out : float
        Lengths of the entry and exit spirals, job units; 0 for none.
    name : str
        The PI's name, used in error messages.

    Returns
    -------
    SpiralCurveTangents
        ``T1 = (R + p1) tan(I/2) + k1 - (p1 - p2) / sin I`` and
        ``T2 = (R + p2) tan(I/2) + k2 + (p1 - p2) / sin I`` (route-surveying
        relations); the external is ``(R + p) sec(I/2) - R`` for equal
        spirals and, for unequal ones, the distance from the PI to the
        nearest point of the curve (the same quantity: the curve is convex
        and turns less than 180 degrees, so the distance from the PI has a
        single minimum, which lies on the bisector when the curve is
        symmetric).

    Raises
    ------
    GeometryError
        For a radius that is not positive, I outside (0, 180) degrees,
        negative spiral lengths, or spirals whose angles exceed I.
    """
    if not (math.isfinite(radius) and radius > 0.0):
        raise GeometryError(f"{name}: radius = {radius!r} must be positive")
    if not (0.0 < delta_total_deg < 180.0):
        raise GeometryError(f"{name}: deflection = {delta_total_deg!r} degrees must be between 0 and 180")
    for key, ls in (("entry spiral", ls_in), ("exit spiral", ls_out)):
        if not (math.isfinite(ls) and ls >= 0.0):
            raise GeometryError(f"{name}: {key} length = {ls!r} must be zero or positive")
    big_i = math.radians(delta_total_deg)
    th1, th2 = ls_in / (2.0 * radius), ls_out / (2.0 * radius)
    if th1 + th2 > big_i * (1.0 + 1e-12):
        raise GeometryError(
            f"{name}: spiral angles {math.degrees(th1 + th2):.6f} degrees exceed the deflection {delta_total_deg!r}"
        )

    def shift(ls: float) -> tuple[float, float]:
        if ls == 0.0:
            return 0.0, 0.0
        f = spiral_figures(ls, None, radius, name=name)
        assert f.p is not None and f.k is not None
        return f.p, f.k

    p1, k1 = shift(ls_in)
    p2, k2 = shift(ls_out)
    tan_half = math.tan(big_i / 2.0)
    t1 = (radius + p1) * tan_half + k1 - (p1 - p2) / math.sin(big_i)
    t2 = (radius + p2) * tan_half + k2 + (p1 - p2) / math.sin(big_i)
    if ls_in == ls_out:
        external = (radius + p1) / math.cos(big_i / 2.0) - radius
        return SpiralCurveTangents(t1, t2, external)
    # Unequal spirals: the nearest of the three elements.  Local frame: TS at
    # the origin, back tangent along +x (= north), the curve turning right.
    candidates = []
    vx, vy = t1 - k1, -(radius + p1)  # centre of the arc to the PI
    h = math.atan2(vx, -vy)  # heading of the arc where its radius points at the PI
    if th1 <= h <= big_i - th2:
        candidates.append(math.hypot(vx, vy) - radius)
    else:  # nearest on the arc is an end of it (SC or CS)
        for hh in (th1, big_i - th2):
            cx, cy = k1 + radius * math.sin(hh), radius + p1 - radius * math.cos(hh)
            candidates.append(math.hypot(t1 - cx, cy))
    if ls_in > 0.0:
        candidates.append(float(clothoid_project(t1, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0 / radius, ls_in)[2]))
    if ls_out > 0.0:  # from the ST backwards: heading I + 180, turning left
        st_n = t1 + t2 * math.cos(big_i)
        st_e = t2 * math.sin(big_i)
        candidates.append(float(clothoid_project(
            t1, 0.0, st_n, st_e, delta_total_deg + 180.0, 0.0, -1.0 / radius, ls_out)[2]))
    return SpiralCurveTangents(t1, t2, min(candidates))
