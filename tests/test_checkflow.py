"""The check workflow of a crew, named after each case: X and Y headers
(the refusal and its --columns readings are checked by reading the
file back through the CLI).
"""

from __future__ import annotations

import csv
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.design import build_design
from stakeout.jobfile import load_job

from .helpers import SAMPLES

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


# ---- 10. X and Y headers -------------------------------------------------------------------------------------
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
