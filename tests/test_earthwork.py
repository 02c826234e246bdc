"""The ground work of a stake plan: slope stakes left and right of a real alignment, sections, volumes.

References: on level ground 2 below (above) a level template the catch lies
at the hinge offset plus (minus) slope x height, the level-section relation
of route surveying (common practice); the fill section is then a trapezoid,
(top + bottom) / 2 x height; average end areas over the internal-station
distance (Wikibooks, "Fundamentals of Transportation/Earthwork").
"""

from __future__ import annotations

import numpy as np
import pytest

from stakeout.design import build_design
from stakeout.earthwork import earthwork
from stakeout.errors import JobFileError
from stakeout.ground import Ground
from stakeout.jobfile import parse_job
from stakeout.slopestakes import SideSlopes, SlopeStaking

JOB = b"""
format = 1
[job]
name = "Earthwork test road"
units = "m"
[alignment]
name = "EW"
start = { station = "0+000", northing = 1000.0, easting = 2000.0 }
azimuth = "30-00-00"
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 20.0
elevation = 52.0
offsets = [{ offset = -6.0, code = "SHL" }, { offset = 0.0, code = "CL" }, { offset = 6.0, code = "SHR" }]
"""


def _level_ground(z: float) -> Ground:
    e, n = np.meshgrid(np.linspace(1900, 2200, 31), np.linspace(900, 1200, 31))
    return Ground.from_points(n.ravel(), e.ravel(), np.full(n.size, z))


@pytest.fixture(scope="module")
def stakes():
    return build_design(parse_job(JOB, "ew.toml")).stakes


def test_level_fill_both_sides(stakes):
    spec = SlopeStaking(SideSlopes("SHL", 3.0, 2.0), SideSlopes("SHR", 2.0, 2.0), 5.0, 100.0)
    ew = earthwork(stakes, _level_ground(50.0), spec)
    assert np.allclose(ew.ground_elevation, 50.0) and np.allclose(ew.cut_fill, 2.0)
    r = ew.slopes
    assert r is not None and r.side[:4] == ("left", "right", "left", "right")
    assert r.station.tolist() == sorted(r.station.tolist())
    assert list(r.result.kind) == ["fill"] * len(r.side)
    # level section: 2 of fill at 3:1 left -> -6 - 6 = -12; at 2:1 right -> 6 + 4 = 10
    assert np.allclose(r.catch_offset, np.where(np.array(r.side) == "left", -12.0, 10.0), atol=1e-9)
    assert np.allclose(r.reference_offset, np.where(np.array(r.side) == "left", -17.0, 15.0), atol=1e-9)
    # the catch stake lies square to the alignment from the hinge, on the alignment's left/right
    cn, ce = r.result.catch_n, r.result.catch_e
    hn, he = stakes.northing[r.hinge], stakes.easting[r.hinge]
    az = np.degrees(np.arctan2(ce - he, cn - hn)) % 360
    assert np.allclose(az, np.where(np.array(r.side) == "left", 300.0, 120.0), atol=1e-6)
    # trapezoid of fill: top 12, bottom 12 + 6 + 4 = 22, height 2 -> 34; volumes by average end areas
    assert ew.sections is not None and ew.volumes is not None
    assert np.allclose(ew.sections.fill_area, 34.0, atol=1e-9) and np.allclose(ew.sections.cut_area, 0.0, atol=1e-12)
    assert ew.volumes.cumulative_fill[-1] == pytest.approx(34.0 * 100.0)
    assert ew.volume_stations.tolist() == list(range(stakes.stations.size))


def test_one_side_has_no_volumes_and_a_bad_hinge_is_refused(stakes):
    ew = earthwork(stakes, _level_ground(54.0), SlopeStaking(None, SideSlopes("SHR", 2.0, 1.5), 5.0, 100.0))
    assert ew.slopes is not None and set(ew.slopes.side) == {"right"} and ew.volumes is None
    assert np.allclose(ew.slopes.catch_offset, 6.0 + 1.5 * 2.0) and set(ew.slopes.result.kind) == {"cut"}
    with pytest.raises(JobFileError, match="slope_stakes.left.hinge = 'EP': no offset line"):
        earthwork(stakes, _level_ground(54.0), SlopeStaking(SideSlopes("EP", 2.0, 2.0), None, 5.0, 100.0))


def test_without_slope_stakes_only_cut_fill(stakes):
    ew = earthwork(stakes, _level_ground(53.25), None)
    assert np.allclose(ew.cut_fill, -1.25) and ew.slopes is None


def test_swapped_hinges_are_refused(stakes):
    with pytest.raises(JobFileError, match=r"slope_stakes.left.hinge = 'SHR': lies at or right of the right hinge 'SHL' "
                                           r"at 0\+000\.000 \(offsets 6\.0000 and -6\.0000\)"):
        earthwork(stakes, _level_ground(50.0), SlopeStaking(SideSlopes("SHR", 2.0, 2.0), SideSlopes("SHL", 2.0, 2.0),
                                                            5.0, 100.0))
