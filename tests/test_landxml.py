"""LandXML 1.2 reader and writer (the stakeout/landxml package).

Sources of the expected values, named beside each check:
- "independent geometry": tests/landxml_data.py, which made the invented
  files: plane trigonometry for lines and arcs, scipy.special.fresnel for
  clothoids, a 2x2 solve for each spiral's PI.  The reader measures the same
  elements from the points by other means (azimuths of chords and radii,
  Gauss-Legendre quadrature of the clothoid).
- "schema": tests/data/LandXML-1.2.xsd (landxml.org), applied by lxml's
  XMLSchema (an independent XML implementation); its <Units> documentation
  for the direction convention.
- lxml as an independent reader of what the writer wrote.
"""

from __future__ import annotations

import dataclasses
import hashlib
import datetime as dt
import math
import os
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from stakeout import landxml as lx
from stakeout.errors import GeometryError, JobFileError

from . import landxml_data as data
from .helpers import landxml_schema

DATA = data.DATA
ROOT = Path(__file__).resolve().parent.parent
@pytest.fixture(scope="module")
def schema():
    return landxml_schema()  # tests/data/LandXML-1.2.xsd


def read(name: str) -> lx.XDesign:
    return lx.read_landxml(DATA / name)


def text_of(name: str) -> str:
    return (DATA / name).read_text(encoding="utf-8")


def to_x(seg: data.Seg, index: int) -> lx.XElement:
    """A designed element as the module's plain dataclass (points only)."""
    if seg.kind == "line":
        return lx.XLine(index, seg.name, *seg.start, *seg.end)
    if seg.kind == "arc":
        assert seg.center is not None
        return lx.XCurve(index, seg.name, *seg.start, *seg.center, *seg.end, seg.turn)
    assert seg.pi is not None
    return lx.XSpiral(index, seg.name, *seg.start, *seg.pi, *seg.end, seg.rs, seg.re, seg.turn)


def angle_diff(a: float, b: float) -> float:
    return abs((a - b + 180.0) % 360.0 - 180.0)


def assert_matches_design(measured, segs, sta_start):
    """Measured elements against the designed ones (independent geometry)."""
    assert len(measured) == len(segs)
    sta = sta_start
    for m, s in zip(measured, segs):
        assert m.kind == s.kind
        # independent geometry: the design length
        assert m.length == pytest.approx(s.length, abs=1e-6)
        assert m.sta_start == pytest.approx(sta, abs=1e-5)
        assert angle_diff(m.az_start, s.az_start) < 1e-7
        assert angle_diff(m.az_end, s.az_end) < 1e-7
        assert m.turn == s.turn
        if s.kind == "arc":
            assert m.radius_start == pytest.approx(s.radius, abs=1e-7)
            assert m.radius_end == pytest.approx(s.radius, abs=1e-7)
        elif s.kind == "spiral":
            assert m.radius_start == s.rs and m.radius_end == s.re
        else:
            assert m.radius_start is None and m.radius_end is None
        sta += s.length


# ---------------------------------------------------------------------------
# the invented files themselves
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(data.FILES))
def test_data_files_are_what_the_script_makes(name):
    # the committed files are reproducible from tests/landxml_data.py
    assert text_of(name) == data.FILES[name](), f"run python -m tests.landxml_data to rewrite {name}"


@pytest.mark.parametrize(
    "name",
    ["road_metric.xml", "ramp_usft.xml", "rail_cant.xml", "broken_gap.xml", "broken_kink.xml",
     "broken_curvature.xml", "broken_radius.xml", "broken_cubic_spiral.xml"],
)
def test_invented_files_are_valid_landxml(schema, name):
    from lxml import etree

    # schema: the invented files are well-formed LandXML 1.2 (broken ones break geometry only)
    assert schema.validate(etree.parse(str(DATA / name))), schema.error_log


# ---------------------------------------------------------------------------
# reading good files
# ---------------------------------------------------------------------------


def test_metric_road_lines_spirals_cw_and_ccw_arcs():
    d = read("road_metric.xml")
    assert d.units == lx.XUnits("m", "meter", "decimal degrees", "decimal degrees")
    a = lx.pick_alignment(d, None)
    assert a.name == "ROAD 1" and a.sta_start == -120.0  # a negative staStart
    kinds = [type(e).__name__ for e in a.elements]
    assert kinds == ["XLine", "XSpiral", "XCurve", "XSpiral", "XLine", "XCurve", "XLine"]
    segs = data.road_segments()
    # the first Start is a pntRef to CgPoint POB: resolved to its coordinates
    assert (a.elements[0].start_n, a.elements[0].start_e) == segs[0].start
    sp1, c1, sp2, c2 = a.elements[1], a.elements[2], a.elements[3], a.elements[5]
    assert isinstance(sp1, lx.XSpiral) and sp1.radius_start is None and sp1.radius_end == 400.0  # INF -> R
    assert isinstance(sp2, lx.XSpiral) and sp2.radius_start == 400.0 and sp2.radius_end is None  # R -> INF
    assert isinstance(c1, lx.XCurve) and c1.rot == 1 and isinstance(c2, lx.XCurve) and c2.rot == -1
    assert c1.delta_attr == 25.0 and c1.radius_attr == 400.0
    assert_matches_design(lx.validate_geometry(a), segs, -120.0)


def test_metric_road_equation_without_staback():
    a = lx.pick_alignment(read("road_metric.xml"), "ROAD 1")
    assert a.equations == (lx.XEquation(450.0, 1000.0, None, 1),)
    # stationing (schema: staInternal = staStart + distance): back of the equation runs on
    # from staStart, ahead of it from staAhead
    assert lx.station_at(a, 449.0) == pytest.approx(449.0)
    assert lx.station_at(a, 450.0) == pytest.approx(1000.0)
    assert lx.station_at(a, 500.0) == pytest.approx(1050.0)


def test_metric_road_profile_and_points():
    d = read("road_metric.xml")
    p = lx.pick_profile(d, "ROAD 1", None)
    assert p.name == "ROAD 1 FG" and p.alignment_name == "ROAD 1"
    assert [v.kind for v in p.pvis] == ["pvi", "para", "unsym", "circ", "pvi"]
    assert p.pvis[0] == lx.XPVI(-120.0, 100.0)
    assert p.pvis[1] == lx.XPVI(50.0, 102.5, "para", 80.0, 40.0, 40.0)
    assert p.pvis[2] == lx.XPVI(250.0, 98.0, "unsym", 160.0, 60.0, 100.0)
    circ = p.pvis[3]
    assert circ.kind == "circ" and circ.radius == 3000.0 and circ.length_in is None
    # independent: R times the change of slope angle between the grades
    g1, g2 = (101.0 - 98.0) / 200.0, (99.0 - 101.0) / 250.0
    assert circ.length == pytest.approx(3000.0 * (math.atan(g1) - math.atan(g2)), rel=1e-15)
    assert [pt.name for pt in d.points] == ["POB", "CP101", "CP102", "CP103"]
    assert d.points[1] == lx.XPoint("CP101", 5123400.125, 481300.25, 312.4, "CTRL")
    assert d.points[3].elevation is None and d.points[3].desc == "nail in kerb"
    assert d.not_used == ()
    assert d.application == "invented design program"
    assert d.sha256 == hashlib.sha256((DATA / "road_metric.xml").read_bytes()).hexdigest()  # hashlib


def test_us_survey_foot_ramp_spiral_between_arcs_and_backward_equation():
    d = read("ramp_usft.xml")
    assert d.units.unit_key == "us_ft" and d.units.linear_unit == "USSurveyFoot"
    a = lx.pick_alignment(d, "RAMP A")
    s2 = a.elements[3]
    assert isinstance(s2, lx.XSpiral) and (s2.radius_start, s2.radius_end) == (1200.0, 600.0)
    # delta in packed dd.mm.ss: 18.1530 is 18 deg 15' 30"
    c1 = a.elements[2]
    assert isinstance(c1, lx.XCurve) and c1.delta_attr == pytest.approx(18.0 + 15 / 60 + 30 / 3600, abs=1e-12)
    assert_matches_design(lx.validate_geometry(a), data.ramp_segments(), 1000.0)
    assert a.equations == (lx.XEquation(1400.0, 1350.0, 1400.0, 1), lx.XEquation(2200.0, 2500.0, 2150.0, 1))
    # the backward equation gives stations 1350..1400 twice; internal stations stay unique
    assert lx.station_at(a, 1399.0) == pytest.approx(1399.0)
    assert lx.station_at(a, 1450.0) == pytest.approx(1400.0)
    assert lx.station_at(a, 2300.0) == pytest.approx(2600.0)
    p = lx.pick_profile(d, "RAMP A", "RAMP A FG")
    assert [v.kind for v in p.pvis] == ["pvi", "para", "unsym", "pvi"]


def test_international_foot_file_without_namespace_with_several_alignments():
    d = read("site_ft_multi.xml")
    # "foot" is read as the international foot (the schema has USSurveyFoot apart)
    assert d.units.unit_key == "ft" and d.units.linear_unit == "foot"
    assert d.units.angular_unit == "radians"  # schema default: no angularUnit given
    assert [a.name for a in d.alignments] == ["MAIN ST", "SIDE RD", "CUL-DE-SAC"]
    for name, (start, sta, plan) in data.SITE.items():
        a = lx.pick_alignment(d, name)
        segs = data.build(*start, plan)
        arc = a.elements[1]
        # delta written in radians, kept in degrees
        assert isinstance(arc, lx.XCurve) and arc.delta_attr == pytest.approx(segs[1].sweep, abs=1e-12)
        assert_matches_design(lx.validate_geometry(a), segs, sta)
    bulb = lx.validate_geometry(lx.pick_alignment(d, "CUL-DE-SAC"))[1]
    assert bulb.length == pytest.approx(60.0 * math.radians(250.0))  # an arc over 180 degrees


def test_choosing_alignments_and_profiles_names_the_choices():
    d = read("site_ft_multi.xml")
    with pytest.raises(JobFileError, match=r"\[alignment\] name.*'MAIN ST', 'SIDE RD', 'CUL-DE-SAC'"):
        lx.pick_alignment(d, None)
    with pytest.raises(JobFileError, match=r"name = 'MAIN'.*no such <Alignment>.*'MAIN ST', 'SIDE RD'"):
        lx.pick_alignment(d, "MAIN")
    with pytest.raises(JobFileError, match=r"\[profile\] name.*'MAIN FG', 'MAIN ALT'"):
        lx.pick_profile(d, "MAIN ST", None)
    with pytest.raises(JobFileError, match=r"'FG'.*'MAIN FG', 'MAIN ALT'"):
        lx.pick_profile(d, "MAIN ST", "FG")
    with pytest.raises(JobFileError, match=r"'CUL-DE-SAC' has no <ProfAlign>"):
        lx.pick_profile(d, "CUL-DE-SAC", None)
    assert lx.pick_profile(d, "MAIN ST", "MAIN ALT").pvis == (lx.XPVI(0.0, 50.0), lx.XPVI(1400.0, 52.0))
    assert lx.pick_profile(d, "SIDE RD", None).name == "SIDE FG"


def test_cant_and_features_are_listed_as_not_used():
    d = read("rail_cant.xml")
    a = lx.pick_alignment(d, None)
    lx.validate_geometry(a)
    nu = "\n".join(d.not_used)
    for expected in (
        "alignment 'UP MAIN': Cant 'rail cant'",
        "alignment 'UP MAIN': CrossSects",
        "alignment 'UP MAIN': Feature",
        "alignment 'UP MAIN', element 3 (Curve 'R1'): Feature",
        "alignment 'UP MAIN' profile 'RAIL': ProfSurf 'existing ground'",
        "file: Surfaces (Surface 'EG', Surface 'FG')",
    ):
        assert expected in nu
    # the <CoordinateSystem> is read (compared with job.crs by the job-file reader), not listed here
    assert d.coordinate_system is not None and d.coordinate_system.name == "invented grid"
    assert lx.pick_profile(d, "UP MAIN", None).name == "RAIL FG"
    text = lx.describe(d)
    assert "not used:" in text and "Cant 'rail cant'" in text


def test_pipe_networks_and_extensions_are_listed_as_not_used():
    src = text_of("road_metric.xml").replace(
        "  <Alignments>",
        '  <PipeNetworks><PipeNetwork name="storm 1" pipeNetType="storm"/></PipeNetworks>\n'
        '  <x:Note xmlns:x="urn:example:vendor">private</x:Note>\n  <Alignments>',
    )
    d = lx.parse_landxml(src.encode())
    assert "file: PipeNetworks (PipeNetwork 'storm 1')" in d.not_used
    assert "file: extension element 'Note' (urn:example:vendor)" in d.not_used


def test_describe_summarises_a_file():
    text = lx.describe(read("road_metric.xml"))
    # independent geometry: total length 979.06585 (lines, spirals, arcs added up)
    total = sum(s.length for s in data.road_segments())
    assert f"length {total:.6f}".rstrip("0") in text
    assert "units: m (metres" in text
    assert "alignment 'ROAD 1': stations -120 to " in text
    assert "3 Line, 2 Curve, 2 Spiral" in text
    assert "equation 1: internal 450, ahead 1000" in text
    assert "profile 'ROAD 1 FG': 5 PVIs (3 with vertical curves), internal stations -120 to 700" in text
    assert "CgPoints: 4" in text
    assert "not used: nothing" in text
    # the station at the end runs on from the equation's ahead value
    assert f"to {lx.records.fmt(1000.0 + (-120.0 + total - 450.0))} (internal -120 to" in text
    multi = lx.describe(read("site_ft_multi.xml"))
    assert multi.count("  alignment '") == 3 and "international feet" in multi
    broken = lx.describe(read("broken_gap.xml"))
    assert "geometry error" in broken and "element 5" in broken


# ---------------------------------------------------------------------------
# units
# ---------------------------------------------------------------------------


def test_units_must_match_the_job():
    lx.check_units(read("road_metric.xml"), "m", "[alignment] landxml")
    lx.check_units(read("ramp_usft.xml"), "us_ft", "[alignment] landxml")
    lx.check_units(read("site_ft_multi.xml"), "ft", "[alignment] landxml")
    with pytest.raises(JobFileError, match=r'\[alignment\] landxml: .*linearUnit="meter".*units = \'us_ft\''):
        lx.check_units(read("road_metric.xml"), "us_ft", "[alignment] landxml")
    with pytest.raises(JobFileError, match=r'linearUnit="USSurveyFoot".*US survey feet.*units = \'ft\''):
        lx.check_units(read("ramp_usft.xml"), "ft", "[profile] landxml")
    # the ambiguous "foot" is the international foot: a US-survey-foot job is refused, naming both
    with pytest.raises(JobFileError, match=r'linearUnit="foot".*international feet.*units = \'us_ft\''):
        lx.check_units(read("site_ft_multi.xml"), "us_ft", "[control] landxml")


@pytest.mark.parametrize(
    "unit_xml, message",
    [
        (
            '<Metric areaUnit="squareMeter" linearUnit="millimeter" volumeUnit="cubicMeter" '
            'temperatureUnit="celsius" pressureUnit="milliBars"/>',
            "millimeter",
        ),
        (
            '<Imperial areaUnit="squareFoot" linearUnit="inch" volumeUnit="cubicFeet" '
            'temperatureUnit="fahrenheit" pressureUnit="inHG"/>',
            "inch",
        ),
    ],
)
def test_other_linear_units_are_refused(unit_xml, message):
    src = f'<LandXML date="2026-01-01" time="00:00:00" version="1.2"><Units>{unit_xml}</Units></LandXML>'
    with pytest.raises(JobFileError, match=message):
        lx.parse_landxml(src.encode())


def test_international_foot_spelling_is_accepted():
    src = ('<LandXML date="2026-01-01" time="00:00:00" version="1.2"><Units><Imperial areaUnit="squareFoot" '
           'linearUnit="internationalFoot" volumeUnit="cubicFeet" temperatureUnit="fahrenheit" '
           'pressureUnit="inHG"/></Units></LandXML>')
    assert lx.parse_landxml(src.encode()).units.unit_key == "ft"


# ---------------------------------------------------------------------------
# broken files
# ---------------------------------------------------------------------------


@pytest.mark.parametrize(
    "name, pattern",
    [
        ("broken_gap.xml", r"element 5 \(Line 'T2'\): starts 0\.05 from the end of the element before"),
        ("broken_kink.xml", r"element 2 \(Line 'B'\): starts 10 arc-seconds off the direction"),
        ("broken_curvature.xml", r"element 3 \(Curve 'C'\): starts with radius 300 right .* radius 400 right"),
        ("broken_cubic_spiral.xml", r"element 2 \(Spiral 'SP1'\): spiType = 'cubic'; only clothoid"),
        ("broken_radius.xml", r"element 3 \(Curve 'C1'\): radius = 401 contradicts \|Start-Center\| = 400"),
    ],
)
def test_broken_geometry_names_the_element(name, pattern):
    a = lx.pick_alignment(read(name), None)
    with pytest.raises(GeometryError, match=pattern):
        lx.validate_geometry(a)


def _road_with(old: str, new: str, count: int = 1) -> lx.XAlignment:
    src = text_of("road_metric.xml")
    assert src.count(old) >= count, old
    return lx.pick_alignment(lx.parse_landxml(src.replace(old, new, count).encode()), None)


def _attr(tag_name: str, attr: str) -> str:
    """The text 'attr="value"' of an element of road_metric.xml, found by its name."""
    src = text_of("road_metric.xml")
    line = next(ln for ln in src.splitlines() if f'name="{tag_name}"' in ln and ln.lstrip().startswith("<"))
    start = line.index(f' {attr}="') + 1
    return line[start:line.index('"', start + len(attr) + 2) + 1]


@pytest.mark.parametrize(
    "element, attr, value, pattern",
    [
        ("SP1", "length", "81.0", r"element 2 \(Spiral 'SP1'\): length = 81 contradicts the points, which give 80"),
        ("C1", "length", "174.6", r"element 3 \(Curve 'C1'\): length = 174.6 contradicts"),
        ("C1", "delta", "25.01", r"element 3 \(Curve 'C1'\): delta = 25.01 degrees contradicts"),
        ("C1", "chord", "173.2", r"element 3 \(Curve 'C1'\): chord = 173.2 contradicts"),
        ("T2", "length", "200.5", r"element 5 \(Line 'T2'\): length = 200.5 contradicts"),
        ("SP1", "rot", "ccw", r"element 2 \(Spiral 'SP1'\): the tangents .* against rot"),
        ("C2", "rot", "cw", r"element 6 \(Curve 'C2'\)"),
        # a wrong spiral radius: the points no longer fit a clothoid of that radius and length
        ("SP2", "radiusStart", "390.0", r"element 4 \(Spiral 'SP2'\)"),
    ],
)
def test_attributes_that_contradict_the_points(element, attr, value, pattern):
    old = _attr(element, attr)
    a = _road_with(old, f'{attr}="{value}"')
    with pytest.raises(GeometryError, match=pattern):
        lx.validate_geometry(a)


def test_spiral_end_off_its_clothoid_is_refused():
    # radiusEnd changed and length dropped: only the clothoid fit can notice
    a = _road_with(_attr("SP1", "radiusEnd"), 'radiusEnd="420.0"')
    a = dataclasses.replace(
        a, elements=tuple(dataclasses.replace(e, length_attr=None) for e in a.elements)
    )
    with pytest.raises(GeometryError, match=r"element 2 \(Spiral 'SP1'\): End is .* from the clothoid"):
        lx.validate_geometry(a)


def test_direction_attributes_are_never_used():
    src = text_of("road_metric.xml")
    for attr in ("dir", "dirStart", "dirEnd"):
        src = src.replace(f' {attr}="', f' {attr}="1')  # every direction turned into nonsense
    a = lx.pick_alignment(lx.parse_landxml(src.encode()), None)
    assert_matches_design(lx.validate_geometry(a), data.road_segments(), -120.0)


def _round_points(src: str, decimals: int) -> str:
    def rounded(m: re.Match) -> str:
        return m.group(1) + " ".join(f"{float(v):.{decimals}f}" for v in m.group(2).split()) + m.group(3)

    return re.sub(r"(<(?:Start|End|PI|Center)>)([^<]*)(</)", rounded, src)


@pytest.mark.parametrize(
    "make, plan, start",
    [
        (data.rail_cant, data.RAIL_PLAN, data.RAIL_START),
        (data.ramp_usft, data.RAMP_PLAN, data.RAMP_START),
        (data.road_metric, data.ROAD_PLAN, data.ROAD_START),
    ],
)
def test_coordinates_rounded_to_four_decimals_still_give_the_design(make, plan, start):
    # Files in use often carry 4 decimals.  The tangent deflection alone would put the
    # length of a spiral of radius 1500 off by about 2 mm; fitted to End it stays within
    # the rounding (independent geometry: the design lengths).
    a = lx.pick_alignment(lx.parse_landxml(_round_points(make(), 4).encode()), None)
    for m, s in zip(lx.validate_geometry(a), data.build(*start, plan), strict=True):
        assert m.length == pytest.approx(s.length, abs=2e-4)


def test_delta_without_a_declared_angular_unit():
    # no angularUnit: radians by the schema, or degrees where that fits the points
    src = text_of("site_ft_multi.xml")
    segs = data.build(*data.SITE["SIDE RD"][0], data.SITE["SIDE RD"][2])
    in_radians = f'delta="{data.num(math.radians(segs[1].sweep))}"'
    assert in_radians in src
    d = lx.parse_landxml(src.replace(in_radians, 'delta="20.0"').encode())
    arc = lx.pick_alignment(d, "SIDE RD").elements[1]
    assert isinstance(arc, lx.XCurve) and arc.delta_attr == 20.0
    lx.validate_geometry(lx.pick_alignment(d, "SIDE RD"))
    d = lx.parse_landxml(src.replace(in_radians, 'delta="21.0"').encode())
    with pytest.raises(GeometryError, match=r"element 2 \(Curve\): delta = 21 degrees contradicts"):
        lx.validate_geometry(lx.pick_alignment(d, "SIDE RD"))


def test_zero_length_line_between_elements_is_accepted():
    a = lx.pick_alignment(read("road_metric.xml"), None)
    sp1 = a.elements[1]
    zero = lx.XLine(0, "Z", sp1.start_n, sp1.start_e, sp1.start_n, sp1.start_e)
    a = dataclasses.replace(a, elements=a.elements[:1] + (zero,) + a.elements[1:])
    measured = lx.validate_geometry(a)
    assert measured[1].length == 0.0 and measured[1].az_start == measured[0].az_end


def test_decreasing_stationing_after_an_equation():
    src = text_of("road_metric.xml").replace('staIncrement="increasing"', 'staIncrement="decreasing"')
    d = lx.parse_landxml(src.encode())
    a = lx.pick_alignment(d, None)
    assert a.equations == (lx.XEquation(450.0, 1000.0, None, -1),)
    # schema: staIncrement "decreasing": stations fall ahead of the equation
    assert lx.station_at(a, 500.0) == pytest.approx(950.0)
    assert "ahead 1000, decreasing" in lx.describe(d)
    xml = write_road(equations=a.equations)
    assert lx.pick_alignment(lx.parse_landxml(xml), None).equations == (lx.XEquation(450.0, 1000.0, 450.0, -1),)
    assert b'staIncrement="decreasing"' in xml


def test_equations_that_contradict_the_stationing():
    a = lx.pick_alignment(read("ramp_usft.xml"), None)
    bad = dataclasses.replace(a, equations=(lx.XEquation(1400.0, 1350.0, 1410.0),))
    with pytest.raises(GeometryError, match=r"StaEquation 1 .*staBack = 1410 but the stationing reaches 1400"):
        lx.validate_geometry(bad)
    late = dataclasses.replace(a, equations=(lx.XEquation(99999.0, 0.0),))
    with pytest.raises(GeometryError, match=r"StaEquation 1 .*not inside the alignment"):
        lx.validate_geometry(late)
    unordered = dataclasses.replace(a, equations=(lx.XEquation(2200.0, 5.0), lx.XEquation(1400.0, 1.0)))
    with pytest.raises(GeometryError, match=r"StaEquation 2 .*not after"):
        lx.validate_geometry(unordered)


def test_alignment_length_attribute_is_checked():
    a = lx.pick_alignment(read("road_metric.xml"), None)
    with pytest.raises(GeometryError, match=r"alignment 'ROAD 1': length = 980 contradicts its elements"):
        lx.validate_geometry(dataclasses.replace(a, length_attr=980.0))


def test_irregular_lines_cannot_be_staked():
    src = text_of("broken_kink.xml").replace(
        "      </CoordGeom>",
        '        <IrregularLine name="ditch"><Start>0 0</Start><End>1 1</End>'
        "<PntList2D>0 0 1 1</PntList2D></IrregularLine>\n      </CoordGeom>",
    )
    a = lx.pick_alignment(lx.parse_landxml(src.encode()), None)
    with pytest.raises(GeometryError, match=r"element 3 \(IrregularLine 'ditch'\) cannot be staked"):
        lx.validate_geometry(a)


def test_unknown_alignment_name():
    with pytest.raises(JobFileError, match=r"'RAMP B': no such <Alignment>; the file has 'RAMP A'"):
        lx.pick_alignment(read("ramp_usft.xml"), "RAMP B")


def test_malformed_xml_names_the_line():
    with pytest.raises(JobFileError, match=r"broken_malformed\.xml: malformed XML at line 9, column \d+: mismatched tag"):
        read("broken_malformed.xml")


@pytest.mark.parametrize("name", ["broken_billion_laughs.xml", "broken_external_entity.xml"])
def test_entity_attacks_are_refused(name):
    with pytest.raises(JobFileError, match=r"refused .* at line 2: document type declarations") as info:
        read(name)
    assert "root:" not in str(info.value)  # nothing of /etc/passwd leaks into the message


def test_oversized_and_non_regular_files_are_refused_unread(tmp_path):
    big = tmp_path / "big.xml"
    with open(big, "wb") as fh:  # sparse: no disk is used
        fh.truncate(lx.MAX_FILE_BYTES + 1)
    with pytest.raises(JobFileError, match="the limit is 256 MiB"):
        lx.read_landxml(big)
    with pytest.raises(JobFileError, match="is a folder, not a file"):
        lx.read_landxml(tmp_path)
    fifo = tmp_path / "pipe.xml"
    os.mkfifo(fifo)
    with pytest.raises(JobFileError, match="not a regular file"):
        lx.read_landxml(fifo)  # would block if it were opened
    with pytest.raises(JobFileError, match="missing.xml': not found"):
        lx.read_landxml(tmp_path / "missing.xml")


def test_other_namespaces_and_roots_are_refused():
    with pytest.raises(JobFileError, match="not <LandXML> of LandXML 1.2"):
        lx.parse_landxml(b'<LandXML xmlns="http://www.landxml.org/schema/LandXML-1.1"/>')
    with pytest.raises(JobFileError, match="not <LandXML> of LandXML 1.2"):
        lx.parse_landxml(b"<Project/>")
    with pytest.raises(JobFileError, match="no <Units>"):
        lx.parse_landxml(b'<LandXML date="2026-01-01" time="00:00:00" version="1.2"/>')


def test_bad_content_is_named():
    src = text_of("road_metric.xml")
    with pytest.raises(JobFileError, match=r"pntRef 'NOPE' names no CgPoint"):
        lx.parse_landxml(src.replace('pntRef="POB"', 'pntRef="NOPE"').encode())
    with pytest.raises(JobFileError, match=r"element 3 \(Curve 'C1'\) rot = 'left'"):
        lx.parse_landxml(src.replace('rot="cw" chord', 'rot="left" chord', 1).encode())
    with pytest.raises(JobFileError, match=r"CgPoint 'CP101' = .*expected 'northing easting"):
        lx.parse_landxml(src.replace("481300.25 312.4", "481300.25 312.4 7 8").encode())
    with pytest.raises(JobFileError, match=r"staStart = 'minus ten': not a number"):
        lx.parse_landxml(src.replace('staStart="-120.0"', 'staStart="minus ten"').encode())
    with pytest.raises(JobFileError, match=r"PVI 5: station 40.0 does not increase"):
        lx.parse_landxml(src.replace("<PVI>700.0 99.0</PVI>", "<PVI>40.0 99.0</PVI>").encode())


# ---------------------------------------------------------------------------
# writing
# ---------------------------------------------------------------------------

ROAD_PVIS = (
    lx.XPVI(-120.0, 100.0),
    lx.XPVI(50.0, 102.5, "para", 80.0, 40.0, 40.0),
    lx.XPVI(250.0, 98.0, "unsym", 160.0, 60.0, 100.0),
    lx.XPVI(450.0, 101.0, "circ", data.circ_length(data.ROAD_PVIS, 3), None, None, 3000.0),
    lx.XPVI(700.0, 99.0),
)
STAKES = (
    lx.XPoint("1001", 5123460.0, 481240.0, 100.25, "CL"),
    lx.XPoint("1002", 5123470.5, 481250.5, None, "RT 5.0"),
    lx.XPoint("1003", 5123480.0, 481260.0, 100.5),
)


def write_road(units="m", **kw) -> bytes:
    segs = data.road_segments()
    args = dict(
        units_key=units,
        alignment_name="ROAD 1",
        sta_start=-120.0,
        elements=[to_x(s, i) for i, s in enumerate(segs, 1)],
        equations=[lx.XEquation(450.0, 1000.0)],
        profile_pvis=ROAD_PVIS,
        points=STAKES,
        application_name="stakeout",
        source_note="job road.toml",
    )
    args.update(kw)
    return lx.write_landxml(**args)


def write_ramp() -> bytes:
    segs = data.ramp_segments()
    return lx.write_landxml(
        "us_ft", "RAMP A", 1000.0, [to_x(s, i) for i, s in enumerate(segs, 1)],
        [lx.XEquation(i, ah, b) for i, b, ah in data.RAMP_EQS],
        [lx.XPVI(1000.0, 520.0), lx.XPVI(1500.0, 535.0, "para", 400.0, 200.0, 200.0), lx.XPVI(3000.0, 540.0)],
        [], "stakeout", "job ramp.toml", profile_name="RAMP A FG",
    )


@pytest.mark.parametrize("make", [write_road, write_ramp, lambda: write_road("ft"), lambda: write_road("us_ft")])
def test_written_files_are_schema_valid(schema, make):
    from lxml import etree

    # schema: lxml validates the export against LandXML-1.2.xsd
    doc = etree.fromstring(make())
    assert schema.validate(doc), schema.error_log


def test_round_trip_gives_the_same_geometry():
    segs = data.road_segments()
    d = lx.parse_landxml(write_road())
    assert d.units.unit_key == "m"
    a = lx.pick_alignment(d, "ROAD 1")
    assert a.sta_start == -120.0
    for got, want in zip(a.elements, [to_x(s, i) for i, s in enumerate(segs, 1)]):
        assert type(got) is type(want)
        for f in dataclasses.fields(want):
            if f.name.endswith("_attr"):
                continue
            w, g = getattr(want, f.name), getattr(got, f.name)
            assert g == pytest.approx(w, abs=1e-9) if isinstance(w, float) else g == w
    assert_matches_design(lx.validate_geometry(a), segs, -120.0)
    # staBack is filled from the stationing
    assert a.equations == (lx.XEquation(450.0, 1000.0, 450.0, 1),)
    assert lx.pick_profile(d, "ROAD 1", None).pvis == ROAD_PVIS
    assert d.points == STAKES
    ramp = lx.pick_alignment(lx.parse_landxml(write_ramp()), "RAMP A")
    assert ramp.equations == tuple(lx.XEquation(i, ah, b) for i, b, ah in data.RAMP_EQS)
    assert_matches_design(lx.validate_geometry(ramp), data.ramp_segments(), 1000.0)


@pytest.mark.parametrize("units, linear", [("m", "meter"), ("ft", "foot"), ("us_ft", "USSurveyFoot")])
def test_written_units_read_back(units, linear):
    d = lx.parse_landxml(write_road(units))
    assert (d.units.unit_key, d.units.linear_unit) == (units, linear)
    assert d.units.angular_unit == d.units.direction_unit == "decimal degrees"


def test_written_attributes_agree_with_the_design():
    # derived lengths, stations, radii and chords carry the CSVs' 4 decimals (issue 25 item 11)
    from lxml import etree

    segs = data.road_segments()
    doc = etree.fromstring(write_road())
    ns = {"l": lx.LANDXML_NS}
    els = doc.findall(".//l:CoordGeom/*", ns)
    assert [e.tag.split("}")[1] for e in els] == ["Line", "Spiral", "Curve", "Spiral", "Line", "Curve", "Line"]
    al = doc.find(".//l:Alignment", ns)
    assert float(al.get("length")) == pytest.approx(sum(s.length for s in segs), abs=5.1e-5)
    sta = -120.0
    for e, s in zip(els, segs):
        # independent geometry (lxml reading): lengths, stations, radii, angles
        assert float(e.get("length")) == pytest.approx(s.length, abs=5.1e-5)
        assert float(e.get("staStart")) == pytest.approx(sta, abs=5.1e-5)
        sta += s.length
        # schema <Units> documentation: directions counter-clockwise from north
        first = e.get("dir") or e.get("dirStart")
        assert angle_diff(float(first), (360.0 - s.az_start) % 360.0) < 1e-8
        if e.get("dirEnd") is not None:
            assert angle_diff(float(e.get("dirEnd")), (360.0 - s.az_end) % 360.0) < 1e-8
        if s.kind == "arc":
            assert float(e.get("radius")) == pytest.approx(s.radius, abs=5.1e-5)
            assert float(e.get("delta")) == pytest.approx(s.sweep, abs=1e-8)
            chord = 2 * s.radius * math.sin(math.radians(s.sweep) / 2)
            assert float(e.get("chord")) == pytest.approx(chord, abs=5.1e-5)
            assert e.get("rot") == ("cw" if s.turn == 1 else "ccw")
        if s.kind == "spiral":
            assert e.get("spiType") == "clothoid"
            assert e.get("radiusStart") == ("INF" if s.rs is None else repr(s.rs))
            assert e.get("radiusEnd") == ("INF" if s.re is None else repr(s.re))
            k0 = 0 if s.rs is None else 1 / s.rs
            k1 = 0 if s.re is None else 1 / s.re
            # common practice: theta = L (1/Rs + 1/Re) / 2 for a clothoid
            assert float(e.get("theta")) == pytest.approx(math.degrees(s.length * (k0 + k1) / 2), abs=1e-7)
    pts = doc.findall(".//l:CgPoint", ns)
    # CgPoints with 6 decimals, as Python's own formatting gives them
    assert [(p.get("name"), p.get("code"), p.text) for p in pts] == [
        ("1001", "CL", "5123460.000000 481240.000000 100.250000"),
        ("1002", "RT 5.0", "5123470.500000 481250.500000"),
        ("1003", None, "5123480.000000 481260.000000 100.500000"),
    ]
    circ = doc.find(".//l:CircCurve", ns)
    assert (circ.text, circ.get("radius")) == ("450.0 101.0", "3000.0")
    assert doc.find(".//l:UnsymParaCurve", ns).attrib == {"lengthIn": "60.0", "lengthOut": "100.0"}


def test_writer_is_byte_identical_and_takes_its_date_from_the_caller():
    first = write_road()
    assert first == write_road()
    assert b'date="1970-01-01" time="00:00:00"' in first
    stamped = write_road(created=dt.datetime(2026, 3, 4, 5, 6, 7))
    assert b'date="2026-03-04" time="05:06:07"' in stamped
    code = (
        "import sys; sys.path.insert(0, sys.argv[1]);"
        "from tests.test_landxml import write_road; sys.stdout.buffer.write(write_road())"
    )
    outs = set()
    for seed in ("1", "12345"):
        env = {**os.environ, "PYTHONHASHSEED": seed}
        run = subprocess.run([sys.executable, "-c", code, str(ROOT)], capture_output=True, env=env, cwd=ROOT, check=False)
        assert run.returncode == 0, run.stderr.decode()
        outs.add(run.stdout)
    assert outs == {first}


def test_point_names_and_codes_with_markup_characters_round_trip(schema):
    from lxml import etree

    odd = (
        lx.XPoint('A&B <"1">', 1.0, 2.0, 3.0, "CL & 'RT'\t5", "line\nbreak"),
        lx.XPoint("é-ü 2", -1.5, 2e-6, None, ">"),
    )
    xml = write_road(points=odd)
    assert schema.validate(etree.fromstring(xml)), schema.error_log  # schema (lxml)
    assert [(p.get("name"), p.get("code")) for p in etree.fromstring(xml).iter(f"{{{lx.LANDXML_NS}}}CgPoint")] == [
        ('A&B <"1">', "CL & 'RT'\t5"),
        ("é-ü 2", ">"),
    ]  # lxml reads back the same text
    assert lx.parse_landxml(xml).points == odd


@settings(max_examples=60, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.floats(-1e9, 1e9, allow_nan=False),
            st.floats(-1e9, 1e9, allow_nan=False),
            st.one_of(st.none(), st.floats(-1e4, 1e4, allow_nan=False)),
            st.text(st.characters(blacklist_categories=["Cs", "Cc", "Cn", "Co"]) | st.sampled_from("&<>\"\t\n\r"), max_size=6),
        ),
        min_size=1,
        max_size=30,
    )
)
def test_point_columns_are_formatted_like_python(rows):
    # the numpy layout of CgPoints against Python's "%.6f" formatting, row by row
    pts = lx.XPoints(
        [str(i) for i in range(len(rows))],
        np.array([r[0] for r in rows]),
        np.array([r[1] for r in rows]),
        np.array([np.nan if r[2] is None else r[2] for r in rows]),
        [r[3] for r in rows],
    )
    xml = write_road(points=pts)
    got = lx.parse_landxml(xml).points
    for (n, e, z, code), p in zip(rows, got, strict=True):
        # Python's formatting, read back as the reader does (float of the text)
        assert (p.northing, p.easting) == (float(f"{n:.6f}"), float(f"{e:.6f}"))
        assert p.elevation == (None if z is None else float(f"{z:.6f}"))
        assert p.code == code
    text = xml.decode()
    for i, (n, e, z, _) in enumerate(rows):
        tail = "" if z is None else f" {z:.6f}".replace(" -0.000000", " 0.000000")
        coords = f"{n:.6f} {e:.6f}".replace("-0.000000", "0.000000") + tail
        assert f'name="{i}"' in text and f">{coords}</CgPoint>" in text


def test_writer_refuses_what_it_cannot_write_faithfully():
    segs = data.road_segments()
    els = [to_x(s, i) for i, s in enumerate(segs, 1)]
    moved = dataclasses.replace(els[4], start_n=els[4].start_n + 0.01)
    with pytest.raises(GeometryError, match=r"element 5 \(Line 'T2'\): starts 0.01"):
        write_road(elements=els[:4] + [moved] + els[5:])
    with pytest.raises(JobFileError, match=r"point '1001': written twice"):
        write_road(points=STAKES + (STAKES[0],))
    with pytest.raises(JobFileError, match="character XML cannot carry"):
        write_road(points=(lx.XPoint("a\x01", 1.0, 2.0),))
    with pytest.raises(JobFileError, match="units = 'yd'"):
        write_road("yd")


# ---------------------------------------------------------------------------
# property: random alignments round-trip through the writer and the reader
# ---------------------------------------------------------------------------

line_step = st.builds(lambda L: [("line", "", L)], st.floats(5.0, 800.0))
arc_step = st.builds(
    lambda R, sweep, turn: [("arc", "", R, sweep, turn)],
    st.floats(30.0, 3000.0), st.floats(1.0, 300.0), st.sampled_from([1, -1]),
)


@st.composite
def spiral_group(draw):
    """Spiral from tangent, arc, spiral to tangent; sometimes a spiral between two arcs."""
    turn = draw(st.sampled_from([1, -1]))
    r = draw(st.floats(100.0, 3000.0))
    l1 = draw(st.floats(10.0, r))  # theta <= 0.5 rad
    steps = [("spiral", "", l1, None, r, turn), ("arc", "", r, draw(st.floats(0.5, 60.0)), turn)]
    if draw(st.booleans()):
        r2 = draw(st.floats(100.0, 3000.0).filter(lambda x: abs(x - r) > 1.0))
        steps += [("spiral", "", draw(st.floats(10.0, min(r, r2))), r, r2, turn),
                  ("arc", "", r2, draw(st.floats(0.5, 60.0)), turn)]
        r = r2
    steps.append(("spiral", "", draw(st.floats(10.0, r)), r, None, turn))
    return steps


@st.composite
def random_alignment(draw):
    plan = list(draw(line_step))
    for group in draw(st.lists(st.one_of(arc_step, spiral_group()), min_size=1, max_size=3)):
        plan += group + draw(line_step)
    start = (draw(st.floats(-1e6, 1e7)), draw(st.floats(-1e6, 1e7)), draw(st.floats(0.0, 359.999)))
    sta = draw(st.floats(-5000.0, 50000.0))
    return start, sta, plan


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(random_alignment(), st.sampled_from(["m", "ft", "us_ft"]))
def test_random_alignments_round_trip(case, units):
    start, sta, plan = case
    segs = data.build(*start, plan)
    elements = [to_x(s, i) for i, s in enumerate(segs, 1)]
    xml = lx.write_landxml(units, "R", sta, elements, [], None, [], "stakeout", "")
    from lxml import etree

    assert landxml_schema().validate(etree.fromstring(xml))  # schema (lxml)
    a = lx.pick_alignment(lx.parse_landxml(xml), "R")
    # exact round trip of the points; the measured geometry matches the independent design
    assert [dataclasses.replace(e, **{f: None for f in _attrs(e)}) for e in a.elements] == elements
    assert_matches_design(lx.validate_geometry(a), segs, sta)


def _attrs(el) -> list[str]:
    return [f.name for f in dataclasses.fields(el) if f.name.endswith("_attr")]


def test_unknown_element_kind_is_refused_not_written_as_a_line():
    # an element record the package does not know fails loudly in the per-kind table, in the writer
    # and in the export of a design
    from dataclasses import dataclass

    from stakeout.errors import GeometryError

    @dataclass(frozen=True)
    class XBloss(lx.XLine):
        pass

    with pytest.raises(GeometryError, match="XBloss"):
        lx.kind_of(XBloss(1, "", 0.0, 0.0, 10.0, 0.0))
    with pytest.raises(GeometryError, match="XBloss"):
        lx.write_landxml("m", "A", 0.0, [XBloss(1, "", 0.0, 0.0, 10.0, 0.0)], [], None, [], "t", "")


def test_export_refuses_an_element_kind_it_does_not_know(monkeypatch):
    from dataclasses import dataclass

    from stakeout.alignment import Line
    from stakeout.errors import OutputError
    from stakeout import exported

    @dataclass(frozen=True)
    class Bloss(Line):
        pass

    class FakeDesign:
        class alignment:  # noqa: N801 - a stand-in for Design.alignment
            elements = (Bloss.follow(0.0, 0.0, 0.0, 0.0, 10.0),)

    with pytest.raises(OutputError, match="alignment.xml: element 1 .*'Bloss'"):
        exported.landxml_elements(FakeDesign.alignment.elements)
