"""Several alignments in one job (``[[alignment]]``, job-file contract "Several alignments in one job").

References: each alignment of a job with several gives exactly the rows it
gives alone (the contract: outputs grouped by alignment in job order, each
alignment's numbering its own); LandXML 1.2 schema applied by lxml; the
drawing read back with ezdxf.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from stakeout.cli import app

runner = CliRunner()

HEAD = """format = 1
[job]
name = "Interchange test"
units = "m"
"""

CONTROL = """[[control.point]]
id = "CP1"
northing = 1030.0
easting = 2050.0
elevation = 55.0
[[control.point]]
id = "CP2"
northing = 1030.0
easting = 1990.0
[[control.point]]
id = "CP3"
northing = 1150.0
easting = 2100.0
"""


def _alignment(name: str, n0: float, e0: float, az: str, arc_radius: float, first: int, interval: float,
               prefix: str = "", listed: bool = True) -> str:
    """One alignment's sections: ``[[alignment]]`` entries (``listed``) or the single form."""
    a = "[[alignment]]" if listed else "[alignment]"
    sub = "alignment." if listed else ""
    return f"""{a}
name = "{name}"
start = {{ station = "1+000", northing = {n0}, easting = {e0} }}
azimuth = "{az}"
[[alignment.element]]
kind = "line"
length = 40.0
[[alignment.element]]
kind = "arc"
radius = {arc_radius}
length = 30.0
turn = "left"
[{sub}staking]
interval = {interval}
first_point = {first}
point_prefix = "{prefix}"
offsets = [{{ offset = -4.0, code = "L" }}, {{ offset = 0.0, code = "CL" }}, {{ offset = 4.0, code = "R" }}]
[{sub}profile]
[[{sub}profile.pvi]]
station = "1+000"
elevation = 50.0
[[{sub}profile.pvi]]
station = "1+070"
elevation = 51.4
"""


def _build(tmp_path: Path, text: str, name: str, only: str | None = None) -> dict[str, str]:
    job = tmp_path / f"{name}.toml"
    job.write_text(text, encoding="utf-8")
    out = tmp_path / name
    args = ["build", str(job), "--out", str(out)] + (["--only", only] if only else [])
    r = runner.invoke(app, args)
    assert r.exit_code == 0, r.output
    return {p.name: p.read_text(encoding="utf-8") for p in out.iterdir() if p.suffix != ".png"}


def _rows(text: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(text)))


ROADS = [("MAIN", 1000.0, 2000.0, "90-00-00", 80.0, 1, 10.0),
         ("RAMP-A", 1000.0, 2050.0, "0-00-00", 60.0, 500, 5.0),
         ("LOOP-B", 1100.0, 2100.0, "200-00-00", 45.0, 900, 7.5)]


def test_each_alignment_gives_what_it_gives_alone(tmp_path):
    together = _build(tmp_path, HEAD + "".join(_alignment(*r) for r in ROADS), "all",
                      "points,stations,curves,elements,profile")
    alone = [_build(tmp_path, HEAD + _alignment(*r, listed=False), r[0], "points,stations,curves,elements,profile")
             for r in ROADS]
    for name in ("points.csv", "stations.csv", "curves.csv", "elements.csv", "profile.csv"):
        head = together[name].split("\n", 1)[0]
        assert all(a[name].split("\n", 1)[0] == head for a in alone)
        # grouped by alignment in job order, each alignment's rows exactly as alone (outputs contract)
        assert together[name] == head + "\n" + "".join(a[name].split("\n", 1)[1] for a in alone)
    assert [r["alignment"] for r in _rows(together["stations.csv"])] == sum(
        ([r[0]] * len(_rows(a["stations.csv"])) for r, a in zip(ROADS, alone)), [])


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(st.tuples(st.floats(20.0, 200.0), st.sampled_from(["0-00-00", "45-00-00", "135-30-00", "300-00-00"]),
                          st.sampled_from([5.0, 7.5, 10.0, 20.0])), min_size=2, max_size=3))
def test_property_several_equal_alone(tmp_path, roads):
    """Property over random jobs: the rows of each alignment of a job with several are its rows alone."""
    specs = [(f"A{k}", 1000.0 + 37.0 * k, 2000.0 - 11.0 * k, az, radius, 1 + 1000 * k, step)
             for k, (radius, az, step) in enumerate(roads)]
    folder = tmp_path / f"case{abs(hash(tuple(roads))) % 10**8}"
    folder.mkdir()
    together = _build(folder, HEAD + "".join(_alignment(*s) for s in specs), "all", "points,stations")
    for name in ("points.csv", "stations.csv"):
        parts = [_build(folder, HEAD + _alignment(*s, listed=False), f"{s[0]}-{name[:3]}", name.split(".")[0])[name]
                 for s in specs]
        assert together[name] == parts[0] + "".join(p.split("\n", 1)[1] for p in parts[1:])


def test_alignment_xml_holds_every_alignment_and_the_control_once(tmp_path):
    from lxml import etree

    from tests.helpers import landxml_schema

    files = _build(tmp_path, HEAD + CONTROL + "".join(_alignment(*r) for r in ROADS), "all", "points,landxml")
    doc = etree.fromstring(files["alignment.xml"].encode("utf-8"))
    assert landxml_schema().validate(doc), landxml_schema().error_log  # LandXML 1.2 schema, by lxml
    ns = {"x": "http://www.landxml.org/schema/LandXML-1.2"}
    assert [a.get("name") for a in doc.iterfind(".//x:Alignment", ns)] == [r[0] for r in ROADS]
    assert len(doc.findall(".//x:Alignment/x:Profile", ns)) == 3
    names = [p.get("name") for p in doc.iterfind(".//x:CgPoint", ns)]
    stakes = [r["point"] for r in _rows(files["points.csv"])]
    assert names == stakes + ["CP1", "CP2", "CP3"]  # every stake, then the control once each, in the job's order


def test_one_drawing_with_every_alignment(tmp_path):
    import ezdxf

    files = _build(tmp_path, HEAD + CONTROL + "".join(_alignment(*r) for r in ROADS), "all", "points,dxf")
    doc = ezdxf.readfile(tmp_path / "all" / "plan.dxf")  # read back with ezdxf
    msp = doc.modelspace()
    stakes = {(round(p.dxf.location.x, 4), round(p.dxf.location.y, 4)) for p in msp.query("POINT[layer=='SO-STAKE']")}
    rows = _rows(files["points.csv"])
    assert {(float(r["easting"]), float(r["northing"])) for r in rows} == stakes
    numbers = [t.dxf.text for t in msp.query("TEXT[layer=='SO-STAKE-NO']")]
    assert sorted(numbers) == sorted(r["point"] for r in rows)
    assert len(msp.query("LWPOLYLINE[layer=='SO-CL']")) + len(msp.query("LINE[layer=='SO-CL']")) >= 3


def test_setups_serve_every_stake_of_every_alignment(tmp_path):
    setup = '[setup]\noccupied = "auto"\nmax_distance = 200.0\nmax_backsight = 300.0\n'
    files = _build(tmp_path, HEAD + CONTROL + setup + "".join(_alignment(*r) for r in ROADS), "all",
                   "points,setout,sheet")
    pts = _rows(files["points.csv"])
    setout = _rows(files["setout.csv"])
    assert [r["point"] for r in setout] == [r["point"] for r in pts]
    occupied = {r["occupied"] for r in setout}
    assert occupied <= {"CP1", "CP2", "CP3"}
    sheet = files["setout.txt"]
    assert "alignments MAIN, RAMP-A, LOOP-B" in sheet
    # one section per setup, each holding the stakes it serves on every alignment, point beside alignment
    by_setup: dict[str, list[str]] = {}
    for r in setout:
        by_setup.setdefault(r["setup"], []).append(r["point"])
    records = [line.split() for line in sheet.splitlines()]
    names = ("MAIN", "RAMP-A", "LOOP-B")
    for pid in (r["point"] for r in pts):
        assert sum(1 for x in records if x[:1] == [pid] and len(x) > 2 and x[1] in names) == 1
    assert sheet.count("SETUP ") == len(by_setup)


@pytest.mark.parametrize("change, words", [
    (lambda t: t.replace('name = "RAMP-A"', 'name = "MAIN"'), "alignment[1].name = 'MAIN': alignment[0] has this name"),
    (lambda t: t.replace("first_point = 500", "first_point = 5"),
     "alignment 'RAMP-A' numbers its stakes 5 to"),
    (lambda t: t + "[staking]\ninterval = 5.0\n", "staking: in a job with several alignments"),
    (lambda t: t.replace("interval = 5.0", "interval = -5.0"), "alignment[1] ('RAMP-A'): staking.interval"),
])
def test_bad_several_alignment_jobs(tmp_path, change, words):
    job = tmp_path / "job.toml"
    job.write_text(change(HEAD + "".join(_alignment(*r) for r in ROADS[:2])), encoding="utf-8")
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "out")])
    assert r.exit_code == 2, r.output
    assert words in r.output and "Traceback" not in r.output
    assert not (tmp_path / "out").exists()


def test_station_ranges_refused_with_several_alignments(tmp_path):
    setup = """[[setup.station]]
occupied = "CP1"
backsight = "CP2"
from_station = "1+000"
to_station = "1+070"
"""
    job = tmp_path / "job.toml"
    job.write_text(HEAD + CONTROL + setup + "".join(_alignment(*r) for r in ROADS[:2]), encoding="utf-8")
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "out")])
    assert r.exit_code == 2, r.output
    assert "station ranges name stations of one alignment" in r.output


def test_check_matches_shots_on_every_alignment(tmp_path):
    """stakeout check of a job with several alignments: each shot against every alignment's stakes and the
    control, check.csv naming the alignment of the stake matched (outputs contract), restake.csv over all."""
    job = tmp_path / "job.toml"
    job.write_text(HEAD + CONTROL + "[check]\nhorizontal_tolerance = 0.02\n" + "".join(_alignment(*r) for r in ROADS),
                   encoding="utf-8")
    files = _build(tmp_path, job.read_text(encoding="utf-8"), "b", "points,stations")
    sts = {r["point"]: r for r in _rows(files["stations.csv"])}
    picks = ["5", "503", "905"]  # one stake of each alignment
    lines = [f"{p},{float(sts[p]['northing']) + 0.004:.4f},{sts[p]['easting']},,STK" for p in picks]
    lines.append("CP2,1030.0030,1990.0000,,CHK")
    far = sts["907"]
    lines.append(f"X1,{float(far['northing']) + 0.0051:.4f},{far['easting']},,STK")  # by position, no number
    shots = tmp_path / "shots.csv"
    shots.write_text("\n".join(lines) + "\n", encoding="utf-8")
    r = runner.invoke(app, ["check", str(job), str(shots), "--out", str(tmp_path / "chk")])
    assert r.exit_code == 0, r.output
    rows = _rows((tmp_path / "chk" / "check.csv").read_text(encoding="utf-8"))
    assert [(x["design_point"], x["status"], x["alignment"]) for x in rows] == [
        ("5", "ok", "MAIN"), ("503", "ok", "RAMP-A"), ("905", "ok", "LOOP-B"), ("CP2", "control", ""),
        ("907", "ok", "LOOP-B")]
    for x, p in zip(rows, picks + ["CP2", "907"]):
        if p in sts:  # located on its own alignment: the station and offset of its stake
            assert float(x["station"]) == pytest.approx(float(sts[p]["station"]), abs=0.01)
            assert float(x["offset"]) == pytest.approx(float(sts[p]["offset"]), abs=0.01)
    restake = _rows((tmp_path / "chk" / "restake.csv").read_text(encoding="utf-8"))
    assert len(restake) == len(sts) - 4 and {"5", "503", "905", "907"}.isdisjoint(r["point"] for r in restake)


def test_one_plan_picture_with_every_alignment(tmp_path):
    from lxml import etree

    files = _build(tmp_path, HEAD + CONTROL + "".join(_alignment(*r) for r in ROADS), "all", "picture")
    root = etree.fromstring(files["plan.svg"].encode("utf-8"))  # well-formed (lxml)
    svg = "{http://www.w3.org/2000/svg}"
    assert root.find(f"{svg}title").text == "Plan of MAIN, RAMP-A, LOOP-B: Interchange test"
    assert len([e for e in root.iter(f"{svg}svg")]) == 1  # one sheet, not one per alignment
    centrelines = [e for e in root.iter(f"{svg}path") if e.get("class") == "so-cl"]
    assert len(centrelines) == 3
    texts = "".join(root.itertext())
    assert "alignments MAIN, RAMP-A, LOOP-B" in texts and "3 alignments" in texts


def test_listed_id_equal_to_another_alignments_number_was_accepted(tmp_path):
    """Regression: a listed point's own id that another alignment numbers a stake with (here 505) was
    accepted, so points.csv held two points 505 and alignment.xml failed as 'written twice'."""
    (tmp_path / "list.csv").write_text("station,offset,code,id\n1+020,-6.0,MH,505\n", encoding="utf-8")
    text = HEAD + "".join(_alignment(*r) for r in ROADS[:2])
    text = text.replace('point_prefix = ""\noffsets', 'point_prefix = ""\npoints = "list.csv"\noffsets', 1)
    job = tmp_path / "job.toml"
    job.write_text(text, encoding="utf-8")
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "out"), "--only", "points"])
    assert r.exit_code == 2, r.output
    assert "point id '505'" in r.output and "'RAMP-A'" in r.output and not (tmp_path / "out").exists()


def test_shot_past_one_alignments_end_was_located_on_it(tmp_path):
    """Regression: an unmatched shot 1 m from the second alignment was located on the first, 100 m
    past its end, because the inverse extends the end tangents and the offset alone was compared."""
    roads = """[[alignment]]
name = "R1"
start = { station = "0+000", northing = 5000.0, easting = 3000.0 }
azimuth = "90-00-00"
[[alignment.element]]
kind = "line"
length = 100.0
[alignment.staking]
interval = 50.0
[[alignment]]
name = "R2"
start = { station = "1+000", northing = 4900.0, easting = 3200.0 }
azimuth = "0-00-00"
[[alignment.element]]
kind = "line"
length = 200.0
[alignment.staking]
interval = 50.0
first_point = 100
"""
    job = tmp_path / "job.toml"
    job.write_text(HEAD + "[check]\nhorizontal_tolerance = 0.02\n" + roads, encoding="utf-8")
    shots = tmp_path / "shots.csv"
    shots.write_text("X1,5000.5000,3201.0000,,\n", encoding="utf-8")
    r = runner.invoke(app, ["check", str(job), str(shots), "--out", str(tmp_path / "chk")])
    assert r.exit_code == 1, r.output  # an unmatched shot needs attention
    row = _rows((tmp_path / "chk" / "check.csv").read_text(encoding="utf-8"))[0]
    assert row["status"] == "unmatched"
    # on R2: 100.5 m along from 1+000 at E 3200, 1.0 m right of it (plane geometry by hand)
    assert float(row["station"]) == pytest.approx(1100.5, abs=1e-4) and float(row["offset"]) == pytest.approx(1.0)


def test_superelevation_svg_of_two_alignments_was_not_xml(tmp_path):
    """Regression: superelevation.svg of a job whose alignments both have [[superelevation]] rows was two
    SVG documents glued together (joined as CSV rows), not XML."""
    from lxml import etree

    rows = """[[alignment.superelevation]]
station = "1+000"
left = -2.0
right = -2.0
[[alignment.superelevation]]
station = "1+060"
left = 4.0
right = -4.0
"""
    text = HEAD + "".join(_alignment(*r).replace('offset = -4.0, code = "L" }', 'offset = -4.0, code = "L", '
                                                  'cross_slope = "superelevation" }') + rows for r in ROADS[:2])
    files = _build(tmp_path, text, "all", "superelevation-picture")
    etree.fromstring(files["superelevation.svg"].encode("utf-8"))  # well-formed (lxml)


def test_later_alignments_design_files_missing_from_manifest(tmp_path):
    """Regression: manifest.json and the sheets' headers listed only the first alignment's input files
    (a later alignment's structures list was missing, with its hash)."""
    import json

    (tmp_path / "list.csv").write_text("station,offset,code\n1+020,-6.0,MH\n", encoding="utf-8")
    text = HEAD + CONTROL + '[setup]\noccupied = "CP1"\nbacksight = "CP2"\n' + "".join(
        _alignment(*r) for r in ROADS[:2])
    text = text.replace('first_point = 500\npoint_prefix = ""\noffsets',
                        'first_point = 500\npoint_prefix = ""\npoints = "list.csv"\noffsets')
    files = _build(tmp_path, text, "all", "sheet,manifest")
    listed = [f for f in json.loads(files["manifest.json"])["design_files"] if f["role"] == "points"]
    assert len(listed) == 1 and listed[0]["path"] == "list.csv"
    assert "points from list.csv" in files["setout.txt"]


def test_plan_legend_held_only_the_first_alignments_codes(tmp_path):
    """Regression: plan.svg of several alignments listed (and coloured) the first alignment's offset
    lines only; a code of another alignment took whatever colour its index had there."""
    from lxml import etree

    other = _alignment(*ROADS[1]).replace('code = "L" }', 'code = "KERB" }')
    files = _build(tmp_path, HEAD + _alignment(*ROADS[0]) + other, "all", "picture")
    root = etree.fromstring(files["plan.svg"].encode("utf-8"))
    texts = [t.text for t in root.iter("{http://www.w3.org/2000/svg}text") if t.text]
    assert any(t.startswith("stake KERB") for t in texts) and any(t.startswith("stake L ") for t in texts)


def test_radial_lines_drawn_for_the_first_alignment_only(tmp_path):
    """Regression: plan.dxf of several alignments drew the radial lines from each occupied point to the
    first alignment's stakes only."""
    import ezdxf

    setup = '[setup]\noccupied = "auto"\nmax_distance = 200.0\nmax_backsight = 300.0\n'
    files = _build(tmp_path, HEAD + CONTROL + setup + "".join(_alignment(*r) for r in ROADS), "all", "points,dxf")
    doc = ezdxf.readfile(tmp_path / "all" / "plan.dxf")  # read back with ezdxf
    radials = doc.modelspace().query("LINE[layer=='SO-RADIAL']")
    ends = {(round(x.dxf.end.x, 4), round(x.dxf.end.y, 4)) for x in radials}
    assert ends == {(float(r["easting"]), float(r["northing"])) for r in _rows(files["points.csv"])}


def test_several_alignment_sheet_had_one_factor_for_every_setup(tmp_path):
    """Regression: setout.txt of several alignments with combined_factor = "auto" printed the first
    setup's factor in its header and none per setup (the ground distances used each setup's own); it
    also left out the r95 summary and the foot's notes."""
    text = HEAD.replace('units = "m"', 'units = "m"\ncrs = "EPSG:32633"') + """[[control.point]]
id = "CP1"
northing = 5801030.0
easting = 402050.0
elevation = 55.0
[[control.point]]
id = "CP2"
northing = 5801030.0
easting = 401990.0
[[control.point]]
id = "CP3"
northing = 5800990.0
easting = 401990.0
[[setup.station]]
occupied = "CP1"
backsight = "CP2"
[[setup.station]]
occupied = "CP3"
backsight = "CP2"
[scale]
combined_factor = "auto"
ellipsoid_height = 120.0
[instrument]
angle_sigma = 2.0
distance_sigma = 0.002
distance_ppm = 2.0
centering_sigma = 0.001
pole_sigma = 0.003
[check]
horizontal_tolerance = 0.02
""" + "".join(_alignment(name, 5801000.0 + n - 1000.0, 402000.0 + e - 2000.0, az, r, first, step)
              for name, n, e, az, r, first, step in ROADS[:2])
    files = _build(tmp_path, text, "all", "setout,sheet")
    sheet = files["setout.txt"]
    setups = {r["setup"] for r in _rows(files["setout.csv"])}
    assert len(setups) >= 2
    assert sheet.count("combined factor ") >= len(setups)  # each setup's own, in its section
    assert "max r95" in sheet and "design el =" in sheet
