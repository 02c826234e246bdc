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


def _partials(tmp_path: Path) -> list[str]:
    return [p.name for p in tmp_path.iterdir() if ".partial-" in p.name or ".old-" in p.name]


@pytest.mark.parametrize("job", JOBS)
def test_two_processes_write_the_files_one_writes(job, tmp_path, monkeypatch):
    monkeypatch.setattr(beside, "MIN_STAKES", 10**12)
    pipeline.run_build(SAMPLES / job, tmp_path / "one")
    monkeypatch.setattr(beside, "MIN_STAKES", 0)
    monkeypatch.setattr(beside.os, "sched_getaffinity", lambda pid: {0, 1})
    started = []
    real = beside.start

    def spy(*args, **kwargs):
        b, rest = real(*args, **kwargs)
        started.append(b)
        return b, rest

    monkeypatch.setattr(beside, "start", spy)
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
    with pytest.raises(OutputError, match="No space left"):
        pipeline.run_build(SAMPLES / JOBS[0], tmp_path / "out")
    assert time.monotonic() - t < 30
    assert not (tmp_path / "out").exists()
    assert not _partials(tmp_path)
    with pytest.raises(ChildProcessError):  # no child left to wait for
        os.waitpid(-1, os.WNOHANG)


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
