"""The profile (vertical alignment) against outside references.

Sources: the FHWA Bridge Geometry Manual's worked vertical curve (Table 3.2,
in tests/reference/fhwa_bridge_geometry.py); independent constructions written
here (quadratic Bezier curves solved with scipy's brentq, a circle whose
centre is found on the angle bisector of the two grades); hypothesis
properties on random valid profiles.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy.optimize import brentq

from stakeout.errors import JobFileError
from stakeout.profile import PROFILE_TOLERANCE, PVISpec, build_profile

from .reference import fhwa_bridge_geometry as fhwa


# ---- independent constructions -------------------------------------------------------


def bezier_at(p0, p1, p2, x):
    """Elevation and grade of the quadratic Bezier with control points p0, p1,
    p2 (station, elevation) at station x: the Bezier parameter solved with
    brentq, the grade as (dy/dt) / (dx/dt)."""

    def bx(t):
        return (1 - t) ** 2 * p0[0] + 2 * (1 - t) * t * p1[0] + t * t * p2[0]

    t = brentq(lambda t: bx(t) - x, 0.0, 1.0, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200)
    y = (1 - t) ** 2 * p0[1] + 2 * (1 - t) * t * p1[1] + t * t * p2[1]
    dx = 2 * (1 - t) * (p1[0] - p0[0]) + 2 * t * (p2[0] - p1[0])
    dy = 2 * (1 - t) * (p1[1] - p0[1]) + 2 * t * (p2[1] - p1[1])
    return y, dy / dx


def bezier_turning_point(p0, p1, p2):
    """Station and elevation where the Bezier's elevation is stationary
    (dy/dt = 0), or None when that is not on the curve."""
    den = p0[1] - 2 * p1[1] + p2[1]
    if den == 0:
        return None
    t = (p0[1] - p1[1]) / den
    if not 0 < t < 1:
        return None
    x = (1 - t) ** 2 * p0[0] + 2 * (1 - t) * t * p1[0] + t * t * p2[0]
    y = (1 - t) ** 2 * p0[1] + 2 * (1 - t) * t * p1[1] + t * t * p2[1]
    return x, y


def parabola_controls(xv, yv, g1, g2, l1, l2):
    """Control points of an (un)symmetrical parabolic vertical curve built as
    quadratic Beziers: a symmetric curve is one Bezier PVC - PVI - PVT; an
    unsymmetrical one is two, the inner control points at the middle of each
    tangent and the joint at the PVI station on the line between them (the
    common tangent)."""
    pvc = (xv - l1, yv - g1 * l1)
    pvt = (xv + l2, yv + g2 * l2)
    if l1 == l2:
        return [(pvc, (xv, yv), pvt)]
    c1 = (xv - l1 / 2, yv - g1 * l1 / 2)
    c2 = (xv + l2 / 2, yv + g2 * l2 / 2)
    f = (xv - c1[0]) / (c2[0] - c1[0])
    mid = (xv, c1[1] + f * (c2[1] - c1[1]))
    return [(pvc, c1, mid), (mid, c2, pvt)]


def bezier_pieces_at(pieces, x):
    for p0, p1, p2 in pieces:
        if p0[0] <= x <= p2[0]:
            return bezier_at(p0, p1, p2, x)
    raise AssertionError(f"{x} not on the curve")


def circle_construction(xv, yv, g1, g2, radius):
    """A circle tangent to both grades, built from the PVI: its centre lies on
    the bisector of the angle between the grades at R / sin(half that angle)
    from the PVI; the tangent points are the feet of the perpendiculars from
    the centre. Returns (pvc, pvt, centre, crest)."""
    v = np.array([xv, yv])
    back = -np.array([1.0, g1]) / math.hypot(1.0, g1)  # from the PVI back along grade 1
    ahead = np.array([1.0, g2]) / math.hypot(1.0, g2)
    half = math.acos(float(np.clip(back @ ahead, -1, 1))) / 2
    bis = (back + ahead) / np.linalg.norm(back + ahead)
    centre = v + bis * radius / math.sin(half)
    pvc = v + ((centre - v) @ back) * back
    pvt = v + ((centre - v) @ ahead) * ahead
    return pvc, pvt, centre, bool(centre[1] < yv)


def circle_at(centre, radius, crest, x):
    u = x - centre[0]
    h = math.sqrt(radius * radius - u * u)
    return (centre[1] + h, -u / h) if crest else (centre[1] - h, u / h)


def three_pvis(xv, yv, g1, g2, *, back=0.0, ahead=0.0, radius=None, reach=1000.0):
    """A start PVI, the curve's PVI and an end PVI, each `reach` away."""
    return [
        PVISpec(xv - reach, yv - g1 * reach, where="profile.pvi[0]"),
        PVISpec(xv, yv, back, ahead, radius, where="profile.pvi[1]"),
        PVISpec(xv + reach, yv + g2 * reach, where="profile.pvi[2]"),
    ]


# ---- published worked example ------------------------------------------------------------


def test_fhwa_table_3_2_crest_curve():
    # FHWA Bridge Geometry Manual (HIF-22-034, April 2022), Table 3.2 [published]:
    # PVI 120+00 elev 135.00, g1 = +1.75 %, g2 = -1.00 %, L = 1600 ft
    half = fhwa.CURVE_LENGTH.value / 2
    prof = build_profile(three_pvis(fhwa.PVI_STATION.value, fhwa.PVI_ELEVATION.value, fhwa.GRADE_IN.value,
                                    fhwa.GRADE_OUT.value, back=half, ahead=half))
    x = np.array(fhwa.table_stations())  # every 160 ft from the BVC 112+00
    np.testing.assert_array_equal(np.round(prof.elevation(x), 2), fhwa.ELEVATIONS.value)  # FHWA Table 3.2 [published]
    row = prof.rows()[1]
    assert row.pvc_station == pytest.approx(fhwa.BVC_STATION.value)  # FHWA BVC
    assert row.pvc_elevation == pytest.approx(fhwa.BVC_ELEVATION.value)  # FHWA BVC (exact: 135 - 0.0175 x 800)
    assert row.pvt_elevation == pytest.approx(fhwa.EVC_ELEVATION.value)  # FHWA Table 3.2, last row [published]
    assert round(row.high_low_station, 2) == fhwa.HIGH_POINT_STATION.value  # references.md [computed] high point 122+18.18
    assert round(row.high_low_elevation, 3) == fhwa.HIGH_POINT_ELEVATION.value  # references.md [computed] elev 129.909
    assert row.high_low_kind == "HP"
    # K = L / |A| with A in percent (references.md, route-surveying parabola): 1600 / 2.75
    assert row.k_value == pytest.approx(1600.0 / 2.75, rel=1e-12)
    # middle ordinate A L / 800 (references.md): the curve passes that far below the PVI
    assert float(prof.elevation(12000.0)) == pytest.approx(135.0 - 2.75 * 1600 / 800, abs=1e-9)


# ---- parabolas against Bezier curves -------------------------------------------------------


def _check_against_beziers(prof, xv, yv, g1, g2, l1, l2):
    pieces = parabola_controls(xv, yv, g1, g2, l1, l2)
    xs = np.linspace(xv - l1, xv + l2, 41)
    y, g = prof.elevation(xs), prof.grade(xs)
    for xi, yi, gi in zip(xs, y, g):
        ry, rg = bezier_pieces_at(pieces, xi)  # independent: Bezier solved with brentq
        assert yi == pytest.approx(ry, abs=1e-9)
        assert gi == pytest.approx(rg, abs=1e-9)
    return pieces


def test_sag_curve_against_bezier():
    # independent computation: quadratic Bezier PVC - PVI - PVT, solved with brentq
    xv, yv, g1, g2, half = 5000.0, 300.0, -0.03, 0.025, 250.0
    prof = build_profile(three_pvis(xv, yv, g1, g2, back=half, ahead=half))
    (p0, p1, p2), = _check_against_beziers(prof, xv, yv, g1, g2, half, half)
    row = prof.rows()[1]
    assert row.pvc_station == pytest.approx(p0[0], abs=1e-9) and row.pvc_elevation == pytest.approx(p0[1], abs=1e-9)
    assert row.pvt_station == pytest.approx(p2[0], abs=1e-9) and row.pvt_elevation == pytest.approx(p2[1], abs=1e-9)
    lx, ly = bezier_turning_point(p0, p1, p2)  # independent: dy/dt = 0 on the Bezier
    assert row.high_low_kind == "LP"
    assert row.high_low_station == pytest.approx(lx, abs=1e-9)
    assert row.high_low_elevation == pytest.approx(ly, abs=1e-9)
    assert float(prof.grade(row.high_low_station)) == pytest.approx(0.0, abs=1e-12)


def test_unsymmetrical_curve_against_two_beziers():
    # independent computation: two Beziers meeting at the PVI station, the joint
    # on the common tangent between the mid-tangent control points
    xv, yv, g1, g2, l1, l2 = 5000.0, 300.0, 0.04, -0.02, 150.0, 350.0
    prof = build_profile(three_pvis(xv, yv, g1, g2, back=l1, ahead=l2))
    pieces = _check_against_beziers(prof, xv, yv, g1, g2, l1, l2)
    mid = pieces[0][2]
    # references.md: middle ordinate e = (g2 - g1) l1 l2 / (2 (l1 + l2)) = -3.15 here
    assert mid[1] - yv == pytest.approx((g2 - g1) * l1 * l2 / (2 * (l1 + l2)), abs=1e-12)
    assert float(prof.elevation(xv)) == pytest.approx(mid[1], abs=1e-9)
    turning = [tp for tp in (bezier_turning_point(*pc) for pc in pieces) if tp is not None]
    assert len(turning) == 1
    row = prof.rows()[1]
    assert row.high_low_kind == "HP"
    assert row.high_low_station == pytest.approx(turning[0][0], abs=1e-9)  # independent: Bezier dy/dt = 0
    assert row.high_low_elevation == pytest.approx(turning[0][1], abs=1e-9)
    assert (row.curve_length_back, row.curve_length_ahead) == (l1, l2)
    assert row.k_value == pytest.approx(500.0 / 6.0)  # K = L / |A|, A in percent (references.md)


# ---- circular vertical curves ------------------------------------------------------------------


@pytest.mark.parametrize(
    "g1, g2, radius",
    [(0.03, -0.04, 3000.0), (-0.05, 0.01, 2000.0), (0.06, 0.02, 5000.0), (-0.01, -0.07, 1500.0)],
)
def test_circular_curve_against_circle_construction(g1, g2, radius):
    # independent computation: centre on the bisector at R / sin(half angle), tangent
    # points as feet of perpendiculars, elevation from the circle's equation
    xv, yv = 5000.0, 250.0
    prof = build_profile(three_pvis(xv, yv, g1, g2, radius=radius))
    pvc, pvt, centre, crest = circle_construction(xv, yv, g1, g2, radius)
    row = prof.rows()[1]
    assert row.pvc_station == pytest.approx(pvc[0], abs=1e-9) and row.pvc_elevation == pytest.approx(pvc[1], abs=1e-9)
    assert row.pvt_station == pytest.approx(pvt[0], abs=1e-9) and row.pvt_elevation == pytest.approx(pvt[1], abs=1e-9)
    # references.md: t = R tan(|atan g2 - atan g1| / 2), horizontal t cos(atan g) on each side
    dang = abs(math.atan(g2) - math.atan(g1))
    t = radius * math.tan(dang / 2)
    assert row.curve_length_back == pytest.approx(t * math.cos(math.atan(g1)), rel=1e-12)
    assert row.curve_length_ahead == pytest.approx(t * math.cos(math.atan(g2)), rel=1e-12)
    assert row.radius == radius
    xs = np.linspace(pvc[0], pvt[0], 41)
    y, g = prof.elevation(xs), prof.grade(xs)
    for xi, yi, gi in zip(xs, y, g):
        ry, rg = circle_at(centre, radius, crest, xi)
        assert yi == pytest.approx(ry, abs=1e-9)
        assert gi == pytest.approx(rg, abs=1e-9)
    if g1 * g2 < 0:
        # the circle's top (crest) or bottom (sag) is straight above/below its centre
        assert row.high_low_kind == ("HP" if crest else "LP")
        assert row.high_low_station == pytest.approx(centre[0], abs=1e-9)
        assert row.high_low_elevation == pytest.approx(centre[1] + (radius if crest else -radius), abs=1e-9)
    else:
        assert row.high_low_station is None and row.high_low_kind is None
    # the arc length R |atan g2 - atan g1| (references.md), by summing short chords of the profile
    xf = np.linspace(pvc[0], pvt[0], 20001)
    arc = np.sum(np.hypot(np.diff(xf), np.diff(prof.elevation(xf))))
    assert arc == pytest.approx(radius * dang, rel=1e-7)


# ---- random valid profiles --------------------------------------------------------------------------


@st.composite
def profiles(draw):
    """Random valid profiles: grades within +-12 %, each interior PVI with no
    curve, a symmetric, an unsymmetrical or a circular one, every curve within
    half the distance to each neighbouring PVI (a fraction 1 makes curves touch)."""
    n = draw(st.integers(2, 7))
    gaps = [draw(st.floats(20.0, 2000.0)) for _ in range(n - 1)]
    grades = [draw(st.floats(-0.12, 0.12)) for _ in range(n - 1)]
    xs = [draw(st.floats(-5000.0, 50000.0))]
    ys = [draw(st.floats(-100.0, 3000.0))]
    for gap, g in zip(gaps, grades):
        xs.append(xs[-1] + gap)
        ys.append(ys[-1] + g * gap)
    frac = st.one_of(st.just(1.0), st.floats(0.05, 1.0))
    specs = [PVISpec(xs[0], ys[0], where="profile.pvi[0]")]
    for i in range(1, n - 1):
        kind = draw(st.sampled_from(["none", "sym", "unsym", "circle"]))
        room_b, room_a = gaps[i - 1] / 2, gaps[i] / 2
        g1 = (ys[i] - ys[i - 1]) / (xs[i] - xs[i - 1])
        g2 = (ys[i + 1] - ys[i]) / (xs[i + 1] - xs[i])
        if kind == "circle" and abs(g2 - g1) < 0.005:
            kind = "none"
        back = ahead = 0.0
        radius = None
        if kind == "sym":
            back = ahead = draw(frac) * min(room_b, room_a)
        elif kind == "unsym":
            back, ahead = draw(frac) * room_b, draw(frac) * room_a
        elif kind == "circle":
            a1, a2 = math.atan(g1), math.atan(g2)
            t = draw(frac) * min(room_b / math.cos(a1), room_a / math.cos(a2))
            radius = t / math.tan(abs(a2 - a1) / 2)
        specs.append(PVISpec(xs[i], ys[i], back, ahead, radius, where=f"profile.pvi[{i}]"))
    specs.append(PVISpec(xs[-1], ys[-1], where=f"profile.pvi[{n - 1}]"))
    return specs


def _curvature_bound(specs):
    """Largest |d2y/dx2| on any curve of the profile, from the specs alone."""
    bound = 0.0
    for prev, p, nxt in zip(specs, specs[1:], specs[2:]):
        g1 = (p.elevation - prev.elevation) / (p.station - prev.station)
        g2 = (nxt.elevation - p.elevation) / (nxt.station - p.station)
        if p.radius is not None:
            bound = max(bound, 1.1 / p.radius)  # (1 + g^2)^1.5 / R with |g| <= 0.12
        elif p.curve_length_back:
            bound = max(bound, abs(g2 - g1) / min(p.curve_length_back, p.curve_length_ahead))
    return bound


@given(profiles())
def test_continuity_at_curve_ends_and_unsymmetrical_pvi(specs):
    # property: elevation and grade continuous where pieces join (PVC, PVT, and the
    # PVI of an unsymmetrical curve); the jump in grade over 2 delta is bounded by
    # the curvature
    prof = build_profile(specs)
    d = 1e-7
    joints = []
    for p, row in zip(specs, prof.rows()):
        if row.pvc_station is not None:
            joints += [row.pvc_station, row.pvt_station]
            if p.radius is None and p.curve_length_back != p.curve_length_ahead:
                joints.append(row.station)
    x = np.array([j for j in joints if prof.start + d <= j <= prof.end - d])
    lo, hi = x - d, x + d
    ylo, yhi, glo, ghi = prof.elevation(lo), prof.elevation(hi), prof.grade(lo), prof.grade(hi)
    # elevation: both sides extrapolated to the joint agree
    np.testing.assert_allclose(ylo + glo * (x - lo), yhi - ghi * (hi - x), rtol=0, atol=1e-9)
    np.testing.assert_allclose(glo, ghi, rtol=0, atol=2.5 * d * _curvature_bound(specs) + 1e-12)
    # and the rows' PVC/PVT elevations are the profile's there
    for row in prof.rows():
        if row.pvc_station is not None:
            assert float(prof.elevation(row.pvc_station)) == pytest.approx(row.pvc_elevation, abs=1e-9)
            assert float(prof.elevation(row.pvt_station)) == pytest.approx(row.pvt_elevation, abs=1e-9)


@given(profiles())
def test_high_and_low_points(specs):
    # property: zero grade at the high/low point, which is the highest (lowest)
    # point of its curve; present exactly where the grades have opposite signs
    prof = build_profile(specs)
    for row in prof.rows():
        if row.pvc_station is None:
            continue
        sign_change = row.grade_in * row.grade_out < 0
        assert (row.high_low_station is not None) == sign_change
        if not sign_change:
            continue
        assert row.pvc_station <= row.high_low_station <= row.pvt_station
        assert float(prof.grade(row.high_low_station)) == pytest.approx(0.0, abs=1e-9)
        assert float(prof.elevation(row.high_low_station)) == pytest.approx(row.high_low_elevation, abs=1e-9)
        ys = prof.elevation(np.linspace(row.pvc_station, row.pvt_station, 401))
        if row.high_low_kind == "HP":
            assert row.grade_in > 0 > row.grade_out
            assert row.high_low_elevation >= ys.max() - 1e-9
        else:
            assert row.grade_in < 0 < row.grade_out
            assert row.high_low_elevation <= ys.min() + 1e-9


@given(profiles())
def test_k_value_is_length_over_grade_change(specs):
    # property, references.md: K = L / |A|, L the curve's horizontal length, A in percent
    prof = build_profile(specs)
    for prev, p, nxt, row in zip(specs, specs[1:], specs[2:], prof.rows()[1:]):
        g1 = (p.elevation - prev.elevation) / (p.station - prev.station)
        g2 = (nxt.elevation - p.elevation) / (nxt.station - p.station)
        assert row.grade_in == g1 and row.grade_out == g2
        if row.pvc_station is None:
            assert row.k_value is None
            continue
        length = row.pvt_station - row.pvc_station
        assert row.curve_length_back + row.curve_length_ahead == pytest.approx(length, rel=1e-9)
        if g1 == g2:
            assert row.k_value is None
        else:
            assert row.k_value == pytest.approx(length / (abs(g2 - g1) * 100), rel=1e-9)


@given(profiles(), st.integers(0, 2**32 - 1))
def test_straight_grades_are_linear_interpolation(specs, seed):
    # property: off the curves the profile is the straight line between PVIs
    # (numpy.interp as the reference)
    prof = build_profile(specs)
    rows = prof.rows()
    px = np.array([p.station for p in specs])
    py = np.array([p.elevation for p in specs])
    rng = np.random.default_rng(seed)
    for a_row, b_row in zip(rows, rows[1:]):
        a = a_row.pvt_station if a_row.pvt_station is not None else a_row.station
        b = b_row.pvc_station if b_row.pvc_station is not None else b_row.station
        if b <= a:
            continue
        x = np.concatenate([[a, b], rng.uniform(a, b, 8)])
        np.testing.assert_allclose(prof.elevation(x), np.interp(x, px, py), rtol=0, atol=1e-8)
        np.testing.assert_allclose(prof.grade(x[2:]), a_row.grade_out, rtol=0, atol=1e-12)


@given(profiles(), st.integers(0, 2**32 - 1))
def test_random_curves_against_independent_constructions(specs, seed):
    # independent computations as above: Beziers for parabolas, the bisector
    # circle for circular curves
    prof = build_profile(specs)
    rng = np.random.default_rng(seed)
    for p, row in zip(specs, prof.rows()):
        if row.pvc_station is None:
            continue
        x = rng.uniform(row.pvc_station, row.pvt_station, 5)
        y, g = prof.elevation(x), prof.grade(x)
        for xi, yi, gi in zip(x, y, g):
            if p.radius is None:
                pieces = parabola_controls(p.station, p.elevation, row.grade_in, row.grade_out,
                                           p.curve_length_back, p.curve_length_ahead)
                ry, rg = bezier_pieces_at(pieces, xi)
            else:
                _, _, centre, crest = circle_construction(p.station, p.elevation, row.grade_in,
                                                          row.grade_out, p.radius)
                ry, rg = circle_at(centre, p.radius, crest, xi)
            assert yi == pytest.approx(ry, abs=1e-8)
            assert gi == pytest.approx(rg, abs=1e-9)


@given(profiles())
def test_feature_points_cover_every_feature(specs):
    # property: sorted, merged only within the tolerance, and every interior PVI,
    # PVC, PVT and high/low point present
    prof = build_profile(specs)
    stations, features = prof.feature_points()
    assert len(stations) == len(features)
    assert np.all(np.diff(stations) > PROFILE_TOLERANCE)
    wanted = []
    for row in prof.rows()[1:-1]:
        wanted.append((row.station, "PVI"))
        if row.pvc_station is not None:
            wanted += [(row.pvc_station, "PVC"), (row.pvt_station, "PVT")]
        if row.high_low_kind is not None:
            wanted.append((row.high_low_station, row.high_low_kind))
    for st_, f in wanted:
        k = int(np.argmin(np.abs(stations - st_)))
        assert abs(stations[k] - st_) <= 2 * PROFILE_TOLERANCE and f in features[k].split()


# ---- feature points, evaluation details -----------------------------------------------------------


def test_feature_points_merge_in_contract_order():
    # outputs contract: coinciding features listed PVC, PVI, PVT, HP, LP
    specs = [
        PVISpec(0.0, 100.0, where="profile.pvi[0]"),
        PVISpec(1000.0, 120.0, 250.0, 250.0, where="profile.pvi[1]"),  # +2 % to -2 %: HP at the PVI
        PVISpec(1500.0, 110.0, 250.0, 250.0, where="profile.pvi[2]"),  # its PVC = the PVT before
        PVISpec(2500.0, 150.0, where="profile.pvi[3]"),
    ]
    prof = build_profile(specs)
    stations, features = prof.feature_points()
    assert features == ("PVC", "PVI HP", "PVC PVT", "LP", "PVI", "PVT")
    # low point at g1 L / (g1 - g2) from the PVC (references.md)
    np.testing.assert_allclose(stations, [750.0, 1000.0, 1250.0, 1250.0 + 500 * 0.02 / 0.06, 1500.0, 1750.0])
    assert stations[1] == 1000.0  # a merged point takes the PVI's own station


def test_rows_without_curves_and_ends():
    prof = build_profile([
        PVISpec(0.0, 10.0, where="profile.pvi[0]"),
        PVISpec(100.0, 12.0, where="profile.pvi[1]"),
        PVISpec(300.0, 11.0, where="profile.pvi[2]"),
    ], name="FG")
    first, mid, last = prof.rows()
    assert first.grade_in is None and first.grade_out == pytest.approx(0.02)
    assert last.grade_out is None and last.grade_in == pytest.approx(-0.005)
    assert mid.curve_length_back is None and mid.pvc_station is None and mid.k_value is None
    assert mid.high_low_station is None and mid.high_low_kind is None and mid.where == "profile.pvi[1]"
    assert (prof.start, prof.end, prof.name) == (0.0, 300.0, "FG")
    stations, features = prof.feature_points()
    assert list(stations) == [100.0] and features == ("PVI",)
    # at a grade break the grade ahead; at the end the grade back
    np.testing.assert_allclose(prof.grade([0.0, 100.0, 300.0]), [0.02, -0.005, -0.005])


def test_arrays_keep_their_shape():
    prof = build_profile(three_pvis(500.0, 50.0, 0.02, -0.01, back=100.0, ahead=100.0))
    x = np.linspace(0.0, 1500.0, 12).reshape(3, 4)
    assert prof.elevation(x).shape == (3, 4) and prof.grade(x).shape == (3, 4)
    assert prof.elevation(np.empty(0)).shape == (0,)
    assert float(prof.elevation(500.0)) == pytest.approx(50.0 - 0.03 * 200 / 8)  # A L / 800, references.md


def test_station_beyond_the_profile_is_named():
    prof = build_profile(three_pvis(500.0, 50.0, 0.02, -0.01, back=100.0, ahead=100.0, reach=500.0))
    np.testing.assert_array_equal(
        prof.covers([-1.0, 0.0, 1000.0, 1000.0 + PROFILE_TOLERANCE / 2, 1000.1, np.nan]),
        [False, True, True, True, False, False],
    )
    with pytest.raises(JobFileError, match=r"station 1200\.0000 lies beyond the profile"):
        prof.elevation([10.0, 1200.0, -5.0])
    with pytest.raises(JobFileError, match=r"station -5\.0000 lies beyond"):
        prof.grade(np.array([[10.0, -5.0]]))
    with pytest.raises(JobFileError, match="beyond"):
        prof.elevation(np.nan)


# ---- validation: every error names the PVI key ------------------------------------------------------


def P(i, station, elevation, back=0.0, ahead=0.0, radius=None):
    return PVISpec(station, elevation, back, ahead, radius, where=f"profile.pvi[{i}]")


BAD = [
    ("fewer than two", [P(0, 0.0, 10.0)], "profile.pvi: 1 PVI"),
    ("none at all", [], "profile.pvi: 0 PVI"),
    ("station repeats", [P(0, 0, 1), P(1, 100, 2), P(2, 100, 3)], "profile.pvi[2].station = 100.0000"),
    ("station goes back", [P(0, 0, 1), P(1, 100, 2), P(2, 50, 3)], "profile.pvi[2].station = 50.0000"),
    ("curve on first PVI", [P(0, 0, 1, 10, 10), P(1, 100, 2)], "profile.pvi[0].curve_length_back = 10"),
    ("circle on last PVI", [P(0, 0, 1), P(1, 100, 2, radius=500.0)], "profile.pvi[1].radius = 500.0"),
    ("negative back", [P(0, 0, 1), P(1, 100, 2, -10, 10), P(2, 200, 1)], "profile.pvi[1].curve_length_back = -10"),
    ("negative ahead", [P(0, 0, 1), P(1, 100, 2, 10, -10), P(2, 200, 1)], "profile.pvi[1].curve_length_ahead = -10"),
    ("one-sided curve", [P(0, 0, 1), P(1, 100, 2, 0, 10), P(2, 200, 1)], "profile.pvi[1]: curve_length_back = 0.0"),
    ("zero radius", [P(0, 0, 1), P(1, 100, 2, radius=0.0), P(2, 200, 1)], "profile.pvi[1].radius = 0.0"),
    ("negative radius", [P(0, 0, 1), P(1, 100, 2, radius=-50.0), P(2, 200, 1)], "profile.pvi[1].radius = -50.0"),
    ("radius and lengths", [P(0, 0, 1), P(1, 100, 2, 10, 10, 500.0), P(2, 200, 1)], "profile.pvi[1].radius = 500.0"),
    ("not finite", [P(0, 0, 1), P(1, 100, float("nan")), P(2, 200, 1)], "profile.pvi[1].elevation = nan"),
    ("past the start", [P(0, 0, 1), P(1, 100, 2, 150, 50), P(2, 300, 1)],
     "profile.pvi[1].curve_length_back = 150.0: the vertical curve begins at -50.0000, before the profile's start"),
    ("past the end", [P(0, 0, 1), P(1, 100, 2, 50, 250), P(2, 300, 1)],
     "profile.pvi[1].curve_length_ahead = 250.0: the vertical curve ends at 350.0000, past the profile's end"),
    ("past a PVI without a curve", [P(0, 0, 1), P(1, 100, 2), P(2, 200, 0, 120, 50), P(3, 400, 1)],
     "profile.pvi[2].curve_length_back = 120.0: the vertical curve begins at 80.0000, before profile.pvi[1]"),
    ("overlapping curves", [P(0, 0, 1), P(1, 200, 3, 100, 120), P(2, 400, 0, 100, 100), P(3, 600, 2)],
     "profile.pvi[2].curve_length_back = 100.0: the vertical curve begins at 300.0000, before the curve of "
     "profile.pvi[1] ends at 320.0000"),
    ("circle too large", [P(0, 0, 0), P(1, 100, 5, radius=1e5), P(2, 200, 0)],
     "profile.pvi[1].radius = 100000.0: the vertical curve begins at"),
]


@pytest.mark.parametrize("specs, expect", [b[1:] for b in BAD], ids=[b[0] for b in BAD])
def test_validation_errors_name_the_pvi(specs, expect):
    with pytest.raises(JobFileError) as info:
        build_profile(specs)
    msg = str(info.value)
    assert expect in msg and "\n" not in msg


def test_curves_may_touch_and_reach_the_ends():
    # touching within the tolerance is allowed: PVT of one = PVC of the next
    prof = build_profile([P(0, 0, 1), P(1, 100, 3, 100, 100), P(2, 300, 0, 100, 100 - 1e-7), P(3, 400, 2)])
    x = np.linspace(0.0, 400.0, 81)
    assert np.all(np.isfinite(prof.elevation(x)))
    assert float(prof.elevation(200.0)) == pytest.approx(1.5)  # the joint on the grade line between PVIs


def test_curve_on_equal_grades():
    # a parabola between equal grades is the grade itself: it keeps its PVC and
    # PVT but has no K and no high/low point; a circle there has no length at all
    specs = [P(0, 0, 10), P(1, 100, 12, 40, 40), P(2, 300, 16)]
    prof = build_profile(specs)
    row = prof.rows()[1]
    assert (row.pvc_station, row.pvt_station, row.k_value, row.high_low_kind) == (60.0, 140.0, None, None)
    x = np.linspace(0.0, 300.0, 31)
    np.testing.assert_allclose(prof.elevation(x), 10.0 + 0.02 * x, rtol=0, atol=1e-12)  # the one straight grade
    circ = build_profile([P(0, 0, 10), P(1, 100, 12, radius=800.0), P(2, 300, 16)])
    assert circ.rows()[1].pvc_station is None and circ.rows()[1].radius is None
    assert circ.feature_points()[1] == ("PVI",)
