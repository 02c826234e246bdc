"""report.html and check.html: self-contained, the content the report promises, print CSS.

Outside references: lxml.html parses both files; the values in the tables are
compared with the CSV files of the same build (setout.csv, points.csv), read
with the csv module; the deflections with an independent computation from the
arc's radius (deflection = s / 2R, chord = 2R sin(s / 2R): the arc relations
of references.md); "repeat the column headers on every printed page" is the
CSS 2.1 rule ``thead { display: table-header-group }`` (CSS 2.1, 17.2).
"""

from __future__ import annotations

import math
import re

import pytest
from lxml import html as lhtml
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.writers.html import REPORT_MAX_ROWS, STYLE

from .helpers import SAMPLES, build_job, read_rows, write_job

runner = CliRunner()


@pytest.fixture(scope="module")
def loop_out(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("report")
    return build_job(SAMPLES / "loop_ramp_usft.toml", tmp / "out")


@pytest.fixture(scope="module")
def check_out(tmp_path_factory):
    out = tmp_path_factory.mktemp("check") / "out"
    r = runner.invoke(app, ["check", str(SAMPLES / "loop_ramp_usft.toml"),
                            str(SAMPLES / "staked" / "loop_ramp_shots.csv"), "--out", str(out)])
    assert r.exit_code == 1, r.output  # the sample's shots include an out-of-tolerance one
    return out


def _doc(path):
    return lhtml.fromstring(path.read_bytes())


def _self_contained(doc, raw: bytes) -> None:
    assert not doc.xpath("//script | //link | //img | //iframe | //object | //embed")
    for el in doc.iter():
        for attr in ("src", "href", "xlink:href", "{http://www.w3.org/1999/xlink}href"):
            v = el.get(attr)
            assert v is None or v.startswith("#"), (el.tag, attr, v)
    assert b"url(http" not in raw and b"@import" not in raw and b"//fonts." not in raw


def test_report_is_self_contained(loop_out):
    raw = (loop_out / "report.html").read_bytes()
    _self_contained(_doc(loop_out / "report.html"), raw)
    assert raw.startswith(b"<!DOCTYPE html>")


def test_report_sections(loop_out):
    doc = _doc(loop_out / "report.html")
    heads = [h.text_content() for h in doc.xpath("//h2")]
    assert heads[:3] == ["Curve data", "Plan", "Setout from CF101"]
    assert "Deflections" in heads and "Sign-off" in heads
    text = doc.text_content()
    assert "CAUTION" in text and "Cedar Flats interchange" in text
    assert doc.xpath("//section[@class='picture']/svg") or doc.xpath("//section[@class='picture']//*[local-name()='svg']")
    # the sign-off block: prepared by, checked by, a date for each
    sign = doc.xpath("//div[@class='signoff']")[0].text_content()
    assert "prepared by" in sign and "checked by" in sign and sign.count("date") == 2


def test_setout_table_matches_setout_csv(loop_out):
    doc = _doc(loop_out / "report.html")
    table = doc.xpath("//section[@class='setup']//table[@class='data']")[0]
    heads = [th.text_content() for th in table.xpath("./thead/tr/th")]
    rows = [[td.text_content() for td in tr.xpath("./td")] for tr in table.xpath("./tbody/tr")]
    csv_rows = read_rows(loop_out / "setout.csv")
    assert [r[0] for r in rows] == [r["point"] for r in csv_rows]  # every stake, in point order
    col = heads.index("angle right")
    dist = heads.index("grid dist")
    for r, c in zip(rows, csv_rows):
        diff = (_dms(r[col]) - float(c["angle_right_deg"]) + 180.0) % 360.0 - 180.0
        assert abs(diff) <= 0.5 / 3600 + 1e-9  # whole seconds on the report
        assert abs(float(r[dist]) - float(c["grid_distance"])) <= 0.0005 + 1e-9  # 3 decimals against 4


def _dms(text: str) -> float:
    d, m, s = (float(x) for x in text.split("-"))
    return d + m / 60 + s / 3600


def test_deflections_against_the_arc_relations(loop_out):
    # curve 1's first arc: R 300 from the PC; deflection = s / 2R, chord = 2R sin(s / 2R)
    doc = _doc(loop_out / "report.html")
    h3 = [h for h in doc.xpath("//h3") if h.text_content().startswith("Curve 1, arc from PC")][0]
    table = h3.getnext()
    for tr in table.xpath("./tbody/tr"):
        cells = [td.text_content() for td in tr.xpath("./td")]
        s = float(cells[1])
        assert abs(_dms(cells[2]) - math.degrees(s / 600.0)) < 0.6 / 3600
        assert abs(float(cells[3]) - 600.0 * math.sin(s / 600.0)) < 0.00051


def test_print_css():
    # repeated headers, whole rows, margins, the pictures on landscape pages
    assert "thead { display: table-header-group; }" in STYLE
    assert re.search(r"tr, \.keep \{ break-inside: avoid;", STYLE)
    assert "@page {" in STYLE and "@page picture { size: landscape;" in STYLE
    assert "section.setup + section.setup { break-before: page; }" in STYLE


def test_report_without_setup_lists_the_stakes(tmp_path):
    out = build_job(SAMPLES / "pi_list_local_ft.toml", tmp_path / "out")
    doc = _doc(out / "report.html")
    heads = [h.text_content() for h in doc.xpath("//h2")]
    assert "Stakes" in heads and not any(h.startswith("Setout") for h in heads)
    pts = [r["point"] for r in read_rows(out / "points.csv")]
    table = [h for h in doc.xpath("//h2") if h.text_content() == "Stakes"][0].getnext().getnext()
    assert [tr.xpath("./td")[0].text_content() for tr in table.xpath("./tbody/tr")] == pts


#: What a capped report may weigh (bytes): the first REPORT_MAX_ROWS stakes, deflection rows and the plan.
REPORT_CAPPED_BYTES = 3_000_000


@pytest.mark.slow
def test_report_html_unbounded_at_many_stakes(tmp_path):
    # report.html listed every stake up to 20,000 (9 MB at 19k stakes). Now: the first REPORT_MAX_ROWS,
    # every stake needing attention (r95 over the tolerance: the note of setout.txt), the rest counted
    # and pointed to the files that hold them. lxml.html parses it; the flagged ids and the count of
    # rows left out are compared with setout.csv of the same build (read with the csv module).
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
    from corridor import corridor_job

    job = corridor_job(tmp_path / "big.toml", 50_000, interval=1.0)
    text = job.read_text(encoding="utf-8").replace(
        "backsight_azimuth = 10.0", 'backsight = { id = "CP2", northing = 5000400.0, easting = 500100.0 }')
    job.write_text(text + "[instrument]\nangle_sigma = 2.0\ndistance_sigma = 0.002\ndistance_ppm = 2.0\n"
                   "centering_sigma = 0.001\npole_sigma = 0.003\n[check]\nhorizontal_tolerance = 0.34\n",
                   encoding="utf-8")
    out = build_job(job, tmp_path / "out", "--only", "report,setout")
    assert (out / "report.html").stat().st_size < REPORT_CAPPED_BYTES
    rows = read_rows(out / "setout.csv")
    n = len(rows)
    assert n > 50_000
    # flagged: r95 over the tolerance (setout.csv's r95 is rounded to 4 decimals; the tolerance is 0.34)
    flagged = {r["point"] for r in rows if float(r["r95"]) > 0.3401}
    near = {r["point"] for r in rows if 0.3399 <= float(r["r95"]) <= 0.3401}
    assert len(flagged) > 100
    listed_must = {r["point"] for r in rows[:REPORT_MAX_ROWS]} | flagged
    doc = _doc(out / "report.html")
    table = doc.xpath("//section[@class='setup']//table[@class='data']")[0]
    ids = [tr.xpath("./td")[0].text_content() for tr in table.xpath("./tbody/tr")]
    assert listed_must <= set(ids) <= listed_must | near
    assert ids == [r["point"] for r in rows if r["point"] in set(ids)]  # in the job's order
    # each listed row is its own stake's: distance and r95 as setout.csv gives them, the flag as its note
    heads = [th.text_content() for th in table.xpath("./thead/tr/th")]
    by_id = {r["point"]: r for r in rows}
    for tr in table.xpath("./tbody/tr"):
        cell = dict(zip(heads, (td.text_content() for td in tr.xpath("./td"))))
        r = by_id[cell["point"]]
        assert abs(float(cell["grid dist"]) - float(r["grid_distance"])) <= 0.00051
        assert cell["r95"] == r["r95"]
        assert (cell["note"] == "r95>tol") == (cell["point"] in flagged) or cell["point"] in near
    para = table.getprevious().text_content()
    assert f"{n:,} stakes, {len(ids):,} listed here and {n - len(ids):,} left out" in para
    assert "every stake is in setout.csv, setout.txt and points.csv" in para
    body = doc.text_content()
    assert "every table is in full in deflections.txt" in body
    assert "Left out here:" in body
    defl = sum(len(t.xpath("./tbody/tr")) for t in doc.xpath("//h2[.='Deflections']/following::table[@class='data']"))
    assert defl == REPORT_MAX_ROWS


def test_report_without_setup_capped(tmp_path):
    # without a setup nothing needs attention: the first REPORT_MAX_ROWS stakes, the rest counted
    # (compared with points.csv of the same build)
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
    from corridor import corridor_job

    job = corridor_job(tmp_path / "big.toml", REPORT_MAX_ROWS + 500, interval=5.0, setup=False, sections=False)
    out = build_job(job, tmp_path / "out", "--only", "report,points")
    pts = [r["point"] for r in read_rows(out / "points.csv")]
    doc = _doc(out / "report.html")
    table = [h for h in doc.xpath("//h2") if h.text_content() == "Stakes"][0].getnext().getnext()
    assert [tr.xpath("./td")[0].text_content() for tr in table.xpath("./tbody/tr")] == pts[:REPORT_MAX_ROWS]
    assert f"{len(pts) - REPORT_MAX_ROWS:,} left out" in doc.text_content()


def test_job_text_is_escaped(tmp_path):
    text = (SAMPLES / "pi_list_local_ft.toml").read_text(encoding="utf-8")
    text = re.sub(r'(?m)^name = ".*"$', 'name = "Mill & Dam <north> \\"A\\""', text, count=1)
    out = build_job(write_job(tmp_path, text), tmp_path / "out")
    raw = (out / "report.html").read_bytes()
    assert b"Mill &amp; Dam &lt;north&gt;" in raw and b"<north>" not in raw
    _self_contained(_doc(out / "report.html"), raw)
    assert b"<north>" not in (out / "plan.svg").read_bytes()


def test_check_html_verdict_first(check_out):
    raw = (check_out / "check.html").read_bytes()
    doc = _doc(check_out / "check.html")
    _self_contained(doc, raw)
    body = doc.xpath("//body")[0]
    first_div = body.xpath(".//div")[0]
    assert "verdict" in first_div.get("class") and "NEEDS ATTENTION" in first_div.text_content()
    # the attention table comes before the picture and lists every shot that is not ok
    rows = read_rows(check_out / "check.csv")
    # what needs a person (the outputs contract): out, duplicate, unmatched, a control shot beyond tolerance
    bad = [r["point"] for r in rows if r["status"] in ("out", "duplicate", "unmatched")
           or (r["status"] == "control" and float(r["horizontal_error"]) > 0.05)]
    h2 = [h for h in doc.xpath("//h2") if h.text_content().startswith("Needs attention")][0]
    table = h2.getnext()
    assert [tr.xpath("./td")[0].text_content() for tr in table.xpath("./tbody/tr")] == bad
    order = [h.text_content().split(":")[0].split(",")[0] for h in doc.xpath("//h2")]
    assert order[:4] == ["Needs attention", "Residuals", "Within tolerance", "Superseded"]
    text = doc.text_content()
    assert re.search(r"Residuals, drawn \d+ times their length", text)
    for r in rows:  # every shot's number is in the report
        assert r["point"] in text


def test_check_writes_html_beside_txt(check_out):
    assert sorted(p.name for p in check_out.iterdir()) == ["check.csv", "check.html", "check.txt", "restake.csv"]


def test_setout_table_has_what_the_sheet_has(tmp_path):
    # a stake on the occupied point has no angle and says so; with [instrument] the predicted
    # precision per stake, the same numbers as setout.csv's sigma_along, sigma_across, r95
    from .test_stake_at_instrument import JOB

    out = build_job(write_job(tmp_path, JOB), tmp_path / "o")
    doc = _doc(out / "report.html")
    table = doc.xpath("//section[@class='setup']//table[@class='data']")[0]
    heads = [th.text_content() for th in table.xpath("./thead/tr/th")]
    rows = {tr.xpath("./td")[0].text_content(): [td.text_content() for td in tr.xpath("./td")]
            for tr in table.xpath("./tbody/tr")}
    at = rows["2"]  # the CL stake at 0+00 is the occupied point itself (the job's [setup])
    assert at[heads.index("angle right")] == "" and at[heads.index("note")] == "at the instrument"
    job = SAMPLES / "harrow_fen_bypass_control_m.toml"
    assert "[instrument]" in job.read_text(encoding="utf-8")  # the sample states its instrument
    out = build_job(job, tmp_path / "h")
    doc = _doc(out / "report.html")
    csv_rows = {r["point"]: r for r in read_rows(out / "setout.csv")}
    for table in doc.xpath("//section[@class='setup']//table[@class='data']"):
        heads = [th.text_content() for th in table.xpath("./thead/tr/th")]
        for tr in table.xpath("./tbody/tr"):
            cells = [td.text_content() for td in tr.xpath("./td")]
            assert cells[heads.index("r95")] == csv_rows[cells[0]]["r95"]
