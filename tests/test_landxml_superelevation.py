"""A design file's <Superelevation>, its <CoordinateSystem> and what a job does not use of it
(issue 22, and issue 25 items 5 and 6).

The trial file ``tests/data/landxml/trial_superelevation.xml`` (made by ``tests/landxml_data.py``,
valid against the LandXML 1.2 schema: checked with lxml below) carries one left-hand spiralled
curve with 4 % full superelevation on a 2 % normal crown, its profile (a 1 % grade) and one
``<Superelevation>``.  The expected elevations are worked by hand below from the job-file contract
(job-file.md, "Cross slopes that change along the alignment") and the trade's rule that an edge
lies at the centreline elevation + offset x cross slope (common practice), not from stakeout.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.design import build_design
from stakeout.jobfile import load_job

from .helpers import landxml_schema, write_job

TRIAL = Path(__file__).resolve().parent / "data" / "landxml" / "trial_superelevation.xml"
LANE = 3.75  # m: the lane width of the trial (edge of pavement 3.75 m either side)
ARC = 300.0 * 0.3490658503988659  # the trial's circular arc: R 300 m x 20 degrees in radians (hand value)
EDGES = ('offsets = [{ offset = -3.75, code = "EPL", cross_slope = "superelevation" }, '
         '{ offset = 3.75, code = "EPR", cross_slope = "superelevation" }]')
runner = CliRunner()


def _job(tmp_path: Path, *, crs: str | None = "EPSG:25832", superelevation: bool = True,
         offsets: str = EDGES, xml: str | None = None) -> Path:
    target = tmp_path / "trial.xml"
    if xml is None:
        shutil.copyfile(TRIAL, target)
    else:
        target.write_text(xml, encoding="utf-8")
    lines = ["format = 1", "[job]", 'name = "Superelevation trial"', 'units = "m"']
    if crs is not None:
        lines.append(f'crs = "{crs}"')
    lines += ["[alignment]", 'landxml = "trial.xml"', "[profile]", 'landxml = "trial.xml"',
              "[staking]", "interval = 20.0", offsets]
    if superelevation:
        lines += ["[superelevation]", 'landxml = "trial.xml"', "normal_crown = 2.0"]
    return write_job(tmp_path, "\n".join(lines) + "\n")


def _cl(station: float) -> float:
    """Centreline elevation of the trial's profile: 100.0 at internal 1000, rising 1 % (hand value)."""
    return 100.0 + 0.01 * (station - 1000.0)


def test_trial_file_is_valid_landxml():
    # lxml with the LandXML 1.2 schema (tests/data/LandXML-1.2.xsd): the stations of a
    # <Superelevation> are child elements (BeginRunoutSta ... EndofRunoutSta), FullSuperelev percent
    from lxml import etree

    schema = landxml_schema()
    assert schema.validate(etree.parse(str(TRIAL))), schema.error_log


def test_superelevation_from_the_design_file_was_not_read(tmp_path):
    d = build_design(load_job(_job(tmp_path)))
    sp = d.stakes
    assert sp.elevation is not None and d.sections is not None
    # Rows by the contract, by hand: a left-hand curve has its outside on the right.  n = 2, e = 4:
    # BeginRunout 1170 (-2, -2); BeginRunoff 1200 (left -2, right 0); reverse crown where the right
    # reaches +2 on its way 0 -> 4 over 1200..1260: 1200 + 60 x 2/4 = 1230; FullSuper 1260 (-4, +4);
    # Runoff 1260 + arc; reverse crown 30 m later (60 x (4-2)/4); StartofRunout 1320 + arc; EndofRunout
    # 1350 + arc.
    hand = [1170.0, 1200.0, 1230.0, 1260.0, 1260.0 + ARC, 1290.0 + ARC, 1320.0 + ARC, 1350.0 + ARC]
    assert d.sections.se_stations.tolist() == pytest.approx(hand, abs=1e-6)
    assert d.sections.se_right.tolist() == [-2.0, 0.0, 2.0, 4.0, 4.0, 2.0, 0.0, -2.0]
    assert d.sections.se_left.tolist() == [-2.0, -2.0, -2.0, -4.0, -4.0, -2.0, -2.0, -2.0]
    # every derived row, the reverse-crown rows included, is staked as SE
    # (a row within a millimetre of a key point, SC at 1260 measured from the file's points, is one stake)
    for s in d.sections.se_stations.tolist():
        k = int(abs(sp.stations - s).argmin())
        assert abs(sp.stations[k] - s) < 1e-3 and "SE" in sp.features[k].split(), (s, sp.features[k])
    z = sp.elevation.reshape(-1, 2)
    at = {s: i for i, s in enumerate(sp.stations.tolist())}
    # Full superelevation at 1280 and 1340: right edge (high side) = CL + 0.04 x 3.75 = CL + 0.150,
    # left edge = CL - 0.150 (issue 22: "the centreline elevation + 0.150 (4 % of 3.75 m)").
    for s in (1280.0, 1320.0, 1340.0):
        left, right = z[at[s]]
        assert right == pytest.approx(_cl(s) + 0.150, abs=2e-4)
        assert left == pytest.approx(_cl(s) - 0.150, abs=2e-4)
    # Runoff in: at 1220 the right is 4 x 20/60 = 1.333 % and the left still -2 %;
    # at 1240 the right is 4 x 40/60 = 2.667 %, the left -2 - 2 x 10/30 = -2.667 % (hand values).
    left, right = z[at[1220.0]]
    assert right == pytest.approx(_cl(1220.0) + LANE * (4.0 * 20.0 / 60.0) / 100.0, abs=2e-4)
    assert left == pytest.approx(_cl(1220.0) - LANE * 0.02, abs=2e-4)
    left, right = z[at[1240.0]]
    assert right == pytest.approx(_cl(1240.0) + LANE * (4.0 * 40.0 / 60.0) / 100.0, abs=2e-4)
    assert left == pytest.approx(_cl(1240.0) - LANE * (2.0 + 2.0 * 10.0 / 30.0) / 100.0, abs=2e-4)
    # normal crown before the runout
    left, right = z[at[1100.0]]
    assert (left, right) == pytest.approx((_cl(1100.0) - 0.075, _cl(1100.0) - 0.075), abs=2e-4)
    assert d.warnings == () or not any("superelevation" in w for w in d.warnings)


def test_right_hand_trial_puts_the_high_side_on_the_left(tmp_path):
    # the same trial turning right: the outside, away from the centre, is the left (job-file.md), so at
    # 1+320 the left edge is CL + 0.150 and the right CL - 0.150 (hand values as above)
    from .helpers import build_job, read_rows
    from .landxml_data import trial_superelevation

    out = build_job(_job(tmp_path, xml=trial_superelevation(turn=1)), tmp_path / "o")
    rows = {(r["station_label"], r["offset"]): r for r in read_rows(out / "stations.csv")}
    assert rows[("1+320.000", "-3.7500")]["elevation"] == "103.3500"
    assert rows[("1+320.000", "3.7500")]["elevation"] == "103.0500"


def test_trial_right_edge_at_1_320_was_low(tmp_path):
    # issue 22's check, through the command and stations.csv: at 1+320 (full superelevation) the right
    # edge, the high side of this left-hand curve, is CL 103.2000 + 0.0400 x 3.75 = 103.3500 (hand value)
    from .helpers import build_job, read_rows

    out = build_job(_job(tmp_path), tmp_path / "o")
    rows = {(r["station_label"], r["offset"]): r for r in read_rows(out / "stations.csv")}
    right = rows[("1+320.000", "3.7500")]
    assert (right["elevation"], right["cross_slope"]) == ("103.3500", "4.0000")
    left = rows[("1+320.000", "-3.7500")]
    assert (left["elevation"], left["cross_slope"]) == ("103.0500", "-4.0000")


def test_design_file_was_parsed_once_per_use(tmp_path, monkeypatch):
    import stakeout.landxml as lx

    calls = []
    real = lx.parse_landxml

    def counting(data, source="LandXML data"):
        calls.append(source)
        return real(data, source)

    monkeypatch.setattr(lx, "parse_landxml", counting)
    job = load_job(_job(tmp_path))
    assert len(calls) == 1  # alignment, profile and superelevation from one parse
    assert [f.role for f in job.design_files] == ["alignment", "profile", "superelevation"]


def test_unused_content_was_reported_per_element_and_twice(tmp_path):
    out = tmp_path / "o"
    r = runner.invoke(app, ["build", str(_job(tmp_path)), "--out", str(out)])
    assert r.exit_code == 0, r.output
    said = [ln for ln in r.output.splitlines() if "not used" in ln]
    # once per file and kind, with counts (outputs.md, "Content not used")
    assert said == ["not used from trial.xml: 3 Feature, 1 CrossSects"]
    files = json.loads((out / "manifest.json").read_text())["design_files"]
    assert [f["not_used"] for f in files] == [["3 Feature", "1 CrossSects"], [], []]


def test_unapplied_superelevation_was_only_listed(tmp_path):
    offsets = 'offsets = [{ offset = 3.75, code = "EPR", cross_slope = -2.0 }]'
    job = _job(tmp_path, superelevation=False, offsets=offsets)
    d = build_design(load_job(job))
    want = "offset elevations ignore the design file's superelevation from 1+170.000 to 1+454.720"
    assert any(w.startswith(want) for w in d.warnings), d.warnings
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "o")])
    assert r.exit_code == 0, r.output
    assert any(ln.startswith("warning: " + want) for ln in r.output.splitlines()), r.output
    assert "not used from trial.xml: 3 Feature, 1 CrossSects, 1 Superelevation" in r.output


def test_design_file_crs_was_not_compared(tmp_path):
    r = runner.invoke(app, ["build", str(_job(tmp_path, crs="EPSG:25833")), "--out", str(tmp_path / "o")])
    assert r.exit_code == 2, r.output
    msg = r.output.strip()
    assert len(msg.splitlines()) == 1 and "EPSG:25832" in msg and "EPSG:25833" in msg, msg
    assert not (tmp_path / "o").exists()


def test_design_file_crs_given_by_name_or_wkt_is_compared(tmp_path):
    # pyproj (reference library) resolves the name, and the WKT of EPSG:25832, to the job's CRS or not
    from pyproj import CRS

    by_name = TRIAL.read_text().replace(' epsgCode="25832"', "")
    r = runner.invoke(app, ["build", str(_job(tmp_path, crs="EPSG:25833", xml=by_name)), "--out", str(tmp_path / "o")])
    assert r.exit_code == 2 and "'ETRS89 / UTM zone 32N'" in r.output and "EPSG:25833" in r.output, r.output
    wkt = CRS.from_epsg(25832).to_wkt().replace('"', "&quot;")
    by_wkt = TRIAL.read_text().replace('name="ETRS89 / UTM zone 32N" epsgCode="25832"', f'ogcWktCode="{wkt}"')
    sub = tmp_path / "w"
    sub.mkdir()
    r = runner.invoke(app, ["build", str(_job(sub, xml=by_wkt)), "--out", str(sub / "o")])
    assert r.exit_code == 0, r.output  # the same CRS: compared, so not listed
    assert "CoordinateSystem" not in r.output


def test_design_file_crs_that_cannot_be_compared_is_listed(tmp_path):
    r = runner.invoke(app, ["build", str(_job(tmp_path, crs=None)), "--out", str(tmp_path / "o")])
    assert r.exit_code == 0, r.output
    assert "not used from trial.xml: 3 Feature, 1 CrossSects, 1 CoordinateSystem" in r.output
    unknown = TRIAL.read_text().replace('name="ETRS89 / UTM zone 32N" epsgCode="25832"', 'name="site grid 7"')
    sub = tmp_path / "b"
    sub.mkdir()
    r = runner.invoke(app, ["build", str(_job(sub, xml=unknown)), "--out", str(sub / "o")])
    assert r.exit_code == 0, r.output
    assert "1 CoordinateSystem" in r.output


@pytest.mark.parametrize(("old", "new", "expect"), [
    ("<FullSuperSta>1260.0</FullSuperSta>", "<FullSuperSta>1260.0</FullSuperSta><FullSuperSta>1261.0</FullSuperSta>",
     "Superelevation 1: two <FullSuperSta> that differ"),
    ("<FullSuperSta>1260.0</FullSuperSta>", "", "<Superelevation> 1 of alignment 'TRIAL': FullSuperSta missing"),
    ("<FullSuperelev>4.0</FullSuperelev>", "<FullSuperelev>400.0</FullSuperelev>", "FullSuperelev = '400.0': out of range"),
    ("<BeginRunoffSta>1200.0</BeginRunoffSta>", "<BeginRunoffSta>1e12</BeginRunoffSta>", "BeginRunoffSta"),
    ('staStart="1170.0"', 'staStart="1180.0"', "BeginRunoutSta 1170 lies outside the element's staStart"),
    ("<BeginRunoffSta>1200.0</BeginRunoffSta>", "<BeginRunoffSta>1300.0</BeginRunoffSta>", "stations out of order"),
    ("<AdverseSE>non-adverse</AdverseSE>", "<AdverseSE>adverse</AdverseSE>", "<AdverseSE>adverse</AdverseSE>"),
])
def test_superelevation_stations_missing_or_contradictory_named(tmp_path, old, new, expect):
    text = TRIAL.read_text()
    assert old in text
    r = runner.invoke(app, ["build", str(_job(tmp_path, xml=text.replace(old, new))), "--out", str(tmp_path / "o")])
    assert r.exit_code == 2, r.output
    assert expect in r.output and len(r.output.strip().splitlines()) == 1, r.output


# ---- alignment.xml: float noise and its date (issue 25 item 11) ---------------------------------------------

def _export(tmp_path: Path, name: str, env: dict[str, str] | None = None) -> bytes:
    job = _job(tmp_path, superelevation=False, offsets='offsets = [{ offset = 3.75, code = "EPR" }]')
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / name), "--only", "landxml"], env=env)
    assert r.exit_code == 0, r.output
    return (tmp_path / name / "alignment.xml").read_bytes()


def test_alignment_xml_carried_float_noise_and_an_epoch_date(tmp_path, monkeypatch):
    import re

    from lxml import etree

    monkeypatch.delenv("SOURCE_DATE_EPOCH", raising=False)
    xml = _export(tmp_path, "a")
    doc = etree.fromstring(xml)
    schema = landxml_schema()
    assert schema.validate(doc), schema.error_log  # LandXML 1.2 schema (lxml): date and time are required
    ns = "{http://www.landxml.org/schema/LandXML-1.2}"
    # derived lengths, stations, radii and chords: the CSVs' 4 decimals (what f"{v:.4f}" prints)
    derived = [(el.tag, a, el.get(a)) for el in doc.iter(f"{ns}Line", f"{ns}Curve", f"{ns}Spiral")
               for a in ("length", "staStart") + (("chord",) if el.tag != f"{ns}Line" else ())
               + (("radius",) if el.tag == f"{ns}Curve" else ())]
    assert len(derived) == 5 * 2 + 3 + 1
    for tag, a, v in derived:
        assert v is not None and re.fullmatch(r"\d+\.\d{4}", v), (tag, a, v)
    assert doc.find(f"{ns}Alignments/{ns}Alignment").get("length") == "624.7198"  # 200 + 60 + 104.7198 + 60 + 200
    # without SOURCE_DATE_EPOCH: the fixed documented date, the same bytes every run
    assert (doc.get("date"), doc.get("time")) == ("1970-01-01", "00:00:00")
    assert _export(tmp_path, "b") == xml
    # with it (reproducible-builds convention, seconds since 1970-01-01 UTC): that date, in UTC
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1764806400")  # 2025-12-04 00:00:00 UTC (hand conversion)
    dated = etree.fromstring(_export(tmp_path, "c"))
    assert (dated.get("date"), dated.get("time")) == ("2025-12-04", "00:00:00")
    assert schema.validate(dated), schema.error_log


def test_superelevation_from_a_file_of_several_alignments_named_the_wrong_key(tmp_path):
    # an inline alignment and a design file of two alignments: which one's superelevation is meant is
    # not known; the message names the superelevation key (it named [alignment] name before)
    text = TRIAL.read_text()
    two = text.replace("  </Alignments>", text[text.index("    <Alignment "):text.index("  </Alignments>")]
                       .replace('name="TRIAL"', 'name="OTHER"', 1) + "  </Alignments>")
    (tmp_path / "two.xml").write_text(two, encoding="utf-8")
    job = write_job(tmp_path, "\n".join([
        "format = 1", "[job]", 'name = "x"', 'units = "m"', "[alignment]", 'name = "CL"',
        'start = { station = 1000.0, northing = 5500100.0, easting = 500200.0 }', "azimuth = 15.0",
        "[[alignment.element]]", 'kind = "line"', "length = 600.0",
        "[profile]", "[[profile.pvi]]", "station = 1000.0", "elevation = 100.0", "[[profile.pvi]]",
        "station = 1600.0", "elevation = 106.0", "[staking]", "interval = 20.0", EDGES,
        "[superelevation]", 'landxml = "two.xml"', "normal_crown = 2.0"]) + "\n")
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "o")])
    assert r.exit_code == 2, r.output
    assert "superelevation.landxml = 'two.xml': the file holds 2 alignments ('TRIAL', 'OTHER')" in r.output
