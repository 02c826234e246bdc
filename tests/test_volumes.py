"""Cross-section areas and average-end-area volumes.

References:
- shapely polygons: the region below the design line and above the ground
  (fill), and the reverse (cut), as polygon intersections;
- the average-end-area worked example of Wikibooks, "Fundamentals of
  Transportation/Earthwork" (solution page): end areas 0+00 fill 60, 0+50
  fill 50, 0+75 fill 25, 1+00 cut 10 / fill 5, 1+15 cut 15, 1+50 cut 30
  (square metres), totals fill 4087.5 and cut 1058.3 cubic metres, of
  which the segments with a zero end (fill 1+00 to 1+15: 5 * 15 / 3 = 25;
  cut 0+75 to 1+00: 10 * 25 / 3 = 83.3) are taken there as pyramids;
- a second published example (polycalc.online FE surveying, "Earthwork and
  Volume Example"): sections 50 ft apart with 120 and 80 square yards of cut
  give (120 + 80) / 2 * 50/3 yd = 1666.67 cubic yards.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from stakeout.slopestakes import slope_stakes
from stakeout.volumes import areas_between, average_end_volumes, cross_sections

from .ground_data import E0, N0, grid_tin, jittered, plane


def _shapely_cut_fill(xd, zd, xg, zg):
    a, b = max(xd[0], xg[0]), min(xd[-1], xg[-1])
    lo, hi = min(zd.min(), zg.min()) - 10, max(zd.max(), zg.max()) + 10
    box = shapely.box(a, lo, b, hi)
    below_d = shapely.Polygon(np.r_[[[xd[0], lo]], np.c_[xd, zd], [[xd[-1], lo]]])
    above_g = shapely.Polygon(np.r_[[[xg[0], hi]], np.c_[xg, zg], [[xg[-1], hi]]])
    below_g = shapely.Polygon(np.r_[[[xg[0], lo]], np.c_[xg, zg], [[xg[-1], lo]]])
    above_d = shapely.Polygon(np.r_[[[xd[0], hi]], np.c_[xd, zd], [[xd[-1], hi]]])
    fill = below_d.intersection(above_g).intersection(box).area
    cut = below_g.intersection(above_d).intersection(box).area
    return cut, fill


def test_areas_between_polylines_match_shapely():
    rng = np.random.default_rng(21)
    k = 40
    fd, xd, zd, fg, xg, zg = [0], [], [], [0], [], []
    for _ in range(k):
        md, mg = rng.integers(2, 9), rng.integers(2, 40)
        xd.append(np.sort(rng.uniform(-30, 30, md)))
        zd.append(rng.uniform(0, 6, md))
        xg.append(np.sort(rng.uniform(-40, 40, mg)))
        zg.append(rng.uniform(0, 6, mg))
        fd.append(fd[-1] + md)
        fg.append(fg[-1] + mg)
    cut, fill = areas_between(np.array(fd), np.concatenate(xd), np.concatenate(zd), np.array(fg),
                              np.concatenate(xg), np.concatenate(zg))
    for i in range(k):
        c, f = _shapely_cut_fill(xd[i], zd[i], xg[i], zg[i])
        assert abs(cut[i] - c) <= 1e-9 * max(1.0, c)
        assert abs(fill[i] - f) <= 1e-9 * max(1.0, f)


def test_average_end_areas_published_example():
    # Wikibooks, Fundamentals of Transportation/Earthwork: fill by average end areas 0+00 .. 1+00
    v = average_end_volumes(np.array([0.0, 50.0, 75.0, 100.0]), np.zeros(4), np.array([60.0, 50.0, 25.0, 5.0]))
    assert v.fill.tolist() == [0.0, 2750.0, 937.5, 375.0]
    assert v.cumulative_fill[-1] == pytest.approx(4087.5 - 5.0 * 15.0 / 3.0)  # published total less its pyramid
    v = average_end_volumes(np.array([100.0, 115.0, 150.0]), np.array([10.0, 15.0, 30.0]), np.zeros(3))
    assert v.cumulative_cut[-1] == pytest.approx(1058.3 - 10.0 * 25.0 / 3.0, abs=0.05)  # published to 0.1
    # polycalc.online FE example: 50 ft apart, 120 and 80 yd2 -> 1666.67 yd3
    v = average_end_volumes(np.array([0.0, 50.0 / 3.0]), np.array([120.0, 80.0]), np.zeros(2))
    assert v.cut[1] == pytest.approx(1666.67, abs=0.005)
    assert average_end_volumes(np.zeros(0), np.zeros(0), np.zeros(0)).cut.size == 0


def test_cross_sections_on_planar_ground_match_shapely():
    zf = plane(100.0, 0.03, 0.0)  # ground rising eastward; sections run east-west
    g = jittered(80, 2.5, zf, seed=8)
    k = 12
    # stations along the northing axis; the template: hinges at -6 and +6, crown at 0 (2 % cross fall)
    n = N0 + 20.0 + 10.0 * np.arange(k)
    e = np.full(k, E0 + 100.0)
    zc = 100.0 + 3.0 + np.linspace(-3.0, 3.0, k)  # from cut through to fill along the alignment
    tmpl_off = np.tile([-6.0, 0.0, 6.0], k)
    tmpl_st = np.repeat(np.arange(k), 3)
    tmpl_z = np.repeat(zc, 3) - np.abs(tmpl_off) * 0.02
    hinge_z = zc - 0.12
    left = slope_stakes(g, n, e - 6.0, hinge_z, 0.0, -1.0, 2.0, 2.0, 4.0, 0.5, 1.0, 60.0, 5.0)
    right = slope_stakes(g, n, e + 6.0, hinge_z, 0.0, 1.0, 2.0, 2.0, 4.0, 0.5, 1.0, 60.0, 5.0)
    cs = cross_sections(g, tmpl_st, tmpl_off, tmpl_z, left, np.full(k, -6.0), right, np.full(k, 6.0))
    assert cs.ok.all()
    for i in range(k):
        xd = cs.design_offset[cs.design_first[i]:cs.design_first[i + 1]]
        zd = cs.design_z[cs.design_first[i]:cs.design_first[i + 1]]
        xg = cs.ground_offset[cs.ground_first[i]:cs.ground_first[i + 1]]
        zg = cs.ground_z[cs.ground_first[i]:cs.ground_first[i + 1]]
        assert xd[0] == pytest.approx(xg[0], abs=1e-9) and xd[-1] == pytest.approx(xg[-1], abs=1e-9)
        assert np.max(np.abs(zg - zf(n[i], E0 + 100.0 + xg))) < 1e-9  # the ground section lies on the plane
        # reference: the ground as the plane itself (independent of the TIN), polygons by shapely
        xs = np.linspace(xd[0], xd[-1], 3)
        c, f = _shapely_cut_fill(xd, zd, xs, zf(n[i], E0 + 100.0 + xs))
        assert cs.cut_area[i] == pytest.approx(c, rel=1e-9, abs=1e-9)
        assert cs.fill_area[i] == pytest.approx(f, rel=1e-9, abs=1e-9)
    assert cs.cut_area[0] > 1.0 and cs.fill_area[-1] > 1.0


def test_station_without_both_catches_has_no_area():
    g = grid_tin(21, 21, 5.0, plane(50.0, 0.0, 0.0))
    left = slope_stakes(g, np.array([N0 + 50, N0 + 50]), np.array([E0 + 44, E0 + 44]), 52.0, 0.0, -1.0,
                        2.0, 2.0, 4.0, 0.0, 0.0, np.array([40.0, 2.0]), 5.0)
    right = slope_stakes(g, np.array([N0 + 50, N0 + 50]), np.array([E0 + 56, E0 + 56]), 52.0, 0.0, 1.0,
                         2.0, 2.0, 4.0, 0.0, 0.0, 40.0, 5.0)
    cs = cross_sections(g, np.array([0, 0, 1, 1]), np.array([-6.0, 6.0, -6.0, 6.0]), np.full(4, 52.0),
                        left, np.full(2, -6.0), right, np.full(2, 6.0))
    assert cs.ok.tolist() == [True, False]
    # level ground 2 below a 12-wide top, 2:1 slopes: the trapezoid (12 + 20) / 2 * 2 = 32
    assert cs.fill_area[0] == pytest.approx(32.0, abs=1e-9) and cs.cut_area[0] == pytest.approx(0.0, abs=1e-12)
    assert np.isnan(cs.fill_area[1])
