"""A large build renders plan.dxf in a forked second process: the same files, the same bytes,
in the same order, and a failing second process changes nothing but the time.

Outside reference: the files of the same job built with every output rendered in one process
(compared byte for byte, with hashlib's SHA-256 in manifest.json read back by the json module).
"""

from __future__ import annotations

import json
import os

from stakeout import outputs, pipeline

from .helpers import SAMPLES, build_job


def _files(out):
    return {p.name: p.read_bytes() for p in sorted(out.iterdir()) if p.name != "manifest.json"}


def _manifest_files(out):
    m = json.loads((out / "manifest.json").read_text(encoding="utf-8"))
    return list(m["outputs"].items())


def test_build_aside_same_bytes(tmp_path, monkeypatch):
    job = SAMPLES / "orchard_vale_interchange_m.toml"
    one = build_job(job, tmp_path / "one")
    monkeypatch.setattr(pipeline, "ASIDE_MIN_STAKES", 0)
    forks = []
    real_fork = os.fork

    def fork():
        pid = real_fork()
        if pid:
            forks.append(pid)
        return pid

    monkeypatch.setattr(os, "fork", fork)
    two = build_job(job, tmp_path / "two")
    assert len(forks) == (1 if len(os.sched_getaffinity(0)) > 1 else 0)
    assert _files(two) == _files(one)
    assert list(_files(two)) == list(_files(one))
    assert _manifest_files(two) == _manifest_files(one)  # the manifest's files, in the same order


def test_build_aside_failing_child_rendered_here(tmp_path, monkeypatch):
    job = SAMPLES / "loop_ramp_usft.toml"
    one = build_job(job, tmp_path / "one")
    parent = os.getpid()
    real = outputs._once

    def once(d, done, filename, target):
        if os.getpid() != parent:  # the second process dies mid-way
            os._exit(3)
        return real(d, done, filename, target)

    monkeypatch.setattr(outputs, "_once", once)
    monkeypatch.setattr(pipeline, "ASIDE_MIN_STAKES", 0)
    two = build_job(job, tmp_path / "two")
    assert _files(two) == _files(one)
