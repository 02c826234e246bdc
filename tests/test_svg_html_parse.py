"""Every SVG and HTML output parses whatever printable text the job's names carry.

Regression (issue: a Unicode noncharacter, U+FFFE, in the job name made
plan.svg malformed XML): noncharacters are now refused by the job-file
reader (tests/broken_jobs/job_name_noncharacter.toml), and names with
markup characters, non-BMP letters, right-to-left script and combining marks
still give outputs that lxml parses (the outside reference: lxml's strict
XML parser for the SVG files, its HTML parser for the HTML files, and the
SVG embedded in report.html parsed as XML on its own).
"""

from __future__ import annotations

import re

import pytest
from lxml import etree, html

from .helpers import SAMPLES, build_job, write_job

NAMES = [
    'Quotes " and \' and <tags> & ampersands',
    "Straße 測量 ☃ 𝔘𝔫𝔦𝔠𝔬𝔡𝔢 🚧",
    "طريق الدائري (ring road) שלום",
    "e\u0301 combining, ﷽ wide, \ufdcf last before the noncharacters",
]


@pytest.mark.parametrize("name", NAMES)
def test_every_svg_and_html_output_parses(tmp_path, name):
    text = (SAMPLES / "loop_ramp_usft.toml").read_text(encoding="utf-8")
    text = re.sub(r'(?m)^name = "[^"]*"', lambda m: "name = " + _toml_string(name), text, count=1)
    out = build_job(write_job(tmp_path, text), tmp_path / "out")
    svgs = sorted(out.glob("*.svg"))
    assert svgs
    for f in svgs:
        root = etree.fromstring(f.read_bytes())  # strict XML: raises on any character XML cannot carry
        assert root.tag.endswith("svg")
        assert name in "".join(root.itertext()) or f.name != "plan.svg"
    report = (out / "report.html").read_text(encoding="utf-8")
    doc = html.document_fromstring(report)
    assert name in doc.text_content()
    for svg in re.findall(r"<svg\b.*?</svg>", report, flags=re.S):
        etree.fromstring(svg.encode("utf-8"))


def _toml_string(s: str) -> str:
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"') + '"'
