"""The check workflow of a crew: re-stakes, control check shots, swapped
columns, what to do, the re-stake list, and the nearest-point index.

Each case is named after what a crew does; references are named beside
each check: scipy's KD-tree and plain brute force (numpy argmin, Python
loops written from the outputs contract) as independent computations,
points.csv of a build for the re-stake layout, and displacements applied
along and square to the line by their azimuth (common practice).
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.spatial import cKDTree
from typer.testing import CliRunner

from stakeout.check import (
    design_index_of_ids,
    job_control_points,
    match_shots,
    nearest_within,
)
from stakeout.cli import app
from stakeout.design import build_design
from stakeout.jobfile import load_job

from .helpers import SAMPLES, build_job, check_row

runner = CliRunner()
LOOP = SAMPLES / "loop_ramp_usft.toml"  # US ft, tolerances 0.05 / 0.03, control CF101 and CF102
HILL = SAMPLES / "hillside_lane_profile_m.toml"  # metres, profile, tolerances 0.015 / 0.010, HL-CP3 and HL-CP4


def _design(job: Path = LOOP):
    return build_design(load_job(job))


def _xy(d, pid: str) -> tuple[float, float]:
    i = d.stakes.point.index(pid)
    return float(d.stakes.northing[i]), float(d.stakes.easting[i])


def _write(path: Path, rows, header=None) -> Path:
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh, lineterminator="\n")
        if header:
            w.writerow(header)
        w.writerows(rows)
    return path


def _check(tmp_path: Path, rows, job: Path = LOOP, *extra: str, header=None):
    staked = _write(tmp_path / "s.csv", rows, header)
    out = tmp_path / "chk"
    r = runner.invoke(app, ["check", str(job), str(staked), "--out", str(out), *extra])
    got = list(csv.DictReader(open(out / "check.csv"))) if out.exists() else None
    return r, got, out


def _shot(pid: str, n: float, e: float, z: float | str = "", desc: str = "") -> list[str]:
    return [pid, f"{n:.4f}", f"{e:.4f}", z if isinstance(z, str) else f"{z:.4f}", desc]


def _restake_ids(out: Path) -> list[str]:
    return [r["point"] for r in csv.DictReader(open(out / "restake.csv"))]


# ---- re-stakes ---------------------------------------------------------------------------------------------
def test_restake_later_shot_governs_earlier_is_superseded_not_a_failure(tmp_path):
    # Stake 1002, check it (0.20 out), reset it and shoot again: the later shot governs.
    d = _design()
    n, e = _xy(d, "1002")
    r, got, out = _check(tmp_path, [_shot("1002", n + 0.20, e), _shot("1001", *_xy(d, "1001")),
                                    _shot("1002", n + 0.01, e)])
    assert [g["status"] for g in got] == ["superseded", "ok", "ok"]  # file order kept
    assert r.exit_code == 0, r.output  # superseded is not a failure
    assert float(got[0]["horizontal_error"]) == pytest.approx(0.20, abs=1e-4)  # residuals still reported
    assert got[0]["governing_line"] == "3" and got[2]["governing_line"] == ""
    assert "1002" not in _restake_ids(out)
    text = (out / "check.txt").read_text()
    assert "superseded by shot 1002 on line 3 (ok)" in text
    assert "ALL WITHIN TOLERANCE" in text


def test_restake_good_shot_superseded_by_one_out_is_restaked(tmp_path):
    d = _design()
    n, e = _xy(d, "1002")
    r, got, out = _check(tmp_path, [_shot("1002", n, e + 0.01), _shot("1002", n, e + 0.30)])
    assert [g["status"] for g in got] == ["superseded", "out"]
    assert r.exit_code == 1
    assert "1002" in _restake_ids(out)


def test_restake_three_shots_of_one_number_the_last_governs(tmp_path):
    d = _design()
    n, e = _xy(d, "1010")
    r, got, _ = _check(tmp_path, [_shot("1010", n + 0.3, e), _shot("1010", n + 0.2, e), _shot("1010", n, e)])
    assert [g["status"] for g in got] == ["superseded", "superseded", "ok"]
    assert [g["governing_line"] for g in got] == ["3", "3", ""]
    assert r.exit_code == 0


@pytest.mark.parametrize("renumbered_first", [True, False])
def test_renumbered_shot_on_a_point_already_taken_stays_duplicate(tmp_path, renumbered_first):
    # Matches by number come first whatever the file order; a shot matched by
    # position to a design point already taken is a duplicate, never superseded.
    d = _design()
    n, e = _xy(d, "1010")
    rows = [_shot("1010", n, e), _shot("7777", n + 0.02, e)]
    if renumbered_first:
        rows.reverse()
    r, got, _ = _check(tmp_path, rows)
    by_id = {g["point"]: g for g in got}
    assert by_id["1010"]["status"] == "ok"
    assert by_id["7777"]["status"] == "duplicate" and by_id["7777"]["design_point"] == "1010"
    assert by_id["7777"]["matched_by"] == "nearest"
    assert r.exit_code == 1


def test_two_renumbered_shots_on_one_point_the_first_governs(tmp_path):
    d = _design()
    n, e = _xy(d, "1014")
    r, got, _ = _check(tmp_path, [_shot("A1", n + 0.01, e), _shot("A2", n - 0.01, e)])
    assert [g["status"] for g in got] == ["ok", "duplicate"]
    assert got[1]["governing_line"] == "1"


# ---- control check shots ---------------------------------------------------------------------------------------
def test_control_check_shot_by_id_within_tolerance_is_not_unmatched(tmp_path):
    # CF101 is the occupied point of the loop ramp (1840350.0, 6485420.0, elevation 312.40).
    r, got, out = _check(tmp_path, [_shot("CF101", 1840350.006, 6485419.992), _shot("1000", *_xy(_design(), "1000"))])
    assert got[0]["status"] == "control" and got[0]["design_point"] == "CF101"
    assert float(got[0]["horizontal_error"]) == pytest.approx(math.hypot(0.006, 0.008), abs=1e-4)
    assert float(got[0]["d_northing"]) == pytest.approx(0.006, abs=1e-6)
    assert got[0]["fails"] == ""
    assert r.exit_code == 0, r.output
    text = (out / "check.txt").read_text()
    assert "control points CF101, CF102" in text and "ALL WITHIN TOLERANCE" in text


def test_control_check_shot_beyond_tolerance_flags_exit_1(tmp_path):
    # CF102 is the backsight (1841120.0, 6485105.0): shot 0.08 away.
    r, got, out = _check(tmp_path, [_shot("CF102", 1841120.08, 6485105.0)])
    assert got[0]["status"] == "control" and got[0]["fails"] == "horizontal"
    assert r.exit_code == 1
    text = (out / "check.txt").read_text()
    assert "control out (horizontal)" in text and "check the setup" in text


def test_control_check_shot_by_position_within_the_search_radius(tmp_path):
    r, got, _ = _check(tmp_path, [_shot("501", 1840350.02, 6485420.01)])
    assert got[0]["status"] == "control" and got[0]["design_point"] == "CF101"
    assert got[0]["matched_by"] == "nearest"
    assert r.exit_code == 0


def test_control_check_shot_vertical_against_the_control_elevation(tmp_path):
    # HL-CP3 is occupied at elevation 50.125; the vertical tolerance is 0.010.
    r, got, out = _check(tmp_path, [_shot("HL-CP3", 10450.002, 20330.001, 50.145)], HILL)
    assert got[0]["status"] == "control" and got[0]["fails"] == "vertical"
    assert float(got[0]["d_elevation"]) == pytest.approx(0.020, abs=1e-9)
    assert r.exit_code == 1
    # a backsight without an elevation: no vertical check
    r, got, _ = _check(tmp_path, [_shot("HL-CP4", 10880.002, 20120.001, 99.0)], HILL, "--force")
    assert got[0]["status"] == "control" and got[0]["d_elevation"] == "" and r.exit_code == 0


def test_job_control_points_are_the_occupied_point_and_backsight():
    assert job_control_points(load_job(LOOP)) == [("CF101", 1840350.0, 6485420.0, 312.4),
                                                  ("CF102", 1841120.0, 6485105.0, None)]
    site = load_job(SAMPLES / "site_road_metric.toml")  # backsight given as an azimuth
    assert [c[0] for c in job_control_points(site)] == ["BM7"]
    assert job_control_points(load_job(SAMPLES / "pi_list_local_ft.toml")) == []  # no [setup]


def test_more_control_points_can_be_fed_in():
    # The check takes any list of (id, northing, easting, elevation): a third control point
    # and one whose id is also a design point's (the nearer of the two is taken).
    d = _design()
    n0, e0 = _xy(d, "1000")
    control = job_control_points(load_job(LOOP)) + [("CP9", 1840600.0, 6485700.0, None),
                                                     ("1000", 1840700.0, 6485800.0, None)]
    m = match_shots(["CP9", "1000", "1000", "x1"], np.array([1840600.01, n0, 1840700.0, 1840600.0]),
                    np.array([6485700.0, e0, 6485800.02, 6485700.3]), d.stakes.prefix, d.stakes.first_point,
                    d.stakes.northing, d.stakes.easting, control, 0.5)
    assert m.control_index.tolist() == [2, -1, 3, 2]
    assert m.design_index.tolist() == [-1, 0, -1, -1]
    assert m.by_number.tolist() == [True, True, True, False]


# ---- swapped columns, X and Y ---------------------------------------------------------------------------------
def _sample_rows():
    return [r.split(",") for r in (SAMPLES / "staked" / "loop_ramp_shots.csv").read_text().splitlines()]


def test_easting_first_file_stops_with_exit_2_naming_columns(tmp_path):
    rows = [[p, e, n, z, c] for p, n, e, z, c in _sample_rows()]
    r, got, out = _check(tmp_path, rows)
    assert r.exit_code == 2 and got is None and not out.exists()
    msg = r.output.replace("\n", " ")
    assert "swapped" in msg and "--columns point,easting,northing,elevation,description" in msg
    assert "(in the default order)" in msg
    # with the columns given, the same file checks as the sample does
    r2, got2, _ = _check(tmp_path, rows, LOOP, "--columns", "point,easting,northing,elevation,description")
    assert r2.exit_code == 1 and [g["status"] for g in got2].count("ok") == 9


def test_easting_first_file_under_a_header_saying_otherwise_is_refused(tmp_path):
    rows = [[p, e, n, z, c] for p, n, e, z, c in _sample_rows()]
    r, _, _ = _check(tmp_path, rows, header=["Point", "Northing", "Easting", "Elevation", "Code"])
    assert r.exit_code == 2 and "as its header names them" in r.output.replace("\n", " ")


def test_local_grid_with_similar_northings_and_eastings_is_not_taken_for_swapped(tmp_path):
    # Hollis Creek: northings 5000-7700, eastings 5000-6300 -- shots fit both ways; as read they fit.
    job = tmp_path / "j.toml"
    job.write_text((SAMPLES / "pi_list_local_ft.toml").read_text() + "\n[check]\nhorizontal_tolerance = 0.05\n")
    d = _design(job)
    rows = [_shot(p, n, e) for p, n, e in zip(d.stakes.point[:6], d.stakes.northing[:6], d.stakes.easting[:6])]
    r, got, _ = _check(tmp_path, rows, job)
    assert r.exit_code == 0, r.output


def test_a_few_stray_shots_do_not_trigger_the_swapped_refusal(tmp_path):
    d = _design()
    rows = [_shot(p, *_xy(d, p)) for p in ("1000", "1001", "1002")] + [_shot("S1", 6485000.0, 1840000.0)]
    r, got, _ = _check(tmp_path, rows)
    assert r.exit_code == 1 and got[3]["status"] == "unmatched"


@pytest.mark.parametrize("header", [["PT", "X", "Y", "Z", "CODE"], ["pt", "y", "x", "z", "code"],
                                    ["point", "northing", "x"]])
def test_xy_header_is_ambiguous_and_needs_columns(tmp_path, header):
    d = _design()
    n, e = _xy(d, "1000")
    row = [["1000", f"{e:.4f}", f"{n:.4f}", "", ""][: len(header)]]
    r, got, out = _check(tmp_path, row, header=header)
    assert r.exit_code == 2 and not out.exists()
    msg = r.output.replace("\n", " ")
    assert "--columns" in msg and "easting" in msg and "northing" in msg and "line 1" in msg
    if header[1] == "X":
        assert "--columns point,easting,northing,elevation,description if X is the easting" in msg


def test_xy_header_with_columns_given_is_skipped(tmp_path):
    d = _design()
    n, e = _xy(d, "1000")
    r, got, _ = _check(tmp_path, [["1000", f"{e:.4f}", f"{n:.4f}", "", ""]], LOOP, "--columns",
                       "point,easting,northing,elevation,description", header=["PT", "X", "Y", "Z", "CODE"])
    assert r.exit_code == 0, r.output
    assert len(got) == 1 and got[0]["status"] == "ok"


# ---- what to do ---------------------------------------------------------------------------------------------------
def _displaced(d, pid: str, along: float, across: float) -> tuple[float, float]:
    """The design point moved ``along`` up-station and ``across`` to the right, by its azimuth
    (common practice: up-station unit vector (cos az, sin az) in (N, E), right normal (-sin az, cos az))."""
    i = d.stakes.point.index(pid)
    az = math.radians(float(d.stakes.azimuth[i]))
    return (float(d.stakes.northing[i]) + along * math.cos(az) - across * math.sin(az),
            float(d.stakes.easting[i]) + along * math.sin(az) + across * math.cos(az))


def _row_and_todo(text: str, pid: str) -> tuple[str, str]:
    """A shot's status in the first table of check.txt and what to do (the line under its row)."""
    _, status, todo = check_row(text, pid)
    return status, todo


def test_what_to_do_move_back_and_left_looking_up_station(tmp_path):
    # 1006 is on the first tangent (station 10+50): a shot 0.07 ahead and 0.05 right of design
    # must move 0.07 back and 0.05 left.
    d = _design()
    r, got, out = _check(tmp_path, [_shot("1006", *_displaced(d, "1006", 0.07, 0.05))])
    assert got[0]["status"] == "out" and got[0]["fails"] == "horizontal"
    assert float(got[0]["d_station"]) == pytest.approx(0.07, abs=1e-4)
    text = (out / "check.txt").read_text()
    status, todo = _row_and_todo(text, "1006")
    assert status == "out (horizontal)" and todo == "move 0.07 back, 0.05 left"


def test_what_to_do_move_ahead_and_right_on_the_curve(tmp_path):
    # On the arc the shot's d_station / d_offset are what the crew reads; the move is their negative.
    d = _design()
    pid = "1052"
    r, got, out = _check(tmp_path, [_shot(pid, *_displaced(d, pid, -0.09, -0.06))])
    ds, do = float(got[0]["d_station"]), float(got[0]["d_offset"])
    assert ds < 0 and do < 0
    assert _row_and_todo((out / "check.txt").read_text(), pid)[1] == f"move {abs(ds):.2f} ahead, {abs(do):.2f} right"


def test_what_to_do_vertical_and_both_in_metres(tmp_path):
    # Hillside Lane stakes carry design elevations; the vertical tolerance is 0.010 m.
    d = _design(HILL)
    pid = d.stakes.point[40]
    z = float(d.stakes.elevation[40])
    n, e = _xy(d, pid)
    r, got, out = _check(tmp_path, [_shot(pid, n, e, z + 0.024)], HILL)
    assert got[0]["fails"] == "vertical" and r.exit_code == 1
    text = (out / "check.txt").read_text()
    status, todo = _row_and_todo(text, pid)
    assert status == "out (vertical)" and todo == "move 0.024 down"
    n2, e2 = _displaced(d, pid, 0.0, -0.030)
    r, got, out = _check(tmp_path, [_shot(pid, n2, e2, z - 0.015)], HILL, "--force")
    assert got[0]["fails"] == "both"
    status, todo = _row_and_todo((out / "check.txt").read_text(), pid)
    assert status == "out (both)" and todo == "move 0.030 right, 0.015 up"


def test_renumbered_shots_are_marked_as_matched_by_position(tmp_path):
    d = _design()
    n, e = _xy(d, "1030")
    n2, e2 = _xy(d, "1031")
    r, got, out = _check(tmp_path, [_shot("9001", n + 0.01, e), _shot("9002", n2 + 0.2, e2)])
    text = (out / "check.txt").read_text()
    assert "1030*" in text and "1031*" in text
    assert "(matched by position)" in text and "* matched by position" in text


def test_check_txt_fits_the_page_with_long_ids_grade_and_wild_residuals(tmp_path):
    d = _design(HILL)
    n, e = _xy(d, "5000")
    rows = [_shot("X" * 60, n + 0.3, e, 9000.0), _shot("5000", n + 12345.678, e - 23456.5, -900.0),
            _shot("Y" * 60, n + 400000.0, e, 10.0), _shot("5001", *_xy(d, "5001"), 99999.0),
            _shot("HL-CP4", 10880.2, 20120.0)]
    r, got, out = _check(tmp_path, rows, HILL)
    assert r.exit_code == 1, r.output
    text = (out / "check.txt").read_text()
    assert max(len(ln) for ln in text.splitlines()) <= 80
    # no room for the long status beside a wide mark: it opens the line under the row
    assert "    control out (horizontal): control point HL-CP4 is off" in text


# ---- the re-stake list --------------------------------------------------------------------------------------
def test_restake_csv_holds_out_superseded_by_out_and_not_staked_in_point_order(tmp_path):
    # Reference: points.csv of a build of the same job -- restake.csv rows are its rows.
    d = _design()
    built = build_job(LOOP, tmp_path / "build", "--only", "points")
    points = (built / "points.csv").read_text().splitlines()
    rows = {line.split(",")[0]: line for line in points[1:]}
    staked = [_shot(p, *_xy(d, p)) for p in d.stakes.point]  # everything staked ...
    n, e = _xy(d, "1020")
    staked[20] = _shot("1020", n, e + 0.2)  # ... 1020 out,
    staked.append(_shot("1005", *_xy(d, "1005")))
    staked[5] = _shot("1005", 0.0, 0.0)  # 1005 first stray, then good,
    staked.append(_shot("1007", *_displaced(d, "1007", 0.0, 0.3)))  # 1007 good, then out,
    del staked[30]  # 1030 not staked,
    staked[99] = _shot("1100", *_xy(d, "1101"))  # and 1100 set on 1101's spot by mistake
    r, got, out = _check(tmp_path, staked)
    assert r.exit_code == 1
    text = (out / "restake.csv").read_text().splitlines()
    assert text[0] == points[0] == "point,northing,easting,elevation,description"
    assert text[1:] == [rows[p] for p in ("1007", "1020", "1030", "1100")]
    assert _restake_ids(out) == sorted(_restake_ids(out), key=int)  # point order


def test_restake_csv_empty_when_all_set(tmp_path):
    d = _design()
    rows = [_shot(p, *_xy(d, p)) for p in d.stakes.point]
    r, got, out = _check(tmp_path, rows)
    assert r.exit_code == 0
    assert (out / "restake.csv").read_text() == "point,northing,easting,elevation,description\n"


def test_restake_csv_with_design_elevations_and_prefix(tmp_path):
    # Reference: points.csv of a build, with a prefix and elevations (Hillside Lane, prefixed).
    job = tmp_path / "j.toml"
    job.write_text(HILL.read_text().replace("first_point = 5000", 'first_point = 5000\npoint_prefix = "HL"'))
    built = build_job(job, tmp_path / "build", "--only", "points")
    points = (built / "points.csv").read_text().splitlines()
    d = _design(job)
    keep = [p for i, p in enumerate(d.stakes.point) if i % 3]
    r, got, out = _check(tmp_path, [_shot(p, *_xy(d, p), float(d.stakes.elevation[d.stakes.point.index(p)]))
                                    for p in keep], job)
    assert r.exit_code == 0, r.output
    expected = [line for i, line in enumerate(points[1:]) if i % 3 == 0]
    assert (out / "restake.csv").read_text().splitlines()[1:] == expected


# ---- the nearest-point index --------------------------------------------------------------------------------------
def _brute(pn, pe, qn, qe, radius):
    """Reference: every pair (numpy argmin: the lowest index among equal distances)."""
    idx = np.full(qn.size, -1)
    dist = np.full(qn.size, np.nan)
    for k in range(qn.size):
        d = np.hypot(qn[k] - pn, qe[k] - pe)
        if d.size:
            j = int(np.argmin(d))
            if d[j] <= radius:
                idx[k], dist[k] = j, d[j]
    return idx, dist


coords = st.integers(-400, 400)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(pts=st.lists(st.tuples(coords, coords), max_size=120), qs=st.lists(st.tuples(coords, coords), max_size=60),
       unit=st.sampled_from([0.001, 0.25, 1.0, 37.5]), origin=st.sampled_from([(0.0, 0.0), (1840000.0, 6485000.0)]),
       radius=st.floats(0.01, 2000.0), sort=st.booleans())
def test_nearest_within_equals_brute_force(pts, qs, unit, origin, radius, sort):
    # Integer lattices make many exact ties (equal distances): the lowest index must win, as argmin.
    p = np.array(pts, dtype=float).reshape(-1, 2) * unit
    if sort:
        p = p[np.lexsort((p[:, 1], p[:, 0]))]
    q = np.array(qs, dtype=float).reshape(-1, 2) * unit / 2
    pn, pe = p[:, 0] + origin[0], p[:, 1] + origin[1]
    qn, qe = q[:, 0] + origin[0], q[:, 1] + origin[1]
    r = radius * unit
    got_i, got_d = nearest_within(pn, pe, qn, qe, r)
    ref_i, ref_d = _brute(pn, pe, qn, qe, r)
    assert got_i.tolist() == ref_i.tolist()
    assert np.array_equal(got_d, ref_d, equal_nan=True)


def test_nearest_within_against_scipy_kdtree_on_a_corridor():
    # Reference library: scipy's KD-tree (distance_upper_bound) on 200k corridor points, 5000 shots
    # near them, strays and far-off shots, with a small and a large search radius.
    d = np.arange(200_000) // 5 * 0.7
    off = (np.arange(200_000) % 5 - 2) * 3.5
    az = np.radians(60.0 + d / 500.0)
    pn = 5_000_000.0 + np.cumsum(np.cos(az)) * 0.7 / 5 - off * np.sin(az)
    pe = 500_000.0 + np.cumsum(np.sin(az)) * 0.7 / 5 + off * np.cos(az)
    rng = np.random.default_rng(7)
    k = rng.choice(pn.size, 5000, replace=False)
    qn = np.r_[pn[k] + rng.normal(0, 0.3, k.size), rng.uniform(pn.min() - 500, pn.max() + 500, 500)]
    qe = np.r_[pe[k] + rng.normal(0, 0.3, k.size), rng.uniform(pe.min() - 500, pe.max() + 500, 500)]
    tree = cKDTree(np.column_stack([pn, pe]))
    for radius in (0.5, 250.0):
        got_i, got_d = nearest_within(pn, pe, qn, qe, radius)
        ref_d, ref_i = tree.query(np.column_stack([qn, qe]), distance_upper_bound=radius)
        found = np.isfinite(ref_d)
        assert np.array_equal(got_i >= 0, found)
        np.testing.assert_allclose(got_d[found], ref_d[found], rtol=0, atol=1e-9)


@settings(max_examples=200, deadline=None)
@given(ids=st.lists(st.one_of(st.integers(-5, 1200).map(str), st.integers(0, 1200).map(lambda v: f"P{v}"),
                              st.integers(0, 99).map(lambda v: f"P0{v}"), st.text(max_size=6)), max_size=40),
       prefix=st.sampled_from(["", "P", "PP"]), first=st.integers(0, 1000), count=st.integers(0, 300))
def test_design_index_of_ids_equals_a_lookup(ids, prefix, first, count):
    # Reference: a dict of the design ids as the stake set spells them (prefix + number).
    table = {f"{prefix}{first + i}": i for i in range(count)}
    assert design_index_of_ids(ids, prefix, first, count).tolist() == [table.get(s, -1) for s in ids]


# ---- matching against a plain reading of the contract ------------------------------------------------------------
def _reference_match(ids, sn, se, design_ids, dn, de, control, radius):
    """The matching rules written as plain loops, straight from the outputs contract."""
    m = len(ids)
    by_id = {p: i for i, p in enumerate(design_ids)}
    ctl_by_id = {}
    for j, c in enumerate(control):
        ctl_by_id.setdefault(c[0], j)
    di, ci, number = [-1] * m, [-1] * m, [False] * m
    for k in range(m):
        i, j = by_id.get(ids[k]), ctl_by_id.get(ids[k])
        if i is not None and j is not None:
            if math.hypot(sn[k] - control[j][1], se[k] - control[j][2]) < math.hypot(sn[k] - dn[i], se[k] - de[i]):
                i = None
            else:
                j = None
        if i is not None:
            di[k], number[k] = i, True
        elif j is not None:
            ci[k], number[k] = j, True
    for k in range(m):
        if number[k]:
            continue
        best_i, best_d = -1, math.inf
        for i in range(len(design_ids)):
            dd = float(np.hypot(sn[k] - dn[i], se[k] - de[i]))
            if dd <= radius and dd < best_d:
                best_i, best_d = i, dd
        best_j, best_c = -1, math.inf
        for j, c in enumerate(control):
            dd = float(np.hypot(sn[k] - c[1], se[k] - c[2]))
            if dd <= radius and dd < best_c:
                best_j, best_c = j, dd
        if best_j >= 0 and best_c < best_d:
            ci[k] = best_j
        elif best_i >= 0:
            di[k] = best_i
    status = [""] * m
    governor = {}
    for k in range(m):  # the last shot by number governs
        if number[k] and di[k] >= 0:
            governor[di[k]] = k
    for k in range(m):  # then, in file order, the first by position of a point not yet taken
        if not number[k] and di[k] >= 0 and di[k] not in governor:
            governor[di[k]] = k
    for k in range(m):
        if ci[k] >= 0:
            status[k] = "control"
        elif di[k] < 0:
            status[k] = "unmatched"
        elif governor[di[k]] == k:
            status[k] = "governs"
        else:
            status[k] = "superseded" if number[k] else "duplicate"
    return di, ci, status


@pytest.mark.slow
@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data(), nd=st.integers(1, 25), nc=st.integers(0, 3), ns=st.integers(0, 30),
       radius=st.sampled_from([0.5, 3.0, 40.0]))
def test_matching_equals_the_contract_read_plainly(data, nd, nc, ns, radius):
    dn = np.array(data.draw(st.lists(st.integers(0, 40), min_size=nd, max_size=nd)), dtype=float) * 2.0
    de = np.array(data.draw(st.lists(st.integers(0, 40), min_size=nd, max_size=nd)), dtype=float) * 2.0
    design_ids = [f"P{7 + i}" for i in range(nd)]
    ctl_ids = data.draw(st.lists(st.sampled_from(["C1", "C2", "P7", "P9"]), min_size=nc, max_size=nc, unique=True))
    control = [(c, float(data.draw(st.integers(0, 40))) * 2.0, float(data.draw(st.integers(0, 40))) * 2.0, None)
               for c in ctl_ids]
    ids, sn, se = [], [], []
    for _ in range(ns):
        ids.append(data.draw(st.sampled_from(design_ids + ctl_ids + ["X1", "X2", "P07", "7"])))
        kind = data.draw(st.integers(0, 2))
        if kind == 0 or not control:  # near a design point
            i = data.draw(st.integers(0, nd - 1))
            base = (dn[i], de[i])
        elif kind == 1:  # near a control point
            c = data.draw(st.sampled_from(control))
            base = (c[1], c[2])
        else:
            base = (data.draw(st.integers(-20, 100)) * 1.0, data.draw(st.integers(-20, 100)) * 1.0)
        sn.append(base[0] + data.draw(st.sampled_from([0.0, 0.25, -1.0, 5.0])))
        se.append(base[1] + data.draw(st.sampled_from([0.0, 0.25, -0.5])))
    sn_a, se_a = np.array(sn, dtype=float), np.array(se, dtype=float)
    got = match_shots(ids, sn_a, se_a, "P", 7, dn, de, control, radius)
    ref_di, ref_ci, ref_status = _reference_match(ids, sn, se, design_ids, dn, de, control, radius)
    assert got.design_index.tolist() == ref_di
    assert got.control_index.tolist() == ref_ci
    status = ["control" if c >= 0 else "unmatched" if i < 0 else "superseded" if s else "duplicate" if du
              else "governs" for i, c, s, du in zip(got.design_index, got.control_index, got.superseded,
                                                    got.duplicate)]
    assert status == ref_status
