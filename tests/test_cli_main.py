"""The `stakeout` command as a process: exit codes and output survive its quick exit
(no cyclic GC, no module teardown), and which outputs a default build writes."""

from __future__ import annotations

import subprocess
import sys

from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.outputs import BY_NAME, OUTPUTS

from .helpers import ROOT, SAMPLES


def _run(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "stakeout", *args], cwd=ROOT, capture_output=True, text=True,
                          timeout=120)


def test_exit_codes_and_streams_survive_the_quick_exit(tmp_path):
    r = _run("--version")
    assert r.returncode == 0 and r.stdout.startswith("stakeout ")
    r = _run("build", str(tmp_path / "missing.toml"), "--out", str(tmp_path / "out"))
    assert r.returncode == 2 and r.stderr.startswith("stakeout: error:")
    r = _run("check", str(SAMPLES / "loop_ramp_usft.toml"), str(SAMPLES / "staked" / "loop_ramp_shots.csv"),
             "--out", str(tmp_path / "chk"))
    assert r.returncode == 1 and "checked 15 shots" in r.stderr
    assert (tmp_path / "chk" / "check.html").exists()
    r = _run("build")  # a usage error from the parser
    assert r.returncode == 2 and "Missing argument" in r.stderr


def test_default_outputs():
    default = [o.filename for o in OUTPUTS if o.default]
    assert "plan.svg" in default and "report.html" in default and "plan.png" not in default
    assert BY_NAME["preview"].extra == "preview"


def test_preview_without_matplotlib_is_refused(tmp_path, monkeypatch):
    import stakeout.pipeline as pipeline

    monkeypatch.setattr(pipeline, "_has_extra", lambda extra: extra is None)
    r = CliRunner().invoke(app, ["build", str(SAMPLES / "loop_ramp_usft.toml"), "--out", str(tmp_path / "o"),
                                 "--only", "preview"])
    assert r.exit_code == 2 and "matplotlib is not installed" in r.output
    r = CliRunner().invoke(app, ["build", str(SAMPLES / "loop_ramp_usft.toml"), "--out", str(tmp_path / "o2")])
    assert r.exit_code == 0 and not (tmp_path / "o2" / "plan.png").exists()
