"""Control points, automatic and listed setups, predicted precision: whole builds
checked against computations written here.

Sources, named beside each check:
- the greedy cover, nearest-setup and farthest-backsight rules of the job-file
  contract, re-implemented plainly in tests/test_setups.py (``_plain_rule``);
- angle right and distances by plain trigonometry (atan2, hypot) from the
  occupied point's coordinates, ground = grid / combined factor (NOAA Manual
  NOS NGS 5);
- the predicted standard errors against the Monte Carlo of the contract's
  error model in tests/test_precision.py (``_monte_carlo``, 250,000 draws);
- the plan read back with ezdxf; hashes with hashlib.
"""

from __future__ import annotations

import hashlib
import json
import math
import re

import ezdxf
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.design import build_design
from stakeout.errors import GeometryError, JobFileError
from stakeout.jobfile import load_job, parse_job
from stakeout.precision import InstrumentSpec, predict_precision

from .helpers import read_rows, sheet_records, write_job
from .test_precision import _monte_carlo
from .test_setups import _plain_rule

runner = CliRunner()

# ---- a held-out corridor: 1,186 m of line, right curve, line, left curve, line ----------------------
ALIGNMENT = """[alignment]
name = "HC"
start = { station = "0+000", northing = 5000.0, easting = 2000.0 }
azimuth = 70.0
[[alignment.element]]
kind = "line"
length = 300.0
[[alignment.element]]
kind = "arc"
radius = 400.0
delta = "40-00-00"
turn = "right"
[[alignment.element]]
kind = "line"
length = 250.0
[[alignment.element]]
kind = "arc"
radius = 300.0
delta = "30-00-00"
turn = "left"
[[alignment.element]]
kind = "line"
length = 200.0
"""

# eight control points beside the corridor, ids deliberately not in along-the-road order
CONTROL = [
    ("CP17", 5046.570, 2025.617, 101.20), ("CP03", 5025.517, 2192.906, 102.05),
    ("CP11", 5158.009, 2297.466, 104.90), ("CP08", 5094.846, 2455.998, 103.31),
    ("CP21", 5030.146, 2593.797, None), ("CP05", 5066.235, 2766.558, 99.87),
    ("CP14", 4955.500, 2911.423, 98.12), ("CP02", 5059.276, 3071.054, 97.40),
]
MAX_DISTANCE, MAX_BACKSIGHT = 160.0, 420.0
FACTOR = 0.99975
TOLERANCE = 0.016  # tight enough that some stakes no setup keeps within it (flagged)
SPEC = InstrumentSpec(angle_sigma_arcsec=5.0, distance_sigma=0.003, distance_ppm=3.0, centering_sigma=0.003,
                      pole_sigma=0.008)


def _corridor(tmp_path):
    """The corridor job: five control points in a CSV, three inline; auto setups."""
    lines = ["point,northing,easting,elevation,description"]
    lines += [f"{i},{n},{e},{'' if z is None else z},mark" for i, n, e, z in CONTROL[:5]]
    (tmp_path / "control").mkdir()
    (tmp_path / "control" / "corridor.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    inline = "".join(f'[[control.point]]\nid = "{i}"\nnorthing = {n}\neasting = {e}\nelevation = {z}\n'
                     for i, n, e, z in CONTROL[5:])
    text = f"""format = 1
[job]
name = "Held-out corridor"
units = "m"
{ALIGNMENT}
[staking]
interval = 25.0
offsets = [{{ offset = -7.5, code = "EPL" }}, {{ offset = 0.0, code = "CL" }}, {{ offset = 7.5, code = "EPR" }}]
[control]
file = "control/corridor.csv"
{inline}
[setup]
occupied = "auto"
max_distance = {MAX_DISTANCE}
max_backsight = {MAX_BACKSIGHT}
[scale]
combined_factor = {FACTOR}
[instrument]
angle_sigma = {SPEC.angle_sigma_arcsec}
distance_sigma = {SPEC.distance_sigma}
distance_ppm = {SPEC.distance_ppm}
centering_sigma = {SPEC.centering_sigma}
pole_sigma = {SPEC.pole_sigma}
[check]
horizontal_tolerance = {TOLERANCE}
"""
    return write_job(tmp_path, text)


def _build(job, out):
    r = runner.invoke(app, ["build", str(job), "--out", str(out)])
    assert r.exit_code == 0, r.output
    return r.output


def _angle_right(occ, bs, pt):
    """Plain trigonometry: azimuth to the point minus azimuth to the backsight, 0 to 360."""
    az = math.degrees(math.atan2(pt[1] - occ[1], pt[0] - occ[0]))
    az_bs = math.degrees(math.atan2(bs[1] - occ[1], bs[0] - occ[0]))
    return (az - az_bs) % 360.0


def _sheet_sections(text):
    """{setup number: [point ids in its section]} and the summary rows of setout.txt."""
    sections: dict[int, list[str]] = {}
    summary = []
    current = None
    in_summary = False
    for line in text.splitlines():
        line = line.lstrip("\f")
        m = re.match(r"SETUP (\d+) of (\d+)", line)
        if m:
            current, in_summary = int(m.group(1)), False
            sections[current] = []
            continue
        if line.startswith("SETUPS:"):
            in_summary = True
            continue
        if line.startswith("CURVE DATA"):
            break
        if in_summary and re.match(r"\s*\d+ +\S+ +\S+ +\d+-\d\d-\d\d", line):
            summary.append(line.split())
        elif current is not None and re.match(r"\d+ +\d+\+\d{3}\.\d{3} ", line):
            sections[current].append(line.split()[0])
    return sections, summary


def test_held_out_corridor(tmp_path):
    job = _corridor(tmp_path)
    console = _build(job, tmp_path / "o")
    out = tmp_path / "o"
    setout = read_rows(out / "setout.csv")
    stations = read_rows(out / "stations.csv")
    assert [r["point"] for r in setout] == [r["point"] for r in stations]  # point order
    sn = np.array([float(r["northing"]) for r in stations])
    se = np.array([float(r["easting"]) for r in stations])
    ctrl = {i: (n, e) for i, n, e, _ in CONTROL}

    # contract rule with [instrument] and a tolerance ("Automatic setups that keep stakes
    # within tolerance"), plain re-implementation (tests/test_setups.py); r95 from the
    # precision module, itself checked against a Monte Carlo simulation below
    ids = [c[0] for c in CONTROL]

    def r95(on, oe, bn, be, pn, pe):
        return predict_precision(on, oe, bn, be, pn, pe, SPEC).r95

    want, want_index = _plain_rule(ids, [c[1] for c in CONTROL], [c[2] for c in CONTROL], sn.tolist(), se.tolist(),
                                   MAX_DISTANCE, MAX_BACKSIGHT, r95, TOLERANCE)
    used = {}
    for r in setout:
        used.setdefault(int(r["setup"]), (r["occupied"], r["backsight"]))
    assert sorted(used) == list(range(1, len(used) + 1))
    assert 1 < len(used) <= len(want)  # no more setups than the greedy rule
    assert {o for o, _ in used.values()} == {w[0] for w in want}
    for k, r in enumerate(setout):
        occ = ctrl[r["occupied"]]
        d_occ = math.hypot(sn[k] - occ[0], se[k] - occ[1])
        assert d_occ <= MAX_DISTANCE  # within reach
        # on the chosen setup reaching it with the smallest r95, ties by id (contract)
        assert r["occupied"] == want[want_index[k]][0]
    for occ_id, bs_id in used.values():
        occ = ctrl[occ_id]
        # the farthest other control point within max_backsight, ties by id (contract)
        reach = [(math.hypot(ctrl[c][0] - occ[0], ctrl[c][1] - occ[1]), c) for c in ids if c != occ_id]
        far = max((d, c) for d, c in reach if d <= MAX_BACKSIGHT)
        assert bs_id == min(c for d, c in reach if d == far[0])

    # angles and distances from the chosen setup, plain trigonometry; ground = grid / factor (NGS 5)
    for k, r in enumerate(setout):
        occ, bs = ctrl[r["occupied"]], ctrl[r["backsight"]]
        assert float(r["angle_right_deg"]) == pytest.approx(_angle_right(occ, bs, (sn[k], se[k])), abs=2e-7)
        grid = math.hypot(sn[k] - occ[0], se[k] - occ[1])
        assert float(r["grid_distance"]) == pytest.approx(grid, abs=1e-4)
        assert float(r["ground_distance"]) == pytest.approx(grid / FACTOR, abs=1e-4)
        az = math.degrees(math.atan2(se[k] - occ[1], sn[k] - occ[0])) % 360.0
        assert float(r["azimuth_deg"]) == pytest.approx(az, abs=2e-7)

    # predicted precision against the Monte Carlo of the contract's model (tests/test_precision.py):
    # per setup, its nearest, farthest and middle stakes, backsights from 294 to 401 m
    bs_lengths = []
    for number, (occ_id, bs_id) in sorted(used.items()):
        mine = [k for k, r in enumerate(setout) if int(r["setup"]) == number]
        dist = np.array([float(setout[k]["grid_distance"]) for k in mine])
        pick = [mine[int(np.argmin(dist))], mine[int(np.argmax(dist))], mine[int(np.argsort(dist)[len(dist) // 2])]]
        occ, bs = ctrl[occ_id], ctrl[bs_id]
        bs_lengths.append(math.hypot(bs[0] - occ[0], bs[1] - occ[1]))
        stakes = np.column_stack([sn[pick], se[pick]])
        mc_along, mc_across = _monte_carlo(occ, bs, stakes, SPEC, seed=number)
        for j, k in enumerate(pick):
            along, across = float(setout[k]["sigma_along"]), float(setout[k]["sigma_across"])
            # within 1 % of the simulation, plus half the CSV's last digit
            assert abs(along - mc_along[j]) <= 0.01 * mc_along[j] + 5e-5
            assert abs(across - mc_across[j]) <= 0.01 * mc_across[j] + 5e-5
            # r95 = 2.4477 x the larger sigma (contract)
            assert float(setout[k]["r95"]) == pytest.approx(2.4477 * max(along, across), abs=2e-4)
    assert min(bs_lengths) < 300.0 < max(bs_lengths)  # (30 m and 800 m backsights: tests/test_precision.py)

    # the same numbers unrounded, from the design, within 1 % of the simulation
    d = build_design(load_job(job))
    assert d.setup is not None and d.setup.precision is not None and d.setup.flagged is not None
    far = int(np.argmax(d.setup.setout.grid_distance))
    o = d.setup.occupations[int(d.setup.setup_index[far])]
    assert o.backsight is not None
    mc_along, mc_across = _monte_carlo((o.occupied.northing, o.occupied.easting),
                                       (o.backsight.northing, o.backsight.easting),
                                       np.array([[sn[far], se[far]]]), SPEC, seed=99)
    assert d.setup.precision.sigma_along[far] == pytest.approx(mc_along[0], rel=0.01)
    assert d.setup.precision.sigma_across[far] == pytest.approx(mc_across[0], rel=0.01)

    # the sheet: a summary, then one section per setup holding exactly its stakes, flags marked
    text = (out / "setout.txt").read_text()
    sections, summary = _sheet_sections(text)
    assert sorted(sections) == sorted(used)
    for number, pts in sections.items():
        assert pts == [r["point"] for r in setout if int(r["setup"]) == number]
    assert [(int(s[0]), s[1], s[2]) for s in summary] == [(k, *used[k]) for k in sorted(used)]
    for s in summary:
        assert int(s[5]) == len(sections[int(s[0])])
    assert text.count("\f") >= len(used)  # a page break before every setup
    flagged = {setout[k]["point"] for k in np.flatnonzero(d.setup.flagged).tolist()}
    assert flagged, "the corridor should have stakes beyond the tolerance"
    for r in setout:  # the CSV's rounded r95 agrees with the flags (contract: flagged when r95 > tolerance)
        assert float(r["r95"]) >= TOLERANCE - 5e-5 if r["point"] in flagged else float(r["r95"]) <= TOLERANCE + 5e-5
    for line in sheet_records(text):  # a stake's precision columns run on to a second line
        pid = line.split(" ")[0]
        if re.match(r"\d+ +\d+\+\d{3}\.\d{3} ", line):
            assert ("r95>tol" in line) == (pid in flagged), line

    # the console lists the setups
    assert f"setups: {len(used)}, chosen among 8 control points" in console
    for k, (occ_id, bs_id) in used.items():
        assert f"setup {k}: occupy {occ_id}, backsight {bs_id}" in console

    # the plan (read back with ezdxf): every setup's backsight line, radial lines from each stake's own setup
    msp = ezdxf.readfile(out / "plan.dxf").modelspace()
    bl = sorted((round(ln.dxf.start.x, 6), round(ln.dxf.start.y, 6), round(ln.dxf.end.x, 6), round(ln.dxf.end.y, 6))
                for ln in msp.query('LINE[layer=="SO-BACKSIGHT"]'))
    assert bl == sorted((round(ctrl[o][1], 6), round(ctrl[o][0], 6), round(ctrl[b][1], 6), round(ctrl[b][0], 6))
                        for o, b in used.values())
    radial = {(round(ln.dxf.end.x, 4), round(ln.dxf.end.y, 4)): (ln.dxf.start.x, ln.dxf.start.y)
              for ln in msp.query('LINE[layer=="SO-RADIAL"]')}
    assert len(radial) == len(setout)
    for k, r in enumerate(setout):
        start = radial[(round(se[k], 4), round(sn[k], 4))]
        assert start == pytest.approx((ctrl[r["occupied"]][1], ctrl[r["occupied"]][0]), abs=1e-9)
    labels = " ".join(t.dxf.text for t in msp.query('TEXT[layer=="SO-CONTROL"]'))
    for i in ids:
        assert i in labels  # every control point is drawn, setups or not

    # the control file is recorded like a design file (hashlib)
    man = json.loads((out / "manifest.json").read_text())
    rec = [f for f in man["design_files"] if f["role"] == "control"]
    assert rec == [{"role": "control", "path": "control/corridor.csv", "chosen": "", "not_used": [],
                    "sha256": hashlib.sha256((tmp_path / "control" / "corridor.csv").read_bytes()).hexdigest()}]
    assert [s["occupied"] for s in man["setups"]] == [used[k][0] for k in sorted(used)]
    assert "control from corridor.csv" in text


def test_corridor_is_deterministic(tmp_path):
    job = _corridor(tmp_path)
    _build(job, tmp_path / "a")
    _build(job, tmp_path / "b")
    for name in ("setout.csv", "setout.txt", "plan.dxf"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()


# ---- listed setups, named by id ---------------------------------------------------------------------
LISTED = f"""format = 1
[job]
name = "Listed setups"
units = "m"
{ALIGNMENT}
[staking]
interval = 50.0
offsets = [{{ offset = -7.5, code = "EPL" }}, {{ offset = 7.5, code = "EPR" }}]
""" + "".join(f'[[control.point]]\nid = "{i}"\nnorthing = {n}\neasting = {e}\n' for i, n, e, _ in CONTROL)


def test_listed_setups_by_station_range(tmp_path):
    job = write_job(tmp_path, LISTED + """[setup]
instrument_height = 1.6
target_height = 2.0
[[setup.station]]
occupied = "CP03"
backsight = "CP17"
from_station = "0+000"
to_station = "0+400"
[[setup.station]]
occupied = "CP21"
backsight = { id = "RM9", northing = 5300.0, easting = 2600.0 }
from_station = "0+400"
to_station = "0+800"
[[setup.station]]
occupied = "CP14"
backsight_azimuth = "N 45-00-00 E"
from_station = "0+800"
to_station = "1+186.332"
""")
    _build(job, tmp_path / "o")
    setout = read_rows(tmp_path / "o" / "setout.csv")
    stations = read_rows(tmp_path / "o" / "stations.csv")
    assert list(setout[0].keys())[-3:] == ["setup", "occupied", "backsight"]
    ctrl = {i: (n, e) for i, n, e, _ in CONTROL}
    bss = {"CP17": ctrl["CP17"], "RM9": (5300.0, 2600.0)}
    for r, s in zip(setout, stations):
        st_, n, e = float(s["station"]), float(s["northing"]), float(s["easting"])
        # ranges inclusive; the shared end 0+400 goes to the setup listed first
        want = 1 if st_ <= 400.0 else 2 if st_ <= 800.0 else 3
        assert int(r["setup"]) == want, (r, st_)
        assert r["occupied"] == ["CP03", "CP21", "CP14"][want - 1]
        assert r["backsight"] == ["CP17", "RM9", ""][want - 1]
        occ = ctrl[r["occupied"]]
        if want < 3:
            ar = _angle_right(occ, bss[r["backsight"]], (n, e))
        else:  # a quadrant bearing N 45 E is azimuth 45 (common practice)
            ar = (math.degrees(math.atan2(e - occ[1], n - occ[0])) - 45.0) % 360.0
        assert float(r["angle_right_deg"]) == pytest.approx(ar, abs=2e-7)
        assert float(r["grid_distance"]) == pytest.approx(math.hypot(n - occ[0], e - occ[1]), abs=1e-4)
    text = (tmp_path / "o" / "setout.txt").read_text()
    sections, summary = _sheet_sections(text)
    assert sorted(sections) == [1, 2, 3]
    for k, pts in sections.items():
        assert pts == [r["point"] for r in setout if int(r["setup"]) == k]
    assert "SETUP 2 of 3   (setup.station[1])" in text
    assert "backsight grid azimuth 45-00-00.0 (given)" in text
    assert "each serving its range of stations" in " ".join(text.split())  # wrapped to the page
    assert "instrument height 1.600   target height 2.000 (every setup)" in text


def test_setup_range_to_the_end_needed_the_end_station_to_the_last_decimal(tmp_path):
    """Regression: a listed setup's to_station had to repeat the end station exactly
    (1+186.332 here); "start" and "end" now stand for the alignment's ends, and the
    setup summary gives each setup's range, not the first and last stake it serves."""
    job = write_job(tmp_path, LISTED + """[setup]
[[setup.station]]
occupied = "CP03"
backsight = "CP17"
from_station = "start"
to_station = "0+410"
[[setup.station]]
occupied = "CP14"
backsight = "CP21"
from_station = "0+410"
to_station = "end"
""")
    _build(job, tmp_path / "o")
    setout = read_rows(tmp_path / "o" / "setout.csv")
    stations = read_rows(tmp_path / "o" / "stations.csv")
    for r, s in zip(setout, stations):
        assert int(r["setup"]) == (1 if float(s["station"]) <= 410.0 else 2)
    assert float(stations[-1]["station"]) == pytest.approx(1186.332, abs=5e-4)  # the end is served
    _, summary = _sheet_sections((tmp_path / "o" / "setout.txt").read_text())
    # setup, occupied, backsight, bs azimuth, bs dist, stakes, farthest, from sta, to sta
    assert [(row[7], row[8]) for row in summary] == [("0+000.000", "0+410.000"), ("0+410.000", "1+186.332")]


def test_listed_setups_nearest(tmp_path):
    job = write_job(tmp_path, LISTED + """[setup]
[[setup.station]]
occupied = "CP03"
backsight = "CP17"
[[setup.station]]
occupied = "CP08"
backsight = "CP11"
[[setup.station]]
occupied = "CP02"
backsight = "CP14"
""")
    _build(job, tmp_path / "o")
    setout = read_rows(tmp_path / "o" / "setout.csv")
    stations = read_rows(tmp_path / "o" / "stations.csv")
    ctrl = {i: (n, e) for i, n, e, _ in CONTROL}
    occs = ["CP03", "CP08", "CP02"]
    for r, s in zip(setout, stations):
        n, e = float(s["northing"]), float(s["easting"])
        # nearest setup, ties to the one listed first
        want = min(range(3), key=lambda k: ((n - ctrl[occs[k]][0]) ** 2 + (e - ctrl[occs[k]][1]) ** 2, k))
        assert int(r["setup"]) == want + 1 and r["occupied"] == occs[want]


def test_one_setup_named_by_id_gets_the_setup_columns(tmp_path):
    job = write_job(tmp_path, LISTED + '[setup]\noccupied = "CP08"\nbacksight_azimuth = 10.0\n')
    _build(job, tmp_path / "o")
    setout = read_rows(tmp_path / "o" / "setout.csv")
    assert {(r["setup"], r["occupied"], r["backsight"]) for r in setout} == {("1", "CP08", "")}
    assert "SETUP 1 of 1" in (tmp_path / "o" / "setout.txt").read_text()


def test_inline_setup_with_instrument_and_no_tolerance(tmp_path):
    # one inline setup: no setup columns (the contract's file as before), precision columns added
    job = write_job(tmp_path, LISTED + """[setup]
occupied = { id = "X1", northing = 5025.517, easting = 2192.906 }
backsight = { id = "X2", northing = 5046.570, easting = 2025.617 }
[instrument]
angle_sigma = 2.0
distance_sigma = 0.002
distance_ppm = 2.0
centering_sigma = 0.001
pole_sigma = 0.003
""")
    _build(job, tmp_path / "o")
    setout = read_rows(tmp_path / "o" / "setout.csv")
    assert list(setout[0].keys())[-3:] == ["sigma_along", "sigma_across", "r95"]
    assert "setup" not in setout[0]
    text = (tmp_path / "o" / "setout.txt").read_text()
    assert "no [check] horizontal_tolerance in the job: no stake is flagged" in text
    assert "r95>tol" not in text and "SETUP 1" not in text
    # along the sight only centring, the EDM's a + b ppm and the pole act (the contract's model,
    # first order; the closed form of tests/test_precision.py)
    for r in setout:
        along = math.sqrt(0.001**2 + 0.002**2 + (2e-6 * float(r["grid_distance"])) ** 2 + 0.003**2)
        assert float(r["sigma_along"]) == pytest.approx(along, abs=5e-5)


def test_auto_reads_its_defaults():
    # contract: max_backsight defaults to 2 x max_distance
    job = parse_job((LISTED + '[setup]\noccupied = "auto"\nmax_distance = 175.5\n').encode())
    assert job.setup is not None and job.setup.auto and job.setup.listed
    assert (job.setup.max_distance, job.setup.max_backsight) == (175.5, 351.0)
    assert job.setup.occupied is None and job.setup.explicit() == ()
    assert [p.id for p in job.control] == [c[0] for c in CONTROL]


# ---- control from a CSV and from LandXML CgPoints ------------------------------------------------------
CGPOINTS = """<?xml version="1.0" encoding="UTF-8"?>
<LandXML xmlns="http://www.landxml.org/schema/LandXML-1.2" version="1.2" date="2026-01-01" time="00:00:00">
  <Units><Metric linearUnit="meter" areaUnit="squareMeter" volumeUnit="cubicMeter" angularUnit="decimal degrees"
    directionUnit="decimal degrees"/></Units>
  <CgPoints name="control">
    <CgPoint name="GX1" code="CTRL">5158.009 2297.466 104.9</CgPoint>
    <CgPoint name="GX2">5094.846 2455.998</CgPoint>
  </CgPoints>
</LandXML>
"""


def test_control_from_csv_and_landxml(tmp_path):
    (tmp_path / "c.csv").write_text("CP01;5025.517;2192.906;102.05;pin\nCP02;5030.146;2593.797;;nail\n",
                                    encoding="utf-8")  # no header, semicolons: the staked-file reader's rules
    (tmp_path / "c.xml").write_text(CGPOINTS, encoding="utf-8")
    job = write_job(tmp_path, f"""format = 1
[job]
name = "Control sources"
units = "m"
{ALIGNMENT}
[staking]
interval = 100.0
[control]
file = "c.csv"
landxml = "c.xml"
[setup]
occupied = "GX1"
backsight = "CP02"
""")
    j = load_job(job)
    assert [(p.id, p.northing, p.easting, p.elevation) for p in j.control] == [
        ("CP01", 5025.517, 2192.906, 102.05), ("CP02", 5030.146, 2593.797, None),
        ("GX1", 5158.009, 2297.466, 104.9), ("GX2", 5094.846, 2455.998, None)]
    _build(job, tmp_path / "o")
    setout = read_rows(tmp_path / "o" / "setout.csv")
    stations = read_rows(tmp_path / "o" / "stations.csv")
    for r, s in zip(setout, stations):
        pt = (float(s["northing"]), float(s["easting"]))
        assert float(r["angle_right_deg"]) == pytest.approx(
            _angle_right((5158.009, 2297.466), (5030.146, 2593.797), pt), abs=2e-7)
        assert (r["occupied"], r["backsight"]) == ("GX1", "CP02")
    man = json.loads((tmp_path / "o" / "manifest.json").read_text())
    got = {f["path"]: f["sha256"] for f in man["design_files"] if f["role"] == "control"}
    assert got == {n: hashlib.sha256((tmp_path / n).read_bytes()).hexdigest() for n in ("c.csv", "c.xml")}
    head = (tmp_path / "o" / "setout.txt").read_text()
    assert "control from c.csv" in head and "control from c.xml" in head
    assert "occupied  GX1   N 5158.0090   E 2297.4660   elev 104.900" in head


def test_control_landxml_units_must_match(tmp_path):
    (tmp_path / "c.xml").write_text(CGPOINTS.replace('<Metric linearUnit="meter" areaUnit="squareMeter" '
                                                     'volumeUnit="cubicMeter"',
                                                     '<Imperial linearUnit="foot" areaUnit="squareFoot" '
                                                     'volumeUnit="cubicFeet"').replace("/></Units>",
                                                                                       "/></Units>"),
                                    encoding="utf-8")
    text = f'format = 1\n[job]\nname = "u"\nunits = "m"\n{ALIGNMENT}\n[staking]\ninterval = 100.0\n' \
           '[control]\nlandxml = "c.xml"\n'
    with pytest.raises(JobFileError, match="control.landxml = 'c.xml'.*units"):
        load_job(write_job(tmp_path, text))


def test_control_csv_with_an_unsafe_id(tmp_path):
    (tmp_path / "c.csv").write_text("point,northing,easting\nCP 1,1.0,2.0\n", encoding="utf-8")
    text = 'format = 1\n[job]\nname = "u"\nunits = "m"\n' + ALIGNMENT + \
        '[staking]\ninterval = 100.0\n[control]\nfile = "c.csv"\n'
    with pytest.raises(JobFileError, match=r"control.file = 'c.csv' line 2 point = 'CP 1'"):
        load_job(write_job(tmp_path, text))


# ---- properties on random control layouts ------------------------------------------------------------
_LINE = """format = 1
[job]
name = "p"
units = "m"
[alignment]
name = "P"
start = {{ station = "0+000", northing = 0.0, easting = 0.0 }}
azimuth = {az}
[[alignment.element]]
kind = "line"
length = 400.0
[staking]
interval = 20.0
[setup]
occupied = "auto"
max_distance = {md}
"""


@settings(max_examples=40, deadline=None)
@given(az=st.floats(0.0, 359.0), md=st.floats(60.0, 250.0),
       ctrl=st.lists(st.tuples(st.floats(-50.0, 450.0), st.floats(-120.0, 120.0)), min_size=6, max_size=12))
def test_auto_setup_properties(az, md, ctrl):
    # Property (contract): every stake within max_distance of its setup and on the nearest chosen
    # setup; angles right from each setup's backsight by plain trigonometry.
    a = math.radians(az)
    pts = [(x * math.cos(a) - y * math.sin(a), x * math.sin(a) + y * math.cos(a)) for x, y in ctrl]  # along, across
    text = _LINE.format(az=az, md=md) + "".join(
        f'[[control.point]]\nid = "C{k:02d}"\nnorthing = {n!r}\neasting = {e!r}\n' for k, (n, e) in enumerate(pts))
    job = parse_job(text.encode())
    try:
        d = build_design(job)
    except GeometryError as exc:  # a stake no control point reaches is the contract's error
        assert "no control point within setup.max_distance" in str(exc)
        return
    sd = d.setup
    assert sd is not None
    on = np.array([o.occupied.northing for o in sd.occupations])
    oe = np.array([o.occupied.easting for o in sd.occupations])
    k = sd.setup_index
    dist = np.hypot(d.stakes.northing - on[k], d.stakes.easting - oe[k])
    assert np.all(dist <= md * (1 + 1e-12))
    all_d = np.hypot(d.stakes.northing[:, None] - on[None, :], d.stakes.easting[:, None] - oe[None, :])
    assert np.all(dist <= all_d.min(axis=1) * (1 + 1e-12))
    for i in range(len(d.stakes)):
        o = sd.occupations[int(k[i])]
        assert o.backsight is not None
        ar = _angle_right((o.occupied.northing, o.occupied.easting), (o.backsight.northing, o.backsight.easting),
                          (d.stakes.northing[i], d.stakes.easting[i]))
        got = float(sd.setout.angle_right[i])
        assert min(abs(got - ar), 360.0 - abs(got - ar)) < 1e-7 or dist[i] < 1e-9
