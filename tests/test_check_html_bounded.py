"""Issue 26 item 17: check.html and check.txt were unbounded (a million shots:
392 MB).  Above LISTED_SHOTS shots they list only what needs attention, with
the counts of the rest; check.csv keeps every shot.  The limit is lowered
here so that a small file shows the behaviour; the HTML is read back with the
standard library's parser.
"""

import csv
from html.parser import HTMLParser

import numpy as np
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.design import build_design
from stakeout.jobfile import load_job
from stakeout.writers import checkwords  # the listing rule of check.txt and check.html

from .helpers import SAMPLES

runner = CliRunner()
JOB = SAMPLES / "loop_ramp_usft.toml"  # horizontal tolerance 0.05


class _Rows(HTMLParser):
    def __init__(self):
        super().__init__()
        self.rows = 0

    def handle_starttag(self, tag, attrs):
        self.rows += tag == "tr"


def test_check_html_unbounded_at_a_million_shots(tmp_path, monkeypatch):
    d = build_design(load_job(JOB))
    sp = d.stakes
    k = np.arange(60)
    off = np.where(k % 20 == 0, 0.2, 0.01)  # 3 of 60 out of tolerance
    lines = [f"{sp.point[i]},{sp.northing[i] + off[i]:.4f},{sp.easting[i]:.4f},," for i in k.tolist()]
    staked = tmp_path / "shots.csv"
    staked.write_text("point,northing,easting,elevation,description\n" + "\n".join(lines) + "\n")
    monkeypatch.setattr(checkwords, "LISTED_SHOTS", 10)
    out = tmp_path / "chk"
    r = runner.invoke(app, ["check", str(JOB), str(staked), "--out", str(out)])
    assert r.exit_code == 1, r.output
    assert len(list(csv.DictReader(open(out / "check.csv")))) == 60  # every shot
    txt = (out / "check.txt").read_text()
    assert "60 shots, more than 10: only the shots needing attention are listed" in txt
    assert "WITHIN TOLERANCE: 57 (not listed: see check.csv)" in txt
    html = (out / "check.html").read_text()
    assert "Within tolerance: 57" in html and "Not listed: see check.csv." in html
    p = _Rows()
    p.feed(html)
    assert p.rows < 30  # the three shots needing attention and the fact rows, not 60 shot rows
