"""CRS factors, grid and ground, and setout against pyproj, geographiclib and
published worked examples."""

import math

import numpy as np
import pyproj
import pytest
from geographiclib.geodesic import Geodesic
from hypothesis import given
from hypothesis import strategies as st

from stakeout.alignment import ArcSpec, ChainSpec, build_alignment
from stakeout.crs import load_crs
from stakeout.errors import CRSError
from stakeout.setout import compute_setout, elevation_factor
from stakeout.units import UNITS
from stakeout.presentation import deflection_rows

from .reference import design_notes, mahun_surveying as mahun, navedtra_simple_curve as navedtra

M, FT, USFT = UNITS["m"], UNITS["ft"], UNITS["us_ft"]


def _grid_point(crs_text, lon, lat):
    t = pyproj.Transformer.from_crs(pyproj.CRS(crs_text).geodetic_crs, crs_text, always_xy=True)
    e, n = t.transform(lon, lat)
    return n, e


def test_utm_convergence_reference():
    # [computed, pyproj] (references.md, tests/reference/design_notes.py): EPSG:32633 at 16E 45N,
    # gamma = +0.707143 deg, so geodetic north has grid azimuth 359.292857 deg.
    g = load_crs("EPSG:32633", M)
    n, e = _grid_point("EPSG:32633", *design_notes.UTM_POINT.value)
    f = g.factors(n, e)
    assert f.convergence == design_notes.UTM_CONVERGENCE.approx()
    assert (0.0 - f.convergence) % 360 == design_notes.UTM_GRID_AZIMUTH_OF_NORTH.approx()


@pytest.mark.parametrize("crs, unit, lon, lat", [("EPSG:32633", M, 16.0, 45.0), ("EPSG:2229", USFT, -118.3, 34.1),
                                                 ("EPSG:2222", FT, -110.4, 33.2), ("EPSG:32154", M, -89.5, 43.0)])
def test_convergence_by_geodesic_construction(crs, unit, lon, lat):
    # Independent construction: step 20 m due north along a geodesic (pyproj.Geod on
    # the CRS's ellipsoid), project both ends, and measure the grid azimuth of the short
    # line: it equals 0 - gamma (NGS 5: t = alpha - gamma + delta; delta negligible at 20 m).
    g = load_crs(crs, unit)
    n, e = _grid_point(crs, lon, lat)
    geod = pyproj.CRS(crs).get_geod()
    lon2, lat2, _ = geod.fwd(lon, lat, 0.0, 20.0)
    n2, e2 = _grid_point(crs, lon2, lat2)
    grid_az = math.degrees(math.atan2(e2 - e, n2 - n))
    assert -grid_az == pytest.approx(g.factors(n, e).convergence, abs=0.5 / 3600)


def test_lambert_convergence_identity():
    # A Lambert conformal zone has gamma = n (lambda - lambda0) exactly (references.md).
    # [computed] EPSG:32154 at longitude 89-43-53.76413 W: gamma = +0-11-03.904;
    # [published, Mahun] +0-11-03.9.
    g = load_crs("EPSG:32154", M)
    lon = mahun.LAMBERT_LONGITUDE.value
    for lat in (42.5, 43.0, 44.0):
        n, e = _grid_point("EPSG:32154", lon, lat)
        gamma = g.factors(n, e).convergence
        assert gamma == design_notes.LAMBERT_CONVERGENCE.approx()  # [computed]
        assert gamma == mahun.LAMBERT_CONVERGENCE.approx()  # [published, Mahun]


def test_scale_factor_against_geographiclib():
    # k = grid distance / ellipsoid distance for a short line (geographiclib geodesic inverse).
    g = load_crs("EPSG:32633", M)
    lon, lat = 16.3, 46.1
    n1, e1 = _grid_point("EPSG:32633", lon, lat)
    n2, e2 = _grid_point("EPSG:32633", lon + 0.0002, lat + 0.0001)
    s12 = Geodesic.WGS84.Inverse(lat, lon, lat + 0.0001, lon + 0.0002)["s12"]
    k_mid = g.factors((n1 + n2) / 2, (e1 + e2) / 2).scale_factor
    assert math.hypot(n2 - n1, e2 - e1) / s12 == pytest.approx(k_mid, abs=2e-9)
    # and the same as pyproj's own get_factors
    f = pyproj.Proj("EPSG:32633").get_factors(lon, lat)
    assert g.factors(n1, e1).scale_factor == pytest.approx(f.meridional_scale, abs=1e-9)


def test_combined_factor_mahun_example():
    # J. Mahun, Open Access Surveying Library, "Reduction Example: SPC / UTM":
    # [published] H = 358.6 m, N = -33.902 m, k = 1.00021177 -> CF = 1.00016082;
    # [computed] with R = 6,372,200 m: 1.00016081.  NGS 5: h = H + N, EF = R/(R+h), CF = k EF.
    h = mahun.ORTHOMETRIC_HEIGHT.value + mahun.GEOID_HEIGHT.value
    cf = mahun.SCALE_FACTOR.value * elevation_factor(h, mahun.EARTH_RADIUS.value)
    assert cf == mahun.COMBINED_FACTOR_R.approx()  # [computed]
    # [published]: the source's own R is not stated; a unit of its last digit either way
    assert cf == mahun.COMBINED_FACTOR.approx(2e-8)


def test_gaussian_radius():
    # sqrt(M N) on GRS80 at 45 deg (handbook ellipsoid relations, computed here directly)
    g = load_crs("EPSG:32633", M)
    a, f = 6378137.0, 1 / 298.257223563
    e2 = f * (2 - f)
    s2 = math.sin(math.radians(45)) ** 2
    mm = a * (1 - e2) / (1 - e2 * s2) ** 1.5
    nn = a / math.sqrt(1 - e2 * s2)
    assert g.gaussian_radius(45.0) == pytest.approx(math.sqrt(mm * nn), rel=1e-12)


def test_crs_checks():
    with pytest.raises(CRSError, match="geographic"):
        load_crs("EPSG:4326", M)
    with pytest.raises(CRSError, match="unknown CRS"):
        load_crs("EPSG:999999", M)
    # US survey foot vs international foot: 2 ppm is 0.01 ft a mile, never mixed silently
    with pytest.raises(CRSError, match=r"US survey foot.*job.units = 'ft'"):
        load_crs("EPSG:2229", FT)
    with pytest.raises(CRSError, match=r"foot.*job.units = 'us_ft'"):
        load_crs("EPSG:2222", USFT)
    assert load_crs("EPSG:2229", USFT).unit is USFT
    assert load_crs("EPSG:2222", FT).unit is FT


def test_setout_worked_example():
    # [computed] references.md "Setout" (tests/reference/design_notes.py): occupy N 5000 E 5000,
    # backsight N 5300 E 5000 (due north: azimuth 0), target N 5100 E 5173.205 -> angle right
    # 60-00-00, distance 200.000.
    (on, oe), (tn, te) = design_notes.OCCUPIED.value, design_notes.TARGET.value
    assert design_notes.BACKSIGHT.value[1] == oe  # the backsight azimuth 0.0 below
    so = compute_setout(on, oe, 0.0, np.array([tn]), np.array([te]), 1.0)
    assert so.angle_right[0] == design_notes.ANGLE_RIGHT.approx()
    assert so.grid_distance[0] == design_notes.DISTANCE.approx()


def test_zenith_and_slope():
    so = compute_setout(0.0, 0.0, 0.0, np.array([100.0]), np.array([0.0]), 1.0, 10.0, 1.5, np.array([11.5]), 0.0)
    assert so.zenith[0] == pytest.approx(90.0)
    so = compute_setout(0.0, 0.0, 0.0, np.array([100.0]), np.array([0.0]), 1.0, 10.0, 1.5, np.array([111.5]), 0.0)
    assert so.zenith[0] == pytest.approx(45.0) and so.slope_distance[0] == pytest.approx(100 * math.sqrt(2))


@given(st.floats(-1e5, 1e5), st.floats(-1e5, 1e5), st.floats(0, 359.999), st.floats(0.9990, 1.0010),
       st.lists(st.tuples(st.floats(-1e5, 1e5), st.floats(-1e5, 1e5)), min_size=1, max_size=20))
def test_setout_properties(on, oe, bs, cf, pts):
    n = np.array([p[0] for p in pts])
    e = np.array([p[1] for p in pts])
    so = compute_setout(on, oe, bs, n, e, cf)
    far = so.grid_distance > 1e-6
    diff = (so.angle_right + bs - so.azimuth) % 360.0
    diff = np.minimum(diff, 360.0 - diff)
    assert np.all(diff[far] < 1e-9)
    assert np.all((so.angle_right >= 0) & (so.angle_right < 360))
    assert np.allclose(so.ground_distance * cf, so.grid_distance, rtol=1e-14, atol=0)


def test_navedtra_deflections():
    # NAVEDTRA 14070 "Solving a Simple Curve": PC 18+07.80, D = 15 deg, 50-ft stations,
    # deflection per full 50-ft station 3-45, at the PT = I/2. [computed] 18+50 -> 3-09-54,
    # 19+00 -> 6-54-54, 23+00 -> 36-54-54, PT -> 37-30 (tests/reference/navedtra_simple_curve.py).
    r = 18000.0 / (math.pi * navedtra.DEGREE_OF_CURVE.value)
    pc, pt, step = navedtra.PC_STATION.value, navedtra.PT_STATION.value, navedtra.STATION_INTERVAL.value
    a = build_alignment(ChainSpec("N", pc, 0.0, 0.0, 0.0, (ArcSpec(r, 1, delta=navedtra.DELTA.value),)))
    stations = np.concatenate([[pc], np.arange(1850.0, pt - 0.8, step), [pt]])
    (_, _, rows), = deflection_rows(a, stations)
    got = {round(s, 2): d for s, _, d, _, _ in rows}
    for station, deflection in navedtra.DEFLECTIONS.value.items():
        assert got[station] == pytest.approx(deflection, abs=navedtra.DEFLECTIONS.tol), station
    assert got[1950.0] - got[1900.0] == pytest.approx(navedtra.DEFLECTION_PER_STATION.value, abs=1e-9)
