"""Issue 28 item 5: negative station labels (``-0+120.000``) and every other
text field that a spreadsheet would take as a formula get the guard
check.csv uses for shot ids; numbers stay numbers.  The leading characters
are those of the usual CSV-injection guidance (common practice); read back
with the standard library's csv module.
"""

import csv

from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.writers.tables import csv_guard, csv_text_field

from .helpers import write_job

runner = CliRunner()

NEGATIVE = """format = 1
[job]
name = "stations before zero"
units = "m"
[alignment]
name = "N"
start = { station = "-0+120", northing = 1000.0, easting = 1000.0 }
azimuth = 90.0
[[alignment.element]]
kind = "line"
length = 300.0
[staking]
interval = 50.0
[profile]
name = "P"
[[profile.pvi]]
station = "-0+120"
elevation = 10.0
[[profile.pvi]]
station = "0+180"
elevation = 12.0
"""

FORMULA = ("=", "+", "-", "@", "\t", "\r")


def _rows(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def _text_fields_safe(rows, numeric):
    for row in rows:
        for k, v in row.items():
            if k in numeric or v == "":
                continue
            try:
                float(v)
                continue  # a number: never guarded
            except ValueError:
                pass
            assert v[:1] not in FORMULA, (k, v)


def test_negative_station_labels_become_formulas(tmp_path):
    job = write_job(tmp_path, NEGATIVE)
    out = tmp_path / "o"
    r = runner.invoke(app, ["build", str(job), "--out", str(out), "--only", "stations,profile,points"])
    assert r.exit_code == 0, r.output
    st = _rows(out / "stations.csv")
    assert st[0]["station_label"] == "'-0+120.000" and st[0]["station"] == "-120.0000"
    assert st[-1]["station_label"] == "0+180.000"
    _text_fields_safe(st, {"station", "offset", "northing", "easting", "elevation"})
    pr = _rows(out / "profile.csv")
    assert pr[0]["station_label"] == "'-0+120.000" and float(pr[0]["station"]) == -120.0
    _text_fields_safe(pr, set())
    _text_fields_safe(_rows(out / "points.csv"), {"northing", "easting", "elevation"})


def test_guard_function():
    for lead in FORMULA:
        assert csv_guard(lead + "1") == "'" + lead + "1"
    assert csv_guard("CL") == "CL" and csv_guard("") == ""
    assert csv_text_field("=a,b") == "\"'=a,b\""

