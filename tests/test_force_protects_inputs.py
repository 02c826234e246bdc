"""Issue 28 item 1: ``--force`` never replaces a folder holding any file the
job reads (design LandXML, control CSV), through symbolic links on either
end, in ``build`` and in ``check``.  Each test checks the file system
afterwards, not the tool's own report.
"""

import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.jobfile import load_job

from .helpers import SAMPLES, build_job

runner = CliRunner()


def _tree(p: Path) -> dict:
    return {str(q.relative_to(p)): (q.read_bytes() if q.is_file() and not q.is_symlink() else None)
            for q in sorted(p.rglob("*"))}


@pytest.fixture()
def design_job(tmp_path):
    """jobs/job.toml reading ../design/road.xml (the tool's own export of a sample) and
    ../ctl/control.csv (the sample control file)."""
    build_job(SAMPLES / "site_road_metric.toml", tmp_path / "x", "--only", "landxml")
    (tmp_path / "design").mkdir()
    (tmp_path / "ctl").mkdir()
    (tmp_path / "jobs").mkdir()
    shutil.copy(tmp_path / "x" / "alignment.xml", tmp_path / "design" / "road.xml")
    (tmp_path / "design" / "notes.txt").write_text("keep me")
    (tmp_path / "ctl" / "control.csv").write_text("point,northing,easting,elevation,description\n"
                                                  "CP1,5012345.0,512345.0,,\nCP2,5012400.0,512400.0,,\n")
    shutil.rmtree(tmp_path / "x")
    job = tmp_path / "jobs" / "job.toml"
    job.write_text('format = 1\n[job]\nname = "protect"\nunits = "m"\n'
                   '[alignment]\nlandxml = "../design/road.xml"\n'
                   '[staking]\ninterval = 100.0\n'
                   '[control]\nfile = "../ctl/control.csv"\n'
                   '[check]\nhorizontal_tolerance = 0.05\n')
    return job


def test_force_deleted_the_design_and_control_folders(design_job, tmp_path):
    before = _tree(tmp_path)
    for out in ("design", "ctl"):
        r = runner.invoke(app, ["build", str(design_job), "--out", str(tmp_path / out), "--force"])
        assert r.exit_code == 2, r.output
        assert "holds road.xml" in r.output or "holds control.csv" in r.output, r.output
        assert len(r.output.strip().splitlines()) == 1
    assert _tree(tmp_path) == before
    assert runner.invoke(app, ["build", str(design_job), "--out", str(tmp_path / "out"), "--force"]).exit_code == 0


def test_force_deleted_inputs_through_links(design_job, tmp_path):
    # a link to the design folder, used by the job; --out the real folder
    (tmp_path / "real").mkdir()
    shutil.move(tmp_path / "design" / "road.xml", tmp_path / "real" / "road.xml")
    (tmp_path / "design" / "road.xml").symlink_to(tmp_path / "real" / "road.xml")
    (tmp_path / "lnk").symlink_to(tmp_path / "ctl", target_is_directory=True)
    text = design_job.read_text().replace("../ctl/control.csv", "../lnk/control.csv")
    design_job.write_text(text)
    before = _tree(tmp_path)
    for out in ("real", "design", "ctl"):
        r = runner.invoke(app, ["build", str(design_job), "--out", str(tmp_path / out), "--force"])
        assert r.exit_code == 2, (out, r.output)
    assert _tree(tmp_path) == before


def test_check_force_deleted_the_control_folder(design_job, tmp_path):
    staked = tmp_path / "shots.csv"
    staked.write_text("point,northing,easting,elevation\n1,5012345.0,512345.0,\n")
    before = _tree(tmp_path)
    for out in ("design", "ctl"):
        r = runner.invoke(app, ["check", str(design_job), str(staked), "--out", str(tmp_path / out), "--force"])
        assert r.exit_code == 2, r.output
        assert "holds" in r.output
    assert _tree(tmp_path) == before


def test_job_lists_its_inputs(design_job):
    job = load_job(design_job)
    names = [Path(p).name for p in job.inputs()]
    assert names == ["job.toml", "road.xml", "control.csv"]
    assert all(Path(p).exists() for p in job.inputs())
