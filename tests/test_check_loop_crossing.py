"""Issue 28 item 2: ``check`` at a loop crossing keeps a shot on its design
point's branch, and every move is along and square to the alignment at the
stake (issue 25 item 1: ground distances, not station differences).

Geometry by hand (common practice, plane geometry): a line 200 north from
(0, 0), an arc R 60 turning 270 degrees right (centre 60 east of its start),
then a line 200 west.  The arc ends at (140, 60) heading west, so the last
line passes through (140, 0): the first line's station 0+140.
"""

import csv
import math

import numpy as np
import pytest
from typer.testing import CliRunner

from stakeout.check import along_across, locate_near
from stakeout.cli import app
from stakeout.design import build_design
from stakeout.jobfile import load_job

from .helpers import write_job

runner = CliRunner()

CLOVERLEAF = """format = 1
[job]
name = "cloverleaf loop"
units = "m"
[alignment]
name = "LOOP"
start = { station = "0+000", northing = 0.0, easting = 0.0 }
azimuth = 0.0
[[alignment.element]]
kind = "line"
length = 200.0
[[alignment.element]]
kind = "arc"
radius = 60.0
delta = 270.0
turn = "right"
[[alignment.element]]
kind = "line"
length = 200.0
[staking]
interval = 20.0
offsets = [{offset = -3.0, code = "L"}, {offset = 0.0, code = "CL"}, {offset = 3.0, code = "R"}]
[check]
horizontal_tolerance = 0.02
"""


def _check(tmp_path, rows):
    job = write_job(tmp_path, CLOVERLEAF)
    staked = tmp_path / "shots.csv"
    staked.write_text("point,northing,easting,elevation\n" + "".join(f"{p},{n!r},{e!r},\n" for p, n, e in rows))
    out = tmp_path / "chk"
    r = runner.invoke(app, ["check", str(job), str(staked), "--out", str(out)])
    return r, list(csv.DictReader(open(out / "check.csv"))), (out / "check.txt").read_text()


def test_check_put_the_crew_on_the_wrong_branch(tmp_path):
    d = build_design(load_job(write_job(tmp_path, CLOVERLEAF)))
    sp = d.stakes
    i = int(np.flatnonzero((np.abs(sp.station - 140.0) < 1e-9) & (np.abs(sp.offset) < 1e-9))[0])
    # the crossing, by hand: the last line (station 200 + 60 * 3 pi / 2 + 60) passes the stake
    assert d.alignment.locate(140.0, 0.0).distance < 1e-9
    r, rows, txt = _check(tmp_path, [(sp.point[i], 140.03, 0.0)])
    assert r.exit_code == 1, r.output
    row = rows[0]
    assert float(row["station"]) == pytest.approx(140.03, abs=1e-4)
    assert float(row["offset"]) == pytest.approx(0.0, abs=1e-6)
    assert float(row["d_station"]) == pytest.approx(0.03, abs=1e-6)
    assert float(row["d_along"]) == pytest.approx(0.03, abs=1e-6)
    assert float(row["d_across"]) == pytest.approx(0.0, abs=1e-6)
    assert row["alignment"] == "LOOP"
    assert "move 0.030 back" in txt and "left" not in txt.split("move 0.030 back")[1].splitlines()[0]


def test_moves_are_along_and_across_not_station_differences(tmp_path):
    # an offset stake 3 m right (inside) of the arc: 0.040 ahead on the ground is 0.040 * 60 / 57 in station
    # (common practice: a station changes by R / (R - offset) per unit along on the inside)
    d = build_design(load_job(write_job(tmp_path, CLOVERLEAF)))
    sp = d.stakes
    i = int(np.flatnonzero((sp.station > 250) & (sp.station < 400) & (sp.offset == 3.0))[0])
    az = math.radians(float(sp.azimuth[i]))
    n, e = sp.northing[i] + 0.04 * math.cos(az), sp.easting[i] + 0.04 * math.sin(az)
    r, rows, txt = _check(tmp_path, [(sp.point[i], float(n), float(e))])
    row = rows[0]
    assert float(row["d_along"]) == pytest.approx(0.04, abs=1e-6)
    assert float(row["d_station"]) == pytest.approx(0.04 * 60 / 57, abs=1e-5)
    assert "move 0.040 back" in txt


def test_locate_near_against_the_whole_inverse_away_from_the_crossing(tmp_path):
    d = build_design(load_job(write_job(tmp_path, CLOVERLEAF)))
    al = d.alignment
    rng = np.random.default_rng(5)
    s = rng.uniform(al.start_station, al.end_station, 300)
    o = rng.uniform(-5, 5, 300)
    p = al.evaluate(s, o, miter=False)
    st, off = locate_near(al, p.northing, p.easting, s + rng.uniform(-1, 1, 300))
    assert np.allclose(st, s, atol=1e-7) and np.allclose(off, o, atol=1e-7)
    a, c = along_across(np.array([90.0]), np.array([0.0]), np.array([1.0]))
    assert a[0] == pytest.approx(1.0) and c[0] == pytest.approx(0.0, abs=1e-15)
