"""deflections.txt can run an exit spiral from the ST, as crews do (issue 25 item 11), and says
which end each spiral's deflections are from; the default keeps running it from the CS.

Outside reference: the clothoid series from the tangent point, x = l - l^5 / (40 R^2 Ls^2)
+ l^9 / (3456 R^4 Ls^4), y = l^3 / (6 R Ls) - l^7 / (336 R^3 Ls^3) + l^11 / (42240 R^5 Ls^5) (the spiral relations of
references.md; common practice), deflection = atan(y / x), chord = hypot(x, y), with l the
length from the ST.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from stakeout.design import build_design
from stakeout.errors import JobFileError
from stakeout.jobfile import parse_job
from stakeout.writers.sheets import deflection_sheet

from .helpers import SAMPLES

SAMPLE = (SAMPLES / "kestrel_rise_superelevation_m.toml").read_text(encoding="utf-8")


def _design(from_end: str | None):
    text = SAMPLE if from_end is None else SAMPLE.replace("[staking]\n", f'[staking]\nexit_spiral_from = "{from_end}"\n', 1)
    return build_design(parse_job(text.encode()))


def test_deflections_ran_the_exit_spiral_only_from_the_cs():
    d = _design("ST")
    exits = [t for t in d.presentation.deflections if t.from_end]
    assert len(exits) == 1
    t = exits[0]
    el = t.element
    assert t.start_feature == "ST"
    # rows from the ST back toward the CS, stations descending, length from the ST
    assert np.all(np.diff(t.rows[:, 0]) < 0) and t.rows[0, 0] == pytest.approx(el.end)
    R, Ls = 350.0, 70.0  # the sample's curve: R 350 m, spirals 70 m
    for st, along, defl, chord, _ in t.rows.tolist():
        l_ = el.end - st
        assert along == pytest.approx(l_, abs=1e-9)
        x = l_ - l_**5 / (40 * R**2 * Ls**2) + l_**9 / (3456 * R**4 * Ls**4)
        y = l_**3 / (6 * R * Ls) - l_**7 / (336 * R**3 * Ls**3) + l_**11 / (42240 * R**5 * Ls**5)
        assert defl == pytest.approx(math.degrees(math.atan2(y, x)), abs=1e-7)
        assert chord == pytest.approx(math.hypot(x, y), abs=1e-6)
    # the whole spiral from the ST: theta / 3 nearly (common practice: deflection ~ theta / 3)
    assert t.rows[-1, 2] == pytest.approx(math.degrees(Ls / (2 * R)) / 3, rel=2e-3)
    sheet = deflection_sheet(d).decode("utf-8")  # the sheet's bytes (UTF-8)
    assert "spiral from ST 0+582.458" in sheet and "run from its end looking back, deflect left" in sheet
    assert "exit spirals: occupy the ST," in sheet
    # the offset lines' rows are run from their point opposite the ST too
    for off in t.offsets:
        assert np.all(np.diff(off.rows[:, 0]) < 0) and off.rows[0, 2] == 0.0 and off.rows[0, 1] == 0.0


def test_exit_spiral_from_defaults_to_the_cs():
    d, same = _design(None), _design("CS")
    assert not any(t.from_end for t in d.presentation.deflections)
    def body(x):  # the sheet without the job file's hash (the two files differ by the key)
        return [line for line in deflection_sheet(x).decode("utf-8").splitlines() if "sha256" not in line]

    assert body(d) == body(same)
    assert "spiral from CS 0+512.458" in deflection_sheet(d).decode("utf-8")
    with pytest.raises(JobFileError, match="exit_spiral_from"):
        _design("PT")
