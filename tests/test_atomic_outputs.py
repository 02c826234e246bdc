"""No half-written outputs, atomic --force, and a manifest that proves the outputs."""

import json

from typer.testing import CliRunner

from stakeout.outputs import BY_NAME
from stakeout.cli import app

from .helpers import SAMPLES

runner = CliRunner()
JOB = SAMPLES / "loop_ramp_usft.toml"


#: The writer function behind each output named in these tests.
_WRITERS = {"preview": "stakeout.writers.dxf.plan_png", "dxf": "stakeout.writers.dxf.plan_dxf_pieces",
            "report": "stakeout.writers.html.report_html"}


def _fail_on(name, monkeypatch):
    assert name in BY_NAME

    def boom(*args, **kwargs):
        raise KeyboardInterrupt  # as if Ctrl-C arrived while the last file was written

    monkeypatch.setattr(_WRITERS[name], boom)


def test_interrupted_build_leaves_nothing(tmp_path, monkeypatch):
    _fail_on("report", monkeypatch)  # the last file of a default build
    out = tmp_path / "out"
    r = runner.invoke(app, ["build", str(JOB), "--out", str(out)])
    assert r.exit_code == 130
    assert not out.exists() and list(tmp_path.iterdir()) == []


def test_failed_force_keeps_old_folder(tmp_path, monkeypatch):
    out = tmp_path / "out"
    assert runner.invoke(app, ["build", str(JOB), "--out", str(out)]).exit_code == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    _fail_on("dxf", monkeypatch)
    r = runner.invoke(app, ["build", str(JOB), "--out", str(out), "--force"])
    assert r.exit_code == 130
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_second_build_without_force_fails_untouched(tmp_path):
    out = tmp_path / "out"
    assert runner.invoke(app, ["build", str(JOB), "--out", str(out)]).exit_code == 0
    before = {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in out.iterdir()}
    r = runner.invoke(app, ["build", str(JOB), "--out", str(out)])
    assert r.exit_code == 2 and "--force" in r.output
    assert {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in out.iterdir()} == before


def test_force_replaces_whole_folder(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "stale.csv").write_text("old")
    assert runner.invoke(app, ["build", str(JOB), "--out", str(out), "--force"]).exit_code == 0
    assert not (out / "stale.csv").exists()


def test_manifest_proves_outputs(tmp_path):
    import hashlib

    out = tmp_path / "out"
    assert runner.invoke(app, ["build", str(JOB), "--out", str(out)]).exit_code == 0
    man = json.loads((out / "manifest.json").read_text())
    assert man["job_file"]["sha256"] == hashlib.sha256(JOB.read_bytes()).hexdigest()
    assert man["crs"] == "EPSG:2229" and man["libraries"]["proj"]
    for name, info in man["outputs"].items():
        data = (out / name).read_bytes()
        assert info == {"sha256": hashlib.sha256(data).hexdigest(), "bytes": len(data)}
    assert set(man["outputs"]) == {p.name for p in out.iterdir()} - {"manifest.json"}


def test_force_never_replaces_a_folder_holding_the_inputs(tmp_path, monkeypatch):
    job = tmp_path / "job.toml"
    job.write_bytes(JOB.read_bytes())
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path), "--force"])
    assert r.exit_code == 2 and "job.toml" in r.output
    assert job.exists()
    work = tmp_path / "work"
    work.mkdir()
    (work / "keep.txt").write_text("mine")
    monkeypatch.chdir(work)
    r = runner.invoke(app, ["build", str(job), "--out", ".", "--force"])
    assert r.exit_code == 2 and "working folder" in r.output
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path), "--force"])
    assert r.exit_code == 2
    assert (work / "keep.txt").read_text() == "mine" and job.exists()
