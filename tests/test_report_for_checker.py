"""report.html holds what a checker of the sheets needs (issue 25 item 7): the profile with
its picture, the spiral data, offsets with their side; profile.svg labels round stations of
the stationing in force past an equation and writes grades, L and K.

Outside references: lxml.html and lxml.etree read the files; the tables are compared with
profile.csv and spirals.csv of the same build (csv module); the grades, K and the ahead
stationing are recomputed here from the sample's PVIs and its equation (grade = rise / run,
K = L / |A| with A in percent: AASHTO "A Policy on Geometric Design", 2018, 3.4.6, common
practice); LT/RT for left and right of the line looking up-station is common practice.
"""

from __future__ import annotations

import re

import pytest
from lxml import etree
from lxml import html as lhtml

from .helpers import SAMPLES, build_job, read_rows


@pytest.fixture(scope="module")
def kestrel(tmp_path_factory):
    return build_job(SAMPLES / "kestrel_rise_superelevation_m.toml", tmp_path_factory.mktemp("k") / "out")


def _table_after(doc, heading: str) -> list[list[str]]:
    rows = doc.xpath(f'//h2[starts-with(normalize-space(.), "{heading}")]/following-sibling::table[1]//tr')
    return [[c.text_content() for c in r] for r in rows]


def test_report_html_lacked_the_profile(kestrel):
    doc = lhtml.fromstring((kestrel / "report.html").read_bytes())
    table = _table_after(doc, "Profile")
    head, body = table[0], table[1:]
    csv_rows = read_rows(kestrel / "profile.csv")
    assert len(body) == len(csv_rows) == 3
    col = {h: k for k, h in enumerate(head)}
    for row, want in zip(body, csv_rows):
        assert row[col["station"]] == want["station_label"]
        assert row[col["elevation"]] == want["elevation"]
        assert row[col["grade in %"]] == want["grade_in"] and row[col["grade out %"]] == want["grade_out"]
        assert row[col["curve L"]] == want["curve_length"] and row[col["K"]] == want["k_value"]
        assert row[col["high/low el"]] == want["high_low_elevation"]
    # the sample: 0+000 112.000, 0+450 118.500 (L 160), 0+950 121.000, the equation 0+700 BK = 0+690 AH
    # stepping back 10 m: the second grade runs 510 m (grade = rise / run, common practice)
    g1, g2 = 6.5 / 450 * 100, 2.5 / 510 * 100
    assert float(body[1][col["grade in %"]]) == pytest.approx(g1, abs=1e-6)
    assert float(body[1][col["grade out %"]]) == pytest.approx(g2, abs=1e-6)
    assert float(body[1][col["K"]]) == pytest.approx(160.0 / abs(g2 - g1), abs=1e-4)  # K = L / |A|
    # the profile picture is embedded as the plan picture is
    pictures = doc.xpath('//section[@class="picture"]')
    assert any("PROFILE" in p.text_content() for p in pictures)


def test_report_html_lacked_the_spiral_data(kestrel):
    doc = lhtml.fromstring((kestrel / "report.html").read_bytes())
    table = _table_after(doc, "Spirals")
    head, body = table[0], table[1:]
    csv_rows = read_rows(kestrel / "spirals.csv")
    assert len(body) == len(csv_rows) == 2
    col = {h: k for k, h in enumerate(head)}
    for row, want in zip(body, csv_rows):
        for mine, theirs in (("length", "length"), ("radius start", "radius_start"), ("radius end", "radius_end"),
                             ("theta deg", "theta_deg"), ("X", "x"), ("Y", "y"), ("p", "p"), ("k", "k"),
                             ("LT", "long_tangent"), ("ST", "short_tangent"), ("turn", "turn"),
                             ("element", "element")):
            assert row[col[mine]] == want[theirs], mine
    # a 70 m spiral to R 350: theta = L / 2R rad = 5.72957795 deg (the clothoid relation, common practice)
    assert body[0][col["theta deg"]] == "5.72957795"


def test_report_html_printed_offsets_without_their_side(kestrel):
    doc = lhtml.fromstring((kestrel / "report.html").read_bytes())
    rows = doc.xpath('//section[@class="setup"]//table[@class="data"]//tr')
    head = [c.text_content() for c in rows[0]]
    at = head.index("offset")
    printed = [[c.text_content() for c in r][at] for r in rows[1:]]
    want = read_rows(kestrel / "setout.csv")
    assert len(printed) == len(want)
    for text, w in zip(printed, want):
        o = float(w["offset"])  # negative left, positive right, looking up-station (common practice)
        expect = f"{abs(o):.3f} LT" if o < 0 else f"{o:.3f} RT" if o > 0 else f"{0.0:.3f}"
        assert text == expect
    assert not any(t.startswith("-") for t in printed)


def test_profile_svg_labelled_internal_stations_past_an_equation(kestrel):
    svg = etree.fromstring((kestrel / "profile.svg").read_bytes())
    texts = [t.text or "" for t in svg.iter("{http://www.w3.org/2000/svg}text")]
    stations = [t for t in texts if re.fullmatch(r"\d+\+\d{3}\.\d{3}(\(\d+\))?", t)]
    # every grid label is a round 100 m of the stationing in force (0+000 ... 0+900, 0+700 once the
    # equation 0+700 BK = 0+690 AH steps back), never an internal 0+710, 0+810 ...; 0+700 of region 2
    # is also the equation's back station in region 1, so it carries its region (outputs contract)
    assert stations == [f"0+{k}00.000" for k in range(7)] + ["0+700.000(2)", "0+800.000", "0+900.000"]
    assert "0+700.000 BK = 0+690.000 AH" in texts
    # each grade in percent and the vertical curve's L and K (as recomputed above)
    assert f"{6.5 / 450 * 100:+.4f} %" in texts and f"{2.5 / 510 * 100:+.4f} %" in texts
    assert any(t.startswith("L 160.0000  K 167.67") for t in texts)
