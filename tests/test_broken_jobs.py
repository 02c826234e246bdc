"""Every broken job file ends with exit 2, a one-line message naming the culprit,
no traceback and nothing written (table-driven over tests/broken_jobs/)."""

import re
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stakeout.cli import app

HERE = Path(__file__).resolve().parent / "broken_jobs"
CASES = sorted(HERE.glob("*.toml"))
runner = CliRunner()


def _expect(path: Path) -> str:
    m = re.match(r"# expect: (.+)\n", path.read_text(encoding="utf-8"))
    assert m, f"{path.name} lacks its '# expect:' line"
    return m.group(1).strip()


@pytest.mark.parametrize("job", CASES, ids=lambda p: p.stem)
def test_broken_job(job, tmp_path):
    out = tmp_path / "out"
    r = runner.invoke(app, ["build", str(job), "--out", str(out)])
    assert r.exit_code == 2, r.output
    msg = r.output.strip()
    assert len(msg.splitlines()) == 1, msg
    assert msg.startswith("stakeout: error: ")
    assert _expect(job) in msg, msg
    assert "Traceback" not in msg
    assert not out.exists()
    assert list(tmp_path.iterdir()) == []  # no temporary folder left either


def test_corpus_covers_the_list():
    assert len(CASES) >= 40


@pytest.mark.parametrize("job", [HERE / "overlapping_curves.toml", HERE / "toml_syntax.toml"], ids=lambda p: p.stem)
def test_real_process_no_traceback(job, tmp_path):
    r = subprocess.run([sys.executable, "-m", "stakeout.cli", "build", str(job), "--out", str(tmp_path / "o")],
                       capture_output=True, text=True)
    assert r.returncode == 2 and "Traceback" not in r.stderr and r.stdout == ""
    assert len(r.stderr.strip().splitlines()) == 1


def test_missing_job_file(tmp_path):
    r = runner.invoke(app, ["build", str(tmp_path / "nope.toml"), "--out", str(tmp_path / "o")])
    assert r.exit_code == 2 and "nope.toml" in r.output and "not found" in r.output


def test_unwritable_output(tmp_path):
    blocker = tmp_path / "file"
    blocker.write_text("x")
    job = Path(__file__).resolve().parent.parent / "sample_jobs" / "pi_list_local_ft.toml"
    r = runner.invoke(app, ["build", str(job), "--out", str(blocker)])
    assert r.exit_code == 2 and "not a folder" in r.output
    r = runner.invoke(app, ["build", str(job), "--out", str(blocker / "sub")])
    assert r.exit_code == 2 and "--out" in r.output
    assert blocker.read_text() == "x"


def test_debug_shows_traceback(tmp_path):
    r = subprocess.run([sys.executable, "-m", "stakeout.cli", "build", str(HERE / "unknown_units.toml"), "--out",
                        str(tmp_path / "o"), "--debug"], capture_output=True, text=True)
    assert r.returncode != 0 and "Traceback" in r.stderr
