"""Safeguards against a wrong stake or a wrong decision in the field.

Each test, named after the defect it holds, reproduces one way a crew could
end up with a wrong stake or a wrong decision, and holds the fix.  Geometry references are plane trigonometry
written here (tangent T = R tan(I/2), common practice of route surveying).
"""

from __future__ import annotations

import json
from pathlib import Path
import math

import numpy as np
import pytest
from typer.testing import CliRunner

from stakeout.cli import app

from .helpers import build_job, read_rows, write_job

runner = CliRunner()


def _build(job, out, *extra):
    return runner.invoke(app, ["build", str(job), "--out", str(out), *extra])


def _deflection(p0, p1, p2):
    a0 = math.atan2(p1[1] - p0[1], p1[0] - p0[0])
    a1 = math.atan2(p2[1] - p1[1], p2[0] - p1[0])
    return abs((math.degrees(a1 - a0) + 180.0) % 360.0 - 180.0)


def _reverse_job(tmp_path, gap, join_tolerance=None):
    """Two reverse curves whose tangents leave `gap` between them (negative: overlap)."""
    pts = [(0.0, 0.0), (600.0, 0.0), (900.0, 300.0), (1500.0, 300.0)]  # (northing, easting)
    i1 = math.radians(_deflection(*pts[0:3]))
    i2 = math.radians(_deflection(*pts[1:4]))
    seg = math.hypot(pts[2][0] - pts[1][0], pts[2][1] - pts[1][1])
    r1 = 400.0
    t1 = r1 * math.tan(i1 / 2.0)  # T = R tan(I/2): common practice
    r2 = (seg - t1 - gap) / math.tan(i2 / 2.0)
    pis = "\n".join(f"[[alignment.pi]]\nnorthing = {n}\neasting = {e}" + (f"\nradius = {r}" if r else "")
                    for (n, e), r in zip(pts, (None, r1, r2, None)))
    join = f"join_tolerance = {join_tolerance}\n" if join_tolerance is not None else ""
    return write_job(tmp_path, f"""format = 1
[job]
name = "Near-touching reverse curves"
units = "ft"
[alignment]
name = "RV"
{join}{pis}
[staking]
interval = 50.0
offsets = [{{ offset = -10.0, code = "L" }}, {{ offset = 0.0, code = "CL" }}]
""")


def test_default_combined_factor_is_announced_not_given(tmp_path):
    # regression: a CRS job with no [scale] said "given in the job file"; ground = grid silently
    job = write_job(tmp_path, """format = 1
[job]
name = "UTM job without a factor"
units = "m"
crs = "EPSG:32633"
[alignment]
name = "U"
start = { station = 0, northing = 5000000.0, easting = 500000.0 }
azimuth = 45.0
[[alignment.element]]
kind = "line"
length = 500.0
[staking]
interval = 100.0
[setup]
occupied = { id = "A", northing = 5000010.0, easting = 500000.0 }
backsight = { id = "B", northing = 5000400.0, easting = 500000.0 }
""")
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 0, r.output
    assert "ground distances equal grid distances" in r.output and '"auto"' in r.output
    sheet = (tmp_path / "out" / "setout.txt").read_text()
    head = sheet.split("page 1 of")[0]
    assert "WARNING" in head and "no combined factor was given" in head
    manifest = json.loads((tmp_path / "out" / "manifest.json").read_text())
    assert manifest["factors"]["how"] == "default"


def test_offset_line_past_an_arcs_centre_is_refused(tmp_path):
    # regression: an inside offset larger than the radius put stakes through the centre
    job = write_job(tmp_path, """format = 1
[job]
name = "Tight arc"
units = "m"
[alignment]
name = "T"
start = { station = 0, northing = 0.0, easting = 0.0 }
azimuth = 0.0
[[alignment.element]]
kind = "arc"
radius = 15.0
delta = 90.0
turn = "right"
[staking]
interval = 5.0
offsets = [{ offset = -5.0, code = "L" }, { offset = 20.0, code = "R" }]
""")
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 2
    assert "offset = 20.0" in r.output and "element 1" in r.output and "15.0000" in r.output
    assert not (tmp_path / "out").exists()


def test_near_touching_reverse_curves_meet_at_one_prc(tmp_path):
    # regression: a 0.0014-ft tangent gave two stakes 0.0014 apart labelled PT and PC
    r = _build(_reverse_job(tmp_path, 0.0014), tmp_path / "out")
    assert r.exit_code == 0, r.output
    assert "alignment.pi[1] and alignment.pi[2]" in r.output and "0.0014 tangent" in r.output
    rows = read_rows(tmp_path / "out" / "stations.csv")
    feats = [row["feature"] for row in rows if row["code"] == "CL" and row["feature"]]
    assert feats == ["POB", "PC", "PRC", "PT", "POE"]  # one PRC where the curves meet
    st = np.array([float(row["station"]) for row in rows if row["code"] == "CL"])
    assert np.all(np.diff(st) > 0.001)  # no duplicate stakes


def test_near_touching_overlap_within_tolerance_builds(tmp_path):
    r = _build(_reverse_job(tmp_path, -0.0014), tmp_path / "out")
    assert r.exit_code == 0, r.output
    assert "0.0014 overlap" in r.output


def test_reverse_curves_beyond_the_join_tolerance(tmp_path):
    # a real tangent stays a tangent; an overlap beyond the tolerance stays an error
    r = _build(_reverse_job(tmp_path, 0.02), tmp_path / "a")
    assert r.exit_code == 0, r.output
    feats = [row["feature"] for row in read_rows(tmp_path / "a" / "stations.csv") if row["code"] == "CL"]
    assert "PT" in feats and feats.count("PC") == 2
    (tmp_path / "b").mkdir()
    r = _build(_reverse_job(tmp_path / "b", -0.02), tmp_path / "b" / "out")
    assert r.exit_code == 2 and "overlap" in r.output
    (tmp_path / "c").mkdir()
    r = _build(_reverse_job(tmp_path / "c", -0.02, join_tolerance=0.05), tmp_path / "c" / "out")
    assert r.exit_code == 0, r.output  # the tolerance is settable


@pytest.mark.parametrize("text, units", [("46+6", "ft"), ("3+00.5", "m")])
def test_loose_station_text_is_refused(tmp_path, text, units):
    # regression: "46+6" was read as 46+06.00 and, in metres, "3+00.5" as 3+000.500
    job = write_job(tmp_path, f"""format = 1
[job]
name = "Loose station"
units = "{units}"
[alignment]
name = "S"
start = {{ station = "{text}", northing = 0.0, easting = 0.0 }}
azimuth = 0.0
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 10.0
""")
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 2 and f"'{text}'" in r.output and "exactly" in r.output


def test_ids_over_the_limit_are_refused(tmp_path):
    # regression: prefix + the largest number could exceed the documented 20 characters
    job = write_job(tmp_path, """format = 1
[job]
name = "Long ids"
units = "m"
[alignment]
name = "S"
start = { station = 0, northing = 0.0, easting = 0.0 }
azimuth = 0.0
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 10.0
point_prefix = "ABCDEFGHIJKLMNOP"
first_point = 99995
""")
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 2 and "staking.point_prefix" in r.output and "first_point" in r.output


def test_overlap_message_names_the_curves_not_the_pob(tmp_path):
    # regression: an overlap next to the POB named the POB as a curve
    job = write_job(tmp_path, """format = 1
[job]
name = "Overlap at the start"
units = "m"
[alignment]
name = "O"
[[alignment.pi]]
northing = 0.0
easting = 0.0
[[alignment.pi]]
northing = 50.0
easting = 0.0
radius = 500.0
[[alignment.pi]]
northing = 300.0
easting = 250.0
[staking]
interval = 10.0
""")
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 2
    assert "the curve at alignment.pi[1] does not fit" in r.output and "curves at" not in r.output


def test_extra_stations_count_against_the_point_limit(tmp_path, monkeypatch):
    # regression: extra stations bypassed the 10-million-point limit
    import stakeout.staking as staking

    monkeypatch.setattr(staking, "MAX_POINTS", 20)
    extras = ", ".join(str(float(v)) for v in range(1, 40, 2))
    job = write_job(tmp_path, f"""format = 1
[job]
name = "Many extras"
units = "m"
[alignment]
name = "S"
start = {{ station = 0, northing = 0.0, easting = 0.0 }}
azimuth = 0.0
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 50.0
extra_stations = [{extras}]
""")
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 2 and "limit" in r.output


def test_hairpin_angle_point_is_refused(tmp_path):
    # regression: PIs turning back by nearly 180 degrees put miter stakes a million feet away
    job = write_job(tmp_path, """format = 1
[job]
name = "Hairpin"
units = "ft"
[alignment]
name = "H"
[[alignment.pi]]
northing = 0.0
easting = 0.0
[[alignment.pi]]
northing = 1000.0
easting = 0.0
[[alignment.pi]]
northing = 0.0
easting = 1.0
[staking]
interval = 100.0
offsets = [{ offset = -10.0, code = "L" }, { offset = 0.0, code = "CL" }]
""")
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 2 and "angle point" in r.output and "add a curve" in r.output


@pytest.mark.parametrize("key, value, expect", [
    ("azimuth", "719.9", "between 0 and 360"),
    ("azimuth", "-359.99", "between 0 and 360"),
    ("azimuth", '"４５"', "not an angle"),
])
def test_nonsense_directions_refused(tmp_path, key, value, expect):
    # regression: azimuths outside 0-360 and full-width digits were accepted
    job = write_job(tmp_path, f"""format = 1
[job]
name = "Directions"
units = "m"
[alignment]
name = "S"
start = {{ station = 0, northing = 0.0, easting = 0.0 }}
{key} = {value}
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 10.0
""")
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 2 and f"alignment.{key}" in r.output and expect in r.output


def test_stake_counts_unchanged_for_samples(samples, tmp_path):
    # the fixes leave ordinary jobs alone (sample digests are held by test_sample_outputs.py too)
    out = build_job(samples / "loop_ramp_usft.toml", tmp_path / "out")
    assert len(read_rows(out / "points.csv")) > 100


def test_point_description_carries_feature_and_side(samples, tmp_path):
    # small things: the crew sees the key point and the side on the data collector (outputs contract example
    # `EPL PC 14+11.02 16.00 LT`); the numeric columns elsewhere stay signed
    out = build_job(samples / "loop_ramp_usft.toml", tmp_path / "out")
    pts = {r["point"]: r["description"] for r in read_rows(out / "points.csv")}
    st = {r["point"]: r for r in read_rows(out / "stations.csv")}
    for pid, desc in pts.items():
        row = st[pid]
        off = float(row["offset"])
        side = " LT" if off < 0 else (" RT" if off > 0 else "")
        feat = (row["feature"] + " ") if row["feature"] else ""
        assert desc == f"{row['code']} {feat}{row['station_label']} {abs(off):.2f}{side}"


def test_deflections_for_offset_lines_and_left_readings(samples, tmp_path):
    # small things: deflections and chords for offset lines, left deflections also as the circle reading
    out = build_job(samples / "site_road_metric.toml", tmp_path / "out")
    text = (out / "deflections.txt").read_text()
    assert "offset line" in text
    lines = text.splitlines()
    left = [i for i, ln in enumerate(lines) if "deflect left" in ln][0]
    row = lines[left + 2].split()  # the first station after the arc's start
    defl = [int(x) for x in row[2].split("-")]
    reading = [int(x) for x in row[5].split("-")]
    d = defl[0] + defl[1] / 60 + defl[2] / 3600
    r = reading[0] + reading[1] / 60 + reading[2] / 3600
    assert d + r == pytest.approx(360.0, abs=1.5 / 3600)  # reading = 360 - d (to the printed second)


def test_sheet_layout_from_content_never_crashes(tmp_path):
    # regression: the 100-character assertion fired on a long job name, a CRS given as WKT, a tall
    # ellipsoid height and a curve deflecting a hair under 180 degrees (exit 3)
    import pyproj  # the WKT comes from the reference library itself

    wkt = pyproj.CRS.from_epsg(2229).to_wkt()
    job = write_job(tmp_path, f'''format = 1
[job]
name = "{"A very long job name " * 6}"
units = "us_ft"
crs = """{wkt}"""
[alignment]
name = "L"
start = {{ station = "10+00", northing = 1840000.0, easting = 6485000.0 }}
azimuth = 45
[[alignment.element]]
kind = "arc"
radius = 500
delta = "179-59-59.9"
turn = "right"
[staking]
interval = 100
[setup]
occupied = {{ id = "CP1", northing = 1840100.0, easting = 6485100.0 }}
backsight = {{ id = "CP2", northing = 1840500.0, easting = 6485100.0 }}
[scale]
combined_factor = "auto"
ellipsoid_height = 10500.0
''')
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 0, r.output
    sheet = (tmp_path / "out" / "setout.txt").read_text()
    assert "EPSG:2229 (NAD83 / California zone 5 (ftUS))" in sheet
    assert max(len(line) for line in sheet.splitlines()) <= 80


def test_occupied_point_outside_the_crs_area_is_refused(tmp_path):
    # regression: "auto" took a factor far outside the zone (1.113) without a word
    job = write_job(tmp_path, """format = 1
[job]
name = "Far outside the zone"
units = "us_ft"
crs = "EPSG:2229"
[alignment]
name = "L"
start = { station = 0, northing = 1840000.0, easting = 16485000.0 }
azimuth = 45
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 50
[setup]
occupied = { id = "CP1", northing = 1840100.0, easting = 16485100.0 }
backsight = { id = "CP2", northing = 1840500.0, easting = 16485100.0 }
[scale]
combined_factor = "auto"
ellipsoid_height = 100.0
""")
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 2 and "setup.occupied" in r.output and "area of use" in r.output


def test_version_and_help_texts():
    # small things: --version; check --help shows [check] (the formatter swallowed it); build --help names
    # every --only output (from the registry)
    from stakeout import __version__
    from stakeout.outputs import OUTPUTS

    r = runner.invoke(app, ["--version"])
    assert r.exit_code == 0 and __version__ in r.output
    assert "[check]" in runner.invoke(app, ["check", "--help"]).output
    text = " ".join(runner.invoke(app, ["build", "--help"]).output.split())
    assert all(o.name in text for o in OUTPUTS)


def test_tiny_curve_is_refused(tmp_path):
    # regression: radius 1e-9 and I = 1e-7 degrees lost the PT
    job = write_job(tmp_path, """format = 1
[job]
name = "Tiny curve"
units = "m"
[alignment]
name = "T"
start = { station = 0, northing = 0.0, easting = 0.0 }
azimuth = 0.0
[[alignment.element]]
kind = "line"
length = 100.0
[[alignment.element]]
kind = "arc"
radius = 1e-9
delta = 1e-7
turn = "right"
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 10.0
""")
    r = _build(job, tmp_path / "out")
    assert r.exit_code == 2 and "element 2" in r.output and "shorter than" in r.output


def test_dxf_of_a_large_job_is_bounded(tmp_path):
    # regression: 978,542 points took 452 s and 3.3 GB for the DXF; the stakes and their numbers are
    # written in bulk (checked by reading the file back with ezdxf and auditing it)
    import sys

    import ezdxf

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
    from corridor import corridor_job

    job = corridor_job(tmp_path / "big.toml", 25_000, elements=20, setup=False)
    out = build_job(job, tmp_path / "out", "--only", "points,dxf")
    doc = ezdxf.readfile(out / "plan.dxf")
    assert not doc.audit().has_errors
    pts = doc.modelspace().query('POINT[layer=="SO-STAKE"]')
    want = read_rows(out / "points.csv")
    assert len(pts) == len(want)
    got = np.array([(p.dxf.location.x, p.dxf.location.y) for p in pts])
    ref = np.array([(float(r["easting"]), float(r["northing"])) for r in want])
    assert np.allclose(got, ref, atol=1e-9)
    handles = [int(p.dxf.handle, 16) for p in pts]
    assert len(set(handles)) == len(handles) and max(handles) < int(doc.header["$HANDSEED"], 16)
    assert [t.dxf.text for t in doc.modelspace().query('TEXT[layer=="SO-STAKE-NO"]')] == [r["point"] for r in want]


def test_printed_pages_hold_at_most_60_lines(samples, tmp_path):
    # regression: sheets split pages on common printer defaults; every page now holds at most 60 lines,
    # with the column header repeated on each
    out = build_job(samples / "loop_ramp_usft.toml", tmp_path / "out")
    for name in ("setout.txt", "deflections.txt"):
        pages = (out / name).read_text().split("\f")
        assert len(pages) > 1
        for page in pages:
            lines = page.rstrip("\n").split("\n")
            assert len(lines) <= 60
            if any(line.startswith("---") for line in lines):  # a page of the table repeats its header
                assert any(line.lstrip().startswith(("point", "station")) for line in lines)


def test_shot_keyed_without_decimals_is_reported(samples, tmp_path):
    # regression: a shot keyed without its decimal point (the blunder the check exists to catch)
    # crashed the check sheet; it is reported out of tolerance, with exit 1
    staked = tmp_path / "shots.csv"
    staked.write_text("1000,1840005.7991,6484985.0879\n1001,1840004811,6484988.8159\n", encoding="utf-8")
    r = runner.invoke(app, ["check", str(samples / "loop_ramp_usft.toml"), str(staked), "--out",
                            str(tmp_path / "out")])
    assert r.exit_code == 1, r.output
    rows = read_rows(tmp_path / "out" / "check.csv")
    assert rows[1]["status"] == "out"
