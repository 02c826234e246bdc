"""plan.dxf labels stations at the plan picture's spacing, not only at full stations
(issue 25 item 8: one label on a 239 m metric road).

Outside reference: ezdxf reads plan.dxf back; the plan picture's own labels are read from
plan.svg with lxml; that a metric road is labelled every 100 m, or finer on a short one, is
common practice.
"""

from __future__ import annotations

import ezdxf
from lxml import etree

from stakeout.design import build_design
from stakeout.jobfile import parse_job
from stakeout.writers.dxf import plan_dxf
from stakeout.writers.picture import plan_svg

SHORT_METRIC_ROAD = b"""
format = 1
[job]
units = "m"
[alignment]
start = {station = 0, northing = 5000.0, easting = 3000.0}
azimuth = 35
[[alignment.element]]
kind = "line"
length = 100
[[alignment.element]]
kind = "arc"
radius = 150
delta = 30
turn = "left"
[[alignment.element]]
kind = "line"
length = 60.4
[staking]
interval = 20
"""


def _dxf_labels(data: bytes) -> list[str]:
    import io

    doc = ezdxf.read(io.StringIO(data.decode("utf-8")))
    return [t.dxf.text for t in doc.modelspace().query('TEXT[layer=="SO-STATION"]')]


def test_plan_dxf_labelled_only_full_stations():
    d = build_design(parse_job(SHORT_METRIC_ROAD))
    assert 238.0 < d.alignment.length < 240.0  # the 239 m road of the issue
    labels = _dxf_labels(plan_dxf(d))
    assert len(labels) > 1, labels  # before: 0+000.000 alone (full stations of 1000 m)
    # the plan picture's labels, read from plan.svg: the same stations
    svg = etree.fromstring(plan_svg(d))
    texts = {"".join(t.itertext()) for t in svg.iter("{http://www.w3.org/2000/svg}text")}
    for label in labels:
        short = label.split(".")[0] if set(label.split(".")[1]) == {"0"} else label
        assert short in texts, (label, sorted(texts))
    # every 50 m or finer on a 239 m road: at least five labels, evenly spaced (common practice)
    values = [float(t.replace("+", "")) for t in labels]
    steps = {round(b - a, 6) for a, b in zip(values, values[1:])}
    assert len(labels) >= 5 and len(steps) == 1 and steps.pop() in (10.0, 20.0, 50.0)
