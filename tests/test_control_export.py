"""control.csv: every control point the job lists or uses, once each, in the job's order.

Contract: outputs.md "Additions, second set" (`control.csv`) and job-file.md
"Control points in the outputs".  The outside references are the job's own
inputs read with Python's csv module and tomllib, and the check command,
which must take the exported points back as control shots.
"""

from __future__ import annotations

import csv
import io

import pytest
from typer.testing import CliRunner

from stakeout.cli import app

from .helpers import SAMPLES, build_job, write_job


def _rows(path):
    return list(csv.DictReader(io.StringIO(path.read_text(encoding="utf-8"))))


def test_control_csv_holds_the_control_file_rows_in_order(tmp_path):
    job = SAMPLES / "harrow_fen_bypass_control_m.toml"
    out = build_job(job, tmp_path / "out")
    given = list(csv.DictReader((SAMPLES / "control" / "harrow_fen_control.csv").open(encoding="utf-8")))
    got = _rows(out / "control.csv")
    # the file's rows, then the benchmark given inline as [[control.point]]
    assert [r["point"] for r in got] == [r["point"] for r in given] + ["BM12"]
    for g, r in zip(got, given):
        assert float(g["northing"]) == pytest.approx(float(r["northing"]), abs=5e-5)
        assert float(g["easting"]) == pytest.approx(float(r["easting"]), abs=5e-5)
        assert float(g["elevation"]) == pytest.approx(float(r["elevation"]), abs=5e-5)
        assert g["description"] == "control"


def test_control_csv_inline_setup_points_once_each_after_listed_control(tmp_path):
    job = write_job(tmp_path, """
format = 1
[job]
name = "control order"
units = "m"
[alignment]
name = "A"
start = { station = "0+000", northing = 1000.0, easting = 2000.0 }
azimuth = "45-00-00"
[[alignment.element]]
kind = "line"
length = 80.0
[staking]
interval = 20.0
[control]
[[control.point]]
id = "C2"
northing = 1010.0
easting = 1990.0
[[control.point]]
id = "C1"
northing = 1005.0
easting = 1995.0
elevation = 12.5
[setup]
occupied = { id = "T9", northing = 1030.0, easting = 2010.0 }
backsight = "C2"
""")
    out = build_job(job, tmp_path / "out")
    got = _rows(out / "control.csv")
    # [[control.point]] in the job's order, then the inline occupied point; C2 (the backsight) once.
    assert [r["point"] for r in got] == ["C2", "C1", "T9"]
    assert got[1]["elevation"] == "12.5000" and got[0]["elevation"] == ""
    assert (got[2]["northing"], got[2]["easting"]) == ("1030.0000", "2010.0000")


def test_control_csv_is_a_header_only_without_control_or_setup(tmp_path):
    # written on every build (the contract-shape check expects it), empty when the job uses no control
    out = build_job(SAMPLES / "pi_list_local_ft.toml", tmp_path / "out")
    assert (out / "control.csv").read_text(encoding="utf-8") == "point,northing,easting,elevation,description\n"
    assert "[control]" not in (SAMPLES / "pi_list_local_ft.toml").read_text(encoding="utf-8")


@pytest.mark.parametrize("job", ["harrow_fen_bypass_control_m.toml", "loop_ramp_usft.toml"])
def test_exported_control_checks_back_as_control_shots(tmp_path, job):
    """The crew's control check: control.csv shot back exactly is every row 'control', on its own id."""
    out = build_job(SAMPLES / job, tmp_path / "out")
    r = CliRunner().invoke(app, ["check", str(SAMPLES / job), str(out / "control.csv"), "--out", str(tmp_path / "chk")])
    rows = _rows(tmp_path / "chk" / "check.csv")
    exported = [x["point"] for x in _rows(out / "control.csv")]
    assert [x["point"] for x in rows] == exported
    assert all(x["status"] == "control" for x in rows), rows
    assert [x["design_point"] for x in rows] == exported
    assert all(float(x["horizontal_error"]) == 0.0 for x in rows)
    assert r.exit_code == 0, r.output


def test_alignment_xml_holds_the_control_once_each_as_cgpoints_code_control(tmp_path):
    """Contract: every control point as a CgPoint with code `control` in alignment.xml,
    once each, in the job's order; the file stays valid against the LandXML 1.2 schema
    (lxml with the schema kept in tests/data)."""
    from lxml import etree

    from .helpers import landxml_schema

    out = build_job(SAMPLES / "harrow_fen_bypass_control_m.toml", tmp_path / "out", "--only", "landxml,control")
    doc = etree.parse(str(out / "alignment.xml"))
    landxml_schema().assertValid(doc)
    ns = {"l": doc.getroot().nsmap[None]}
    ctrl = [p for p in doc.iterfind(".//l:CgPoint", ns) if p.get("code") == "control"]
    exported = _rows(out / "control.csv")
    assert [p.get("name") for p in ctrl] == [r["point"] for r in exported]
    for p, r in zip(ctrl, exported):
        n, e, z = (float(v) for v in p.text.split())
        assert (n, e, z) == pytest.approx((float(r["northing"]), float(r["easting"]), float(r["elevation"])), abs=5e-5)
