"""Slope stakes: catch points and reference stakes against closed forms and an independent solver.

References:
- planar ground: the design line and the ground are straight along the
  section, so the catch is where two lines meet (hand-derived closed form,
  e.g. fill: ``t = (z_h - g_h) / (p + 1/s)`` for ground rising at ``p``
  outward and a fill slope of ``s``:1);
- level ground, the level-section relation of route surveying (common
  practice): the catch lies ``s * h`` beyond the hinge for a cut or fill
  of height ``h`` at ``s``:1;
- folded ground: scipy.optimize.brentq on the design line minus the
  analytic ground (independent of the TIN code), bracketed by a fine scan;
- properties: the catch lies on the ground (the TIN's own elevation there)
  and on the design line.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

from stakeout.slopestakes import NOTE_NO_CATCH, NOTE_OUTSIDE, slope_stakes, slope_vertices

from .ground_data import E0, N0, grid_tin, jittered, plane

GX, GY = 0.08, -0.05
ZF = plane(100.0, GX, GY)


def _rays(m, rng, centre=(150.0, 150.0)):
    n = np.full(m, N0 + centre[0]) + rng.uniform(-20, 20, m)
    e = np.full(m, E0 + centre[1]) + rng.uniform(-20, 20, m)
    a = rng.uniform(0, 2 * np.pi, m)
    return n, e, np.cos(a), np.sin(a)


@pytest.fixture(scope="module")
def planar():
    return jittered(100, 3.0, ZF, seed=2)


def test_planar_ground_gives_the_closed_form_catch(planar):
    rng = np.random.default_rng(4)
    m = 400
    n, e, dn, de = _rays(m, rng)
    gh = ZF(n, e)
    zh = gh + rng.uniform(-6, 6, m)
    fs, cs, fore = rng.uniform(1.5, 4, m), rng.uniform(1, 3, m), rng.uniform(2, 5, m)
    dd = np.where(rng.uniform(size=m) < 0.5, rng.uniform(0.3, 1.5, m), 0.0)
    dw = rng.uniform(0, 3, m)
    res = slope_stakes(planar, n, e, zh, dn, de, fs, cs, fore, dd, dw, 200.0, 5.0)
    p = GX * de + GY * dn  # the ground's rise per unit outward
    fill = zh >= gh
    assert np.array_equal(res.kind == "fill", fill) and np.array_equal(res.kind == "cut", ~fill)
    t_fill = (zh - gh) / (p + 1 / fs)
    t_cut = (gh - zh) / (1 / cs - p)
    t2 = fore * dd + dw
    t_ditch = (gh - zh + dd + t2 / cs) / (1 / cs - p)  # on the back slope, beyond the ditch
    ref = np.where(fill, t_fill, np.where(dd > 0, t_ditch, t_cut))
    ok = fill | (dd == 0) | (gh + p * t2 > zh - dd)  # ditch cases: the ground stays above the ditch
    assert np.all(~np.isnan(res.catch_dist[ok]))
    assert np.max(np.abs(res.catch_dist[ok] - ref[ok])) < 1e-9
    # the catch stake on the ground and on the design line (property)
    assert np.max(np.abs(planar.elevation(res.catch_n, res.catch_e)[ok] - res.catch_z[ok])) < 1e-9
    assert np.max(np.abs(res.lines.at(res.catch_dist)[ok] - res.catch_z[ok])) < 1e-9
    # reference stake: 5 beyond, its ground, distances to the hinge
    assert np.allclose(res.ref_dist[ok], res.catch_dist[ok] + 5.0, atol=1e-12)
    assert np.max(np.abs(res.ref_ground[ok] - ZF(res.ref_n[ok], res.ref_e[ok]))) < 1e-9
    assert np.max(np.abs(res.vd_to_hinge[ok] - (zh - res.ref_ground)[ok])) < 1e-12
    assert np.allclose(res.catch_cut_fill[ok], (zh - res.catch_z)[ok])


def test_level_ground_level_section_relation():
    # common practice: on level ground a fill of height h at s:1 catches s*h out from the hinge
    g = grid_tin(21, 21, 5.0, plane(50.0, 0.0, 0.0))
    h = np.array([2.0, 3.5, -1.2, -4.0])
    res = slope_stakes(g, np.full(4, N0 + 50), np.full(4, E0 + 50), 50.0 + h, np.zeros(4), np.ones(4),
                       2.0, 1.5, 4.0, 0.0, 0.0, 40.0, 3.0)
    assert list(res.kind) == ["fill", "fill", "cut", "cut"]
    assert np.allclose(res.catch_dist, [4.0, 7.0, 1.8, 6.0], atol=1e-12)
    assert np.allclose(res.catch_z, 50.0)
    assert np.allclose(res.catch_cut_fill, h)
    assert np.allclose(res.vd_to_hinge, h)


def test_ground_at_the_hinge_is_fill_with_the_catch_at_the_hinge(planar):
    n, e = np.array([N0 + 150.0]), np.array([E0 + 150.0])
    res = slope_stakes(planar, n, e, planar.elevation(n, e), 0.0, 1.0, 2.0, 2.0, 3.0, 0.0, 0.0, 50.0, 4.0)
    assert res.kind[0] == "fill" and res.catch_dist[0] == 0.0 and res.note[0] == ""


def _fold(n, e):  # a valley folded along e = E0 + 60, grid columns at 3-unit spacing hold the fold
    return 80.0 + 0.25 * np.abs(np.asarray(e) - E0 - 60.0) + 0.01 * (np.asarray(n) - N0)


def test_folded_ground_agrees_with_an_independent_root_finder():
    g = grid_tin(41, 41, 3.0, _fold)
    rng = np.random.default_rng(9)
    m = 60
    n = N0 + rng.uniform(30, 90, m)
    e = E0 + rng.uniform(20, 100, m)
    a = rng.uniform(0, 2 * np.pi, m)
    dn, de = np.cos(a), np.sin(a)
    zh = _fold(n, e) + rng.uniform(-4, 4, m)
    fs, cs, fore, dd, dw = 3.0, 2.0, 4.0, np.where(np.arange(m) % 2 == 0, 0.8, 0.0), 1.5
    res = slope_stakes(g, n, e, zh, dn, de, fs, cs, fore, dd, dw, 300.0, 6.0)
    checked = 0
    for i in range(m):
        ground = lambda t: _fold(n[i] + t * dn[i], e[i] + t * de[i])
        f = lambda t: res.lines.at(np.atleast_1d(t), np.full(np.size(t), i)) - ground(t)
        ts = np.linspace(0, 300, 60001)
        inside = (np.abs(n[i] + ts * dn[i] - N0 - 60) < 60) & (np.abs(e[i] + ts * de[i] - E0 - 60) < 60)
        stop = ts[np.argmin(inside)] if not inside.all() else 300.0
        fv = f(ts[ts <= stop])
        s0 = np.sign(fv[0])
        cross = np.flatnonzero(np.sign(fv) != s0)
        if not cross.size:
            assert np.isnan(res.catch_dist[i]) and res.note[i] in (NOTE_NO_CATCH, NOTE_OUTSIDE)
            continue
        k = cross[0]
        t_ref = brentq(lambda t: f(t)[0], ts[k - 1], ts[k], xtol=1e-13)
        assert abs(res.catch_dist[i] - t_ref) < 1e-8, i
        assert abs(res.catch_z[i] - ground(t_ref)) < 1e-8
        checked += 1
    assert checked > 40


def test_no_catch_within_max_width_and_outside_the_ground():
    g = grid_tin(21, 21, 5.0, plane(50.0, -0.6, 0.0))  # falls 0.6 per unit eastward, steeper than 2:1
    n = np.full(4, N0 + 50.0)
    e = np.array([E0 + 50.0, E0 + 50.0, E0 - 10.0, E0 + 50.0])
    z = np.array([51.0, 51.0, 51.0, 51.0])
    res = slope_stakes(g, n, e, z, 0.0, np.array([1.0, 1.0, 1.0, 1.0]), 2.0, 2.0, 4.0, 0.0, 0.0,
                       np.array([30.0, 500.0, 30.0, 20.0]), 5.0)
    # 0: the fill line never meets ground falling faster than it within 30
    assert res.note[0] == NOTE_NO_CATCH and res.kind[0] == "fill" and np.isnan(res.catch_dist[0])
    # 1: with room it runs off the ground (at e = 100): outside the ground surface
    assert res.note[1] == NOTE_OUTSIDE and res.kind[1] == "fill"
    # 2: the hinge itself is off the ground: kind empty
    assert res.note[2] == NOTE_OUTSIDE and res.kind[2] == "" and np.isnan(res.ground_at_hinge[2])
    assert res.note[3] == NOTE_NO_CATCH


def test_section_leaving_through_a_hole_is_outside():
    drop = [10 * 20 + 14, 400 + 10 * 20 + 14]  # the square e 70..75, n 50..55
    g = grid_tin(21, 21, 5.0, plane(50.0, -0.1, 0.0), drop=drop)
    res = slope_stakes(g, N0 + 52.0, E0 + 50.0, 60.0, 0.0, 1.0, 4.0, 2.0, 4.0, 0.0, 0.0, 200.0, 5.0)
    assert res.note[0] == NOTE_OUTSIDE and res.kind[0] == "fill"
    # the fill catch lies at 10 / (1/4 - 0.1) = 66.7 beyond the hole that starts at 20: never reached


def test_reference_stake_off_the_ground_keeps_the_catch():
    g = grid_tin(11, 11, 1.0, plane(10.0, 0.0, 0.0))
    res = slope_stakes(g, N0 + 5.0, E0 + 5.0, 11.0, 0.0, 1.0, 2.0, 2.0, 3.0, 0.0, 0.0, 20.0, 10.0)
    assert res.catch_dist[0] == 2.0 and np.isnan(res.ref_ground[0]) and np.isnan(res.vd_to_hinge[0])
    assert res.ref_dist[0] == 12.0


def test_long_reach_runs_several_rounds():
    g = grid_tin(201, 3, 1.0, plane(10.0, 0.0, 0.0))  # a long strip eastward, small cells
    res = slope_stakes(g, N0 + 1.0, E0, 10.0 + 90.0 / 2.0, 0.0, 1.0, 2.0, 2.0, 3.0, 0.0, 0.0, 190.0, 5.0)
    assert abs(res.catch_dist[0] - 90.0) < 1e-9


def test_slope_vertices_list_the_ditch_then_the_catch():
    g = grid_tin(21, 21, 5.0, plane(50.0, 0.0, 0.0))
    res = slope_stakes(g, N0 + 50.0, E0 + 50.0, 47.0, 0.0, 1.0, 2.0, 2.0, 4.0, 1.0, 2.0, 100.0, 5.0)
    ray, t, z = slope_vertices(res)
    # hinge 47, ditch bottom 46 at 4..6, back slope up 4 at 2:1: catch at 6 + 8 = 14
    assert ray.tolist() == [0, 0, 0] and np.allclose(t, [4.0, 6.0, 14.0]) and np.allclose(z, [46.0, 46.0, 50.0])


def test_slope_staking_solves_each_side_with_its_own_slopes():
    from stakeout.slopestakes import SideSlopes, SlopeStaking

    g = grid_tin(21, 21, 5.0, plane(50.0, 0.0, 0.0))
    spec = SlopeStaking(SideSlopes("SHL", 4.0, 3.0, 4.0, 1.0, 2.0), SideSlopes("SHR", 2.0, 2.0), 10.0, 300.0)
    # level ground 2 below (fill) on the left, 1.5 above (cut) on the right
    res = spec.solve(g, np.array([True, False, True, False]), np.full(4, N0 + 50), np.r_[E0 + 44, E0 + 56, E0 + 44,
                     E0 + 56], np.array([52.0, 52.0, 48.5, 48.5]), 0.0, np.array([-1.0, 1.0, -1.0, 1.0]))
    # common practice (level section): fill 2 at 4:1 -> 8, at 2:1 -> 4; cut 1.5: left through the ditch
    # (4 to the ditch 1 down, 2 level, then 2.5 up at 3:1 -> 7.5: 13.5), right at 2:1 -> 3
    assert np.allclose(res.catch_dist, [8.0, 4.0, 13.5, 3.0], atol=1e-12)
    assert np.allclose(res.ref_dist, res.catch_dist + 10.0)


from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_FOLDED = grid_tin(41, 41, 3.0, _fold)


@settings(max_examples=60, deadline=None)
@given(n=st.floats(20, 100), e=st.floats(20, 100), ang=st.floats(0, 6.283), dz=st.floats(-5, 5),
       fs=st.floats(1, 5), cs=st.floats(0.5, 4), ditch=st.booleans(), dw=st.floats(0, 3))
def test_property_catch_lies_on_the_ground_and_on_the_design_line(n, e, ang, dz, fs, cs, ditch, dw):
    # property: wherever a catch is found on the folded ground, it is on both lines (to 1e-9), and
    # design minus ground keeps the hinge's sign everywhere before it (checked at the ground's own
    # breakpoints and the design's corners, where both are straight between)
    n, e = N0 + n, E0 + e
    zh = float(_FOLDED.elevation(n, e)) + dz
    res = slope_stakes(_FOLDED, n, e, zh, np.cos(ang), np.sin(ang), fs, cs, 4.0, 1.0 if ditch else 0.0, dw,
                       150.0, 5.0)
    if np.isnan(res.catch_dist[0]):
        assert res.note[0] in (NOTE_NO_CATCH, NOTE_OUTSIDE)
        return
    t = res.catch_dist[0]
    assert abs(float(_FOLDED.elevation(res.catch_n[0], res.catch_e[0])) - res.catch_z[0]) < 1e-9
    assert abs(res.lines.at(np.array([t]), np.array([0]))[0] - res.catch_z[0]) < 1e-9
    sec = _FOLDED.section(n, e, np.cos(ang), np.sin(ang), t)
    ts = np.unique(np.r_[sec.dist, [x for x in (res.lines.t1[0], res.lines.t2[0]) if 0 < x < t]])[:-1]
    gz = np.interp(ts, sec.dist, sec.z)
    diff = res.lines.at(ts, np.zeros(len(ts), dtype=np.int64)) - gz
    sign = 1.0 if res.kind[0] == "fill" else -1.0
    assert np.all(diff * sign > -1e-9)


def test_lath_marking():
    from stakeout.slopestakes import lath_marking

    # common practice: C for cut, F for fill, then the distance to the hinge
    assert lath_marking(np.array([-3.4249, 1.005, 0.0, np.nan]), np.array([26.4, 7.0, 3.0, 2.0])) == [
        "C 3.42 @ 26.40", "F 1.00 @ 7.00", "F 0.00 @ 3.00", ""]
