"""Station equations: regions, interval stations per region, EQ stakes, true distances.

Conventions checked here are those of the job-file contract (common practice
of the trade: a station equation "back = ahead" renames the stationing ahead
of a point without moving anything; lengths stay true distances).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.design import build_design
from stakeout.errors import JobFileError
from stakeout.jobfile import load_job
from stakeout.stations import StationRef, Stationing

from .helpers import build_job, read_rows, write_job

BASE = """format = 1
[job]
name = "Equation test road"
units = "m"
[alignment]
name = "EQ"
start = {{ station = "1+000", northing = 5000.0, easting = 2000.0 }}
azimuth = 30.0
[[alignment.element]]
kind = "line"
length = 200.0
[[alignment.element]]
kind = "arc"
radius = 300.0
length = 150.0
turn = "right"
[[alignment.element]]
kind = "line"
length = 200.0
{equations}
[staking]
interval = 25.0
{extra}
"""

BACKWARD = """[[alignment.station_equation]]
back = "1+105.000"
ahead = "1+100.000"
"""
FORWARD = """[[alignment.station_equation]]
back = "1+300.000"
ahead = "2+000.000"
"""


def _job(tmp_path, equations=BACKWARD + FORWARD, extra=""):
    return write_job(tmp_path, BASE.format(equations=equations, extra=extra))


def test_backward_and_forward_equations_regions(tmp_path):
    out = build_job(_job(tmp_path), tmp_path / "out")
    rows = read_rows(out / "stations.csv")
    eq = [r for r in rows if "EQ" in r["feature"].split()]
    # each equation point is staked with the ahead station and the ahead region; 1+100
    # also lies in region 1 (which runs to 1+105), so its label carries the region
    # (outputs contract, "Stations that occur twice")
    assert [(r["station_label"], r["region"]) for r in eq] == [("1+100.000(2)", "2"), ("2+000.000", "3")]
    # interval stations are whole multiples of the interval in each region's own stationing
    for r in rows:
        if not r["feature"]:
            assert float(r["station"]) % 25.0 == pytest.approx(0.0, abs=1e-9)
    # points numbered by position along the alignment: stations rise within each region
    for reg in ("1", "2", "3"):
        st = [float(r["station"]) for r in rows if r["region"] == reg]
        assert st == sorted(st)


def test_equation_preserves_distance(tmp_path):
    # the points do not move: the same point has the same coordinates with or without equations
    (tmp_path / "plain").mkdir()
    plain = build_design(load_job(_job(tmp_path / "plain", equations="")))
    d = build_design(load_job(_job(tmp_path, BACKWARD + FORWARD)))
    assert d.alignment.length == pytest.approx(plain.alignment.length, abs=1e-12)
    assert [el.length for el in d.alignment.elements] == [el.length for el in plain.alignment.elements]
    # the PT lies 350 m along: internal 1350; region 3 shift = 2000 - (1300 + 5) = 695
    pt = [k for k in d.alignment.key_points if "PT" in k.features][0]
    assert float(d.stationing.station(pt.station)) == pytest.approx(1350.0 + 695.0)


def test_elements_end_at_back_station(tmp_path):
    out = build_job(_job(tmp_path), tmp_path / "out")
    el = read_rows(out / "elements.csv")
    # the line ends at internal 1200 (region 2, station 1195): back of nothing; the arc ends in region 3
    assert float(el[0]["end_station"]) == pytest.approx(1195.0)
    assert float(el[1]["start_station"]) == pytest.approx(1195.0)
    assert float(el[1]["end_station"]) == pytest.approx(2045.0)


def test_element_ending_at_equation_takes_back_station(tmp_path):
    eq = """[[alignment.station_equation]]
back = "1+200.000"
ahead = "5+000.000"
"""
    out = build_job(_job(tmp_path, eq), tmp_path / "out")
    el = read_rows(out / "elements.csv")
    assert float(el[0]["end_station"]) == pytest.approx(1200.0)  # back station at the equation
    assert float(el[1]["start_station"]) == pytest.approx(5000.0)  # ahead station after it


def test_region_qualified_extra_station(tmp_path):
    extra = 'extra_stations = [{ station = "1+102.000", region = 1 }, { station = "1+102.000", region = 2 }]'
    out = build_job(_job(tmp_path, extra=extra), tmp_path / "out")
    rows = [r for r in read_rows(out / "stations.csv") if r["station_label"].startswith("1+102.000")]
    assert [r["region"] for r in rows] == ["1", "2"]
    assert [r["station_label"] for r in rows] == ["1+102.000(1)", "1+102.000(2)"]  # a station that occurs twice
    # the two are 7 m apart along the alignment: 1102 in region 1 and 1102 + 5 internal in region 2
    n = [float(r["northing"]) for r in rows]
    e = [float(r["easting"]) for r in rows]
    assert math.hypot(n[1] - n[0], e[1] - e[0]) == pytest.approx(5.0, abs=1e-4)


def test_ambiguous_station_refused(tmp_path):
    job = _job(tmp_path, extra='extra_stations = ["1+102.000"]')
    r = CliRunner().invoke(app, ["build", str(job), "--out", str(tmp_path / "out")])
    assert r.exit_code == 2
    assert "staking.extra_stations[0]" in r.output and "regions 1 and 2" in r.output
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("eq, key", [
    ('[[alignment.station_equation]]\nback = "0+900.000"\nahead = "1+000.000"\n', "off the alignment"),
    ('[[alignment.station_equation]]\nback = "9+900.000"\nahead = "1+000.000"\n', "off the alignment"),
    (FORWARD + BACKWARD, "alignment.station_equation[1].back"),
])
def test_bad_equations_refused(tmp_path, eq, key):
    r = CliRunner().invoke(app, ["build", str(_job(tmp_path, eq)), "--out", str(tmp_path / "out")])
    assert r.exit_code == 2, r.output
    assert key in r.output


def test_check_reports_station_in_region(tmp_path):
    job = write_job(tmp_path, BASE.format(equations=BACKWARD + FORWARD, extra="")
                    + "[check]\nhorizontal_tolerance = 0.02\n")
    out = build_job(job, tmp_path / "out")
    rows = read_rows(out / "stations.csv")
    pick = [r for r in rows if r["region"] == "3"][2]
    staked = tmp_path / "shots.csv"
    staked.write_text(f"{pick['point']},{pick['northing']},{pick['easting']}\n", encoding="utf-8")
    r = CliRunner().invoke(app, ["check", str(job), str(staked), "--out", str(tmp_path / "chk")])
    assert r.exit_code == 0, r.output
    got = read_rows(tmp_path / "chk" / "check.csv")[0]
    assert float(got["station"]) == pytest.approx(float(pick["station"]), abs=1e-4)


def test_equation_labels_on_plan(tmp_path):
    import ezdxf  # reading the drawing back with ezdxf (reference library)

    out = build_job(_job(tmp_path), tmp_path / "out")
    texts = [t.dxf.text for t in ezdxf.readfile(out / "plan.dxf").modelspace().query("TEXT")]
    assert "1+105.000 BK = 1+100.000 AH" in texts and "1+300.000 BK = 2+000.000 AH" in texts


def test_interval_stations_each_region_property():
    # independent count: multiples of 25 in [1000, 1105) + [1100, 1300) + [2000, 2245]
    from stakeout.stations import Stationing

    st = Stationing.with_equations(1000.0, 1550.0, 1000, 3, ((1105.0, 1100.0, "a"), (1300.0, 2000.0, "b")))
    got = st.station(st.interval_stations(25.0))
    want = np.concatenate([np.arange(1000, 1105, 25), np.arange(1100, 1300, 25), np.arange(2000, 2246, 25)])
    assert np.allclose(got, want)


def test_stations_that_occur_twice_after_a_backward_equation_looked_identical(tmp_path):
    """Regression: after an equation that steps back (1+105 BK = 1+100 AH) two laths 5 m
    apart were both labelled 1+100.000.  Every label of a station that occurs twice now
    carries its region (outputs contract: ``11+50.00(2)``); labels that occur once do not."""
    out = build_job(_job(tmp_path, equations=BACKWARD, extra="offsets = [{ offset = -3.0, code = \"EL\" }]\n"
                         "extra_stations = [{ station = \"1+102\", region = 1 }, { station = \"1+102\", region = 2 }]"),
                    tmp_path / "o")
    rows = read_rows(out / "stations.csv")
    cl = [r for r in rows if r["code"] == "EL"]
    labels = {(round(float(r["station"]), 3), int(r["region"])): r["station_label"] for r in cl}
    # 1+100 and 1+102 lie in both regions (region 1 runs to 1+105, region 2 from 1+100)
    assert labels[(1100.0, 1)] == "1+100.000(1)"
    assert labels[(1100.0, 2)] == "1+100.000(2)"  # the equation point, by its ahead station
    assert labels[(1102.0, 1)] == "1+102.000(1)"
    assert labels[(1102.0, 2)] == "1+102.000(2)"
    # stations that occur once keep their plain label
    assert labels[(1075.0, 1)] == "1+075.000"
    assert labels[(1125.0, 2)] == "1+125.000"
    # the point file's descriptions say the same (code, features, label, offset)
    points = {r["point"]: r["description"] for r in read_rows(out / "points.csv")}
    by_label = {r["station_label"]: r["point"] for r in cl}
    assert "1+102.000(1)" in points[by_label["1+102.000(1)"]]
    assert "1+102.000(2)" in points[by_label["1+102.000(2)"]]
    assert len(set(r["station_label"] for r in cl)) == len(cl)  # no two laths share a label


def test_element_starting_at_an_equation_printed_its_back_station(tmp_path):
    """Regression: an element starting at an equation point started at the back station in
    elements.csv (a public exchange file's element 10: 876.2721 instead of 5350) when the
    lengths summed along the elements put its start a few units in the last place short
    of the equation (here 100.3 + 100.6 = 200.89999999999998).  The contract: an element
    starting at an equation starts at the ahead station; one ending there ends at the back."""
    job = write_job(tmp_path, """format = 1
[job]
name = "snap"
units = "m"
[alignment]
name = "S"
start = { station = "0+000", northing = 5000.0, easting = 2000.0 }
azimuth = 30.0
[[alignment.element]]
kind = "line"
length = 100.3
[[alignment.element]]
kind = "arc"
radius = 300.0
length = 100.6
turn = "right"
[[alignment.element]]
kind = "line"
length = 50.0
[[alignment.station_equation]]
back = "0+200.900"
ahead = "1+000.000"
[staking]
interval = 25.0
""")
    out = build_job(job, tmp_path / "out")
    el = read_rows(out / "elements.csv")
    assert el[1]["end_station"] == "200.9000"  # the arc ends at the back station
    assert el[2]["start_station"] == "1000.0000"  # the line starts at the ahead station
    eq = [r for r in read_rows(out / "stations.csv") if "EQ" in r["feature"].split()]
    assert [(r["station_label"], r["region"]) for r in eq] == [("1+000.000", "2")]


def test_back_station_of_a_backward_equation_printed_without_region(tmp_path):
    """Regression: after 1+105 BK = 1+100 AH the stake at 1+105 in region 2 (5 m past the
    equation point) was labelled plain 1+105.000, although 1+105 is also the equation's back
    station in region 1 and the job file's own reader refuses "1+105" without a region
    (outputs contract: a station that occurs twice carries its region on every label).  An
    equation whose ahead station equals its back station (common practice: a station
    equation that renames nothing) still labels its point once, plainly."""
    out = build_job(_job(tmp_path, equations=BACKWARD, extra="extra_stations = [{ station = \"1+105\", region = 2 }]"),
                    tmp_path / "o")
    labels = {(round(float(r["station"]), 3), int(r["region"])): r["station_label"]
              for r in read_rows(out / "stations.csv")}
    assert labels[(1105.0, 2)] == "1+105.000(2)"
    st = Stationing.with_equations(1000.0, 1550.0, 1000, 3, ((1105.0, 1100.0, "eq"),))
    with pytest.raises(JobFileError, match="lies in regions 1 and 2"):
        st.to_internal(StationRef(1105.0, None, "x"))
    same = """[[alignment.station_equation]]
back = "1+150.000"
ahead = "1+150.000"
"""
    (tmp_path / "same").mkdir()
    out2 = build_job(_job(tmp_path / "same", equations=same, extra=""), tmp_path / "o2")
    assert all("(" not in r["station_label"] for r in read_rows(out2 / "stations.csv"))


def test_occurs_twice_was_a_loop_over_every_region_for_every_label():
    """occurs_twice looped over the regions for every call (quadratic with thousands of
    equations, each key point's label a call); it now counts the regions holding each station
    by binary search.  Checked here against the plain rule, region by region, on random
    equations stepping back, forward and not at all."""
    from stakeout.stations import Stationing

    rng = np.random.default_rng(7)
    for _ in range(200):
        start, end = 1000.0, 1000.0 + 10.0 * rng.integers(50, 400)
        internals = np.sort(rng.choice(np.arange(start + 10.0, end - 10.0, 5.0), size=rng.integers(1, 8),
                                       replace=False))
        eqs, shift = [], 0.0
        for it in internals:
            back = it + shift
            ahead = back + rng.choice([-50.0, -5.0, 0.0, 5.0, 30.0])
            eqs.append((back, ahead, "e"))
            shift = ahead - it
        st = Stationing.with_equations(start, end, 100, 2, tuple(eqs))
        x = np.concatenate([np.linspace(start, end, 499), internals])
        v, own, tol = st.station(x), st.region(x), 0.005
        want = np.zeros(x.size, dtype=bool)
        for k in range(1, st.regions + 1):  # the rule, region by region
            lo, hi = st.region_range(k)
            a, b = lo + st.shift(k), hi + st.shift(k)
            inside = (v >= a - tol) & (v <= b + tol)
            if k < st.regions:  # the equation point itself, ahead equal to back, is no second place
                inside &= ~(np.isclose(x, hi, rtol=0, atol=1e-9) & (np.abs(v - b) <= tol))
            want |= inside & (own != k)
        assert np.array_equal(st.occurs_twice(x), want)
