"""Each design file is parsed once per run (issue 27): a LandXML file the job names for the
alignment, the profile and the control points is parsed once, keyed by its resolved path and the
SHA-256 of its bytes; the same path with other bytes is parsed again.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

import stakeout.landxml as lx
from stakeout.jobfile import load_job
from stakeout.jobfile.design_file import DesignFiles

from .helpers import write_job

ROAD = Path(__file__).resolve().parent / "data" / "landxml" / "road_metric.xml"


def _counting(monkeypatch) -> list[str]:
    calls: list[str] = []
    real = lx.parse_landxml

    def counting(data: bytes, source: str = "LandXML data", **kwargs) -> lx.XDesign:
        calls.append(source)
        return real(data, source, **kwargs)

    monkeypatch.setattr(lx, "parse_landxml", counting)
    return calls


def _job(tmp_path: Path, ground: bool = False) -> Path:
    """A job taking alignment, profile and control (and with ``ground`` its ground) from road.xml."""
    text = ROAD.read_text(encoding="utf-8")
    if ground:
        text = text.replace("</LandXML>", _surfaces_block() + "</LandXML>")
    (tmp_path / "road.xml").write_text(text, encoding="utf-8")
    uses = "".join(f'[{t}]\nlandxml = "road.xml"\n' for t in ("alignment", "profile", "control", "ground")
                   if ground or t != "ground")
    return write_job(tmp_path, f'format = 1\n[job]\nname = "One file"\nunits = "m"\n{uses}[staking]\ninterval = 50.0\n')


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


def _surfaces_block() -> str:
    """A small TIN <Surface name="EG"> (LandXML 1.2 Surface/Definition/Pnts/Faces, by hand): a 3 x 3
    grid of points 10 m apart, two faces a cell, the first invisible (a hole)."""
    pts = [(5123400.0 + 10 * j, 481300.0 + 10 * i, 300.0 + i + 0.5 * j) for j in range(3) for i in range(3)]
    p = "".join(f'<P id="{k + 1}">{n!r} {e!r} {z!r}</P>' for k, (n, e, z) in enumerate(pts))
    faces = []
    for j in range(2):
        for i in range(2):
            a = 3 * j + i + 1
            faces += [(a, a + 1, a + 4), (a, a + 4, a + 3)]
    inv = ' i="1"'
    f = "".join(f"<F{inv if k == 0 else ''}>{a} {b} {c}</F>" for k, (a, b, c) in enumerate(faces))
    return (f'  <Surfaces><Surface name="EG"><Definition surfType="TIN"><Pnts>{p}</Pnts><Faces>{f}</Faces>'
            "</Definition></Surface></Surfaces>\n")


def test_ground_surface_in_the_design_file_from_the_same_parse(tmp_path, monkeypatch):
    import stakeout.landxml.surface as surface

    calls = _counting(monkeypatch)
    real = surface.parse_surface
    own: list[str] = []

    def counting_surface(*args, **kwargs):
        own.append("surface")
        return real(*args, **kwargs)

    monkeypatch.setattr(surface, "parse_surface", counting_surface)
    job = load_job(_job(tmp_path, ground=True))
    assert (len(calls), own) == (1, [])  # the surface came from the design file's one pass
    assert [f.role for f in job.design_files] == ["alignment", "profile", "control", "ground"]
    # the same ground as the surface reader's own pass over the file (the reference)
    alone = real((tmp_path / "road.xml").read_bytes(), None, "m", "ground.landxml = 'road.xml'")
    assert job.ground is not None
    g = job.ground
    from stakeout.ground import Ground

    ref = Ground.from_faces(alone.n, alone.e, alone.z, alone.faces, "ref")
    assert np.array_equal(g.z, ref.z) and np.array_equal(g.faces, ref.faces)
    assert job.design_files[-1].sha256 == job.design_files[0].sha256 == alone.sha256


def test_ground_surface_error_from_the_same_parse_names_the_ground(tmp_path):
    # the surface's own error (here: no surface of that name) names the ground's key, as when the
    # surface is read on its own
    import pytest

    from stakeout.errors import JobFileError

    job = _job(tmp_path, ground=True)
    job.write_text(job.read_text().replace('[ground]\nlandxml = "road.xml"', '[ground]\nlandxml = "road.xml"\nname = "NONE"'))
    with pytest.raises(JobFileError, match=r"ground.landxml = 'road.xml': no <Surface name='NONE'>; the file has 'EG'"):
        load_job(job)
