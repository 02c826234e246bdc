"""What the crew is told by `stakeout check`: a mistyped point number and shots on the ground.

Contract: outputs.md "Additions, second set" ("A shot keyed with the wrong
number", "Ground shots").  The design points come from the sample's own
points.csv read with the csv module; the shots are made here from them.
"""

from __future__ import annotations

import csv

from typer.testing import CliRunner

from stakeout.cli import app

from .helpers import SAMPLES, build_job, read_rows, write_job

JOB = SAMPLES / "loop_ramp_usft.toml"


def _design(tmp_path):
    return read_rows(build_job(JOB, tmp_path / "b", "--only", "points") / "points.csv")


def _check(tmp_path, job, shots):
    staked = tmp_path / "shots.csv"
    with open(staked, "w", newline="") as fh:
        csv.writer(fh).writerows(shots)
    r = CliRunner().invoke(app, ["check", str(job), str(staked), "--out", str(tmp_path / "c")])
    return r, read_rows(tmp_path / "c" / "check.csv"), (tmp_path / "c")


def test_mistyped_number_sent_the_crew_15_m_now_misnumbered(tmp_path):
    """Regression: a shot 1 mm from point 1034 stored as 1043 was told to move ~15 ft and
    1034 was listed as not staked.  It is now `misnumbered` against 1034 (the point it lies
    on, matched by position), 1034 counts as staked, 1043 is still to set, and the exit
    code is 1 (a person confirms)."""
    pts = {r["point"]: r for r in _design(tmp_path)}
    shots = [[p, r["northing"], r["easting"], "", "STK"] for p, r in pts.items() if p not in ("1034", "1043")]
    a = pts["1034"]
    shots.append(["1043", f"{float(a['northing']) + 0.001:.4f}", a["easting"], "", "STK"])
    r, rows, out = _check(tmp_path, JOB, shots)
    assert r.exit_code == 1
    row = [x for x in rows if x["point"] == "1043"][0]
    assert (row["status"], row["design_point"], row["matched_by"]) == ("misnumbered", "1034", "position")
    assert float(row["horizontal_error"]) < 0.002
    restake = [x["point"] for x in read_rows(out / "restake.csv")]
    assert "1043" in restake and "1034" not in restake
    text = (out / "check.txt").read_text(encoding="utf-8")
    assert "stored as 1043 but lies on 1034" in " ".join(text.split())


def test_a_shot_out_by_number_near_a_point_already_staked_stays_out(tmp_path):
    # the point it lies on was staked by its own shot: not misnumbered (contract: "no other shot matched")
    pts = {r["point"]: r for r in _design(tmp_path)}
    a = pts["1034"]
    shots = [["1034", a["northing"], a["easting"], "", "STK"],
             ["1043", f"{float(a['northing']) + 0.001:.4f}", a["easting"], "", "STK"]]
    _, rows, _ = _check(tmp_path, JOB, shots)
    assert [x["status"] for x in rows] == ["ok", "out"]


def test_good_shot_superseded_by_a_misnumbered_one_left_its_point_not_staked(tmp_path):
    """Regression: 1043 shot on its own mark, then a later shot stored as 1043 that lies on
    1034.  The later one became `misnumbered` (it belongs to 1034), but the good first shot of
    1043 stayed `superseded` by it and 1043 was listed in restake.csv as not staked.  The last
    earlier shot of the number now governs it again (module rule: the last shot of a number
    governs; the misnumbered shot is no longer one of 1043's)."""
    pts = {r["point"]: r for r in _design(tmp_path)}
    a, b = pts["1034"], pts["1043"]
    shots = [["1043", b["northing"], b["easting"], "", "STK"],
             ["1043", f"{float(a['northing']) + 0.001:.4f}", a["easting"], "", "STK"]]
    r, rows, out = _check(tmp_path, JOB, shots)
    assert r.exit_code == 1  # misnumbered: a person confirms
    assert [(x["status"], x["design_point"]) for x in rows] == [("ok", "1043"), ("misnumbered", "1034")]
    restake = [x["point"] for x in read_rows(out / "restake.csv")]
    assert "1043" not in restake and "1034" not in restake


PROFILED = SAMPLES / "hillside_lane_profile_m.toml"  # a sample with design elevations


def _with_ground_codes(tmp_path):
    text = PROFILED.read_text(encoding="utf-8").replace("vertical_tolerance = 0.010",
                                                        'vertical_tolerance = 0.010\nground_codes = ["GS"]')
    return write_job(tmp_path, text, name="ground_codes.toml")


def test_ground_shot_beside_a_stake_was_a_vertical_failure_now_marked_not_restaked(tmp_path):
    """Regression: a shot on the ground beside a stake, taken to mark the cut or fill,
    was told 'out (vertical): move 0.412 down' and sent to restake.csv.  With
    [check] ground_codes it is checked horizontally only and its cut/fill reported."""
    pts = {r["point"]: r for r in read_rows(build_job(PROFILED, tmp_path / "b", "--only", "points") / "points.csv")}
    a = pts["5002"]
    design_z = float(a["elevation"])
    shots = [["5002", a["northing"], a["easting"], f"{design_z + 0.412:.4f}", "GS lath"]]
    r, rows, out = _check(tmp_path, _with_ground_codes(tmp_path), shots)
    row = rows[0]
    assert row["status"] == "ok" and row["fails"] == ""
    assert float(row["d_elevation"]) == 0.412  # shot minus design: ground 0.412 above grade (cut)
    assert "5002" not in [x["point"] for x in read_rows(out / "restake.csv")]
    # the same shot without the code is a grade check, out vertically
    (tmp_path / "plain").mkdir()
    r2, rows2, _ = _check(tmp_path / "plain", PROFILED, [shots[0][:4] + ["STK"]])
    assert rows2[0]["status"] == "out" and rows2[0]["fails"] == "vertical"


def test_ground_codes_must_be_one_word(tmp_path):
    text = PROFILED.read_text(encoding="utf-8").replace("vertical_tolerance = 0.010",
                                                        'vertical_tolerance = 0.010\nground_codes = ["G S"]')
    job = write_job(tmp_path, text, name="bad.toml")
    r = CliRunner().invoke(app, ["build", str(job), "--out", str(tmp_path / "o")])
    assert r.exit_code == 2 and "check.ground_codes[0]" in r.output
