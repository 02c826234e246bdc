"""Issue 28 item 3: a run killed with SIGKILL leaves hidden temporary folders
beside ``--out``; the next run with the same ``--out`` removes those of dead
processes and restores a target left missing between the two renames of
``--force``.  Real processes are killed (POSIX ``kill(2)``, SIGKILL cannot be
caught); the file system is checked afterwards.
"""

import os
import signal
import subprocess
import sys
import time

from typer.testing import CliRunner

from stakeout.cli import app

from .helpers import SAMPLES

runner = CliRunner()
JOB = SAMPLES / "pi_list_local_ft.toml"
ONLY = ["--only", "points,stations"]


def _dead_pid() -> int:
    p = subprocess.Popen([sys.executable, "-c", "pass"])
    p.wait()
    return p.pid  # finished and reaped: no such process now (reuse within the test is unlikely)


def _build(out, *extra):
    return runner.invoke(app, ["build", str(JOB), "--out", str(out), *ONLY, *extra])


def test_kill_left_partial_folder_forever(tmp_path):
    pid = _dead_pid()
    (tmp_path / f".out.partial-{pid}-abcd").mkdir()
    (tmp_path / f".out.partial-{pid}-abcd" / "points.csv").write_text("half")
    (tmp_path / f".out.old-{pid}-efgh").mkdir()
    (tmp_path / f".out.partial-{os.getppid()}-live").mkdir()  # a running process's: never touched
    (tmp_path / ".out.partial-nopid").mkdir()  # not named by this version: never touched
    (tmp_path / f".other.partial-{pid}-x").mkdir()  # another target's
    out = tmp_path / "out"
    out.mkdir()
    (out / "old.csv").write_text("old")
    r = _build(out, "--force")
    assert r.exit_code == 0, r.output
    assert "killed run" in r.output
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        [f".out.partial-{os.getppid()}-live", ".out.partial-nopid", f".other.partial-{pid}-x", "out"])


def test_kill_between_renames_left_no_out(tmp_path):
    pid = _dead_pid()
    old = tmp_path / f".out.old-{pid}-efgh"
    old.mkdir()
    (old / "points.csv").write_text("the earlier outputs")
    (tmp_path / f".out.partial-{pid}-abcd").mkdir()
    out = tmp_path / "out"
    r = _build(out)  # without --force: the restored outputs are not replaced
    assert r.exit_code == 2 and "use --force" in r.output
    assert (out / "points.csv").read_text() == "the earlier outputs"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]
    r = _build(out, "--force")
    assert r.exit_code == 0 and (out / "stations.csv").exists()


def test_sigkill_during_build_then_next_run_cleans(tmp_path):
    # a real process, killed while it writes (its outputs render slowly: a large job)
    job = tmp_path / "job.toml"
    job.write_text(JOB.read_text().replace("interval = 100.0", "interval = 0.02"))
    out = tmp_path / "out"
    p = subprocess.Popen([sys.executable, "-m", "stakeout.cli", "build", str(job), "--out", str(out)],
                         stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and not any(q.name.startswith(".out.partial-") for q in tmp_path.iterdir()):
        time.sleep(0.01)
    p.send_signal(signal.SIGKILL)
    p.wait()
    left = [q.name for q in tmp_path.iterdir() if q.name.startswith(".out.")]
    assert p.returncode == -signal.SIGKILL and left  # killed mid-build: litter left
    r = runner.invoke(app, ["build", str(JOB), "--out", str(out), *ONLY, "--force"])
    assert r.exit_code == 0, r.output
    assert sorted(q.name for q in tmp_path.iterdir()) == ["job.toml", "out"], left


def test_killed_run_leftover_above_a_missing_parent_was_never_cleaned(tmp_path):
    """Regression: a run whose --out parent did not exist made its temporary folder in the nearest
    folder that did; killed, it left that folder there, and later runs looked only beside --out."""
    pid = _dead_pid()
    (tmp_path / f".out.partial-{pid}-abcd").mkdir()  # where the killed run made it
    out = tmp_path / "new" / "deeper" / "out"
    r = _build(out)
    assert r.exit_code == 0, r.output
    assert "killed run" in r.output
    assert sorted(p.name for p in tmp_path.iterdir()) == ["new"]
