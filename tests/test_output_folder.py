"""The output folder (stakeout/writers/folder.py) under links, races,
interruptions and mount points.

The expected outcomes are those of POSIX ``rename(2)``/``rmdir(2)``
(a directory is renamed only onto an empty one; a mount point cannot be
removed or renamed: EBUSY) and Python's ``signal`` semantics; each test
checks the file system itself afterwards, not the tool's own report.
"""

import errno
import os
import shutil
import signal
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stakeout import pipeline
from stakeout.writers import tables as tables_mod
from stakeout.cli import Terminated, app
from stakeout.errors import OutputError
from stakeout.writers import folder as folder_mod
from stakeout.writers.folder import OutputFolder

from .helpers import SAMPLES

runner = CliRunner()
JOB = SAMPLES / "pi_list_local_ft.toml"
ONLY = ["--only", "points,stations"]


def _build(job, out, *extra):
    return runner.invoke(app, ["build", str(job), "--out", str(out), *ONLY, *extra])


def _tree(p: Path) -> dict:
    return {str(q.relative_to(p)): (q.read_bytes() if q.is_file() and not q.is_symlink() else None)
            for q in sorted(p.rglob("*"))}


# ---- a linked job file and --force -----------------------------------------------------
def test_force_with_symlinked_job_file(tmp_path):
    a, b, c = tmp_path / "a", tmp_path / "b", tmp_path / "c"
    for d in (a, b, c):
        d.mkdir()
    shutil.copy(JOB, b / "job.toml")
    (a / "job.toml").symlink_to(b / "job.toml")  # a link to the job: a holds it too
    (c / "again.toml").symlink_to(a / "job.toml")  # a chain of two links
    (a / "notes.txt").write_text("keep")
    before = _tree(tmp_path)
    for job in (a / "job.toml", c / "again.toml"):
        for out in (a, b, c if job.parent == c else a):
            r = _build(job, out, "--force")
            assert r.exit_code == 2, (job, out, r.output)
            assert "holds job.toml" in r.output or "holds again.toml" in r.output
    assert _tree(tmp_path) == before
    # a folder beside them is fine
    assert _build(a / "job.toml", tmp_path / "out", "--force").exit_code == 0


def test_protection_unit():
    # the plain case still holds: the job's own folder is never replaced
    with pytest.raises(OutputError, match="holds"):
        OutputFolder(Path(JOB).parent, force=True, protect=(JOB,))


# ---- interrupts while --force clears and swaps -----------------------------------------
@pytest.mark.parametrize("exc, code", [(KeyboardInterrupt(), 130), (Terminated(signal.SIGTERM), 143)])
def test_interrupt_during_force_cleanup(tmp_path, monkeypatch, exc, code):
    out = tmp_path / "out"
    out.mkdir()
    (out / "old.csv").write_text("old outputs")
    real = shutil.rmtree

    def interrupted(path, *a, **k):
        if folder_mod.REMAINS_MARK in str(path):
            raise exc  # as if Ctrl-C (or SIGTERM) arrived while the old folder was being deleted
        return real(path, *a, **k)

    monkeypatch.setattr(folder_mod.shutil, "rmtree", interrupted)
    r = _build(JOB, out, "--force")
    assert r.exit_code == code
    assert "after the new outputs were moved into place" in r.output and "nothing was written" not in r.output
    assert "deleted by the next run" in r.output
    assert sorted(p.name for p in out.iterdir()) == ["points.csv", "stations.csv"]  # the new outputs, complete
    remains = [p for p in tmp_path.iterdir() if p.name.startswith(".out.remains-")]
    assert len(remains) == 1 and (remains[0] / "old.csv").read_text() == "old outputs"
    monkeypatch.undo()
    r = _build(JOB, out, "--force")  # the next run removes the remains
    assert r.exit_code == 0, r.output
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_signal_during_swap_is_held(tmp_path, monkeypatch):
    # Ctrl-C arriving between the two renames of --force must not leave the
    # target missing: it is held until both are done.
    out = tmp_path / "out"
    out.mkdir()
    (out / "old.csv").write_text("old")
    real = os.rename

    def rename(src, dst, *a, **k):
        if Path(src) == out:
            signal.raise_signal(signal.SIGINT)  # Python's default handler would raise KeyboardInterrupt here
        return real(src, dst, *a, **k)

    monkeypatch.setattr(folder_mod.os, "rename", rename)
    r = _build(JOB, out, "--force")
    monkeypatch.undo()
    assert r.exit_code == 130 and "moved into place" in r.output
    assert sorted(p.name for p in out.iterdir()) == ["points.csv", "stations.csv"]
    assert all(not p.name.startswith(".out.old-") for p in tmp_path.iterdir())


def test_interrupt_before_commit_still_leaves_nothing(tmp_path, monkeypatch):
    def boom(d):  # stands in for the first writer
        raise Terminated(signal.SIGHUP)  # what the CLI's handler raises on SIGHUP

    monkeypatch.setattr(tables_mod, "points_csv", boom)
    r = _build(JOB, tmp_path / "out")
    assert r.exit_code == 129 and "terminated (SIGHUP); nothing was written" in r.output
    assert list(tmp_path.iterdir()) == []


def test_remains_of_earlier_run_removed_only_ours(tmp_path):
    out = tmp_path / "out"
    (tmp_path / ".out.remains-abc123").mkdir()
    (tmp_path / ".out.remains-abc123" / "x.csv").write_text("x")
    (tmp_path / ".other.remains-zzz").mkdir()  # another target's: not ours to delete
    (tmp_path / ".out.old-keep").mkdir()  # mid-swap of a concurrent run: never touched
    assert _build(JOB, out).exit_code == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == [".other.remains-zzz", ".out.old-keep", "out"]


# ---- --out through symbolic links ------------------------------------------------------
def test_out_is_symlink(tmp_path):
    real = tmp_path / "real"
    real.mkdir()
    link = tmp_path / "link"
    link.symlink_to(real)
    r = _build(JOB, link)
    assert r.exit_code == 2 and "is a symbolic link" in r.output and "give the folder itself" in r.output
    (real / "old.csv").write_text("old")
    r = _build(JOB, link, "--force")
    assert r.exit_code == 2 and "is a symbolic link" in r.output
    assert link.is_symlink() and [p.name for p in real.iterdir()] == ["old.csv"]
    (tmp_path / "dangling").symlink_to(tmp_path / "nowhere")
    r = _build(JOB, tmp_path / "dangling")
    assert r.exit_code == 2 and "is a symbolic link" in r.output
    assert not (tmp_path / "nowhere").exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["dangling", "link", "real"]


def test_link_above_out_is_followed(tmp_path):
    (tmp_path / "real").mkdir()
    (tmp_path / "via").symlink_to(tmp_path / "real")
    assert _build(JOB, tmp_path / "via" / "out").exit_code == 0
    assert (tmp_path / "real" / "out" / "points.csv").is_file()


def test_symlink_appearing_during_build(tmp_path, monkeypatch):
    out = tmp_path / "out"
    real = tables_mod.points_csv

    def sneak(d):  # stands in for the first writer
        if not out.is_symlink():
            (tmp_path / "elsewhere").mkdir()
            out.symlink_to(tmp_path / "elsewhere")
        return real(d)

    monkeypatch.setattr(tables_mod, "points_csv", sneak)
    r = _build(JOB, out)
    assert r.exit_code == 2 and "is a symbolic link" in r.output
    assert list((tmp_path / "elsewhere").iterdir()) == []
    assert sorted(p.name for p in tmp_path.iterdir()) == ["elsewhere", "out"]


# ---- the target appearing during the build ---------------------------------------------
@pytest.mark.parametrize("existed", [False, True])
def test_target_created_during_build(tmp_path, monkeypatch, existed):
    out = tmp_path / "out"
    if existed:
        out.mkdir()
    real = tables_mod.points_csv

    def other_program(d):  # stands in for the first writer
        out.mkdir(exist_ok=True)
        (out / "theirs.txt").write_text("theirs")
        return real(d)

    monkeypatch.setattr(tables_mod, "points_csv", other_program)
    r = _build(JOB, out)
    assert r.exit_code == 2
    assert "(None)" not in r.output
    want = "was empty when the build began and is not empty now" if existed else \
        "appeared during the build and is not empty"
    assert want in r.output and "new outputs were discarded" in r.output
    assert [p.name for p in out.iterdir()] == ["theirs.txt"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_target_appearing_in_the_rename_race(tmp_path, monkeypatch):
    out = tmp_path / "out"
    real = os.rename

    def late(src, dst, *a, **k):  # the folder appears between the last look and the rename
        if Path(dst) == out and not out.exists():
            out.mkdir()
            (out / "theirs.txt").write_text("theirs")
        return real(src, dst, *a, **k)

    monkeypatch.setattr(folder_mod.os, "rename", late)
    r = _build(JOB, out)
    monkeypatch.undo()
    assert r.exit_code == 2 and "appeared during the build and is not empty" in r.output
    assert [p.name for p in out.iterdir()] == ["theirs.txt"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


# ---- mount points and EBUSY ------------------------------------------------------------
def test_empty_mount_point_as_out(tmp_path, monkeypatch):
    out = tmp_path / "mnt"
    out.mkdir()
    real_ismount = os.path.ismount
    monkeypatch.setattr(folder_mod.os.path, "ismount", lambda p: Path(p) == out or real_ismount(p))
    r = _build(JOB, out)
    assert r.exit_code == 2
    assert "is a mount point (Device or resource busy)" in r.output and "mnt/stakeout" in r.output
    assert list(tmp_path.iterdir()) == [out] and list(out.iterdir()) == []


@pytest.mark.parametrize("force", [False, True])
def test_ebusy_from_the_move_explained(tmp_path, monkeypatch, force):
    # A bind mount is not always seen by ismount(); the rename or rmdir then
    # fails with EBUSY, as rmdir(2) documents for a mount point.
    out = tmp_path / "mnt"
    out.mkdir()
    if force:
        (out / "old.csv").write_text("old")
    real_rmdir, real_rename = os.rmdir, os.rename

    def busy(fn):
        def wrapped(src, *a, **k):
            if Path(src) == out:
                raise OSError(errno.EBUSY, os.strerror(errno.EBUSY), str(src))
            return fn(src, *a, **k)
        return wrapped

    monkeypatch.setattr(folder_mod.os, "rmdir", busy(real_rmdir))
    monkeypatch.setattr(folder_mod.os, "rename", busy(real_rename))
    r = _build(JOB, out, *(["--force"] if force else []))
    monkeypatch.undo()
    assert r.exit_code == 2 and "is a mount point" in r.output and "inside it" in r.output
    assert sorted(p.name for p in tmp_path.iterdir()) == ["mnt"]
    assert [p.name for p in out.iterdir()] == (["old.csv"] if force else [])


# ---- interrupts after the commit and during the cleanup ---------------------------------
def test_interrupt_after_commit_not_reported_as_nothing_written(tmp_path, monkeypatch):
    # Ctrl-C after the folder is in place but before the command returns
    # (here: while the final progress step runs) must not claim "nothing was written".
    out = tmp_path / "out"
    real_step = pipeline.Progress.step

    def step(self, what):
        if out.exists():  # run_check steps once more after its commit
            raise KeyboardInterrupt
        return real_step(self, what)

    monkeypatch.setattr(pipeline.Progress, "step", step)
    r = runner.invoke(app, ["check", str(SAMPLES / "loop_ramp_usft.toml"),
                            str(SAMPLES / "staked" / "loop_ramp_shots.csv"), "--out", str(out)])
    assert r.exit_code == 130
    assert "after the outputs were written" in r.output and "nothing was written" not in r.output
    assert sorted(p.name for p in out.iterdir()) == ["check.csv", "check.html", "check.txt", "restake.csv"]


def test_second_signal_during_cleanup_still_cleans(tmp_path, monkeypatch):
    # A second SIGTERM while the temporary folder is being deleted must not
    # leave half of it behind: it is held until the deletion is done.
    def boom(d):  # stands in for the first writer
        raise KeyboardInterrupt

    real = shutil.rmtree

    def rmtree(path, *a, **k):
        if ".out.partial-" in str(path):
            signal.raise_signal(signal.SIGINT)  # arrives in the middle of the clean-up
        return real(path, *a, **k)

    monkeypatch.setattr(tables_mod, "points_csv", boom)
    monkeypatch.setattr(folder_mod.shutil, "rmtree", rmtree)
    r = _build(JOB, tmp_path / "out")
    monkeypatch.undo()
    assert r.exit_code == 130 and "nothing was written" in r.output
    assert list(tmp_path.iterdir()) == []


# ---- files are written in the background while the next output renders ------------------------------
def test_failed_background_write_leaves_nothing(tmp_path, monkeypatch):
    # the disk fills while a file is flushed (ENOSPC from fsync, as POSIX allows): the build stops with
    # exit 2 and a one-line error naming the file, and neither the target nor a temporary folder remains
    def full(fd):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(folder_mod.os, "fsync", full)
    r = _build(JOB, tmp_path / "out")
    assert r.exit_code == 2, r.output
    assert "cannot write points.csv" in r.output and os.strerror(errno.ENOSPC) in r.output
    assert "Traceback" not in r.output
    assert list(tmp_path.iterdir()) == []


def _slow_disk(monkeypatch, seconds: float):
    """Every fsync of the output folder takes ``seconds`` longer; returns the real fsync."""
    import time

    real = os.fsync

    def slow(fd):
        time.sleep(seconds)
        real(fd)

    monkeypatch.setattr(folder_mod.os, "fsync", slow)
    return real


def test_every_background_write_lands_before_the_commit(tmp_path, monkeypatch):
    # a slow disk: each file takes a while to flush; the committed folder still holds every file whole
    real = _slow_disk(monkeypatch, 0.2)
    out = tmp_path / "out"
    assert _build(JOB, out).exit_code == 0
    ref = tmp_path / "ref"
    monkeypatch.setattr(folder_mod.os, "fsync", real)
    assert _build(JOB, ref).exit_code == 0
    assert sorted(p.name for p in out.iterdir()) == sorted(p.name for p in ref.iterdir()) == ["points.csv", "stations.csv"]
    for name in ("points.csv", "stations.csv"):
        assert (out / name).read_bytes() == (ref / name).read_bytes()


def test_second_signal_while_a_write_finishes_leaves_nothing(tmp_path, monkeypatch):
    # regression: Ctrl-C while a slow write was still flushing, then SIGTERM during the wait for it,
    # skipped the clean-up and left the temporary folder behind (Python's signal semantics: a handler
    # raises in the main thread wherever it is)
    import threading

    _slow_disk(monkeypatch, 1.0)

    def term(signum, frame):
        raise KeyboardInterrupt

    old = signal.signal(signal.SIGTERM, term)
    try:
        with pytest.raises(KeyboardInterrupt):
            with OutputFolder(tmp_path / "out") as folder:
                folder.write_bytes("big.csv", b"x" * 1000)  # flushing in the background for a second
                threading.Timer(0.3, lambda: os.kill(os.getpid(), signal.SIGTERM)).start()
                raise KeyboardInterrupt  # the first Ctrl-C, while the next output renders
    finally:
        signal.signal(signal.SIGTERM, old)
    assert list(tmp_path.iterdir()) == []
