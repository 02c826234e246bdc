"""The vectorised row formatter against Python's own formatting."""

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from stakeout.angles import format_azimuth_dms, format_dms
from stakeout.stations import format_station
from stakeout.writers import rows

floats = st.lists(st.floats(-1e7, 1e7, allow_nan=False), min_size=1, max_size=50)


def _cells(field, n):
    return rows.join_rows([field], n).decode().split("\n")[:-1]


@given(floats, st.integers(0, 8))
def test_fixed_matches_python(xs, d):
    x = np.array(xs)
    want = [f"{v:.{d}f}" for v in (np.round(x, d) + 0.0)]
    assert _cells(rows.fixed(x, d), x.size) == want


@given(floats)
def test_dms_and_station_match_scalar_formatters(xs):
    x = np.array(xs)
    assert _cells(rows.dms(x, 1), x.size) == format_azimuth_dms(x, 1)
    assert _cells(rows.dms(x / 1e4, 1, wrap360=False), x.size) == format_dms(x / 1e4, 1)
    assert _cells(rows.station(x, 100, 2), x.size) == format_station(x, 100, 2)
    assert _cells(rows.station(x, 1000, 3), x.size) == format_station(x, 1000, 3)


@given(st.lists(st.integers(0, 10**12), min_size=1, max_size=50))
def test_integers(xs):
    assert _cells(rows.integer(np.array(xs)), len(xs)) == [str(v) for v in xs]


def test_text_and_join():
    f = [rows.text(["A1", "", "LONGER"]), rows.const(",", 3), rows.fixed(np.array([-0.00001, 2.5, -3.0]), 2)]
    assert rows.join_rows(f, 3) == b"A1,0.00\n,2.50\nLONGER,-3.00\n"
