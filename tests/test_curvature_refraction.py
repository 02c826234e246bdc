"""Curvature and refraction on zenith angles and slope distances (``[setup] curvature_refraction``).

Reference: the combined correction h = (1 - k) D^2 / (2 R) (common practice;
with k = 0.14 and R = 6,371 km it is the textbook 0.0675 m at 1 km, from
memory), and trigonometry done here with the math module.
"""

from __future__ import annotations

import csv
import io
import math

import pytest

from stakeout.jobfile import load_job
from stakeout.design import build_design

from .helpers import build_job, write_job
from .reference import recalled_figures as recalled

JOB = """
format = 1
[job]
name = "long sights"
units = "m"
[alignment]
name = "A"
start = {{ station = "0+000", northing = 1000.0, easting = 2000.0 }}
azimuth = "90-00-00"
[[alignment.element]]
kind = "line"
length = 1000.0
[staking]
interval = 250.0
elevation = 120.0
[setup]
occupied = {{ id = "OC", northing = 1000.0, easting = 2000.0, elevation = 100.0 }}
backsight = {{ id = "BS", northing = 1500.0, easting = 2000.0 }}
instrument_height = 1.5
target_height = 2.0
{extra}
"""


def _setout(tmp_path, extra):
    out = build_job(write_job(tmp_path, JOB.format(extra=extra)), tmp_path / "out")
    rows = list(csv.DictReader(io.StringIO((out / "setout.csv").read_text(encoding="utf-8"))))
    return out, rows


def test_curvature_and_refraction_lower_the_sight_by_the_textbook_amount(tmp_path):
    _, rows = _setout(tmp_path, "curvature_refraction = true\nrefraction_coefficient = 0.14")
    far = [r for r in rows if float(r["grid_distance"]) == pytest.approx(1000.0)][0]
    d = float(far["ground_distance"])
    dz = 120.0 + 2.0 - (100.0 + 1.5)
    h = (1 - 0.14) * d * d / (2 * 6_371_000.0)
    # the textbook figure at 1 km (from memory; tests/reference/recalled_figures.py)
    k, r = recalled.REFRACTION_COEFFICIENT.value, recalled.EARTH_RADIUS.value
    assert (1 - k) * 1000.0**2 / (2 * r) == recalled.CURVATURE_REFRACTION_1KM.approx()
    assert d == pytest.approx(1000.0, abs=0.5) and h == recalled.CURVATURE_REFRACTION_1KM.approx()
    zen = math.degrees(math.atan2(d, dz - h))
    assert float(far["zenith_deg"]) == pytest.approx(zen, abs=2e-6)
    assert float(far["slope_distance"]) == pytest.approx(math.hypot(d, dz - h), abs=1e-4)


def test_default_coefficient_is_0_13_and_the_sheet_says_it_is_applied(tmp_path):
    out, rows = _setout(tmp_path, "curvature_refraction = true")
    far = [r for r in rows if float(r["grid_distance"]) == pytest.approx(500.0)][0]
    d = float(far["ground_distance"])
    h = (1 - 0.13) * d * d / (2 * 6_371_000.0)
    assert float(far["zenith_deg"]) == pytest.approx(math.degrees(math.atan2(d, 20.5 - h)), abs=2e-6)
    sheet = (out / "setout.txt").read_text(encoding="utf-8")
    assert "corrected for curvature and refraction (k 0.13)" in sheet
    assert "curvature and refraction" in (out / "report.html").read_text(encoding="utf-8")


def test_without_the_key_no_correction_and_the_sheet_says_so(tmp_path):
    out, rows = _setout(tmp_path, "")
    far = [r for r in rows if float(r["grid_distance"]) == pytest.approx(1000.0)][0]
    d = float(far["ground_distance"])
    assert float(far["zenith_deg"]) == pytest.approx(math.degrees(math.atan2(d, 20.5)), abs=2e-6)
    assert "no curvature or refraction correction" in (out / "setout.txt").read_text(encoding="utf-8")


@pytest.mark.parametrize("extra, expect", [
    ("curvature_refraction = 1", "setup.curvature_refraction = 1: expected true or false"),
    ("refraction_coefficient = 0.13", "setup.refraction_coefficient = 0.13: goes with curvature_refraction = true"),
    ("curvature_refraction = true\nrefraction_coefficient = 1.0", "setup.refraction_coefficient = 1.0: must lie"),
])
def test_curvature_refraction_keys_refused_with_the_key(tmp_path, extra, expect):
    with pytest.raises(Exception) as e:
        build_design(load_job(write_job(tmp_path, JOB.format(extra=extra))))
    assert expect in str(e.value)
