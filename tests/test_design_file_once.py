"""Each design file is parsed once per run (issue 27): a LandXML file the job names for the
alignment, the profile and the control points is parsed once, keyed by its resolved path and the
SHA-256 of its bytes; the same path with other bytes is parsed again.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import stakeout.landxml as lx
from stakeout.jobfile import load_job
from stakeout.jobfile.design_file import DesignFiles

from .helpers import write_job

ROAD = Path(__file__).resolve().parent / "data" / "landxml" / "road_metric.xml"


def _counting(monkeypatch) -> list[str]:
    calls: list[str] = []
    real = lx.parse_landxml

    def counting(data: bytes, source: str = "LandXML data") -> lx.XDesign:
        calls.append(source)
        return real(data, source)

    monkeypatch.setattr(lx, "parse_landxml", counting)
    return calls


def _job(tmp_path: Path) -> Path:
    shutil.copyfile(ROAD, tmp_path / "road.xml")
    return write_job(tmp_path, """format = 1
[job]
name = "One file, three uses"
units = "m"
[alignment]
landxml = "road.xml"
[profile]
landxml = "road.xml"
[control]
landxml = "road.xml"
[staking]
interval = 50.0
""")


def test_alignment_profile_and_control_from_one_parse(tmp_path, monkeypatch):
    calls = _counting(monkeypatch)
    job = load_job(_job(tmp_path))
    assert len(calls) == 1, calls
    assert [f.role for f in job.design_files] == ["alignment", "profile", "control"]
    assert len({f.sha256 for f in job.design_files}) == 1
    assert [p.id for p in job.control][:2] == ["POB", "CP101"]


def test_changed_file_is_parsed_again(tmp_path, monkeypatch):
    calls = _counting(monkeypatch)
    _job(tmp_path)
    from stakeout.job import JobInfo
    from stakeout.units import UNITS

    files = DesignFiles(JobInfo("t", UNITS["m"], None, 100), tmp_path)
    first = files.read("road.xml", "alignment.landxml")
    assert files.read("road.xml", "profile.landxml") is first and len(calls) == 1
    # the same path, other bytes (a point moved): a new parse, not the old one
    text = (tmp_path / "road.xml").read_text(encoding="utf-8")
    (tmp_path / "road.xml").write_text(text.replace("5123400.125", "5123400.5"), encoding="utf-8")
    second = files.read("road.xml", "control.landxml")
    assert len(calls) == 2 and second is not first and second.sha256 != first.sha256
    assert files.parsed(first.sha256) is first and files.parsed(second.sha256) is second
