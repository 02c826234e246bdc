"""Listed points (``staking.points``) as stakes of the build: the point file, stations, setout,
alignment.xml, the pictures and the check (job-file contract, "Points by station and offset").

References: a skewed stake by hand (the point is the centreline point plus the offset along the
line turned clockwise by the skew from the square line: plane trigonometry); elevations by linear
interpolation between offset lines (common practice); LandXML 1.2 schema applied by lxml.
"""

from __future__ import annotations

import csv
import io
import math

import pytest
from typer.testing import CliRunner

from stakeout.cli import app

runner = CliRunner()

JOB = """format = 1
[job]
name = "Culverts and signs"
units = "m"
[alignment]
name = "RD"
start = {{ station = "0+000", northing = 1000.0, easting = 2000.0 }}
azimuth = "90-00-00"
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 50.0
elevation = 52.0
points = "structures.csv"
offsets = [{{ offset = -6.0, code = "EPL", cross_slope = -2.0 }}, {{ offset = 0.0, code = "CL" }}, {{ offset = 6.0, code = "EPR", cross_slope = -2.0 }}]
[[control.point]]
id = "{control}"
northing = 1050.0
easting = 2050.0
[setup]
occupied = "{control}"
backsight_azimuth = "0-00-00"
[check]
horizontal_tolerance = 0.02
"""

LIST = """station,offset,code,id,elevation,skew,description
0+030,8.0,MH,,,,"manhole, north"
0+010,-3.0,INL,,,30,inlet skewed
0+070,0.0,SIGN,S-1,53.25,,sign post
"""


def _rows(text):
    return list(csv.DictReader(io.StringIO(text)))


def _job(tmp_path, control="CP1", listing=LIST):
    (tmp_path / "structures.csv").write_text(listing, encoding="utf-8")
    job = tmp_path / "job.toml"
    job.write_text(JOB.format(control=control), encoding="utf-8")
    return job


def _build(tmp_path, job, only):
    out = tmp_path / "out"
    r = runner.invoke(app, ["build", str(job), "--out", str(out), "--only", only])
    assert r.exit_code == 0, r.output
    return {p.name: p.read_text(encoding="utf-8") for p in out.iterdir()}


def test_listed_points_in_the_point_file_and_stations(tmp_path):
    files = _build(tmp_path, _job(tmp_path), "points,stations,setout")
    pts = _rows(files["points.csv"])
    # the 9 grid stakes, then the rows without an id by station then offset, then the row with its own id
    assert [r["point"] for r in pts] == [str(k) for k in range(1, 12)] + ["S-1"]
    assert [r["description"] for r in pts[9:]] == ["inlet skewed", "manhole, north", "sign post"]
    sts = {r["point"]: r for r in _rows(files["stations.csv"])}
    # skew 30 degrees clockwise from the square line (due south for this eastbound road), offset -3 along
    # it: N = 1000 + 3 cos 30, E = 2010 + 3 sin 30 (plane trigonometry, by hand)
    inlet = sts["10"]
    assert float(inlet["northing"]) == pytest.approx(1000.0 + 3.0 * math.cos(math.radians(30.0)), abs=1e-4)
    assert float(inlet["easting"]) == pytest.approx(2011.5, abs=1e-4)
    assert float(inlet["station"]) == pytest.approx(11.5, abs=1e-4)  # where it lies, not the row's 0+010
    assert float(inlet["offset"]) == pytest.approx(-3.0 * math.cos(math.radians(30.0)), abs=1e-4)
    # between CL (52.00) and EPL (51.88) linearly; the manhole beyond EPR on its -2 % segment continued
    assert float(inlet["elevation"]) == pytest.approx(52.0 - 0.02 * 3.0 * math.cos(math.radians(30.0)), abs=1e-4)
    assert float(sts["11"]["elevation"]) == pytest.approx(52.0 - 0.02 * 8.0, abs=1e-4)
    assert sts["S-1"]["elevation"] == "53.2500" and sts["S-1"]["feature"] == "" and sts["S-1"]["code"] == "SIGN"
    assert [r["point"] for r in _rows(files["setout.csv"])] == [r["point"] for r in pts]


def test_listed_points_in_alignment_xml_and_pictures(tmp_path):
    from lxml import etree

    from tests.helpers import landxml_schema

    files = _build(tmp_path, _job(tmp_path), "landxml,picture")
    doc = etree.fromstring(files["alignment.xml"].encode("utf-8"))
    assert landxml_schema().validate(doc), landxml_schema().error_log  # LandXML 1.2 schema, by lxml
    ns = {"x": "http://www.landxml.org/schema/LandXML-1.2"}
    cg = {p.get("name"): p.get("code") for p in doc.iterfind(".//x:CgPoint", ns)}
    assert cg["S-1"] == "SIGN" and cg["10"] == "INL" and cg["CP1"] == "control"
    svg = etree.fromstring(files["plan.svg"].encode("utf-8"))  # well-formed (lxml)
    assert any(e.get("class") == "so-listed" for e in svg.iter("{http://www.w3.org/2000/svg}path"))


def test_shots_of_listed_points_are_matched(tmp_path):
    job = _job(tmp_path)
    shots = tmp_path / "shots.csv"
    shots.write_text("S-1,1000.0050,2070.0000,53.25,SIGN\n11,992.0000,2030.0000,,MH\n", encoding="utf-8")
    r = runner.invoke(app, ["check", str(job), str(shots), "--out", str(tmp_path / "chk")])
    assert r.exit_code == 0, r.output
    rows = _rows((tmp_path / "chk" / "check.csv").read_text(encoding="utf-8"))
    assert [(x["design_point"], x["status"], x["matched_by"]) for x in rows] == [("S-1", "ok", "number"),
                                                                                 ("11", "ok", "number")]


@pytest.mark.parametrize("control, listing, words", [
    ("S-1", LIST, "'S-1' is also a stake's"),
    ("CP1", LIST.replace(",S-1,", ",4,"), "the id '4' is also the number of one of the alignment's stakes"),
])
def test_listed_ids_that_name_another_point_refused(tmp_path, control, listing, words):
    r = runner.invoke(app, ["build", str(_job(tmp_path, control, listing)), "--out", str(tmp_path / "out")])
    assert r.exit_code == 2, r.output
    assert words in r.output and not (tmp_path / "out").exists()
