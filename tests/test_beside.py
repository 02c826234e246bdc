"""Outputs rendered by a second process (stakeout.beside): the same files, its errors the build's.

The files are compared byte for byte with a build in one process, and the manifest's hashes
with hashlib's over the files (Python's standard library, outside the project).
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

import pytest

from stakeout import beside, pipeline
from stakeout.errors import JobFileError, OutputError

pytestmark = pytest.mark.skipif(not (hasattr(os, "fork") and os.uname().sysname == "Linux"),
                                reason="the second process is forked, on Linux only")

SAMPLES = Path(__file__).resolve().parent.parent / "sample_jobs"
JOBS = ["loop_ramp_usft.toml", "fenwick_cutting_earthwork_m.toml", "orchard_vale_interchange_m.toml"]


def _files(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir())}


@pytest.fixture
def always(monkeypatch):
    """A second process for every build, whatever its size, on one core or more, rendering the
    two text sheets (the build renders the rest)."""
    monkeypatch.setattr(beside, "MIN_STAKES", 0)
    monkeypatch.setattr(beside.os, "sched_getaffinity", lambda pid: {0, 1})

    def sheets_away(files):
        return ([o for o in files if o.name in ("sheet", "deflections")],
                [o for o in files if o.name not in ("sheet", "deflections")])

    monkeypatch.setattr(beside, "share", sheets_away)


def _spied(monkeypatch) -> list:
    """What each build's ``beside.start`` returned as its second process (None: none), in order."""
    started = []
    real = beside.start

    def spy(*args, **kwargs):
        b, rest = real(*args, **kwargs)
        started.append(b)
        return b, rest

    monkeypatch.setattr(beside, "start", spy)
    return started


def _partials(tmp_path: Path) -> list[str]:
    return [p.name for p in tmp_path.iterdir() if ".partial-" in p.name or ".old-" in p.name]


@pytest.mark.parametrize("job", JOBS)
def test_two_processes_write_the_files_one_writes(job, tmp_path, monkeypatch):
    monkeypatch.setattr(beside, "MIN_STAKES", 10**12)
    pipeline.run_build(SAMPLES / job, tmp_path / "one")
    monkeypatch.setattr(beside, "MIN_STAKES", 0)
    monkeypatch.setattr(beside.os, "sched_getaffinity", lambda pid: {0, 1})
    started = _spied(monkeypatch)
    pipeline.run_build(SAMPLES / job, tmp_path / "two")
    assert started and started[0] is not None  # the second process did render some
    one, two = _files(tmp_path / "one"), _files(tmp_path / "two")
    assert one.keys() == two.keys()
    for name in one:
        if name != "manifest.json":
            assert one[name] == two[name], name
    m = json.loads(two["manifest.json"])
    assert m["outputs"] == json.loads(one["manifest.json"])["outputs"]
    for name, got in m["outputs"].items():
        assert got == {"sha256": hashlib.sha256(two[name]).hexdigest(), "bytes": len(two[name])}


def test_an_error_in_the_second_process_is_the_builds(tmp_path, monkeypatch, always):
    from stakeout.writers import sheets

    def bad(design, wide=False):
        raise JobFileError("setup.occupied: something the sheet found wrong")

    monkeypatch.setattr(sheets, "setout_pieces", bad)
    with pytest.raises(JobFileError, match="^setup.occupied: something the sheet found wrong$"):
        pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "out")
    assert not (tmp_path / "out").exists()
    assert not _partials(tmp_path)


def test_a_bug_in_the_second_process_is_reported_with_its_traceback(tmp_path, monkeypatch, always):
    from stakeout.writers import sheets

    def bug(design, wide=False):
        return 1 / 0

    monkeypatch.setattr(sheets, "deflection_pieces", bug)
    with pytest.raises(RuntimeError, match="ZeroDivisionError"):
        pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "out")
    assert not (tmp_path / "out").exists()
    assert not _partials(tmp_path)


def test_a_second_process_killed_is_an_error_and_nothing_is_written(tmp_path, monkeypatch, always):
    from stakeout.writers import sheets

    def killed(design, wide=False):
        os._exit(9)  # as the out-of-memory killer would leave it: no answer

    monkeypatch.setattr(sheets, "setout_pieces", killed)
    with pytest.raises(OutputError, match="ended without finishing"):
        pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "out")
    assert not (tmp_path / "out").exists()
    assert not _partials(tmp_path)


def test_the_parent_failing_kills_and_waits_for_the_second_process(tmp_path, monkeypatch, always):
    """The parent's own error wins; the second process (here one that would run for a minute)
    is killed and waited for before the temporary folder goes, so it never writes after."""
    import time

    from stakeout.writers import sheets, tables

    def slow(design, wide=False):
        time.sleep(60)
        yield b"late"

    def boom(design):
        raise OutputError("--out 'x': cannot write points.csv (No space left on device)")

    monkeypatch.setattr(sheets, "setout_pieces", slow)
    monkeypatch.setattr(tables, "points_csv", boom)
    t = time.monotonic()
    started = _spied(monkeypatch)
    with pytest.raises(OutputError, match="No space left"):
        pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "out")
    assert time.monotonic() - t < 30
    assert not (tmp_path / "out").exists()
    assert not _partials(tmp_path)
    _reaped(started)  # no child left to wait for


def _reaped(started: list) -> None:
    """Every second process the builds started is gone and waited for (no zombie): its pid is
    no longer a child of this process."""
    assert started and started[0] is not None
    for b in started:
        if b is not None:
            with pytest.raises(ChildProcessError):
                os.waitpid(b.pid, os.WNOHANG)


class _Os:
    """``os`` as stakeout.beside sees it, with some functions replaced."""

    def __init__(self, **replaced):
        self.__dict__.update(replaced)

    def __getattr__(self, name):
        return getattr(os, name)


def test_an_interrupt_while_waiting_for_the_second_process_waited_for_it_to_finish(tmp_path, monkeypatch, always):
    """Regression: SIGTERM (sent to the parent alone) while the parent waited for the second
    process's answer closed the pipe and waited for the child to finish all its work (here a
    minute) instead of killing it; a second SIGTERM then left it running on, orphaned."""
    import time

    from stakeout.writers import sheets

    def slow(design, wide=False):
        time.sleep(25)
        yield b"late"

    def interrupted(fd, n):
        raise KeyboardInterrupt  # what the CLI's SIGTERM handler raises, arriving during the read

    monkeypatch.setattr(sheets, "setout_pieces", slow)
    monkeypatch.setattr(beside, "os", _Os(read=interrupted))
    t = time.monotonic()
    started = _spied(monkeypatch)
    with pytest.raises(KeyboardInterrupt):
        pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "out")
    assert time.monotonic() - t < 20
    assert not (tmp_path / "out").exists()
    assert not _partials(tmp_path)
    _reaped(started)  # killed and waited for


def test_a_failed_fork_was_an_internal_error(tmp_path, monkeypatch, always):
    """Regression: a fork refused (ENOMEM under strict overcommit, a big corridor's parent being
    large; EAGAIN at the process limit) ended the build as an internal error and leaked the
    pipe; the build now renders everything in one process, the same bytes."""
    import errno

    monkeypatch.setattr(beside, "MIN_STAKES", 10**12)
    pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "one")
    monkeypatch.setattr(beside, "MIN_STAKES", 0)

    def refused():
        raise OSError(errno.ENOMEM, "Cannot allocate memory")

    monkeypatch.setattr(beside, "os", _Os(fork=refused))
    fds = len(os.listdir("/proc/self/fd"))
    pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "two")
    assert len(os.listdir("/proc/self/fd")) == fds
    one, two = _files(tmp_path / "one"), _files(tmp_path / "two")
    assert one.keys() == two.keys()
    assert all(one[n] == two[n] for n in one if n != "manifest.json")


def test_a_bug_in_the_second_process_was_reported_on_many_lines(tmp_path, monkeypatch, always):
    """Regression: a bug in the second process reached the CLI as a RuntimeError holding the whole
    traceback, so "internal error (...)" ran over a dozen lines; now one line names the
    exception, and the traceback is a note (shown with --debug)."""
    from typer.testing import CliRunner

    from stakeout.cli import app
    from stakeout.writers import sheets

    def bug(design, wide=False):
        return 1 / 0

    monkeypatch.setattr(sheets, "deflection_pieces", bug)
    r = CliRunner().invoke(app, ["build", str(SAMPLES / JOBS[0]), "--out", str(tmp_path / "out")])
    assert r.exit_code == 3
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "ZeroDivisionError: division by zero" in lines[0], r.stderr
    assert not (tmp_path / "out").exists()


def test_a_second_interrupt_while_reaping_the_second_process_left_a_zombie(tmp_path, monkeypatch, always):
    """Regression: a second Ctrl-C while the failing parent waited for the killed second process
    to end interrupted that wait for good (the process was marked done first), leaving a zombie
    in a long-lived caller; the kill and the wait are now done with the signals held back, the
    interruption delivered after."""
    import signal
    import time

    from stakeout.writers import sheets, tables

    def slow(design, wide=False):
        time.sleep(25)
        yield b"late"

    def boom(design):
        raise OutputError("--out 'x': cannot write points.csv (No space left on device)")

    def waitpid(pid, options):
        signal.raise_signal(signal.SIGINT)  # the second Ctrl-C, arriving during the wait
        return os.waitpid(pid, options)

    monkeypatch.setattr(sheets, "setout_pieces", slow)
    monkeypatch.setattr(tables, "points_csv", boom)
    monkeypatch.setattr(beside, "os", _Os(waitpid=waitpid))
    started = _spied(monkeypatch)
    with pytest.raises(KeyboardInterrupt):
        pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "out")
    assert not (tmp_path / "out").exists()
    assert not _partials(tmp_path)
    _reaped(started)  # reaped: no zombie left


def test_a_build_forked_while_other_threads_ran(tmp_path, monkeypatch, always):
    """Regression: a build run by a caller with other threads alive (a service building jobs on
    a thread pool) forked anyway; the child holds only the forking thread, so a lock another
    thread held at that moment stays held in it for good (Python 3.12 warns of it). With other
    threads alive the build renders everything in one process."""
    import threading

    started = _spied(monkeypatch)
    stop = threading.Event()
    other = threading.Thread(target=stop.wait, daemon=True)
    other.start()
    try:
        pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "out")
    finally:
        stop.set()
        other.join()
    assert started == [None]
    assert (tmp_path / "out" / "setout.txt").exists()


def test_an_interrupt_landing_in_the_second_process_before_its_guard_ran_the_callers_code(
        tmp_path, monkeypatch, always):
    """Regression: Ctrl-C reaches the whole process group; one landing in the second process just
    after the fork (before its try) came out of ``start`` there, so the child ran on as the
    build: it removed the temporary folder the parent was writing, printed a second message,
    and under a test runner ran the rest of the session. Now the signals are blocked over the
    fork and the child's first step is inside its guard: it ends, and the parent reports it."""
    parent = os.getpid()
    escaped = tmp_path / "escaped"

    def close(fd):
        if os.getpid() != parent:
            raise KeyboardInterrupt  # the Ctrl-C, landing in the child's first step
        os.close(fd)

    monkeypatch.setattr(beside, "os", _Os(close=close))
    try:
        with pytest.raises(OutputError, match="ended without finishing"):
            pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "out")
    except BaseException:
        if os.getpid() != parent:  # the child came out here: end it (and say so) before it runs on
            escaped.write_text("the second process ran the caller's code")
            os._exit(77)
        raise
    assert not escaped.exists()
    assert not (tmp_path / "out").exists()
    assert not _partials(tmp_path)


def test_the_outputs_are_shared_by_their_cost():
    """Each output goes to exactly one process, in writing order; an output drawn from another
    or another's source stays with the build; neither process has more than half the work plus
    the costliest output (the bound of longest-processing-time-first)."""
    from stakeout.outputs import OUTPUTS

    for k in range(len(OUTPUTS)):
        for files in (list(OUTPUTS), list(OUTPUTS[k:]), list(OUTPUTS[::k + 1])):
            mine, rest = beside.share(files)
            assert sorted(o.name for o in mine + rest) == sorted(o.name for o in files)
            assert [o for o in files if o in mine] == mine and [o for o in files if o in rest] == rest
            assert all(isinstance(o.writer, str) for o in mine)
            cost = [beside.COST.get(o.filename, beside.SMALL) for o in files]
            loads = [sum(beside.COST.get(o.filename, beside.SMALL) for o in g) for g in (mine, rest)]
            fixed = sum(c for o, c in zip(files, cost) if not isinstance(o.writer, str))
            assert max(loads) <= max(fixed, sum(cost) / 2 + max(cost)) + 1e-9
    names = [o.name for o in beside.share([o for o in OUTPUTS if o.name in ("points", "stations", "setout")])[0]]
    assert names == ["points", "stations"]  # the CSV path: setout.csv here, the other two beside
