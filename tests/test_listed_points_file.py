"""``staking.points`` read from the job file: the CSV of stakes by station and
offset, every bad file and bad row refused with the key, the file and the line.

References: the contract, ../shared/design/job-file.md, "Points by station
and offset" (the columns it names); RFC 4180 (CSV; quoted fields) written by
Python's ``csv`` module as an independent writer of the files read here; the
``codecs`` UTF-16/UTF-32 encoders for the encodings refused by name.
"""

from __future__ import annotations

import codecs
import csv
import io
import math
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.errors import JobFileError
from stakeout.jobfile import load_job
from stakeout.limits import MAX_STAKED_FILE_BYTES
from stakeout.stations import StationRef

JOB = """format = 1
[job]
name = "listed points"
units = "m"
[alignment]
name = "A"
start = { station = "0+000", northing = 1000.0, easting = 2000.0 }
azimuth = 90.0
[[alignment.element]]
kind = "line"
length = 500.0
[staking]
interval = 100.0
elevation = 50.0
points = "structures.csv"
"""


def _csv(rows: list[list[str]], delimiter: str = ",") -> str:
    out = io.StringIO()
    csv.writer(out, delimiter=delimiter, lineterminator="\n").writerows(rows)
    return out.getvalue()


def _job(tmp_path: Path, data: str | bytes, job: str = JOB) -> Path:
    p = tmp_path / "structures.csv"
    if isinstance(data, str):
        p.write_text(data, encoding="utf-8", newline="")
    else:
        p.write_bytes(data)
    j = tmp_path / "job.toml"
    j.write_text(job, encoding="utf-8")
    return j


def _refused(tmp_path: Path, data: str | bytes) -> str:
    with pytest.raises(JobFileError) as exc:
        load_job(_job(tmp_path, data))
    msg = str(exc.value)
    assert "\n" not in msg
    assert msg.startswith("staking.points = 'structures.csv'"), msg
    return msg


GOOD = _csv([
    ["id", "station", "offset", "code", "elevation", "skew", "description", "region"],
    ["MH1", "0+120.000", "-4.5", "MH", "49.875", "", "manhole, inlet side", ""],
    ["", "250", "6", "SIGN", "", "", "", ""],
    ["B2", "0+300.5", "12.0", "BENT", "", "15-30-00", "bent 2", "1"],
])


def test_contract_columns_read(tmp_path):
    job = load_job(_job(tmp_path, GOOD))
    lp = job.staking.points
    assert lp is not None and len(lp) == 3
    assert lp.path == "structures.csv"
    assert lp.station == (StationRef(120.0, None, "staking.points = 'structures.csv' line 2 station"),
                          StationRef(250.0, None, "staking.points = 'structures.csv' line 3 station"),
                          StationRef(300.5, 1, "staking.points = 'structures.csv' line 4 station"))
    assert lp.offset == (-4.5, 6.0, 12.0)
    assert lp.skew == (0.0, 0.0, 15.5)  # 15-30-00 is 15.5 degrees
    assert lp.code == ("MH", "SIGN", "BENT")
    assert lp.description == ("manhole, inlet side", "", "bent 2")
    assert lp.id == ("MH1", None, "B2")
    assert lp.elevation[0] == 49.875 and math.isnan(lp.elevation[1]) and math.isnan(lp.elevation[2])
    assert lp.line == (2, 3, 4)


def test_only_the_required_columns_in_any_order_and_case(tmp_path):
    lp = load_job(_job(tmp_path, "Code;OFFSET;Station\nCB;-3;0+010\n")).staking.points
    assert lp is not None
    assert lp.code == ("CB",) and lp.offset == (-3.0,) and lp.station[0].value == 10.0
    assert lp.skew == (0.0,) and lp.id == (None,) and lp.description == ("",)


def test_the_file_is_a_protected_input_with_its_hash(tmp_path):
    import hashlib

    job = load_job(_job(tmp_path, GOOD))
    rec = [f for f in job.design_files if f.role == "points"]
    assert [(f.path, f.sha256) for f in rec] == [("structures.csv", hashlib.sha256(GOOD.encode()).hexdigest())]
    assert str(tmp_path / "structures.csv") in job.inputs()


def test_relative_to_the_job_file_not_the_working_folder(tmp_path, monkeypatch):
    sub = tmp_path / "jobs"
    sub.mkdir()
    j = _job(sub, GOOD)
    monkeypatch.chdir(tmp_path)
    assert len(load_job(Path("jobs") / j.name).staking.points or ()) == 3


def test_a_trailing_delimiter_with_empty_cells_reads(tmp_path):
    lp = load_job(_job(tmp_path, "station,offset,code,\n10,1,CB,\n20,2,CB\n")).staking.points
    assert lp is not None and lp.offset == (1.0, 2.0)


def test_tab_delimited_and_utf16_with_a_mark_and_windows_1252(tmp_path):
    text = _csv([["station", "offset", "code", "description"], ["10", "1", "X", "café"]], "\t")
    for data in (text, codecs.BOM_UTF16_LE + text.encode("utf-16-le"), text.encode("cp1252")):
        lp = load_job(_job(tmp_path, data)).staking.points
        assert lp is not None and lp.description == ("café",)


# ---- refusals: each names staking.points, the file, and the line and value of a bad row ----

@pytest.mark.parametrize("data, expect", [
    # encodings
    (codecs.BOM_UTF32_LE + "station,offset,code\n".encode("utf-32-le"), "is UTF-32 text"),
    ("station,offset,code\n".encode("utf-16-le"), "holds a NUL byte"),
    (b"station,offset,code\n10,1,\x81\x8d\x8f\n", "neither UTF-8 nor Windows-1252"),
    # empty, header only, no header
    ("", "empty"),
    ("\n \n", "empty"),
    ("station,offset,code\n", "line 1 is the header and no points follow"),
    ("10,1,CB\n", "line 1: the header '10,1,CB' does not name station, offset, code"),
    ("station,code\n10,CB\n", "line 1: the header 'station,code' does not name offset"),
    # delimiters: comma, semicolon, tab or spaces, the one splitting the header into the most fields
    ("station|offset|code\n10|1|CB\n", "line 1: the header 'station|offset|code' does not name station, offset, code"),
    ("station,offset,code\n10;1;CB\n", "line 2: no offset"),
    ("station;offset;code\n10,5;1;CB\n", "line 2 station = '10,5': not a station"),
    # duplicate and unknown columns
    ("station,offset,code,Offset\n10,1,CB,2\n", "line 1: the header names 'offset' twice (columns 2, 4"),
    ("station,offset,code,elevaton\n10,1,CB,2\n", "line 1: the header names the column 'elevaton'"),
    # fields
    ("station,offset,code,\n10,1,CB,\n20,1,CB,x\n", "line 3: field 4 'x' lies under a column the header does not name"),
    ("station,offset,code\n10,1,CB,extra\n", "line 2: 4 fields, but the header names 3 columns"),
    ("station,offset,code\n10,,CB\n", "line 2: no offset"),
    ("station,offset,code\n10,1,\n", "line 2: no code"),
    ("station,offset,code\n\n\n10,1,CB\n,1,CB\n", "line 5: no station"),
    ('station,offset,code\n"10\n",1,CB\n20,x,CB\n', "line 4: offset 'x' is not a number"),  # a quoted line break counts
    ("station,offset,code\n10,1,CB\n" + "1," * 40000 + "\n", "line 3: a row of over 65,536 characters"),
    ("station,offset,code\n10,1," + "C" * 5000 + "\n", "line 2: field 3 is 5,000 characters long"),
    # non-numbers
    ("station,offset,code\n10,1_0,CB\n", "line 2: offset '1_0' is not a number written with the ASCII digits"),
    ("station,offset,code\n10,١,CB\n", "line 2: offset '١' is not a number written with the ASCII digits"),
    ("station,offset,code\n10,nan,CB\n", "line 2: offset 'nan' is not a number"),
    ("station,offset,code\n10,1e10,CB\n", "line 2: offset '1e10' is out of range"),
    ("station,offset,code,elevation\n10,1,CB,1e6\n", "line 2: elevation '1e6' is out of range"),
    ("station,offset,code,elevation\n10,1,CB,high\n", "line 2: elevation 'high' is not a number"),
    # stations and regions
    ("station,offset,code\n1+2x,1,CB\n", "line 2 station = '1+2x': not a station"),
    ("station,offset,code\n1+23.4,1,CB\n", "line 2 station = '1+23.4': the part after '+' must have exactly 3 digits"),
    ("station,offset,code\n1e12,1,CB\n", "line 2 station = '1e12': not a station"),
    ("station,offset,code\n2000000000,1,CB\n", "line 2 station = 2000000000.0: out of range"),
    ("station,offset,code,region\n10,1,CB,0\n", "line 2: region '0' is not a region number"),
    ("station,offset,code,region\n10,1,CB,two\n", "line 2: region 'two' is not a region number"),
    # skews: |skew| < 90
    ("station,offset,code,skew\n10,1,CB,90\n", "line 2: skew '90' is out of range; a skew lies strictly between -90 and 90"),
    ("station,offset,code,skew\n10,1,CB,-95-00-00\n", "line 2: skew '-95-00-00' is out of range"),
    ("station,offset,code,skew\n10,1,CB,left\n", "line 2 skew = 'left': not an angle"),
    ("station,offset,code,skew\n10,1,CB,10-75-00\n", "line 2 skew = '10-75-00': minutes must be less than 60"),
    # ids and codes
    ("station,offset,code\n10,1,C B\n", "line 2: code 'C B' is not a code"),
    ("station,offset,code\n10,1,-CB\n", "line 2: code '-CB' is not a code"),
    ("station,offset,code,id\n10,1,CB,ABCDEFGHIJKLMNOPQRSTU\n", "line 2: id 'ABCDEFGHIJKLMNOPQRSTU' is not a point id"),
    ("station,offset,code,id\n10,1,CB,P1\n20,1,CB,P2\n30,1,CB,P1\n", "line 4: id 'P1' is given twice (first at line 2)"),
    ("station,offset,code,description\n10,1,CB,a\x1bb\n", "line 2 description = 'a\\x1bb': character 2 is U+001B (ESC)"),
])
def test_refused(tmp_path, data, expect):
    assert expect in _refused(tmp_path, data)


def test_too_large_refused_before_reading(tmp_path):
    p = tmp_path / "structures.csv"
    with open(p, "wb") as fh:
        fh.truncate(MAX_STAKED_FILE_BYTES + 1)  # sparse: nothing is written
    (tmp_path / "job.toml").write_text(JOB, encoding="utf-8")
    with pytest.raises(JobFileError, match=r"^staking.points = '.*structures.csv': 268,435,457 bytes; the limit is 256 MiB$"):
        load_job(tmp_path / "job.toml")


def test_missing_file_and_folder_refused(tmp_path):
    (tmp_path / "job.toml").write_text(JOB, encoding="utf-8")
    with pytest.raises(JobFileError, match=r"^staking.points = '.*structures.csv': not found$"):
        load_job(tmp_path / "job.toml")
    (tmp_path / "structures.csv").mkdir()
    with pytest.raises(JobFileError, match="is a folder"):
        load_job(tmp_path / "job.toml")


def test_key_must_be_text(tmp_path):
    j = tmp_path / "job.toml"
    j.write_text(JOB.replace('points = "structures.csv"', "points = 3"), encoding="utf-8")
    with pytest.raises(JobFileError, match="staking.points = 3: expected text"):
        load_job(j)
    j.write_text(JOB.replace('points = "structures.csv"', 'points = " "'), encoding="utf-8")
    with pytest.raises(JobFileError, match="staking.points = ' ': empty"):
        load_job(j)


def test_a_bad_row_exits_2_through_the_cli_and_writes_nothing(tmp_path):
    job = _job(tmp_path, "station,offset,code\n10,1,CB\n20,abc,CB\n")
    out = tmp_path / "out"
    r = CliRunner().invoke(app, ["build", str(job), "--out", str(out)])
    assert r.exit_code == 2
    assert "staking.points = 'structures.csv' line 3: offset 'abc' is not a number" in r.output
    assert "Traceback" not in r.output
    assert not out.exists()


def test_the_readme_example_reads(tmp_path):
    readme = (Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")
    start = readme.index("```\nid,station,offset,code,skew,elevation,description\n") + 4
    example = readme[start:readme.index("```", start)]
    lp = load_job(_job(tmp_path, example, JOB.replace("length = 500.0", "length = 600.0"))).staking.points
    assert lp is not None
    assert lp.id == ("MH12", None, "B2L", "B2R") and lp.skew == (0.0, 0.0, 20.0, 20.0)
    assert lp.elevation[0] == 101.385 and lp.code == ("MH", "SIGN", "BENT", "BENT")
