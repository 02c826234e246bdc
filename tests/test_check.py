"""stakeout check: matching, residuals and exit codes, against shapely and
independent displacement of design points."""

import csv
import math

import numpy as np
import pytest
import shapely
from shapely.geometry import LineString
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.jobfile import load_job
from stakeout.design import build_design as compute

from .helpers import SAMPLES

runner = CliRunner()
JOB = SAMPLES / "loop_ramp_usft.toml"  # horizontal tolerance 0.05, vertical 0.03


def _design():
    c = compute(load_job(JOB))
    return c


def _write(path, rows, delim=",", header=None):
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh, delimiter=delim, lineterminator="\n")
        if header:
            w.writerow(header)
        w.writerows(rows)


def _run(tmp_path, staked, *extra):
    out = tmp_path / "chk"
    r = runner.invoke(app, ["check", str(JOB), str(staked), "--out", str(out), *extra])
    rows = list(csv.DictReader(open(out / "check.csv"))) if out.exists() else None
    return r, rows


def test_known_along_across_errors(tmp_path):
    # Move design points by a known distance along the local tangent (a) and across
    # it (c). Across error -> d_offset = c; along error -> d_station = a * R / (R -+ offset)
    # on arcs (common practice: a station changes by R/(R +- offset) per unit along).
    c = _design()
    sp, al = c.stakes, c.alignment
    rng = np.random.default_rng(3)
    pick = rng.choice(len(sp), 40, replace=False)
    a = rng.uniform(-0.04, 0.04, pick.size)
    x = rng.uniform(-0.04, 0.04, pick.size)
    az = np.radians(sp.azimuth[pick])
    n = sp.northing[pick] + a * np.cos(az) - x * np.sin(az)
    e = sp.easting[pick] + a * np.sin(az) + x * np.cos(az)
    rows = [[sp.point[i], f"{n[k]:.6f}", f"{e[k]:.6f}", "", "X"] for k, i in enumerate(pick)]
    _write(tmp_path / "s.csv", rows)
    r, got = _run(tmp_path, tmp_path / "s.csv")
    # outputs contract: exit 0 when every staked point is within tolerance, 1 when any is out.
    # These displacements put one shot 0.0511 off (> 0.05), so the run must say so.
    assert (np.hypot(a, x) > 0.05).sum() == 1
    assert r.exit_code == 1, r.output
    for k, i in enumerate(pick):
        row = got[k]
        assert row["design_point"] == sp.point[i]
        st = sp.station[i]
        el = al.elements[min(np.searchsorted([q.start for q in al.elements], st, side="right") - 1,
                             len(al.elements) - 1)]
        o = sp.offset[i]
        factor = 1.0 if el.radius_start is None else el.radius_start / (el.radius_start - el.turn * o)
        if "AP" in sp.feature[i]:
            continue
        assert float(row["d_offset"]) == pytest.approx(x[k], abs=0.001)
        assert float(row["d_station"]) == pytest.approx(a[k] * factor, abs=0.003 + 1e-4)
        hz = math.hypot(a[k], x[k])
        assert float(row["horizontal_error"]) == pytest.approx(hz, abs=1e-4)
        assert row["status"] == ("ok" if hz <= 0.05 else "out")


def test_station_offset_against_shapely(tmp_path):
    # shapely/GEOS reference: project shots onto a 5 cm densified centreline.
    c = _design()
    al = c.alignment
    s = np.arange(al.start_station, al.end_station, 0.05)
    cn, ce, _ = al.evaluate(s)
    line = LineString(np.column_stack([ce, cn]))
    rng = np.random.default_rng(5)
    st = rng.uniform(al.start_station + 1, al.end_station - 1, 50)
    of = rng.uniform(-20, 20, 50)
    n, e, _ = al.evaluate(st, of)
    rows = [[f"S{k}", f"{n[k]:.4f}", f"{e[k]:.4f}", "", ""] for k in range(50)]
    _write(tmp_path / "s.csv", rows)
    r, got = _run(tmp_path, tmp_path / "s.csv")
    pts = shapely.points(e, n)
    ref = shapely.line_locate_point(line, pts) + al.start_station
    dist = shapely.distance(line, pts)
    for k in range(50):
        assert float(got[k]["station"]) == pytest.approx(ref[k], abs=0.002)
        assert abs(float(got[k]["offset"])) == pytest.approx(dist[k], abs=0.001)


def test_matching_statuses_and_exit(tmp_path):
    c = _design()
    sp = c.stakes
    p = {pid: (sp.northing[i], sp.easting[i]) for i, pid in enumerate(sp.point)}
    rows = [
        ["1000", *map(str, p["1000"]), "", "good"],
        ["1001", str(p["1001"][0] + 0.2), str(p["1001"][1]), "", "out"],
        ["7777", str(p["1010"][0] + 0.01), str(p["1010"][1]), "", "renumbered"],
        ["1000", str(p["1000"][0] + 0.01), str(p["1000"][1]), "", "re-stake: governs, the first is superseded"],
        ["8888", str(p["1010"][0] - 0.01), str(p["1010"][1]), "", "duplicate by nearest"],
        ["9999", "1840123.0", "6485567.0", "", "stray"],
    ]
    _write(tmp_path / "s.csv", rows)
    r, got = _run(tmp_path, tmp_path / "s.csv")
    assert r.exit_code == 1
    assert [g["status"] for g in got] == ["superseded", "out", "ok", "ok", "duplicate", "unmatched"]
    assert got[2]["design_point"] == "1010" and got[4]["design_point"] == "1010"
    assert float(got[3]["horizontal_error"]) == pytest.approx(0.01, abs=1e-4)  # residuals kept
    assert got[5]["design_point"] == "" and got[5]["horizontal_error"] == ""
    assert list(got[0].keys())[:11] == ["point", "design_point", "station", "offset", "d_northing", "d_easting",
                                        "horizontal_error", "d_station", "d_offset", "d_elevation", "status"]
    text = (tmp_path / "chk" / "check.txt").read_text()
    assert text.index("NEEDS ATTENTION") < text.index("WITHIN TOLERANCE")
    assert "not staked" in text and "licensed surveyor" in text


def test_all_ok_exit_0_header_and_semicolons(tmp_path):
    c = _design()
    sp = c.stakes
    rows = [[sp.point[i], f"{sp.northing[i]:.4f}", f"{sp.easting[i]:.4f}", "", "x"] for i in range(5)]
    _write(tmp_path / "s.csv", rows, delim=";", header=["Point", "Northing", "Easting", "Elevation", "Desc"])
    r, got = _run(tmp_path, tmp_path / "s.csv")
    assert r.exit_code == 0, r.output
    assert all(g["status"] == "ok" for g in got) and len(got) == 5


def test_header_sets_column_order(tmp_path):
    c = _design()
    sp = c.stakes
    rows = [[sp.point[i], f"{sp.easting[i]:.4f}", f"{sp.northing[i]:.4f}"] for i in range(3)]
    _write(tmp_path / "s.csv", rows, header=["PT", "EAST", "NORTH"])
    r, got = _run(tmp_path, tmp_path / "s.csv")
    assert r.exit_code == 0, r.output
    # and by option, header-less, tab-delimited
    _write(tmp_path / "t.txt", rows, delim="\t")
    r, got = _run(tmp_path, tmp_path / "t.txt", "--columns", "point,easting,northing", "--force")
    assert r.exit_code == 0, r.output


@pytest.mark.parametrize("content, line", [("p,n,e\n1000,abc,5\n", 2), ("1000,abc,5\n", 1),
                                           ("1000,1.0,2.0\n1001,1.0\n", 2), ("", None),
                                           ("point,northing,easting\n1000,1,2\n1001,1,2,3,4,5,6\n", 3)])
def test_malformed_exit_2_nothing_written(tmp_path, content, line):
    (tmp_path / "s.csv").write_text(content)
    r, got = _run(tmp_path, tmp_path / "s.csv")
    assert r.exit_code == 2
    assert got is None and not (tmp_path / "chk").exists()
    if line:
        assert f"line {line}" in r.output
    else:
        assert "empty" in r.output


def test_no_tolerance_is_an_error(tmp_path):
    job = tmp_path / "j.toml"
    job.write_text((SAMPLES / "pi_list_local_ft.toml").read_text())
    (tmp_path / "s.csv").write_text("1,5000,5000\n")
    r = runner.invoke(app, ["check", str(job), str(tmp_path / "s.csv"), "--out", str(tmp_path / "o")])
    assert r.exit_code == 2 and "horizontal_tolerance" in r.output


def test_formula_like_shot_ids_are_neutralised(tmp_path):
    (tmp_path / "s.csv").write_text('=1+2,1840000,6485000\n"a,b",1840000,6485000\n')
    r, got = _run(tmp_path, tmp_path / "s.csv")
    assert r.exit_code == 1
    assert got[0]["point"] == "'=1+2" and got[1]["point"] == "a,b"


def test_vertical_tolerance(tmp_path):
    job = tmp_path / "j.toml"
    job.write_text((SAMPLES / "pi_list_local_ft.toml").read_text()
                   + "\n[check]\nhorizontal_tolerance = 0.05\nvertical_tolerance = 0.03\n")
    c = compute(load_job(job))
    sp = c.stakes
    rows = [[sp.point[0], f"{sp.northing[0]:.4f}", f"{sp.easting[0]:.4f}", "412.52", ""],
            [sp.point[1], f"{sp.northing[1]:.4f}", f"{sp.easting[1]:.4f}", "412.45", ""],
            [sp.point[2], f"{sp.northing[2]:.4f}", f"{sp.easting[2]:.4f}", "", ""]]
    _write(tmp_path / "s.csv", rows)
    out = tmp_path / "chk"
    r = runner.invoke(app, ["check", str(job), str(tmp_path / "s.csv"), "--out", str(out)])
    got = list(csv.DictReader(open(out / "check.csv")))
    assert r.exit_code == 1
    assert [g["status"] for g in got] == ["ok", "out", "ok"]
    assert float(got[0]["d_elevation"]) == pytest.approx(0.02, abs=1e-9)
    assert float(got[1]["d_elevation"]) == pytest.approx(-0.05, abs=1e-9)
    assert got[2]["d_elevation"] == ""
