"""The ground and slope stakes wired into a build: the job file, stations.csv, slopestakes.csv, volumes.csv.

References: on planar ground z = a + g * (offset) square to a straight
alignment, the ground at a stake is that plane (closed form); on level
ground h below a level hinge the catch lies slope x h beyond it (the
level-section relation of route surveying, common practice); the fill
section between level ground and a level template with side slopes is a
trapezoid, checked with shapely polygons; volumes by the average-end-area
formula V = L (A1 + A2) / 2 (Wikibooks, "Fundamentals of
Transportation/Earthwork").
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.jobfile import load_job

runner = CliRunner()

JOB = """format = 1
[job]
name = "Ground wiring road"
units = "m"
[alignment]
name = "EW"
start = {{ station = "0+000", northing = 1000.0, easting = 2000.0 }}
azimuth = "90-00-00"
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 20.0
elevation = 52.0
offsets = [{{ offset = -6.0, code = "SHL" }}, {{ offset = 0.0, code = "CL" }}, {{ offset = 6.0, code = "SHR" }}]
[ground]
file = "ground.csv"
{extra}
"""

SLOPES = """[slope_stakes]
left = { hinge = "SHL", fill_slope = 3.0, cut_slope = 2.0 }
right = { hinge = "SHR", fill_slope = 2.0, cut_slope = 2.0 }
reference_offset = 5.0
max_width = 100.0
"""


def _ground_csv(path: Path, zfun, lo=(900.0, 1950.0), hi=(1100.0, 2150.0), step=10.0) -> None:
    n, e = np.meshgrid(np.arange(lo[0], hi[0] + step / 2, step), np.arange(lo[1], hi[1] + step / 2, step))
    n, e = n.ravel(), e.ravel()
    z = zfun(n, e)
    lines = [f"G{i + 1},{a:.4f},{b:.4f},{c:.6f}" for i, (a, b, c) in enumerate(zip(n, e, z))]
    path.write_text("point,northing,easting,elevation\n" + "\n".join(lines) + "\n", encoding="utf-8")


def _job(tmp_path: Path, zfun, extra: str = "", **kw) -> Path:
    _ground_csv(tmp_path / "ground.csv", zfun, **kw)
    p = tmp_path / "job.toml"
    p.write_text(JOB.format(extra=extra), encoding="utf-8")
    return p


def _rows(text: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(text)))


def test_job_reads_ground_and_records_its_file(tmp_path):
    job = load_job(_job(tmp_path, lambda n, e: np.full(n.shape, 50.0), SLOPES))
    assert job.ground is not None and job.slope_stakes is not None
    rec = [f for f in job.design_files if f.role == "ground"]
    assert len(rec) == 1 and rec[0].path == "ground.csv"
    assert str(tmp_path / "ground.csv") in job.inputs()  # --force never replaces a folder holding it
    assert job.slope_stakes.left is not None and job.slope_stakes.left.hinge == "SHL"


def test_manifest_hashes_the_ground_file(tmp_path):
    import hashlib

    job = _job(tmp_path, lambda n, e: np.full(n.shape, 50.0))
    out = tmp_path / "out"
    r = runner.invoke(app, ["build", str(job), "--out", str(out), "--only", "stations,manifest"])
    assert r.exit_code == 0, r.output
    man = json.loads((out / "manifest.json").read_text(encoding="utf-8"))
    files = [f for f in man["design_files"] if f.get("role") == "ground"]
    assert files and files[0]["sha256"] == hashlib.sha256((tmp_path / "ground.csv").read_bytes()).hexdigest()


def test_force_keeps_a_folder_holding_the_ground(tmp_path):
    job = _job(tmp_path, lambda n, e: np.full(n.shape, 50.0))
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path), "--force"])
    assert r.exit_code == 2, r.output
    assert (tmp_path / "ground.csv").exists()


def _build(job: Path, out: Path, only: str) -> dict[str, str]:
    r = runner.invoke(app, ["build", str(job), "--out", str(out), "--only", only])
    assert r.exit_code == 0, r.output
    return {p.name: p.read_text(encoding="utf-8") for p in out.iterdir()}


def test_stations_csv_ground_and_cut_fill_on_a_plane(tmp_path):
    # planar ground, closed form: z = 50 + 0.02 (n - 1000) - 0.01 (e - 2000)
    def plane(n, e):
        return 50.0 + 0.02 * (np.asarray(n) - 1000.0) - 0.01 * (np.asarray(e) - 2000.0)

    files = _build(_job(tmp_path, plane, hi=(1100.0, 2050.0)), tmp_path / "out", "stations")
    rows = _rows(files["stations.csv"])
    assert len(rows) == 18
    for r in rows:
        n, e = float(r["northing"]), float(r["easting"])
        if e > 2050.0:  # off the ground: both empty
            assert r["ground_elevation"] == "" and r["cut_fill"] == ""
            continue
        gz = float(plane(n, e))
        assert float(r["ground_elevation"]) == pytest.approx(gz, abs=1e-4)
        assert float(r["cut_fill"]) == pytest.approx(52.0 - gz, abs=1e-4)  # design - ground: positive fill
        assert len(r["cut_fill"].split(".")[1]) == 4
    assert any(r["ground_elevation"] == "" for r in rows) and any(r["ground_elevation"] for r in rows)


def test_stations_csv_ground_columns_empty_without_ground(tmp_path):
    job = _job(tmp_path, lambda n, e: np.full(n.shape, 50.0))
    job.write_text(job.read_text(encoding="utf-8").replace('[ground]\nfile = "ground.csv"\n', ""), encoding="utf-8")
    rows = _rows(_build(job, tmp_path / "out", "stations")["stations.csv"])
    assert rows and all(r["ground_elevation"] == "" and r["cut_fill"] == "" for r in rows)
