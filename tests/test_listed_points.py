"""Stakes listed by station and offset (``staking.points``, stakeout/listed.py):
skewed stakes, design elevations between the offset lines, regions, numbering.

References:
- the contract, ../shared/design/job-file.md, "Points by station and offset";
- plane geometry by hand: a point on a circular arc is its centre plus the
  radius turned by the arc's angle (the tangent-to-radius relation of
  elementary geometry); written out with complex numbers in each test;
- shapely/GEOS as an independent measure of distance and of the station
  along the alignment (``LineString.distance`` and ``.project`` on a polyline
  built here by hand, densified every 0.01 unit);
- linear interpolation between two cross-section points and a slope
  continued beyond the last one: the road cross-section of common practice.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import LineString, Point

from stakeout.crosssection import plan_sections
from stakeout.design import build_alignment, build_profile_of, build_sections, build_stationing
from stakeout.errors import JobFileError
from stakeout.job import ListedPoints, OffsetLine
from stakeout.jobfile import load_job
from stakeout.listed import design_elevation, listed_stakes, number_listed, place_listed, resolve_stations
from stakeout.stations import StationRef

# A tangent of 100 due east from N 1000, E 2000, then a 40-degree arc of radius 150
# turning right, then a tangent: the hand computations below use exactly these.
N0, E0, R, DELTA = 1000.0, 2000.0, 150.0, 40.0
JOB = f"""format = 1
[job]
name = "listed"
units = "m"
[alignment]
name = "A"
start = {{ station = "0+000", northing = {N0}, easting = {E0} }}
azimuth = 90.0
[[alignment.element]]
kind = "line"
length = 100.0
[[alignment.element]]
kind = "arc"
radius = {R}
delta = "{DELTA:g}-00-00"
turn = "right"
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 20.0
elevation = 50.0
offsets = [
  {{ offset = -5.0, code = "SHL", from = "EPL", cross_slope = -6.0 }},
  {{ offset = -3.5, code = "EPL", cross_slope = -2.0 }},
  {{ offset = 0.0, code = "CL" }},
  {{ offset = 3.5, code = "EPR", cross_slope = -2.0 }},
]
"""
ARC_END = 100.0 + R * math.radians(DELTA)
# hand geometry: the PC, the arc's centre (right of an eastbound tangent: south of the PC)
PC = complex(E0 + 100.0, N0)  # x = east, y = north
CENTRE = PC - 1j * R


def _hand_point(s: float) -> tuple[complex, float]:
    """The centreline point (east + i north) and azimuth (degrees) at internal station s, by hand."""
    if s <= 100.0:
        return complex(E0 + s, N0), 90.0
    if s <= ARC_END:
        th = (s - 100.0) / R  # radians turned clockwise from the PC
        return CENTRE + R * cmath.exp(-1j * th) * 1j, 90.0 + math.degrees(th)
    pt = CENTRE + R * cmath.exp(-1j * math.radians(DELTA)) * 1j
    az = 90.0 + DELTA
    return pt + (s - ARC_END) * complex(math.sin(math.radians(az)), math.cos(math.radians(az))), az


def _unit(az_deg: float) -> complex:
    a = math.radians(az_deg)
    return complex(math.sin(a), math.cos(a))


#: Chord length of the arc in the shapely polyline.
STEP = 0.002


def _polyline(step: float = STEP) -> LineString:
    """The alignment by hand (for shapely): the tangents' ends and the arc every ``step``."""
    arc = np.linspace(100.0, ARC_END, int(math.ceil((ARC_END - 100.0) / step)) + 1)
    s = [0.0, *arc.tolist(), ARC_END + 100.0]
    pts = [_hand_point(float(v))[0] for v in s]
    return LineString([(p.real, p.imag) for p in pts])


def _rows(stations, offsets, skews=None, ids=None, elevations=None, regions=None, codes=None) -> ListedPoints:
    n = len(stations)
    key = "staking.points = 'test.csv'"
    return ListedPoints(
        path="test.csv", sha256="",
        station=tuple(StationRef(float(v), None if regions is None else regions[i], f"{key} line {i + 2} station")
                      for i, v in enumerate(stations)),
        offset=tuple(float(v) for v in offsets),
        skew=tuple(float(v) for v in (skews or [0.0] * n)),
        code=tuple(codes or ["P"] * n), description=("",) * n,
        id=tuple(ids or [None] * n),
        elevation=tuple(float(v) for v in (elevations or [math.nan] * n)),
        line=tuple(range(2, n + 2)),
    )


def _design(tmp_path: Path, text: str = JOB):
    p = tmp_path / "job.toml"
    p.write_text(text, encoding="utf-8")
    job = load_job(p)
    alignment = build_alignment(job.alignment)
    stationing = build_stationing(job, alignment)
    profile = build_profile_of(job, stationing)
    sections = build_sections(job, alignment, stationing)
    return job, alignment, stationing, profile, sections


def _place(tmp_path, rows, text=JOB):
    job, alignment, stationing, profile, sections = _design(tmp_path, text)
    staking = replace(job.staking, offsets=sections.lines, points=rows)
    out = listed_stakes(alignment, stationing, profile, sections, staking)
    assert out is not None
    return out


# ---- skewed stakes against a hand computation ----

def test_skew_on_the_tangent_by_hand(tmp_path):
    # Eastbound: the square line's right-hand direction is azimuth 180 (south); turned 30 degrees
    # clockwise it points to 210, and a left (negative) offset runs the other way, to 30.
    out = _place(tmp_path, _rows([50.0, 50.0, 60.0], [-5.0, 8.0, 4.0], skews=[30.0, -25.0, 0.0]))
    for i, (s, o, k) in enumerate([(50.0, -5.0, 30.0), (50.0, 8.0, -25.0), (60.0, 4.0, 0.0)]):
        q = complex(E0 + s, N0) + o * _unit(90.0 + 90.0 + k)
        assert out.easting[i] == pytest.approx(q.real, abs=5e-5)  # rounded to 4 decimals
        assert out.northing[i] == pytest.approx(q.imag, abs=5e-5)
        # on a tangent: own station s - o sin(k), square offset o cos(k)
        assert out.station[i] == pytest.approx(s - o * math.sin(math.radians(k)), abs=1e-4)
        assert out.offset[i] == pytest.approx(o * math.cos(math.radians(k)), abs=1e-4)
        assert out.azimuth[i] == pytest.approx(90.0)
    assert out.station[2] == 60.0 and out.offset[2] == 4.0  # unskewed: exactly as given


@pytest.mark.parametrize("s, o, k", [(140.0, 12.0, 20.0), (150.0, -9.5, -35.0), (180.0, 30.0, 10.0),
                                     (120.0, -40.0, 60.0)])
def test_skew_on_the_curve_by_hand(tmp_path, s, o, k):
    out = _place(tmp_path, _rows([s], [o], skews=[k]))
    p, az = _hand_point(s)
    q = p + o * _unit(az + 90.0 + k)  # the skewed line: the square line turned k clockwise
    assert out.easting[0] == pytest.approx(q.real, abs=5e-5)
    assert out.northing[0] == pytest.approx(q.imag, abs=5e-5)
    # its own station: the arc length to the radius through it; square offset: R minus its distance
    # from the centre (a right-turning arc: the centre is on the right, positive side)
    rel = q - CENTRE
    th = -cmath.phase(rel / 1j)  # clockwise angle from the PC's radius
    assert out.station[0] == pytest.approx(100.0 + R * th, abs=1e-4)
    assert out.offset[0] == pytest.approx(R - abs(rel), abs=1e-4)
    # the azimuth at its own station: the 4-decimal coordinates move that station by up to 7.1e-5,
    # 7.1e-5 / 150 rad = 2.7e-5 degrees
    assert out.azimuth[0] == pytest.approx(90.0 + math.degrees(th), abs=3e-5)


def test_skew_zero_on_the_curve_is_the_offset_line_point(tmp_path):
    out = _place(tmp_path, _rows([160.0], [7.0]))
    p, az = _hand_point(160.0)
    q = p + 7.0 * _unit(az + 90.0)
    assert (out.easting[0], out.northing[0]) == pytest.approx((q.real, q.imag), abs=5e-5)


# ---- against shapely ----

def test_skewed_stakes_against_shapely(tmp_path):
    stations = [30.0, 95.0, 110.0, 150.0, 200.0, 230.0, 280.0]
    offsets = [6.0, -12.0, 15.0, -8.0, 25.0, -4.0, 10.0]
    skews = [15.0, -40.0, 30.0, 45.0, -20.0, 5.0, -60.0]
    out = _place(tmp_path, _rows(stations, offsets, skews=skews))
    poly = _polyline()
    for i, (s, o, k) in enumerate(zip(stations, offsets, skews)):
        p, az = _hand_point(s)
        far = p + 2.0 * o * _unit(az + 90.0 + k)
        skew_line = LineString([(p.real, p.imag), (far.real, far.imag)])
        q = Point(out.easting[i], out.northing[i])
        # on the skewed line, at `offset` along it: the 4-decimal rounding moves a point by at most
        # sqrt(2) * 5e-5 = 7.1e-5
        assert skew_line.distance(q) < 7.1e-5
        assert shapely.distance(Point(p.real, p.imag), q) == pytest.approx(abs(o), abs=7.1e-5)
        # its square offset is its distance from the alignment, its station the distance along it.
        # The polyline's chords (c = 0.002 on radius 150) lie within c^2 / 8R = 3.3e-9 of the arc and
        # fall short of its length by L c^2 / 24 R^2 < 1e-9; a point o off the arc projects onto a
        # chord up to (c / 2) |o| / R from where its radius meets the arc (square to the chord, not
        # to the arc).
        assert abs(out.offset[i]) == pytest.approx(poly.distance(q), abs=1e-6)
        assert out.station[i] == pytest.approx(poly.project(q), abs=STEP / 2 * abs(out.offset[i]) / R + 1e-6)


# ---- round trip ----

@settings(max_examples=60, deadline=None)
@given(s=st.floats(0.0, ARC_END + 100.0), o=st.floats(-40.0, 40.0), k=st.floats(-75.0, 75.0))
def test_round_trip_skew_zero_and_skewed(tmp_path_factory, s, o, k):
    tmp = tmp_path_factory.mktemp("rt")
    job, alignment, stationing, profile, sections = _design(tmp)
    plain = place_listed(alignment, stationing, _rows([s], [o]), sections=sections)
    # skew 0: the inverse of the stake gives back its station and offset (4-decimal coordinates)
    loc = alignment.locate(plain.northing, plain.easting)
    assert loc.station[0] == pytest.approx(s, abs=1e-4)
    assert loc.offset[0] == pytest.approx(o, abs=1e-4)
    # skewed: staking its own station and square offset without a skew puts it on the same point
    sk = place_listed(alignment, stationing, _rows([s], [o], skews=[k]), sections=sections) \
        if 0.0 <= s - o * math.sin(math.radians(k)) <= ARC_END + 100.0 and abs(o) < R / 2 else None
    if sk is not None and 1.0 < sk.station[0] < ARC_END + 99.0:
        again = place_listed(alignment, stationing, _rows([sk.station[0]], [sk.offset[0]]), sections=sections)
        assert again.northing[0] == pytest.approx(sk.northing[0], abs=2e-4)
        assert again.easting[0] == pytest.approx(sk.easting[0], abs=2e-4)


# ---- elevations ----

def _hand_elevation(o: float) -> float:
    """The section of JOB at a level centreline 50.0 (no superelevation): CL 50, EPR 3.5 at -2 %,
    EPL -3.5 at -2 %, SHL -5.0 measured from EPL at -6 %; no line left of... (the left has two)."""
    epl = 50.0 - 0.02 * 3.5
    shl = epl - 0.06 * 1.5
    if o >= 0:  # right: CL -> EPR, and beyond EPR its segment's slope continued
        return 50.0 - 0.02 * o
    if o >= -3.5:
        return 50.0 - 0.02 * -o
    # between EPL and SHL linear; beyond SHL the EPL-SHL segment's slope (-6 %) continued
    return epl + (shl - epl) * (-o - 3.5) / 1.5


@pytest.mark.parametrize("o", [0.0, 1.75, 3.5, 6.0, -2.0, -3.5, -4.25, -5.0, -9.0])
def test_design_elevation_between_and_beyond_the_lines(tmp_path, o):
    out = _place(tmp_path, _rows([60.0], [o]))
    assert out.elevation[0] == pytest.approx(_hand_elevation(o), abs=1e-12)
    assert not out.elevation_given[0]


def test_given_elevation_wins_and_skewed_elevation_is_where_it_lies(tmp_path):
    out = _place(tmp_path, _rows([60.0, 60.0], [6.0, 8.0], skews=[0.0, 60.0], elevations=[12.345, math.nan]))
    assert out.elevation[0] == 12.345 and out.elevation_given[0]
    # skewed 60 degrees: it lies 8 cos 60 = 4 right of the centreline
    assert out.offset[1] == pytest.approx(4.0, abs=1e-4)
    assert out.elevation[1] == pytest.approx(50.0 - 0.02 * out.offset[1], abs=1e-12)


def test_only_a_centreline_and_a_side_without_lines_are_level(tmp_path):
    only_cl = JOB[:JOB.index("offsets = [")]
    out = _place(tmp_path, _rows([60.0, 60.0], [-7.0, 9.0]), only_cl)
    assert list(out.elevation) == [50.0, 50.0]
    right_only = only_cl + 'offsets = [{ offset = 0.0, code = "CL" }, { offset = 3.5, code = "EPR", cross_slope = -2.0 }]\n'
    out = _place(tmp_path, _rows([60.0, 60.0], [-7.0, 7.0]), right_only)
    assert out.elevation[0] == 50.0  # no line on the left: level with the centreline
    assert out.elevation[1] == pytest.approx(50.0 - 0.02 * 7.0, abs=1e-12)


def test_no_line_on_the_centreline_still_interpolates_from_it(tmp_path):
    # lines only at the edges: a point between the centreline and an edge follows the crown
    text = JOB[:JOB.index("offsets = [")] + (
        'offsets = [{ offset = -3.5, code = "EPL", cross_slope = -2.0 }, '
        '{ offset = 3.5, code = "EPR", cross_slope = -2.0 }]\n')
    out = _place(tmp_path, _rows([60.0], [1.0]), text)
    assert out.elevation[0] == pytest.approx(50.0 - 0.02, abs=1e-12)


def test_no_elevations_in_the_job_gives_nan_unless_given(tmp_path):
    text = JOB.replace("elevation = 50.0\n", "").replace(", cross_slope = -6.0", "").replace(
        ", cross_slope = -2.0", "")
    out = _place(tmp_path, _rows([60.0, 70.0], [2.0, 2.0], elevations=[math.nan, 7.5]), text)
    assert math.isnan(out.elevation[0]) and out.elevation[1] == 7.5


def test_design_elevation_on_a_profile_with_a_dz_line(tmp_path):
    text = JOB[:JOB.index("elevation = 50.0")] + (
        'offsets = [{ offset = 0.0, code = "CL" }, { offset = 4.0, code = "KB", dz = 0.15 }]\n'
        '[profile]\nname = "P"\n[[profile.pvi]]\nstation = 0.0\nelevation = 100.0\n'
        '[[profile.pvi]]\nstation = 300.0\nelevation = 106.0\n')
    out = _place(tmp_path, _rows([50.0, 50.0], [2.0, 6.0]), text)
    # a 2 % grade: 101.0 at 50; half way to the kerb 0.075 up, beyond it the CL-KB segment continued
    assert out.elevation[0] == pytest.approx(101.075, abs=1e-9)
    assert out.elevation[1] == pytest.approx(101.0 + 0.15 * 6.0 / 4.0, abs=1e-9)


def test_design_elevation_coinciding_lines_beyond_are_level():
    # two lines at the same offset at a station (a widening's start): level beyond them
    from stakeout.stations import Stationing

    stationing = Stationing(0.0, 100.0, 1000, 3)
    lines = [OffsetLine(3.5, "EP", cross_slope=-2.0), OffsetLine(0.0, "CL")]
    plan = plan_sections(lines, (), stationing)
    z = design_elevation(plan, np.array([10.0, 10.0]), np.array([5.0, -5.0]), np.array([20.0, 20.0]))
    assert z[0] == pytest.approx(20.0 - 0.1, abs=1e-12) and z[1] == 20.0
    assert np.isnan(design_elevation(plan, np.array([10.0]), np.array([1.0]), None)).all()
    assert design_elevation(None, np.array([10.0]), np.array([1.0]), np.array([3.0]))[0] == 3.0


# ---- regions ----

EQ_JOB = JOB + """
[[alignment.station_equation]]
back = "0+150.000"
ahead = "0+100.000"
"""


def test_region_column_reads_a_station_that_occurs_twice(tmp_path):
    job, alignment, stationing, profile, sections = _design(tmp_path, EQ_JOB)
    # 0+120 lies in region 1 (internal 120) and in region 2 (internal 150 + 20 = 170)
    rows = _rows([120.0, 120.0, 200.0], [0.0, 0.0, 0.0], regions=[1, 2, None])
    assert list(resolve_stations(stationing, rows.station)) == [120.0, 170.0, 250.0]
    with pytest.raises(JobFileError, match=r"test.csv' line 2 station = '0\+120.000': lies in regions 1 and 2"):
        resolve_stations(stationing, _rows([120.0], [0.0]).station)
    with pytest.raises(JobFileError, match="region 3 does not exist"):
        resolve_stations(stationing, _rows([120.0], [0.0], regions=[3]).station)
    with pytest.raises(JobFileError, match="not in region 1"):
        resolve_stations(stationing, _rows([200.0], [0.0], regions=[1]).station)


def test_region_column_through_the_file(tmp_path):
    (tmp_path / "s.csv").write_text("station,offset,code,region\n0+120,2,A,2\n0+120,2,B,1\n", encoding="utf-8")
    text = EQ_JOB.replace('interval = 20.0\n', 'interval = 20.0\npoints = "s.csv"\n')
    job, alignment, stationing, profile, sections = _design(tmp_path, text)
    out = listed_stakes(alignment, stationing, profile, sections, replace(job.staking, offsets=sections.lines))
    assert out is not None and list(out.station) == [170.0, 120.0]


@settings(max_examples=80, deadline=None)
@given(values=st.lists(st.floats(-50.0, 500.0), min_size=1, max_size=8),
       regions=st.lists(st.sampled_from([None, 1, 2, 3, 4]), min_size=8, max_size=8),
       eqs=st.lists(st.tuples(st.floats(10.0, 80.0), st.floats(-60.0, 60.0)), min_size=0, max_size=3))
def test_resolve_stations_reads_as_to_internal(values, regions, eqs):
    # the vectorised reading agrees with Stationing.to_internal, one station at a time, on every
    # station, region and equation (or raises the same error)
    from stakeout.stations import Stationing

    given, at = [], 0.0
    shift = 0.0
    for step, jump in eqs:
        at += step
        given.append((at + shift, at + shift + jump, f"eq{len(given)}"))
        shift += jump
    stationing = Stationing.with_equations(0.0, 300.0, 1000, 3, tuple(given))
    refs = [StationRef(v, regions[i], f"s{i}") for i, v in enumerate(values)]
    expect: list[float] = []
    error = None
    for r in refs:
        try:
            expect.append(stationing.to_internal(r))
        except JobFileError as exc:
            error = error or str(exc)
            expect.append(math.nan)
    if error is not None:
        with pytest.raises(JobFileError):
            resolve_stations(stationing, refs)
    else:
        assert list(resolve_stations(stationing, refs)) == pytest.approx(expect, abs=1e-9)


# ---- refusals ----

def test_station_off_the_alignment_refused(tmp_path):
    with pytest.raises(JobFileError, match=r"test.csv' line 3 station = '0\+400.000': off the alignment, which runs "
                                           r"from 0\+000.000 to 0\+30"):
        _place(tmp_path, _rows([10.0, 400.0], [1.0, 1.0]))


def test_skew_off_the_end_refused(tmp_path):
    with pytest.raises(JobFileError, match=r"test.csv' line 2: skew 45.0 puts the stake at 0\+005.000 offset 20.0 "
                                           r"off the alignment \(9.1421 before its start"):
        _place(tmp_path, _rows([5.0], [20.0], skews=[45.0]))


def test_skewed_stake_nearer_another_part_of_the_alignment_refused(tmp_path):
    # a hairpin: east 100, a half circle of radius 20 to the right, west 100; the return tangent runs
    # 40 south of the first. A stake 30 right (south) of 0+050, skewed 10 degrees, lies about 10.5 from
    # the return tangent and 29.5 from its own: its nearest point is on the way back.
    text = JOB.replace(f"radius = {R}", "radius = 20.0").replace(f'delta = "{DELTA:g}-00-00"', 'delta = "180-00-00"')
    with pytest.raises(JobFileError, match=r"test.csv' line 2: skew 10.0 puts the stake at 0\+050.000 offset 30.0 "
                                           r"nearer another part of the alignment \(at 0\+2"):
        _place(tmp_path, _rows([50.0], [30.0], skews=[10.0]), text)
    out = _place(tmp_path, _rows([50.0], [8.0], skews=[10.0]), text)  # near its own part: fine
    assert out.station[0] == pytest.approx(50.0 - 8.0 * math.sin(math.radians(10.0)), abs=1e-4)


def test_offset_past_the_centre_refused(tmp_path):
    with pytest.raises(JobFileError, match=r"test.csv' line 2: offset 160.0 at 0\+150.000 lies on the inside of a "
                                           "curve at or past its centre"):
        _place(tmp_path, _rows([150.0], [160.0]))


def test_beyond_the_profile_refused_unless_the_elevation_is_given(tmp_path):
    text = JOB.replace("elevation = 50.0\n", "") + (
        '[profile]\nname = "P"\n[[profile.pvi]]\nstation = 0.0\nelevation = 100.0\n'
        '[[profile.pvi]]\nstation = 200.0\nelevation = 104.0\n')
    out = _place(tmp_path, _rows([250.0], [1.0], elevations=[9.0]), text)
    assert out.elevation[0] == 9.0
    with pytest.raises(JobFileError, match=r"line 2: the stake at 0\+250.000 lies beyond the profile"):
        _place(tmp_path, _rows([250.0], [1.0]), text)


# ---- numbering ----

def test_rows_without_an_id_numbered_by_station_then_offset_ties_in_file_order(tmp_path):
    rows = _rows([60.0, 20.0, 60.0, 20.0, 40.0, 20.0], [5.0, 3.0, -5.0, 3.0, 0.0, -1.0],
                 ids=[None, None, None, "MH7", None, None])
    out = _place(tmp_path, rows)
    order, ids = number_listed(out, 101, "P")
    # station 20: offset -1 (row 5), then offset 3 twice (rows 1 and, by file order, ... row 3 has an id)
    assert order.tolist() == [5, 1, 4, 2, 0]
    assert ids == ["P105", "P102", "P104", "MH7", "P103", "P101"]


def test_numbering_sorts_where_a_skewed_stake_lies(tmp_path):
    out = _place(tmp_path, _rows([50.0, 48.0], [10.0, 1.0], skews=[30.0, 0.0]))  # the first lies at 45
    order, ids = number_listed(out, 1, "")
    assert order.tolist() == [0, 1] and ids == ["1", "2"]


def test_numbering_refusals(tmp_path):
    out = _place(tmp_path, _rows([10.0, 20.0], [0.0, 0.0], ids=[None, "P8"]))
    with pytest.raises(JobFileError, match=r"line 3: id 'P8' is also the number given to line 2"):
        number_listed(out, 8, "P")
    with pytest.raises(JobFileError, match=r"test.csv': the rows without an id \(1\), numbered from 100,000 after the "
                                           r"alignment's stakes, end at the point id 'ABCDEFGHIJKLMNO100000' of 21 "
                                           "characters; ids may have at most 20"):
        number_listed(out, 10**5, "ABCDEFGHIJKLMNO")
    with pytest.raises(JobFileError, match=r"would run to 1,000,000,000,000,000; point numbers end at 999,999"):
        number_listed(out, 10**15, "")
    named = _place(tmp_path, _rows([10.0], [0.0], ids=["X"]))
    order, ids = number_listed(named, 1, "")
    assert order.size == 0 and ids == ["X"]


def test_listed_rows_on_the_stakes_of_a_sample_give_those_stakes():
    # Consistency with the offset lines: a row at a stake's station (in force, with its region) and
    # offset, without a skew, is that stake - on spirals, across an equation stepping back, with
    # superelevation, lines measured from others and widening (the sample's cross-section).
    from stakeout.design import build_design

    from .helpers import SAMPLES

    d = build_design(load_job(SAMPLES / "kestrel_rise_superelevation_m.toml"))
    sp = d.stakes
    assert d.stationing.equations and sp.elevation is not None
    key = "staking.points = 'test.csv'"
    values, regions = d.stationing.station(sp.station), d.stationing.region(sp.station)
    rows = ListedPoints("test.csv", "", tuple(StationRef(float(v), int(r), f"{key} station")
                                              for v, r in zip(values.tolist(), regions.tolist())),
                        tuple(sp.offset.tolist()), (0.0,) * len(sp), tuple(sp.code), ("",) * len(sp),
                        (None,) * len(sp), (math.nan,) * len(sp), tuple(range(2, len(sp) + 2)))
    out = place_listed(d.alignment, d.stationing, rows, sections=d.sections, profile=d.profile)
    assert np.abs(out.station - sp.station).max() < 1e-9
    assert np.abs(out.northing - sp.northing).max() <= 1e-4 and np.abs(out.easting - sp.easting).max() <= 1e-4
    assert np.abs(out.elevation - sp.elevation).max() < 1e-9


def test_design_elevation_on_a_superelevated_section_by_hand(tmp_path):
    # a constant table: left +4 % (rising outward), right -4 %; the lines take it; a point between the
    # centreline and a line is linear on that segment, one beyond the outermost continues it
    text = JOB[:JOB.index("offsets = [")] + (
        'offsets = [{ offset = -3.5, code = "EPL", cross_slope = "superelevation" }, { offset = 0.0, code = "CL" },\n'
        '  { offset = 3.5, code = "EPR", cross_slope = "superelevation" },\n'
        '  { offset = 5.0, code = "SHR", from = "EPR", cross_slope = -6.0 }]\n'
        '[[superelevation]]\nstation = 0.0\nleft = 4.0\nright = -4.0\n'
        '[[superelevation]]\nstation = 300.0\nleft = 4.0\nright = -4.0\n')
    out = _place(tmp_path, _rows([150.0] * 4, [-2.0, -6.0, 4.25, 7.0]), text)
    epr = 50.0 - 0.04 * 3.5
    shr = epr - 0.06 * 1.5
    expect = [50.0 + 0.04 * 2.0, 50.0 + 0.04 * 6.0, epr + (shr - epr) * 0.75 / 1.5, shr - 0.06 * 2.0]
    assert list(out.elevation) == pytest.approx(expect, abs=1e-12)


def test_without_a_section_plan_the_staking_offsets_give_it(tmp_path):
    job, alignment, stationing, profile, sections = _design(tmp_path)
    rows = _rows([60.0, 60.0, 60.0], [-9.0, 1.0, 6.0])
    staking = replace(job.staking, points=rows)
    plain = listed_stakes(alignment, stationing, profile, None, staking)
    built = listed_stakes(alignment, stationing, profile, sections, replace(staking, offsets=sections.lines))
    assert plain is not None and built is not None
    assert list(plain.elevation) == list(built.elevation) == pytest.approx([_hand_elevation(o) for o in (-9.0, 1.0, 6.0)])
    assert listed_stakes(alignment, stationing, profile, sections, job.staking) is None
