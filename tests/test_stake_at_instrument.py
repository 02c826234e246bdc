"""A stake at the instrument, and offsets on the
setout sheet with their side."""

from __future__ import annotations

import math

import pytest

from .helpers import build_job, read_rows, sheet_records, write_job

# The POB at N 1000 E 1000, a line due east; the instrument stands on the POB.
JOB = """format = 1
[job]
name = "Stake at the instrument"
units = "ft"
[alignment]
name = "AT"
start = { station = "0+00", northing = 1000.0, easting = 1000.0 }
azimuth = 90.0
[[alignment.element]]
kind = "line"
length = 200.0
[staking]
interval = 100.0
offsets = [{ offset = -16.0, code = "EPL" }, { offset = 0.0, code = "CL" }, { offset = 12.0, code = "EPR" }]
[setup]
occupied = { id = "POB1", northing = 1000.0, easting = 1000.0 }
backsight = { id = "BS", northing = 1300.0, easting = 1000.0 }
"""


def _sheet_rows(text: str) -> dict[str, str]:
    return {rec.split()[0]: rec for rec in sheet_records(text) if "+" in rec}


def test_stake_at_the_instrument(tmp_path):
    out = build_job(write_job(tmp_path, JOB), tmp_path / "o")
    rows = {r["point"]: r for r in read_rows(out / "setout.csv")}
    at = rows["2"]  # CL at 0+00: the occupied point itself
    assert float(at["grid_distance"]) == 0.0
    for col in ("azimuth_deg", "azimuth_dms", "angle_right_deg", "angle_right_dms"):
        assert at[col] == "", col  # no direction: no angle to turn
    # every other stake keeps its angle, checked by plain trigonometry: angle right =
    # azimuth to the stake minus azimuth to the backsight (due north, 0)
    stakes = {"1": (1016.0, 1000.0), "3": (988.0, 1000.0), "4": (1016.0, 1100.0), "5": (1000.0, 1100.0),
              "6": (988.0, 1100.0)}
    for p, (n, e) in stakes.items():
        az = math.degrees(math.atan2(e - 1000.0, n - 1000.0)) % 360.0
        assert float(rows[p]["angle_right_deg"]) == pytest.approx(az, abs=1e-7)
        assert float(rows[p]["grid_distance"]) == pytest.approx(math.hypot(n - 1000.0, e - 1000.0), abs=1e-4)
    sheet = (out / "setout.txt").read_text()
    lines = _sheet_rows(sheet)
    assert "at the instrument" in lines["2"]
    assert "0.000" in lines["2"] and "0-00-00" not in lines["2"]
    assert all("at the instrument" not in lines[p] for p in stakes)
    assert "at the instrument: the stake is the occupied point itself" in sheet


def test_offsets_on_the_sheet_have_their_side(tmp_path):
    # common practice: a crew reads offsets as a size and a side, left or right looking up-station
    out = build_job(write_job(tmp_path, JOB), tmp_path / "o")
    lines = _sheet_rows((out / "setout.txt").read_text())
    assert " 16.00 LT " in lines["1"]
    assert " 0.00 CL " in lines["2"]
    assert " 12.00 RT " in lines["3"]
    # the CSV keeps the signed number
    rows = {r["point"]: r for r in read_rows(out / "setout.csv")}
    assert rows["1"]["offset"] == "-16.0000" and rows["3"]["offset"] == "12.0000"
