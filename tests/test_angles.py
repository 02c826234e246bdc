import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from stakeout.angles import (
    angle_difference,
    azimuth_between,
    format_azimuth_dms,
    format_dms,
    normalize_azimuth,
    parse_angle,
    parse_direction,
    sincosd,
)
from stakeout.errors import JobFileError


@pytest.mark.parametrize(
    "text, deg",
    [
        ("45-30-15.5", 45 + 30 / 60 + 15.5 / 3600),
        ("45°30'15.5\"", 45 + 30 / 60 + 15.5 / 3600),
        ("45° 30′ 15.5″", 45 + 30 / 60 + 15.5 / 3600),
        ("45-30", 45.5),
        ("45.5", 45.5),
        (12, 12.0),
        ("-1-30-00", -1.5),
        ("0-00-00.1", 0.1 / 3600),
    ],
)
def test_parse_angle(text, deg):
    assert parse_angle(text) == pytest.approx(deg, abs=1e-12)


@pytest.mark.parametrize("text", ["45-60-00", "45-30-60", "45-30-75.2", "abc", "45--3", True, [1], "1.5-30-00"])
def test_parse_angle_rejects(text):
    with pytest.raises(JobFileError, match="delta"):
        parse_angle(text, "delta")


@pytest.mark.parametrize(
    "text, az",
    [("N 45-30-15 E", 45 + 30 / 60 + 15 / 3600), ("S 10 E", 170.0), ("S 10-00-00 W", 190.0),
     ("N 12-30-00 W", 347.5), ("n 0 e", 0.0), ("182-10-05", 182 + 10 / 60 + 5 / 3600), (360, 0.0)],
)
def test_parse_direction(text, az):
    assert parse_direction(text) == pytest.approx(az, abs=1e-12)


def test_bearing_over_90_rejected():
    with pytest.raises(JobFileError, match="0 to 90"):
        parse_direction("N 95 E", "setup.backsight_azimuth")


def test_format_dms_carries_and_signs():
    # the counter-examples in the house style: -1.5 deg and 10.999999999 deg
    assert format_dms(-1.5, 0) == "-1-30-00"
    assert format_dms(10.999999999, 1) == "11-00-00.0"
    assert format_dms(59 / 60 + 59.96 / 3600, 1) == "1-00-00.0"
    assert format_dms(123 + 4 / 60 + 5.6 / 3600, 1) == "123-04-05.6"
    assert format_dms(-0.00000001, 1) == "0-00-00.0"
    assert format_azimuth_dms(359.99999999, 1) == "0-00-00.0"
    assert format_dms(np.array([1.0, 2.5])) == ["1-00-00.0", "2-30-00.0"]


@given(st.floats(-720, 720, allow_nan=False))
def test_dms_round_trip(x):
    text = format_dms(x, 3)
    d, m, s = text.lstrip("-").split("-")
    assert 0 <= int(m) < 60 and 0 <= float(s) < 60
    assert abs(parse_angle(text) - x) <= 0.0005 / 3600 + 1e-12


def test_sincosd_exact_quadrants():
    # geographiclib Math.sincosd behaviour: exact at multiples of 90
    s, c = sincosd(np.array([0.0, 90.0, 180.0, 270.0, -90.0, 450.0]))
    assert s.tolist() == [0.0, 1.0, 0.0, -1.0, -1.0, 1.0]
    assert c.tolist() == [1.0, 0.0, -1.0, 0.0, 0.0, 0.0]


@given(st.floats(-1e4, 1e4, allow_nan=False))
def test_sincosd_matches_math(x):
    s, c = sincosd(x)
    assert abs(float(s) - math.sin(math.radians(x))) < 1e-12
    assert abs(float(c) - math.cos(math.radians(x))) < 1e-12


def test_azimuth_helpers():
    assert normalize_azimuth(-1e-20) == 0.0
    assert normalize_azimuth(720.5) == pytest.approx(0.5)
    assert angle_difference(350.0, 10.0) == pytest.approx(20.0)
    assert angle_difference(10.0, 350.0) == pytest.approx(-20.0)
    assert azimuth_between(0, 0, -1, 0) == pytest.approx(180.0)
    assert azimuth_between(0, 0, 0, -1) == pytest.approx(270.0)
