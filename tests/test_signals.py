"""SIGTERM and SIGHUP mid-build, in a real process: nothing is left behind.

The process is the real command line (``python -m stakeout.cli``); the
signal is sent with ``os.kill`` once the hidden temporary folder holds a
file, which is the state the defect left behind (complete-looking CSVs in
a hidden folder).  Exit status 128 + signal number is the shell's
convention for a process ended by a signal (POSIX ``sh``, "Exit Status";
common practice), which the tool keeps after cleaning up.
"""

import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from .helpers import ROOT, SAMPLES


def _large_job(tmp_path: Path) -> Path:
    # The loop ramp at a 0.05 ft interval: over 100,000 stakes, so writing the
    # outputs (the DXF above all) runs for seconds; the test never measures how long.
    text = (SAMPLES / "loop_ramp_usft.toml").read_text(encoding="utf-8")
    text, n = re.subn(r"(?m)^interval = 50\.0$", "interval = 0.05", text)
    assert n == 1
    jobs = tmp_path / "jobs"
    jobs.mkdir()
    job = jobs / "large.toml"
    job.write_text(text, encoding="utf-8")
    return job


@pytest.mark.parametrize("sig, code", [(signal.SIGTERM, 143), (signal.SIGHUP, 129)])
def test_sigterm_mid_build_leaves_nothing(tmp_path, sig, code):
    job = _large_job(tmp_path)
    work = tmp_path / "work"
    work.mkdir()
    out = work / "out"
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.Popen([sys.executable, "-m", "stakeout.cli", "build", str(job), "--out", str(out)],
                            cwd=str(tmp_path), env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True, start_new_session=True)
    try:
        deadline = time.monotonic() + 300
        partial = None
        while time.monotonic() < deadline and proc.poll() is None:
            hidden = [p for p in work.iterdir() if p.name.startswith(".out.partial-")]
            if hidden and any(hidden[0].iterdir()):
                partial = hidden[0]
                break
            time.sleep(0.01)
        assert partial is not None, "the build ended before its temporary folder held a file"
        os.kill(proc.pid, sig)
        stdout, stderr = proc.communicate(timeout=300)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.communicate()
    assert proc.returncode == code, stderr
    assert f"terminated ({signal.Signals(sig).name}); nothing was written" in stderr
    assert "Traceback" not in stderr
    assert list(work.iterdir()) == []  # neither --out nor a hidden temporary folder beside it


def test_ignored_sighup_stays_ignored():
    # Under nohup SIGHUP is ignored; the tool must not undo that.
    code = ("import signal, stakeout.cli as c\n"
            "signal.signal(signal.SIGHUP, signal.SIG_IGN)\n"
            "with c._signals_as_interrupts():\n"
            "    assert signal.getsignal(signal.SIGHUP) == signal.SIG_IGN\n"
            "    assert signal.getsignal(signal.SIGTERM) is c._raise_terminated\n"
            "assert signal.getsignal(signal.SIGTERM) == signal.SIG_DFL\n")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                       env=dict(os.environ, PYTHONPATH=str(ROOT)))
    assert r.returncode == 0, r.stderr
