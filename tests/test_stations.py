import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from stakeout.errors import JobFileError
from stakeout.stations import format_station, parse_station


@pytest.mark.parametrize(
    "text, length, value",
    [("12+34.56", 100, 1234.56), ("1+234.567", 1000, 1234.567), ("-0+25.00", 100, -25.0),
     ("0+00", 100, 0.0), (1250, 100, 1250.0), ("1250.5", 100, 1250.5)],
)
def test_parse(text, length, value):
    assert parse_station(text, length) == pytest.approx(value)


@pytest.mark.parametrize("text", ["12+134.5", "12-34", "abc", "12+", True])
def test_parse_rejects(text):
    with pytest.raises(JobFileError, match="staking.extra_stations"):
        parse_station(text, 100, "staking.extra_stations[0]")


def test_format():
    assert format_station(1250.0, 100, 2) == "12+50.00"
    assert format_station(1234.5678, 1000, 3) == "1+234.568"
    assert format_station(-25.0, 100, 2) == "-0+25.00"
    assert format_station(1299.999, 100, 2) == "13+00.00"  # carry, never 12+100.00
    assert format_station(5.0, 100, 2) == "0+05.00"
    assert format_station(np.array([0.0, 100.0]), 100, 2) == ["0+00.00", "1+00.00"]


@given(st.floats(-1e6, 1e6, allow_nan=False), st.sampled_from([(100, 2), (1000, 3), (20, 3)]))
def test_round_trip(x, ls):
    length, dec = ls
    text = format_station(x, length, dec)
    assert abs(parse_station(text, length) - x) <= 0.5 * 10**-dec + 1e-9 * max(1, abs(x))
