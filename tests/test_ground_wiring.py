"""The ground and slope stakes wired into a build: the job file, stations.csv, slopestakes.csv, volumes.csv.

References: on planar ground z = a + g * (offset) square to a straight
alignment, the ground at a stake is that plane (closed form); on level
ground h below a level hinge the catch lies slope x h beyond it (the
level-section relation of route surveying, common practice); the fill
section between level ground and a level template with side slopes is a
trapezoid, checked with shapely polygons; volumes by the average-end-area
formula V = L (A1 + A2) / 2 (Wikibooks, "Fundamentals of
Transportation/Earthwork").
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.jobfile import load_job

runner = CliRunner()

JOB = """format = 1
[job]
name = "Ground wiring road"
units = "m"
[alignment]
name = "EW"
start = {{ station = "0+000", northing = 1000.0, easting = 2000.0 }}
azimuth = "90-00-00"
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 20.0
elevation = 52.0
offsets = [{{ offset = -6.0, code = "SHL" }}, {{ offset = 0.0, code = "CL" }}, {{ offset = 6.0, code = "SHR" }}]
[ground]
file = "ground.csv"
{extra}
"""

SLOPES = """[slope_stakes]
left = { hinge = "SHL", fill_slope = 3.0, cut_slope = 2.0 }
right = { hinge = "SHR", fill_slope = 2.0, cut_slope = 2.0 }
reference_offset = 5.0
max_width = 100.0
"""


def _ground_csv(path: Path, zfun, lo=(900.0, 1950.0), hi=(1100.0, 2150.0), step=10.0) -> None:
    n, e = np.meshgrid(np.arange(lo[0], hi[0] + step / 2, step), np.arange(lo[1], hi[1] + step / 2, step))
    n, e = n.ravel(), e.ravel()
    z = zfun(n, e)
    lines = [f"G{i + 1},{a:.4f},{b:.4f},{c:.6f}" for i, (a, b, c) in enumerate(zip(n, e, z))]
    path.write_text("point,northing,easting,elevation\n" + "\n".join(lines) + "\n", encoding="utf-8")


def _job(tmp_path: Path, zfun, extra: str = "", **kw) -> Path:
    _ground_csv(tmp_path / "ground.csv", zfun, **kw)
    p = tmp_path / "job.toml"
    p.write_text(JOB.format(extra=extra), encoding="utf-8")
    return p


def _rows(text: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(text)))


def test_job_reads_ground_and_records_its_file(tmp_path):
    job = load_job(_job(tmp_path, lambda n, e: np.full(n.shape, 50.0), SLOPES))
    assert job.ground is not None and job.slope_stakes is not None
    rec = [f for f in job.design_files if f.role == "ground"]
    assert len(rec) == 1 and rec[0].path == "ground.csv"
    assert str(tmp_path / "ground.csv") in job.inputs()  # --force never replaces a folder holding it
    assert job.slope_stakes.left is not None and job.slope_stakes.left.hinge == "SHL"


def test_manifest_hashes_the_ground_file(tmp_path):
    import hashlib

    job = _job(tmp_path, lambda n, e: np.full(n.shape, 50.0))
    out = tmp_path / "out"
    r = runner.invoke(app, ["build", str(job), "--out", str(out), "--only", "stations,manifest"])
    assert r.exit_code == 0, r.output
    man = json.loads((out / "manifest.json").read_text(encoding="utf-8"))
    files = [f for f in man["design_files"] if f.get("role") == "ground"]
    assert files and files[0]["sha256"] == hashlib.sha256((tmp_path / "ground.csv").read_bytes()).hexdigest()


def test_force_keeps_a_folder_holding_the_ground(tmp_path):
    job = _job(tmp_path, lambda n, e: np.full(n.shape, 50.0))
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path), "--force"])
    assert r.exit_code == 2, r.output
    assert (tmp_path / "ground.csv").exists()


def _build(job: Path, out: Path, only: str) -> dict[str, str]:
    r = runner.invoke(app, ["build", str(job), "--out", str(out), "--only", only])
    assert r.exit_code == 0, r.output
    return {p.name: p.read_text(encoding="utf-8") for p in out.iterdir()}


def test_stations_csv_ground_and_cut_fill_on_a_plane(tmp_path):
    # planar ground, closed form: z = 50 + 0.02 (n - 1000) - 0.01 (e - 2000)
    def plane(n, e):
        return 50.0 + 0.02 * (np.asarray(n) - 1000.0) - 0.01 * (np.asarray(e) - 2000.0)

    files = _build(_job(tmp_path, plane, hi=(1100.0, 2050.0)), tmp_path / "out", "stations")
    rows = _rows(files["stations.csv"])
    assert len(rows) == 18
    for r in rows:
        n, e = float(r["northing"]), float(r["easting"])
        if e > 2050.0:  # off the ground: both empty
            assert r["ground_elevation"] == "" and r["cut_fill"] == ""
            continue
        gz = float(plane(n, e))
        assert float(r["ground_elevation"]) == pytest.approx(gz, abs=1e-4)
        assert float(r["cut_fill"]) == pytest.approx(52.0 - gz, abs=1e-4)  # design - ground: positive fill
        assert len(r["cut_fill"].split(".")[1]) == 4
    assert any(r["ground_elevation"] == "" for r in rows) and any(r["ground_elevation"] for r in rows)


def test_stations_csv_ground_columns_empty_without_ground(tmp_path):
    job = _job(tmp_path, lambda n, e: np.full(n.shape, 50.0))
    job.write_text(job.read_text(encoding="utf-8").replace('[ground]\nfile = "ground.csv"\n', ""), encoding="utf-8")
    rows = _rows(_build(job, tmp_path / "out", "stations")["stations.csv"])
    assert rows and all(r["ground_elevation"] == "" and r["cut_fill"] == "" for r in rows)


def _level(n, e):
    return np.full(np.shape(n), 50.0)


def test_slopestakes_csv_level_fill_closed_form(tmp_path):
    files = _build(_job(tmp_path, _level, SLOPES), tmp_path / "out", "slopestakes,volumes")
    head = files["slopestakes.csv"].splitlines()[0]
    assert head == ("alignment,station,station_label,side,hinge_point,hinge_offset,hinge_elevation,ground_at_hinge,"
                    "kind,catch_point,catch_offset,catch_northing,catch_easting,catch_elevation,catch_cut_fill,"
                    "reference_point,reference_offset,reference_northing,reference_easting,reference_ground,"
                    "hd_to_hinge,vd_to_hinge,note")
    rows = _rows(files["slopestakes.csv"])
    assert [r["side"] for r in rows[:4]] == ["left", "right", "left", "right"] and len(rows) == 12
    assert [float(r["station"]) for r in rows] == sorted(float(r["station"]) for r in rows)
    for r in rows:
        left = r["side"] == "left"
        # level section, 2 of fill: catch at slope x 2 beyond the hinge (common practice)
        assert r["kind"] == "fill" and r["note"] == ""
        assert float(r["catch_offset"]) == pytest.approx(-12.0 if left else 10.0, abs=1e-4)
        assert float(r["reference_offset"]) == pytest.approx(-17.0 if left else 15.0, abs=1e-4)
        assert float(r["catch_elevation"]) == pytest.approx(50.0, abs=1e-4)
        assert float(r["catch_cut_fill"]) == pytest.approx(2.0, abs=1e-4)
        assert float(r["hd_to_hinge"]) == pytest.approx(11.0 if left else 9.0, abs=1e-4)
        assert float(r["vd_to_hinge"]) == pytest.approx(2.0, abs=1e-4)
        # alignment due east: left is north of it
        assert float(r["catch_northing"]) == pytest.approx(1000.0 - float(r["catch_offset"]), abs=1e-4)
    # catch and reference stakes after their station's 3 stakes (job-file contract): left REF, left CATCH,
    # right CATCH, right REF; the next station's stakes follow them
    assert [(r["reference_point"], r["catch_point"]) for r in rows[:4]] == [("4", "5"), ("7", "6"),
                                                                              ("11", "12"), ("14", "13")]
    assert rows[-1]["reference_point"] == "42" and rows[0]["hinge_point"] == "1" and rows[1]["hinge_point"] == "3"


def test_volumes_csv_against_shapely_and_average_end_areas(tmp_path):
    from shapely.geometry import Polygon

    files = _build(_job(tmp_path, _level, SLOPES), tmp_path / "out", "volumes")
    rows = _rows(files["volumes.csv"])
    assert list(rows[0]) == ["alignment", "station", "station_label", "cut_area", "fill_area", "cut_volume",
                             "fill_volume", "cumulative_cut", "cumulative_fill"]
    # the fill section: template catch to catch over level ground (shapely polygon area)
    area = Polygon([(-12.0, 50.0), (-6.0, 52.0), (6.0, 52.0), (10.0, 50.0)]).area
    assert len(rows) == 6
    for k, r in enumerate(rows):
        assert float(r["fill_area"]) == pytest.approx(area, rel=1e-4) and float(r["cut_area"]) == 0.0
        # average end areas over 20 m: V = L (A1 + A2) / 2
        vol = 0.0 if k == 0 else 20.0 * (area + area) / 2
        assert float(r["fill_volume"]) == pytest.approx(vol, rel=1e-4)
        assert float(r["cumulative_fill"]) == pytest.approx(k * 20.0 * area, rel=1e-4)


def test_stations_without_catch_reported(tmp_path):
    job = _job(tmp_path, _level, SLOPES, hi=(1100.0, 2050.0))
    out = tmp_path / "out"
    r = runner.invoke(app, ["build", str(job), "--out", str(out), "--only", "slopestakes"])
    assert r.exit_code == 0, r.output
    rows = _rows((out / "slopestakes.csv").read_text(encoding="utf-8"))
    off = [x for x in rows if float(x["station"]) > 50.0]
    assert len(off) == 6 and all(x["note"] == "outside the ground surface" and x["kind"] == "" and
                                 x["catch_point"] == "" and x["catch_offset"] == "" for x in off)
    assert "6 of 12 station side(s) without a catch point (6 outside the ground surface)" in r.output


def test_only_slopestakes_without_slope_stakes_refused(tmp_path):
    r = runner.invoke(app, ["build", str(_job(tmp_path, _level)), "--out", str(tmp_path / "o"),
                            "--only", "slopestakes"])
    assert r.exit_code == 2 and "[slope_stakes]" in r.output


def test_inspect_lists_surfaces(tmp_path):
    from .test_landxml_surface import _surface_xml

    p = tmp_path / "eg.xml"
    p.write_bytes(_surface_xml(nx=8, ny=6, spacing=2.0, hidden=(1, 2)))
    r = runner.invoke(app, ["inspect", str(p)])
    assert r.exit_code == 0, r.output
    # 8 x 6 grid points, two faces a square (2 x 7 x 5 = 70) less the two invisible; the plane
    # z = 30 + 0.04 (e - E0) - 0.02 (n - N0) over 14 x 10 has its extremes at the corners (closed form)
    assert "surfaces: 1" in r.output
    assert ("surface 'EG': TIN, 48 points, 68 faces (2 invisible: holes); northing 1840000 to 1840010, "
            "easting 6485000 to 6485014; elevation 29.8 to 30.56") in r.output


def test_slopestakes_sheet_pages_and_lath(tmp_path):
    job = _job(tmp_path, _level, SLOPES.replace("left = { hinge = \"SHL\", fill_slope = 3.0, cut_slope = 2.0 }",
                                                'left = { hinge = "SHL", fill_slope = 3.0, cut_slope = 2.0, '
                                                'foreslope = 4.0, ditch_depth = 1.0, ditch_width = 2.0 }'),
               hi=(1100.0, 2050.0))
    text = _build(job, tmp_path / "out", "slopestakes-sheet")["slopestakes.txt"]
    pages = text.split("\f")
    assert all(len(line) <= 80 for line in text.splitlines())
    assert all(len(p.strip("\n").splitlines()) <= 60 for p in pages)
    # level fill 2 below a level hinge: the catch stake reads F 2.00 at slope x 2 from the hinge,
    # the reference stake F 2.00 at that plus reference_offset (level-section relation, common practice)
    assert "F 2.00 @ 6.00" in text and "F 2.00 @ 11.00" in text
    assert "F 2.00 @ 4.00" in text and "F 2.00 @ 9.00" in text
    assert "outside the ground surface" in text and "ditch 1 deep at 4:1, 2 wide" in text


@pytest.mark.parametrize("base", [50.0, 55.0], ids=["fill", "cut-with-ditch"])
def test_catch_on_a_sloping_plane_against_shapely(tmp_path, base):
    from shapely.geometry import LineString

    g = 0.05  # ground rises 5 % to the north (left of an alignment running east)

    def plane(n, e):
        return base + g * (np.asarray(n) - 1000.0)

    spec = SLOPES.replace('left = { hinge = "SHL", fill_slope = 3.0, cut_slope = 2.0 }',
                          'left = { hinge = "SHL", fill_slope = 3.0, cut_slope = 2.0, foreslope = 4.0, '
                          'ditch_depth = 1.0, ditch_width = 2.0 }')
    rows = _rows(_build(_job(tmp_path, plane, spec), tmp_path / "out", "slopestakes")["slopestakes.csv"])
    for r in rows[:2]:
        left = r["side"] == "left"
        sign = -1.0 if left else 1.0
        # the section in (distance out from the hinge, elevation): the ground a straight line, the
        # design the template of the job-file contract; their first crossing by shapely
        ground = LineString([(0.0, float(plane(1000.0 - sign * 6.0, 0.0))),
                             (200.0, float(plane(1000.0 - sign * 206.0, 0.0)))])
        if base == 50.0:
            design = LineString([(0.0, 52.0), (200.0, 52.0 - 200.0 / (3.0 if left else 2.0))])
        elif left:
            design = LineString([(0.0, 52.0), (4.0, 51.0), (6.0, 51.0), (200.0, 51.0 + 194.0 / 2.0)])
        else:
            design = LineString([(0.0, 52.0), (200.0, 52.0 + 100.0)])
        hit = design.intersection(ground)
        t, z = hit.x, hit.y
        assert r["kind"] == ("fill" if base == 50.0 else "cut")
        assert float(r["catch_offset"]) == pytest.approx(sign * (6.0 + t), abs=5e-4)
        assert float(r["catch_elevation"]) == pytest.approx(z, abs=5e-4)
        assert float(r["catch_cut_fill"]) == pytest.approx(52.0 - z, abs=5e-4)
        ref_ground = float(plane(1000.0 - sign * (6.0 + t + 5.0), 0.0))
        assert float(r["reference_ground"]) == pytest.approx(ref_ground, abs=5e-4)
        assert float(r["vd_to_hinge"]) == pytest.approx(52.0 - ref_ground, abs=5e-4)
        assert float(r["hd_to_hinge"]) == pytest.approx(t + 5.0, abs=5e-4)


def test_ground_from_a_landxml_surface(tmp_path):
    from .ground_data import E0, N0
    from .test_landxml_surface import ZF, _surface_xml

    (tmp_path / "eg.xml").write_bytes(_surface_xml(nx=8, ny=6, spacing=2.0))
    job = tmp_path / "job.toml"
    text = JOB.format(extra="").replace('file = "ground.csv"', 'landxml = "eg.xml"\nname = "EG"')
    text = text.replace("northing = 1000.0, easting = 2000.0", f"northing = {N0 + 5.0}, easting = {E0 + 1.0}")
    job.write_text(text.replace("length = 100.0", "length = 12.0").replace("interval = 20.0", "interval = 4.0")
                   .replace("offset = -6.0", "offset = -2.0").replace("offset = 6.0", "offset = 2.0"),
                   encoding="utf-8")
    files = _build(job, tmp_path / "out", "stations,manifest")
    for r in _rows(files["stations.csv"]):
        # the TIN's points lie on one plane: the ground at a stake is that plane (closed form)
        assert float(r["ground_elevation"]) == pytest.approx(float(ZF(float(r["northing"]), float(r["easting"]))),
                                                             abs=5e-4)
    man = json.loads(files["manifest.json"])
    assert [(f["role"], f["chosen"]) for f in man["design_files"]] == [("ground", "EG")]


def test_report_has_the_earthwork(tmp_path):
    from shapely.geometry import Polygon

    html = _build(_job(tmp_path, _level, SLOPES, hi=(1100.0, 2050.0)), tmp_path / "out", "report")["report.html"]
    assert "<h2>Earthwork</h2>" in html and "6 of 12 station sides have no catch point" in html
    area = Polygon([(-12.0, 50.0), (-6.0, 52.0), (6.0, 52.0), (10.0, 50.0)]).area  # shapely: the fill section
    assert f"<td class=\"n\">{area:.2f}</td>" in html
    assert f"{20.0 * area:.2f}" in html  # average end areas over 20 m (Wikibooks, as above)


def test_sections_svg_draws_each_station_with_both_catches(tmp_path):
    from lxml import etree

    files = _build(_job(tmp_path, _level, SLOPES, hi=(1100.0, 2050.0)), tmp_path / "out", "sections-picture")
    root = etree.fromstring(files["sections.svg"].encode("utf-8"))  # well-formed XML (lxml)
    ns = {"s": "http://www.w3.org/2000/svg"}
    sections = root.findall("s:g[@class='section']", ns)
    assert len(sections) == 3  # stations 0, 20, 40 have both catch points
    assert sum(len(g.findall(".//s:circle", ns)) for g in sections) == 3 * 4  # two catch and two reference stakes each
    # the fill section's area, as shapely gives it (see the volumes test)
    assert "fill 34.00 m\u00b2" in files["sections.svg"]


def test_rolling_ground_against_scipy_linear_interpolation(tmp_path):
    from scipy.interpolate import LinearNDInterpolator

    # jittered ground points (no four on a circle): the Delaunay TIN is unique, and scipy's
    # LinearNDInterpolator is linear on that same triangulation - an independent evaluation
    from .ground_data import rolling_ground_csv

    n, e, z = rolling_ground_csv(tmp_path / "ground.csv")
    f = LinearNDInterpolator(np.c_[np.round(n, 4), np.round(e, 4)], np.round(z, 4))
    job = tmp_path / "job.toml"
    job.write_text(JOB.format(extra=SLOPES), encoding="utf-8")
    files = _build(job, tmp_path / "out", "stations,slopestakes")
    for r in _rows(files["stations.csv"]):
        assert float(r["ground_elevation"]) == pytest.approx(float(f(float(r["northing"]), float(r["easting"]))),
                                                             abs=5e-4)
    caught = 0
    for r in _rows(files["slopestakes.csv"]):
        if r["catch_point"]:
            caught += 1
            # the catch point lies on the ground, and on the design line from the hinge (fill or plain cut)
            cz = float(r["catch_elevation"])
            assert cz == pytest.approx(float(f(float(r["catch_northing"]), float(r["catch_easting"]))), abs=5e-4)
            run = abs(float(r["catch_offset"]) - float(r["hinge_offset"]))
            slope = {("left", "fill"): 3.0, ("right", "fill"): 2.0}.get((r["side"], r["kind"]), 2.0)
            assert float(r["catch_cut_fill"]) == pytest.approx(run / slope * (1 if r["kind"] == "fill" else -1),
                                                               abs=5e-4)
    assert caught > 6


def test_catch_and_reference_stakes_in_points_and_stations(tmp_path):
    files = _build(_job(tmp_path, _level, SLOPES, hi=(1100.0, 2050.0)), tmp_path / "out", "points,stations,slopestakes")
    pts = _rows(files["points.csv"])
    sts = _rows(files["stations.csv"])
    slopes = _rows(files["slopestakes.csv"])
    assert len(pts) == len(sts) == 18 + 12  # three stations with both catches: 4 stakes each
    assert [r["point"] for r in pts] == [str(k) for k in range(1, 31)]  # point order
    by_id = {r["point"]: r for r in sts}
    for s in slopes[:6]:
        c, ref = by_id[s["catch_point"]], by_id[s["reference_point"]]
        assert (c["feature"], c["code"]) == ("CATCH", ("SHL" if s["side"] == "left" else "SHR") + "-C")
        assert (ref["feature"], ref["code"]) == ("REF", ("SHL" if s["side"] == "left" else "SHR") + "-R")
        assert c["offset"] == s["catch_offset"] and c["northing"] == s["catch_northing"]
        assert c["elevation"] == c["ground_elevation"] == s["catch_elevation"] and c["cut_fill"] == "0.0000"
        assert ref["elevation"] == "" and ref["cut_fill"] == "" and ref["ground_elevation"] == s["reference_ground"]
        assert c["station_label"] == s["station_label"]
    p4 = next(r for r in pts if r["point"] == "4")
    assert p4["elevation"] == "" and p4["description"] == "SHL-R REF 0+000.000 17.000 LT"
    assert next(r for r in pts if r["point"] == "6")["description"] == "SHR-C CATCH 0+000.000 10.000 RT"
    # the stations' own stakes, then their catch and reference stakes (job-file contract)
    assert [r["feature"] for r in sts[:8]] == ["POB", "POB", "POB", "REF", "CATCH", "CATCH", "REF", ""]


def test_catch_and_reference_stakes_in_the_dxf(tmp_path):
    import ezdxf

    out = tmp_path / "out"
    _build(_job(tmp_path, _level, SLOPES), out, "dxf,slopestakes")
    doc = ezdxf.readfile(out / "plan.dxf")  # read back with ezdxf
    msp = doc.modelspace()
    points = {(round(p.dxf.location.x, 4), round(p.dxf.location.y, 4)) for p in msp.query("POINT[layer=='SO-STAKE']")}
    numbers = {t.dxf.text for t in msp.query("TEXT[layer=='SO-STAKE-NO']")}
    rows = _rows((out / "slopestakes.csv").read_text(encoding="utf-8"))
    for r in rows:
        assert (round(float(r["catch_easting"]), 4), round(float(r["catch_northing"]), 4)) in points
        assert (round(float(r["reference_easting"]), 4), round(float(r["reference_northing"]), 4)) in points
        assert r["catch_point"] in numbers and r["reference_point"] in numbers


def test_catch_and_reference_stakes_in_the_picture(tmp_path):
    from lxml import etree

    svg = _build(_job(tmp_path, _level, SLOPES), tmp_path / "out", "picture")["plan.svg"]
    root = etree.fromstring(svg.encode("utf-8"))  # well-formed (lxml)
    classes = [e.get("class") for e in root.iter("{http://www.w3.org/2000/svg}path")]
    assert "so-catch" in classes and "so-ref" in classes


def test_one_side_only(tmp_path):
    one = SLOPES.replace('right = { hinge = "SHR", fill_slope = 2.0, cut_slope = 2.0 }\n', "")
    files = _build(_job(tmp_path, _level, one), tmp_path / "out", "slopestakes,volumes,sections-picture,report")
    rows = _rows(files["slopestakes.csv"])
    assert len(rows) == 6 and {r["side"] for r in rows} == {"left"}
    assert files["volumes.csv"].count("\n") == 1  # the header alone: volumes need both sides
    assert "they need slope stakes on both sides" in files["report.html"]
    assert "0 of 6 staked stations" in files["sections.svg"]


def test_control_id_equal_to_a_slope_stake_id_accepted(tmp_path):
    """Regression: a control point whose id equalled a catch or reference stake's (then numbered
    after the other stakes) was accepted, so points.csv and control.csv both held one point id at
    two places; an id shared with an ordinary stake was already refused (one id names one point)."""
    extra = SLOPES + '[[control.point]]\nid = "4"\nnorthing = 1030.0\neasting = 2050.0\n'
    job = _job(tmp_path, lambda n, e: np.full(n.shape, 50.0), extra)
    out = tmp_path / "out"
    r = runner.invoke(app, ["build", str(job), "--out", str(out)])
    assert r.exit_code == 2, r.output
    assert "'4' is also a stake's (point 4 REF SHL-R" in r.output and not out.exists()
    ok = _job(tmp_path, lambda n, e: np.full(n.shape, 50.0), extra.replace('id = "4"', 'id = "CP4"'))
    r = runner.invoke(app, ["build", str(ok), "--out", str(tmp_path / "out2")])
    assert r.exit_code == 0, r.output
    ids = [row["point"] for row in _rows((tmp_path / "out2" / "points.csv").read_text(encoding="utf-8"))]
    assert "4" in ids


def test_check_crashed_on_a_job_with_slope_stakes(tmp_path):
    """Regression: ``stakeout check`` of any job with [slope_stakes] stopped with an internal
    error (exit 3): restake.csv takes its rows from points.csv by line, and the catch and
    reference stakes' lines after the design points ran past the table of lines to keep.
    restake.csv must hold exactly points.csv's header and the not-staked stakes' rows (the catch and
    reference stakes are stakes like the others)."""
    extra = SLOPES + "[check]\nhorizontal_tolerance = 0.02\n"
    job = _job(tmp_path, lambda n, e: np.full(n.shape, 50.0), extra)
    shots = tmp_path / "shots.csv"
    shots.write_text("1,1006.0,2000.0,,STK\n", encoding="utf-8")  # design point 1: SHL at 0+000 (6 m left)
    out = tmp_path / "chk"
    r = runner.invoke(app, ["check", str(job), str(shots), "--out", str(out)])
    assert r.exit_code == 0, r.output  # its one shot is within tolerance
    points = (tmp_path / "b").joinpath("points.csv")
    assert runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "b"), "--only", "points"]).exit_code == 0
    lines = points.read_text(encoding="utf-8").splitlines()
    restake = (out / "restake.csv").read_text(encoding="utf-8").splitlines()
    assert restake[0] == lines[0]
    assert restake[1:] == lines[2:]  # every stake but point 1, the catch and reference stakes among them
    assert any("CATCH" in x for x in restake) and any("REF" in x for x in restake)


def test_slope_stake_ids_ran_past_the_point_number_and_id_limits(tmp_path):
    """Regression: the catch and reference stakes, numbered after the last stake, were not held to
    the bounds every other stake is (point numbers end at 10**15 - 1, ids have at most 20
    characters), so points.csv could hold 'ABCDEFGHI100000000000'.  Now the same one-line errors."""
    job = _job(tmp_path, lambda n, e: np.full(n.shape, 50.0), SLOPES)
    text = job.read_text(encoding="utf-8")
    # 18 stakes then 24 slope stakes (6 stations, both sides, a catch and a reference each)
    near_end = text.replace("interval = 20.0", "interval = 20.0\nfirst_point = 999999999999970")
    job.write_text(near_end, encoding="utf-8")
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "o1")])
    assert r.exit_code == 2 and "point numbers end at 999,999,999,999,999" in r.output, r.output
    long_ids = text.replace("interval = 20.0", 'interval = 20.0\nfirst_point = 99999999970\npoint_prefix = "ABCDEFGHI"')
    job.write_text(long_ids, encoding="utf-8")
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "o2")])
    assert r.exit_code == 2 and "ids may have at most 20" in r.output, r.output
    fits = text.replace("interval = 20.0", 'interval = 20.0\nfirst_point = 99999999900\npoint_prefix = "ABCDEFGHI"')
    job.write_text(fits, encoding="utf-8")
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "o3")])
    assert r.exit_code == 0, r.output


# ---- catch and reference stakes are stakes like the others (job-file contract) ----------------------
SETUP = """[[control.point]]
id = "CP1"
northing = 1030.0
easting = 2050.0
elevation = 55.0
[[control.point]]
id = "CP2"
northing = 1030.0
easting = 1990.0
[setup]
occupied = "CP1"
backsight = "CP2"
instrument_height = 1.5
target_height = 1.8
[check]
horizontal_tolerance = 0.02
"""


def _tilted(n, e):
    return 50.0 + 0.05 * (np.asarray(n) - 1000.0)


def test_catch_and_reference_stakes_were_missing_from_the_setout(tmp_path):
    """Regression: catch and reference stakes were numbered after every stake and left out of
    setout.csv and setout.txt, so the crew had no angle and distance to them."""
    files = _build(_job(tmp_path, _tilted, SLOPES + SETUP), tmp_path / "out", "points,setout,sheet")
    pts = _rows(files["points.csv"])
    setout = _rows(files["setout.csv"])
    assert [r["point"] for r in setout] == [r["point"] for r in pts]  # every stake, point order
    catch = {r["point"] for r in pts if " CATCH " in r["description"]}
    ref = {r["point"] for r in pts if " REF " in r["description"]}
    assert len(catch) == len(ref) == 12
    for r in setout:
        # a reference stake has no design elevation: no zenith or slope distance, never 'nan'
        assert (r["zenith_deg"] == "" and r["slope_distance"] == "") == (r["point"] in ref)
    assert "nan" not in files["setout.txt"]
    lines = [x.split() for x in files["setout.txt"].splitlines()]
    assert any(x[:1] == ["4"] and "REF" in x for x in lines) and any(x[:1] == ["5"] and "CATCH" in x for x in lines)


def test_catch_stake_shot_was_unmatched(tmp_path):
    """Regression: a crew's shot of a catch stake came back 'unmatched' from stakeout check,
    since the catch stakes were not among the design points."""
    job = _job(tmp_path, _tilted, SLOPES + SETUP)
    files = _build(job, tmp_path / "out", "points")
    pts = {r["point"]: r for r in _rows(files["points.csv"])}
    c, ref = pts["5"], pts["4"]
    assert " CATCH " in c["description"] and " REF " in ref["description"]
    shots = tmp_path / "shots.csv"
    shots.write_text(f"5,{float(c['northing']) + 0.005:.4f},{c['easting']},{c['elevation']},STK\n"
                     f"4,{ref['northing']},{ref['easting']},,STK\n", encoding="utf-8")
    r = runner.invoke(app, ["check", str(job), str(shots), "--out", str(tmp_path / "chk")])
    assert r.exit_code == 0, r.output
    rows = _rows((tmp_path / "chk" / "check.csv").read_text(encoding="utf-8"))
    assert [(x["design_point"], x["status"], x["matched_by"]) for x in rows] == [("5", "ok", "number"),
                                                                                 ("4", "ok", "number")]
    assert float(rows[0]["horizontal_error"]) == pytest.approx(0.005, abs=1e-4)
    assert rows[1]["d_elevation"] == ""  # a reference stake has no design elevation to check


def test_catch_and_reference_stakes_were_missing_from_alignment_xml(tmp_path):
    """Regression: alignment.xml held no CgPoint for the catch and reference stakes."""
    from lxml import etree

    from tests.helpers import landxml_schema

    files = _build(_job(tmp_path, _tilted, SLOPES), tmp_path / "out", "points,landxml")
    doc = etree.fromstring(files["alignment.xml"].encode("utf-8"))
    assert landxml_schema().validate(doc), landxml_schema().error_log  # LandXML 1.2 schema, by lxml
    ns = {"x": "http://www.landxml.org/schema/LandXML-1.2"}
    cg = {p.get("name"): p for p in doc.iterfind(".//x:CgPoint", ns)}
    for r in _rows(files["points.csv"]):
        p = cg[r["point"]]
        coords = p.text.split()
        assert float(coords[0]) == pytest.approx(float(r["northing"]), abs=1e-6)
        assert (len(coords) == 2) == (r["elevation"] == "")  # a reference stake: no height
    assert {p.get("code") for p in cg.values()} >= {"SHL-C", "SHL-R", "SHR-C", "SHR-R"}


def test_catch_and_reference_stakes_were_missing_from_the_report(tmp_path):
    """Regression: the report's stake table stopped at the grid's stakes."""
    files = _build(_job(tmp_path, _tilted, SLOPES + SETUP), tmp_path / "out", "points,report")
    html = files["report.html"]
    assert '<td class="t">SHL-R</td><td class="t">REF</td>' in html
    assert '<td class="t">SHR-C</td><td class="t">CATCH</td>' in html
    assert ">nan<" not in html


def test_catch_and_reference_stakes_were_missing_from_the_bulk_dxf(tmp_path):
    """Regression: above the DXF's old detail limit, stakes were written in bulk, and the catch and
    reference stakes were left out there (every stake is written in bulk now)."""
    import ezdxf

    out = tmp_path / "out"
    files = _build(_job(tmp_path, _tilted, SLOPES), out, "points,dxf")
    doc = ezdxf.readfile(out / "plan.dxf")  # read back with ezdxf
    pts = {(round(p.dxf.location.x, 4), round(p.dxf.location.y, 4)) for p in doc.modelspace().query("POINT")}
    rows = _rows(files["points.csv"])
    assert {(float(r["easting"]), float(r["northing"])) for r in rows} <= pts
    assert len(rows) == 42


def test_automatic_setups_cover_the_catch_and_reference_stakes(tmp_path):
    extra = SLOPES + SETUP.replace('occupied = "CP1"\nbacksight = "CP2"\n',
                                   'occupied = "auto"\nmax_distance = 80.0\nmax_backsight = 100.0\n')
    files = _build(_job(tmp_path, _tilted, extra), tmp_path / "out", "points,setout")
    assert len(_rows(files["setout.csv"])) == len(_rows(files["points.csv"])) == 42


def test_slope_stakes_without_any_catch_crashed(tmp_path):
    """Regression: a job with [slope_stakes] where no station side found a catch point (max_width too
    short) stopped with an internal error: no catch or reference stake joined the table."""
    job = _job(tmp_path, _level, SLOPES.replace("max_width = 100.0", "max_width = 0.5"))
    files = _build(job, tmp_path / "out", "points,slopestakes")
    rows = _rows(files["slopestakes.csv"])
    assert rows and all(r["note"] == "no catch within max_width" and r["catch_point"] == "" for r in rows)
    assert len(_rows(files["points.csv"])) == 18
