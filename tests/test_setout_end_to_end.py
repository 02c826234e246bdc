"""setout.csv from `stakeout build` against an independent pyproj-based computation."""

import json
import math

import pyproj
import pytest
from typer.testing import CliRunner

from stakeout.cli import app

from .helpers import SAMPLES, build_job, read_rows
from .reference import nist_survey_foot as nist

runner = CliRunner()


def _build(job, tmp_path):
    out = build_job(job, tmp_path / "o")
    return out, read_rows(out / "setout.csv"), read_rows(out / "stations.csv")


def _factors(crs, n, e):
    c = pyproj.CRS(crs)
    lon, lat = pyproj.Transformer.from_crs(c, c.geodetic_crs, always_xy=True).transform(e, n)
    return lon, lat, pyproj.Proj(c).get_factors(lon, lat)


def test_geodetic_backsight_and_auto_factor(tmp_path):
    # Independent: pyproj gives gamma and k at the occupied point; grid azimuth of the
    # backsight = geodetic - gamma (NGS 5); CF = k R/(R+h), R = sqrt(M N) on GRS80,
    # h = H + N converted from US survey feet (1200/3937 m, NIST).
    out, setout, stations = _build(SAMPLES / "curve_table_ramp.toml", tmp_path)
    occ_n, occ_e = 1840300.0, 6485300.0
    lon, lat, f = _factors("EPSG:2229", occ_n, occ_e)
    bs_grid = (341 + 20 / 60 + 15 / 3600 - f.meridian_convergence) % 360
    a, fl = 6378137.0, 1 / 298.257222101
    e2 = fl * (2 - fl)
    s2 = math.sin(math.radians(lat)) ** 2
    r = math.sqrt(a * (1 - e2) / (1 - e2 * s2) ** 1.5 * a / math.sqrt(1 - e2 * s2))
    h = (288.0 - 115.0) * float(nist.US_SURVEY_FOOT.value)
    cf = f.meridional_scale * r / (r + h)
    man = json.loads((out / "manifest.json").read_text())
    assert man["factors"]["combined_factor"] == pytest.approx(cf, abs=1e-9)
    for row, st in zip(setout, stations):
        n, e = float(st["northing"]), float(st["easting"])
        az = math.degrees(math.atan2(e - occ_e, n - occ_n)) % 360
        grid = math.hypot(n - occ_n, e - occ_e)
        assert float(row["azimuth_deg"]) == pytest.approx(az, abs=2e-6)
        ar = (az - bs_grid) % 360
        assert float(row["angle_right_deg"]) == pytest.approx(ar, abs=0.5 / 3600)
        assert float(row["grid_distance"]) == pytest.approx(grid, abs=0.002)
        assert float(row["ground_distance"]) == pytest.approx(grid / cf, abs=0.002)
        dz = (290.0 + 6.5) - (291.35 + 5.12)
        assert float(row["zenith_deg"]) == pytest.approx(math.degrees(math.atan2(grid / cf, dz)), abs=2e-6)


def test_point_backsight_grid(tmp_path):
    out, setout, stations = _build(SAMPLES / "loop_ramp_usft.toml", tmp_path)
    occ_n, occ_e, bs_n, bs_e = 1840350.0, 6485420.0, 1841120.0, 6485105.0
    bs = math.degrees(math.atan2(bs_e - occ_e, bs_n - occ_n)) % 360
    assert setout[0].keys() >= {"point", "station", "offset", "azimuth_deg", "azimuth_dms", "angle_right_deg",
                                "angle_right_dms", "grid_distance", "ground_distance"}
    for row, st in zip(setout, stations):
        n, e = float(st["northing"]), float(st["easting"])
        az = math.degrees(math.atan2(e - occ_e, n - occ_n)) % 360
        assert float(row["angle_right_deg"]) == pytest.approx((az - bs) % 360, abs=2e-6)
    text = (out / "setout.txt").read_text()
    assert all(len(line) <= 80 for line in text.replace("\f", "").splitlines())
    assert "licensed surveyor" in text and "independently" in text
    assert text.count("page ") >= 3 and "\f" in text


def test_grid_azimuth_backsight_bearing(tmp_path):
    out, setout, stations = _build(SAMPLES / "site_road_metric.toml", tmp_path)
    bs = 347.5  # N 12-30-00 W
    occ_n, occ_e = 5012420.0, 512480.0
    for row, st in zip(setout, stations):
        az = math.degrees(math.atan2(float(st["easting"]) - occ_e, float(st["northing"]) - occ_n)) % 360
        assert float(row["angle_right_deg"]) == pytest.approx((az - bs) % 360, abs=2e-6)
        assert row["grid_distance"] == row["ground_distance"]  # combined factor 1 by default


def test_no_setup_skips(tmp_path):
    out = tmp_path / "o"
    r = runner.invoke(app, ["build", str(SAMPLES / "pi_list_local_ft.toml"), "--out", str(out)])
    assert r.exit_code == 0 and "setout" in r.output
    assert not (out / "setout.csv").exists() and not (out / "setout.txt").exists()
    assert (out / "plan.dxf").exists()
