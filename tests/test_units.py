import pytest

from stakeout.errors import JobFileError
from stakeout.units import INTERNATIONAL_FOOT, UNITS, US_SURVEY_FOOT, get_unit

from .reference import nist_survey_foot as nist


def test_foot_definitions_nist():
    # NIST & NGS, Federal Register Vol. 85 No. 193 (2020) and 24 FR 5348 (1959):
    # international foot = 0.3048 m exactly; US survey foot = 1200/3937 m
    # (tests/reference/nist_survey_foot.py, exact fractions).
    assert INTERNATIONAL_FOOT == float(nist.INTERNATIONAL_FOOT.value)
    assert US_SURVEY_FOOT == float(nist.US_SURVEY_FOOT.value)
    # 1 international ft = 0.999998 US survey ft exactly (same source)
    assert nist.INTERNATIONAL_FOOT.value / nist.US_SURVEY_FOOT.value == nist.INTERNATIONAL_IN_SURVEY_FEET.value
    assert INTERNATIONAL_FOOT / US_SURVEY_FOOT == pytest.approx(float(nist.INTERNATIONAL_IN_SURVEY_FEET.value), abs=1e-15)


def test_two_ppm_difference_is_a_hundredth_in_a_mile():
    # NIST (as above): the feet differ by 2 ppm, about 0.01 ft in 5280 ft.
    mile_m = 5280 * US_SURVEY_FOOT
    diff_ft = mile_m / INTERNATIONAL_FOOT - 5280
    assert 0.0105 < diff_ft < 0.0106


def test_units_table():
    assert UNITS["m"].station_length == 1000 and UNITS["m"].station_decimals == 3
    assert UNITS["ft"].station_length == 100 and UNITS["us_ft"].station_decimals == 2


def test_unknown_unit_lists_choices():
    with pytest.raises(JobFileError, match=r'job.units = .feet.*"m", "ft", "us_ft"'):
        get_unit("feet")
