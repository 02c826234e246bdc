"""Every warning of a build is on the first page of setout.txt (and in report.html's header),
so a design file's superelevation the job does not apply is never only a console line
(issue 25 item 6; outputs.md, "Additions, second set": the warning's wording is the contract's).

Outside reference: common practice (what a crew is not told on the sheet it does not see);
the pages are split at form feeds as printed.
"""

from __future__ import annotations

import dataclasses

import pytest
from lxml import html as lhtml

from stakeout.design import build_design
from stakeout.jobfile import load_job
from stakeout.writers.html import report_html
from stakeout.writers.sheets import setout_sheet

from .helpers import SAMPLES

WARNING = "offset elevations ignore the design file's superelevation from 11+80 to 16+20"


@pytest.mark.parametrize("sample", ["kestrel_rise_superelevation_m.toml", "harrow_fen_bypass_control_m.toml"])
def test_superelevation_warning_was_only_a_console_line(sample):
    d = build_design(load_job(str(SAMPLES / sample)))
    d = dataclasses.replace(d, warnings=(*d.warnings, WARNING))
    first_page = setout_sheet(d).decode("utf-8").split("\f")[0]  # the sheet's bytes (UTF-8)
    assert " ".join(first_page.split()).count(WARNING) == 1  # wrapped lines joined
    for w in d.warnings:
        assert " ".join(w.split()) in " ".join(first_page.split())
    doc = lhtml.fromstring(report_html(d, "<svg/>"))
    header = " ".join(doc.xpath("//header")[0].text_content().split())
    assert WARNING in header


def test_unapplied_design_file_superelevation_heads_the_setout_sheet(tmp_path):
    # the design file's <Superelevation> that the job does not apply (tests/data/landxml, the trial file)
    from .test_landxml_superelevation import _job

    offsets = 'offsets = [{ offset = 3.75, code = "EPR", cross_slope = -2.0 }]'
    job = _job(tmp_path, superelevation=False, offsets=offsets)
    job.write_text(job.read_text(encoding="utf-8")
                   + '[setup]\noccupied = { id = "CP1", northing = 5500000.0, easting = 500100.0 }\n'
                     'backsight = { id = "CP2", northing = 5500300.0, easting = 500100.0 }\n', encoding="utf-8")
    d = build_design(load_job(job))
    want = "offset elevations ignore the design file's superelevation from 1+170.000 to 1+454.720"
    first_page = " ".join(setout_sheet(d).decode("utf-8").split("\f")[0].split())
    assert "WARNING " + want in first_page
