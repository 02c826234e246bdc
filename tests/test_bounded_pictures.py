"""profile.svg and superelevation.svg of a large job stay bounded in size.

Outside references: lxml.etree parses each file as XML; the ticks along the profile's
foot are compared with stations.csv of the same build (read with the csv module).
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest
from lxml import etree

from stakeout.writers.profile_picture import TICK_CELL, TICK_MAX_STATIONS

from .helpers import build_job, read_rows

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
from corridor import corridor_job  # noqa: E402

#: The profile picture's size with its ticks thinned (bytes): a few PVIs and at most one tick a cell.
PROFILE_BYTES = 100_000

_W, _LEFT, _RIGHT = 1400, 90, 30  # profile_picture's drawing, pixels


def _profile_job(path: Path, points: int) -> Path:
    """The benchmark corridor (superelevation and template) on a three-PVI profile."""
    job = corridor_job(path, points, setup=False, sections=True)
    length = points / 5 - 1
    text = job.read_text(encoding="utf-8").replace("elevation = 100.0\n", "")
    text += ('[profile]\nname = "G"\n[[profile.pvi]]\nstation = 0\nelevation = 100.0\n[[profile.pvi]]\n'
             f"station = {length / 2:.3f}\nelevation = 120.0\ncurve_length = {min(200.0, length / 4):.3f}\n[[profile.pvi]]\n"
             f"station = {length:.3f}\nelevation = 110.0\n")
    job.write_text(text, encoding="utf-8")
    return job


def _ticks(svg: etree._Element) -> list[float]:
    ns = {"s": "http://www.w3.org/2000/svg"}
    return [float(e.get("x1")) for e in svg.xpath("//s:line[@stroke='#06c']", namespaces=ns)]


@pytest.mark.slow
def test_profile_svg_unbounded_at_many_stakes(tmp_path):
    # profile.svg ticked every stake (66 MB at 5M stakes); over TICK_MAX_STATIONS it ticks one a cell
    job = _profile_job(tmp_path / "big.toml", 100_000)
    out = build_job(job, tmp_path / "out", "--only", "profile-picture,stations,superelevation-picture")
    raw = (out / "profile.svg").read_bytes()
    assert len(raw) < PROFILE_BYTES
    svg = etree.fromstring(raw)
    ticks = _ticks(svg)
    stations = sorted({float(r["station_internal"]) if "station_internal" in r else float(r["station"])
                       for r in read_rows(out / "stations.csv")})
    assert len(stations) > TICK_MAX_STATIONS
    cells = (_W - _LEFT - _RIGHT) / TICK_CELL
    assert 0.9 * cells <= len(ticks) <= cells + 1
    assert len({int(x // TICK_CELL) for x in ticks}) == len(ticks)  # one a cell
    assert ticks == sorted(ticks) and abs(ticks[0] - _LEFT) < 0.01 and abs(ticks[-1] - (_W - _RIGHT)) < TICK_CELL
    assert "thinned to one a 2 px" in raw.decode("utf-8")
    # superelevation.svg grows with the design (key points, SE rows), not with the stakes
    assert (out / "superelevation.svg").stat().st_size < 200_000


def test_profile_svg_ticks_every_stake_of_a_small_job(tmp_path):
    job = _profile_job(tmp_path / "small.toml", 1_000)
    out = build_job(job, tmp_path / "out", "--only", "profile-picture,stations")
    # one tick at each staked station (a centreline stake each) inside the profile (0 to 199.0; its ends
    # left out, where a station may round either way)
    stations = [float(r["station"]) for r in read_rows(out / "stations.csv") if r["code"] == "CL"]
    inside = [x for x in stations if 0.01 < x < 198.99]
    scale = (_W - _LEFT - _RIGHT) / 199.0
    ticks = [x for x in _ticks(etree.fromstring((out / "profile.svg").read_bytes()))
             if _LEFT + 0.01 * scale < x < _LEFT + 198.99 * scale]
    assert len(ticks) == len(inside) < TICK_MAX_STATIONS
    assert all(abs(t - (_LEFT + x * scale)) < 0.006 for t, x in zip(ticks, inside))
