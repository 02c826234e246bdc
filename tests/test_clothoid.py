"""The clothoid kernel against a published worked example, scipy's Fresnel
integrals and adaptive quadrature, the route-surveying series, closed-form
arcs, and brute-force nearest-point searches written here."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy import integrate, special

from stakeout.alignment.clothoid import (
    SpiralFigures,
    clothoid_points,
    clothoid_project,
    clothoid_xy,
    spiral_curve_tangents,
    spiral_figures,
)
from stakeout.errors import GeometryError

from .helpers import arc_end_by_rotation
from .reference import nhdot_spiral_curve as nh
from .reference import scipy_fresnel as fresnel

SLOW = settings(deadline=None, max_examples=100)


def series_xy(s, radius: float, ls: float, terms: int = 14):
    """Tangent spiral by the route-surveying series (references.md), with
    the general term X = l sum (-1)^n t^2n / ((4n+1)(2n)!),
    Y = l sum (-1)^n t^(2n+1) / ((4n+3)(2n+1)!), t = l^2 / (2 R Ls) the
    heading at arc length l (integrating the Taylor series of cos and sin).
    ``s`` may be a float or a numpy array."""
    t = s * s / (2.0 * radius * ls)
    x = sum((-1) ** n * t ** (2 * n) / ((4 * n + 1) * math.factorial(2 * n)) for n in range(terms))
    y = sum((-1) ** n * t ** (2 * n + 1) / ((4 * n + 3) * math.factorial(2 * n + 1)) for n in range(terms))
    return s * x, s * y


# ---- published worked example -------------------------------------------------------


def test_nh_dot_spiral_curve_data():
    # New Hampshire DOT, "Spiral Curve Data" (CADD help page) [published]:
    # PI 23+96.20, I = 77-47-44.8 RT, Rc = 300.00, Ls = 200.00 ->
    # theta_s = 19-05-54.9, Delta_c = 39-35-54.9, Ts = 346.15, Es = 92.58,
    # Lc = 207.34, LT = 134.12, ST = 67.38, p = 5.53, k = 99.63,
    # Xc = 197.79, Yc = 22.05; [computed] TS 20+50.05, SC 22+50.05,
    # CS 24+57.39, ST 26+57.39.  Each figure to half its last printed digit
    # (tests/reference/nhdot_spiral_curve.py).
    big_i, radius, ls = nh.DELTA.value, nh.RADIUS.value, nh.SPIRAL_LENGTH.value
    f = spiral_figures(ls, None, radius)
    assert f.theta_deg == nh.THETA_S.approx()
    assert big_i - 2 * f.theta_deg == nh.DELTA_C.approx()
    assert f.x == nh.XC.approx()
    assert f.y == nh.YC.approx()
    assert f.p == nh.P.approx()
    assert f.k == nh.K.approx()
    assert f.long_tangent == nh.LT.approx()
    assert f.short_tangent == nh.ST.approx()
    t = spiral_curve_tangents(radius, big_i, ls, ls)
    assert t.t_back == nh.TS.approx()
    assert t.t_ahead == nh.TS.approx()
    assert t.external == nh.ES.approx()
    lc = radius * math.radians(big_i - 2 * f.theta_deg)
    assert lc == nh.LC.approx()
    ts = nh.PI_STATION.value - t.t_back
    assert ts == nh.TS_STATION.approx()
    assert ts + ls == nh.SC_STATION.approx()
    assert ts + ls + lc == nh.CS_STATION.approx()  # two rounded figures summed
    assert ts + ls + lc + ls == nh.ST_STATION.approx()


def test_exit_spiral_figures_are_measured_from_its_tangent_end():
    # outputs contract, spirals.csv: x, y from the tangent end along and square
    # to that tangent; an exit spiral read backwards is the entry spiral
    # (NH DOT example values: Xc 197.79, Yc 22.05 on both spirals) [published]
    entry = spiral_figures(nh.SPIRAL_LENGTH.value, None, nh.RADIUS.value)
    exit_ = spiral_figures(nh.SPIRAL_LENGTH.value, nh.RADIUS.value, None)
    assert exit_ == entry
    assert exit_.x == nh.XC.approx() and exit_.y == nh.YC.approx()


def test_spiral_between_arcs_has_no_tangent_figures():
    # outputs contract: for a spiral between two arcs p, k and the tangents are empty;
    # theta = L (1/Rs + 1/Re) / 2 (job-file contract)
    f = spiral_figures(120.0, 950.0, 320.0)
    assert isinstance(f, SpiralFigures)
    assert f.p is None and f.k is None and f.long_tangent is None and f.short_tangent is None
    assert f.theta_deg == pytest.approx(math.degrees(120.0 * (1 / 950 + 1 / 320) / 2), rel=1e-15)
    x, y, _ = clothoid_xy(120.0, 1 / 950, 1 / 320, 120.0)
    assert (f.x, f.y) == (float(x), float(y))


def test_scipy_fresnel_test_value():
    # scipy's own tests (tests/reference/scipy_fresnel.py): fresnel(0.5) = (S 0.064732432859999287,
    # C 0.49234422587144644).  With pi R L = 1 the spiral is x = C(s), y = S(s).
    r = 1.0 / math.pi
    x, y, tau = clothoid_xy(fresnel.ARGUMENT.value, 0.0, 1.0 / r, 1.0)
    assert float(x) == pytest.approx(fresnel.C.value, abs=1e-13)
    assert float(y) == pytest.approx(fresnel.S.value, abs=1e-13)
    assert float(tau) == pytest.approx(math.pi * 0.25 / 2, rel=1e-15)  # pi s^2 / 2


# ---- the integral against scipy -------------------------------------------------------


@SLOW
@given(
    st.floats(1.0, 2000.0),  # length
    st.floats(0.001, 2 * math.pi),  # total heading change theta = L / 2R
    st.floats(0.0, 1.0),  # s / L
    st.sampled_from([-1.0, 1.0]),  # turn
)
def test_tangent_spiral_against_scipy_fresnel(length, theta, frac, turn):
    # scipy.special.fresnel: S(z) = int_0^z sin(pi t^2 / 2) dt, C likewise; a
    # tangent spiral with heading s^2 / (2 R L) is x = a C(s/a), y = a S(s/a),
    # a = sqrt(pi R L).  Agreement to 1e-9 of the length.
    radius = length / (2.0 * theta)
    s = frac * length
    a = math.sqrt(math.pi * radius * length)
    fs, fc = special.fresnel(s / a)
    x, y, tau = clothoid_xy(s, 0.0, turn / radius, length)
    assert abs(float(x) - a * fc) <= 1e-9 * length
    assert abs(float(y) - turn * a * fs) <= 1e-9 * length
    assert float(tau) == pytest.approx(turn * s * s / (2 * radius * length), rel=1e-13, abs=1e-300)


def _quad_xy(s: float, k0: float, k1: float, length: float) -> tuple[float, float]:

    def tau(u: float) -> float:
        return k0 * u + (k1 - k0) * u * u / (2.0 * length)

    opts = dict(epsabs=1e-13 * length, epsrel=1e-13, limit=400)
    x = integrate.quad(lambda u: math.cos(tau(u)), 0.0, s, **opts)[0]
    y = integrate.quad(lambda u: math.sin(tau(u)), 0.0, s, **opts)[0]
    return x, y


@SLOW
@given(
    st.floats(1.0, 1000.0),  # length
    st.floats(20.0, 20000.0),  # radius at the start
    st.floats(20.0, 20000.0),  # radius at the end
    st.sampled_from([(1, 1), (-1, -1), (1, -1), (-1, 1)]),  # turns (unlike: an inflection inside)
    st.floats(0.0, 1.0),  # s / L
)
def test_spiral_between_arcs_against_scipy_quad(length, r0, r1, turns, frac):
    # scipy.integrate.quad of cos and sin of the heading k0 s + (k1 - k0) s^2 / 2L;
    # agreement to 1e-9 of the length, heading changes up to 2 pi
    k0, k1 = turns[0] / r0, turns[1] / r1
    assume(max(abs(k0), abs(k1)) * length <= 2 * math.pi)
    s = frac * length
    xr, yr = _quad_xy(s, k0, k1, length)
    x, y, _ = clothoid_xy(s, k0, k1, length)
    assert abs(float(x) - xr) <= 1e-9 * length
    assert abs(float(y) - yr) <= 1e-9 * length


def test_spiral_from_r950_to_r320_against_scipy_quad():
    # the brief's case of a spiral between two arcs, checked all along it (scipy quad)
    s = np.linspace(0.0, 120.0, 25)
    x, y, tau = clothoid_xy(s, 1 / 950, 1 / 320, 120.0)
    for si, xi, yi in zip(s, x, y):
        xr, yr = _quad_xy(float(si), 1 / 950, 1 / 320, 120.0)
        assert abs(xi - xr) <= 1e-9 * 120.0 and abs(yi - yr) <= 1e-9 * 120.0
    assert tau[-1] == pytest.approx(120.0 * (1 / 950 + 1 / 320) / 2, rel=1e-14)


def test_full_turn_and_more_against_scipy_quad():
    # heading changes of 2 pi and beyond take several panels (scipy quad)
    for k0, k1, length in ((0.0, 0.02, 4 * math.pi * 50), (0.05, 0.01, 400.0), (-0.03, 0.04, 500.0)):
        for s in np.linspace(0.0, length, 9):
            xr, yr = _quad_xy(float(s), k0, k1, length)
            x, y, _ = clothoid_xy(s, k0, k1, length)
            assert abs(float(x) - xr) <= 1e-9 * length and abs(float(y) - yr) <= 1e-9 * length


# ---- the series ---------------------------------------------------------------------------


@given(st.floats(1.0, 1000.0), st.floats(1e-6, 0.5), st.floats(0.0, 1.0))
def test_small_theta_series(length, theta, frac):
    # route-surveying series (references.md): X = L(1 - t^2/10 + t^4/216 -
    # t^6/9360 ...), Y = L(t/3 - t^3/42 + t^5/1320 ...), to 1e-9 of the length
    radius = length / (2 * theta)
    s = frac * length
    xs, ys = series_xy(s, radius, length)
    x, y, _ = clothoid_xy(s, 0.0, 1.0 / radius, length)
    assert abs(float(x) - xs) <= 1e-9 * length
    assert abs(float(y) - ys) <= 1e-9 * length


def test_series_printed_terms():
    # the printed terms alone at theta = 0.05 (truncation below 1e-13 L)
    length, t = 100.0, 0.05
    x, y, _ = clothoid_xy(length, 0.0, 2 * t / length, length)
    assert float(x) == pytest.approx(length * (1 - t**2 / 10 + t**4 / 216 - t**6 / 9360), abs=1e-11)
    assert float(y) == pytest.approx(length * (t / 3 - t**3 / 42 + t**5 / 1320), abs=1e-11)


# ---- degenerate curvature -----------------------------------------------------------------


@given(
    st.floats(-1e6, 1e6), st.floats(-1e6, 1e6), st.floats(0.0, 360.0),
    st.floats(10.0, 10000.0), st.floats(0.01, 350.0), st.sampled_from([-1, 1]),
)
def test_equal_curvatures_are_an_arc(n0, e0, az0, radius, delta, turn):
    # closed form: the arc's end by rotating the start about the centre
    # (tests/helpers.arc_end_by_rotation, complex numbers)
    length = radius * math.radians(delta)
    k = turn / radius
    n, e, az = clothoid_points(length, 0.0, n0, e0, az0, k, k, length)
    n_ref, e_ref, _, _ = arc_end_by_rotation(n0, e0, az0, radius, delta, turn)
    assert abs(float(n) - n_ref) <= 1e-9 * length + 1e-9 and abs(float(e) - e_ref) <= 1e-9 * length + 1e-9
    assert abs((float(az) - (az0 + turn * delta) + 180.0) % 360.0 - 180.0) <= 1e-9
    x, y, tau = clothoid_xy(length, k, k, length)
    assert float(x) == pytest.approx(math.sin(k * length) / k, abs=1e-9 * length)
    assert float(y) == pytest.approx((1 - math.cos(k * length)) / k, abs=1e-9 * length)
    assert float(tau) == k * length


def test_zero_curvature_is_a_line():
    # closed form: a line is x = s, y = 0, no turn
    s = np.linspace(0.0, 500.0, 11)
    x, y, tau = clothoid_xy(s, 0.0, 0.0, 500.0)
    np.testing.assert_allclose(x, s, rtol=1e-15)
    assert not np.any(y) and not np.any(tau)
    n, e, az = clothoid_points(s, 2.0, 100.0, 200.0, 90.0, 0.0, 0.0, 500.0)
    np.testing.assert_allclose(n, 100.0 - 2.0, atol=1e-12)  # due east: right is south
    np.testing.assert_allclose(e, 200.0 + s, atol=1e-12)
    assert np.all(az == 90.0)


# ---- grid points -----------------------------------------------------------------------------


@given(
    st.floats(0.0, 360.0), st.floats(10.0, 500.0), st.floats(50.0, 5000.0), st.sampled_from([-1, 1]),
    st.floats(0.0, 1.0), st.floats(-100.0, 100.0),
)
def test_points_use_the_local_frame_and_the_normal(az0, length, radius, turn, frac, offset):
    # the contract's formulas: N = n0 + x cos az0 - y sin az0, E = e0 + x sin az0 +
    # y cos az0; the offset along the right normal (az + 90) at s; az = az0 + tau
    s = frac * length
    x, y, tau = clothoid_xy(s, 0.0, turn / radius, length)
    n, e, az = clothoid_points(s, offset, 1000.0, 2000.0, az0, 0.0, turn / radius, length)
    a = math.radians(az0)
    b = a + float(tau)
    n_ref = 1000.0 + float(x) * math.cos(a) - float(y) * math.sin(a) + offset * math.cos(b + math.pi / 2)
    e_ref = 2000.0 + float(x) * math.sin(a) + float(y) * math.cos(a) + offset * math.sin(b + math.pi / 2)
    assert float(n) == pytest.approx(n_ref, abs=1e-9) and float(e) == pytest.approx(e_ref, abs=1e-9)
    assert 0.0 <= float(az) < 360.0
    assert math.cos(math.radians(float(az)) - b) == pytest.approx(1.0, abs=1e-12)


def test_arrays_broadcast():
    # points of shape (m, 1) against elements of shape (k,) give (m, k)
    s = np.linspace(0.0, 1.0, 5)[:, None]
    lengths = np.array([100.0, 150.0, 200.0])
    k1 = np.array([1 / 300, -1 / 500, 1 / 900])
    n, e, az = clothoid_points(s * lengths, 0.0, 0.0, 0.0, 10.0, 0.0, k1, lengths)
    assert n.shape == e.shape == az.shape == (5, 3)
    sp, off, dist = clothoid_project(n, e, 0.0, 0.0, 10.0, 0.0, k1, lengths)
    assert sp.shape == (5, 3)
    np.testing.assert_allclose(sp, s * lengths, atol=1e-9)
    np.testing.assert_allclose(off, 0.0, atol=1e-9)


# ---- the inverse -------------------------------------------------------------------------------


@st.composite
def road_spirals(draw, max_turning=math.pi / 2):
    """(k0, k1, length): entry, exit and between-arc spirals turning at most ``max_turning``."""
    kind = draw(st.sampled_from(["entry", "exit", "between"]))
    turn = draw(st.sampled_from([-1.0, 1.0]))
    r_small = draw(st.floats(30.0, 3000.0))
    r_other = draw(st.floats(1.05, 20.0)) * r_small
    turning = draw(st.floats(0.001, max_turning))
    if kind == "entry":
        k0, k1 = 0.0, turn / r_small
    elif kind == "exit":
        k0, k1 = turn / r_small, 0.0
    else:
        k0, k1 = draw(st.sampled_from([(turn / r_other, turn / r_small), (turn / r_small, turn / r_other)]))
    length = 2.0 * turning / (abs(k0) + abs(k1))
    return k0, k1, length


@SLOW
@given(
    road_spirals(), st.floats(-1e5, 1e5), st.floats(-1e5, 1e5), st.floats(0.0, 360.0),
    st.lists(st.tuples(st.floats(0.0, 1.0), st.floats(-0.9, 0.9)), min_size=1, max_size=20),
)
def test_inverse_round_trip(spiral, n0, e0, az0, stakes):
    # round trip (independent of the inverse's own model): points made by
    # clothoid_points at s in [0, L] and offsets up to 0.9 of the smallest
    # radius on either side come back to the same s and offset, 1e-7
    k0, k1, length = spiral
    r_min = 1.0 / max(abs(k0), abs(k1))
    s = np.array([f for f, _ in stakes]) * length
    o = np.array([g for _, g in stakes]) * r_min
    n, e, _ = clothoid_points(s, o, n0, e0, az0, k0, k1, length)
    sp, op, dist = clothoid_project(n, e, n0, e0, az0, k0, k1, length)
    np.testing.assert_allclose(sp, s, atol=1e-7)
    np.testing.assert_allclose(op, o, atol=1e-7)
    np.testing.assert_allclose(dist, np.abs(o), atol=1e-7)


def _brute_nearest(n, e, n0, e0, az0, k0, k1, length, samples=4001):
    """Nearest of dense samples of the spiral, as (index, distance, sample s)."""
    ss = np.linspace(0.0, length, samples)
    gn, ge, _ = clothoid_points(ss, 0.0, n0, e0, az0, k0, k1, length)
    d = np.hypot(gn - n, ge - e)
    i = int(np.argmin(d))
    return i, float(d[i]), float(ss[i])


@SLOW
@given(road_spirals(), st.floats(0.0, 360.0), st.booleans(), st.floats(0.01, 1.0), st.floats(-0.5, 0.5))
def test_points_beyond_the_ends_clamp(spiral, az0, at_start, back, lateral):
    # beyond an end the nearest point is that end (checked by brute force over
    # dense samples, written here); offset = distance to it, signed by the side
    # of the end tangent
    k0, k1, length = spiral
    r_min = 1.0 / max(abs(k0), abs(k1))
    end_s = 0.0 if at_start else length
    n_end, e_end, az_end = (float(v) for v in clothoid_points(end_s, 0.0, 0.0, 0.0, az0, k0, k1, length))
    a = math.radians(az_end)
    along = -back * r_min if at_start else back * r_min  # behind the start or past the end
    n = n_end + along * math.cos(a) - lateral * r_min * math.sin(a)
    e = e_end + along * math.sin(a) + lateral * r_min * math.cos(a)
    i, d_ref, _ = _brute_nearest(n, e, 0.0, 0.0, az0, k0, k1, length)
    assume(i == (0 if at_start else 4000))
    sp, op, dist = (float(v) for v in clothoid_project(n, e, 0.0, 0.0, az0, k0, k1, length))
    assert sp == end_s
    expected = math.hypot(n - n_end, e - e_end)
    assert dist == pytest.approx(expected, rel=1e-12, abs=1e-9)
    assert abs(op) == pytest.approx(expected, rel=1e-12, abs=1e-9)
    if abs(lateral) > 1e-6:  # the side is rounding noise on the tangent itself
        assert math.copysign(1.0, op) == math.copysign(1.0, lateral)


@SLOW
@given(
    road_spirals(max_turning=2 * math.pi), st.floats(0.0, 360.0),
    st.floats(0.0, 1.0), st.floats(-1.5, 1.5), st.floats(-1.0, 1.0),
)
def test_inverse_finds_the_nearest_point(spiral, az0, frac, across, along):
    # against a brute-force search over 4001 samples (written here), for spirals
    # turning up to a full turn and points up to about a radius and a half away
    # (where the nearest point may lie on another part of the spiral): the
    # distance found is never more than the samples' best, and (s, offset)
    # rebuilds the point
    k0, k1, length = spiral
    r_min = 1.0 / max(abs(k0), abs(k1))
    n_c, e_c, az_c = (float(v) for v in clothoid_points(frac * length, 0.0, 0.0, 0.0, az0, k0, k1, length))
    a = math.radians(az_c)
    n = n_c + along * r_min * math.cos(a) - across * r_min * math.sin(a)
    e = e_c + along * r_min * math.sin(a) + across * r_min * math.cos(a)
    _, d_ref, _ = _brute_nearest(n, e, 0.0, 0.0, az0, k0, k1, length)
    sp, op, dist = (float(v) for v in clothoid_project(n, e, 0.0, 0.0, az0, k0, k1, length))
    assert 0.0 <= sp <= length
    assert dist <= d_ref + 1e-9 * length
    assert abs(abs(op) - dist) <= 1e-9 * (length + dist)
    if 0.0 < sp < length:
        nb, eb, _ = clothoid_points(sp, op, 0.0, 0.0, az0, k0, k1, length)
        assert math.hypot(float(nb) - n, float(eb) - e) <= 1e-7 * max(1.0, dist)


def test_inverse_of_an_arc_and_a_line():
    # closed forms: on an arc the nearest point is along the radius through the
    # point; on a line it is the foot of the perpendicular
    r, length = 250.0, 300.0
    ang = np.linspace(0.0, length / r, 7)
    for off in (-200.0, -10.0, 0.0, 10.0, 200.0):
        # right-turning arc from (0, 0) heading north: centre at E = r
        n = (r - off) * np.sin(ang)
        e = r - (r - off) * np.cos(ang)
        sp, op, dist = clothoid_project(n, e, 0.0, 0.0, 0.0, 1 / r, 1 / r, length)
        np.testing.assert_allclose(sp, ang * r, atol=1e-9)
        np.testing.assert_allclose(op, off, atol=1e-9)
    sp, op, dist = clothoid_project([5.0, 50.0], [-3.0, 4.0], 0.0, 0.0, 0.0, 0.0, 0.0, 100.0)
    np.testing.assert_allclose(sp, [5.0, 50.0], atol=1e-12)
    np.testing.assert_allclose(op, [-3.0, 4.0], atol=1e-12)


def test_s_guess_is_used():
    # a start given near the answer converges to the same foot (round trip)
    n, e, _ = clothoid_points(120.0, -15.0, 0.0, 0.0, 45.0, 0.0, 1 / 300, 200.0)
    sp, op, _ = clothoid_project(n, e, 0.0, 0.0, 45.0, 0.0, 1 / 300, 200.0, s_guess=100.0, iterations=30)
    assert float(sp) == pytest.approx(120.0, abs=1e-9) and float(op) == pytest.approx(-15.0, abs=1e-9)


# ---- curve tangents -------------------------------------------------------------------------------


def _curve_by_series(radius: float, big_i_deg: float, ls1: float, ls2: float, samples: int = 4000):
    """The whole curve from the TS (origin, heading +x, turning toward +y) built
    here: spirals by the series, the arc by rotation about its centre.
    Returns (points of the curve as an (m, 2) array, ST point, ahead direction)."""
    big_i = math.radians(big_i_deg)
    th1, th2 = ls1 / (2 * radius), ls2 / (2 * radius)
    parts = []
    if ls1:
        parts.append(np.column_stack(series_xy(np.linspace(0.0, ls1, samples), radius, ls1)))
    sc = parts[-1][-1] if ls1 else np.zeros(2)
    # centre: square to the heading th1 at the SC, on the inside
    cx, cy = sc[0] - radius * math.sin(th1), sc[1] + radius * math.cos(th1)
    h = np.linspace(th1, big_i - th2, samples)
    parts.append(np.column_stack((cx + radius * np.sin(h), cy - radius * np.cos(h))))
    cs = parts[-1][-1]
    ca, sa = math.cos(big_i), math.sin(big_i)
    if ls2:
        # from the ST backwards the spiral leaves along -(ahead direction) and
        # curves to the same inside: point = ST - x (cos I, sin I) + y (-sin I, cos I)
        xe, ye = series_xy(ls2, radius, ls2)
        st_pt = (cs[0] + xe * ca + ye * sa, cs[1] + xe * sa - ye * ca)
        xs, ys = series_xy(np.linspace(ls2, 0.0, samples), radius, ls2)
        parts.append(np.column_stack((st_pt[0] - xs * ca - ys * sa, st_pt[1] - xs * sa + ys * ca)))
    else:
        st_pt = (float(cs[0]), float(cs[1]))
    pts = np.concatenate(parts)
    return pts, st_pt, (ca, sa)


@SLOW
@given(
    st.floats(100.0, 2000.0), st.floats(20.0, 120.0),
    st.one_of(st.just(0.0), st.floats(0.01, 1.0)), st.one_of(st.just(0.0), st.floats(0.01, 1.0)),
)
def test_unequal_spiral_tangents_against_a_construction(radius, big_i, f1, f2):
    # the published relations T1, T2 (references.md) against a curve built
    # here (series spirals, arc by rotation) whose end tangents are intersected;
    # the external against the nearest of dense samples of that curve
    big_i_rad = math.radians(big_i)
    share = 0.9 * big_i_rad * radius  # both spirals together take at most 90 % of I
    ls1, ls2 = f1 * share, f2 * share
    assume(ls1 / (2 * radius) <= 1.0 and ls2 / (2 * radius) <= 1.0)
    t = spiral_curve_tangents(radius, big_i, ls1, ls2)
    pts, st_pt, ahead = _curve_by_series(radius, big_i, ls1, ls2)
    # PI = (T1, 0) on the back tangent; it must lie on the ahead tangent through the ST
    pi = np.array([t.t_back, 0.0])
    to_st = np.array(st_pt) - pi
    assert abs(to_st[0] * ahead[1] - to_st[1] * ahead[0]) <= 1e-7 * radius  # on the ahead line
    assert float(to_st @ np.array(ahead)) == pytest.approx(t.t_ahead, abs=1e-7 * radius)
    d = np.hypot(pts[:, 0] - pi[0], pts[:, 1] - pi[1])
    spacing = max(ls1, ls2, radius * big_i_rad) / 4000
    assert t.external <= d.min() + 1e-9 * radius
    assert t.external >= d.min() - spacing


def test_no_spirals_is_a_simple_curve():
    # handbook relations: T = R tan(I/2), E = R (sec(I/2) - 1)
    t = spiral_curve_tangents(500.0, 40.0, 0.0, 0.0)
    assert t.t_back == pytest.approx(500 * math.tan(math.radians(20)), rel=1e-14)
    assert t.t_ahead == t.t_back
    assert t.external == pytest.approx(500 * (1 / math.cos(math.radians(20)) - 1), rel=1e-12)


# ---- errors ---------------------------------------------------------------------------------------


def test_errors_name_the_value():
    with pytest.raises(GeometryError, match="length = 0.0"):
        clothoid_xy(1.0, 0.0, 0.01, 0.0)
    with pytest.raises(GeometryError, match="S1: radius_end = -5.0"):
        spiral_figures(100.0, None, -5.0, name="S1")
    with pytest.raises(GeometryError, match="both are infinite"):
        spiral_figures(100.0, None, None)
    with pytest.raises(GeometryError, match="PI 3: spiral angles"):
        spiral_curve_tangents(100.0, 30.0, 100.0, 100.0, name="PI 3")
    with pytest.raises(GeometryError, match="too short"):
        clothoid_xy(0.0, 0.0, 1.0, 5e-324)
    with pytest.raises(GeometryError, match="deflection = 180.0"):
        spiral_curve_tangents(100.0, 180.0, 10.0, 10.0)
