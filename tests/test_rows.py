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
    # reference: Python's own formatting of the exact binary value (f"{v:.{d}f}"), which is not how
    # rows.fixed rounds; the one house rule on top: a value that prints as zero has no sign
    x = np.array(xs)
    want = [f"{v:.{d}f}" for v in xs]
    want = [t[1:] if t.startswith("-") and t.strip("-0.") == "" else t for t in want]
    assert _cells(rows.fixed(x, d), x.size) == want


def test_fixed_at_decimal_ties():
    # exact binary values (decimal module): 0.015 is 0.01499999999999999944..., 0.025 is
    # 0.02500000000000000138..., 0.005 is 0.00500000000000000010...; the scaled floats 1.5, 2.5, 0.5
    # are exact ties and would round half to even the other way.  Python prints 0.01, 0.03, 0.01.
    x = np.array([0.015, 0.025, 0.005, -0.015, -0.005])
    assert _cells(rows.fixed(x, 2), 5) == ["0.01", "0.03", "0.01", "-0.01", "-0.01"]
    assert _cells(rows.fixed(np.array([1840350.00015]), 4), 1) == ["1840350.0001"]


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


def test_packed_moves_each_text_to_one_end():
    f = np.array([[0, 45, 0, 0, 53, 46, 48], [0, 0, 0, 49, 50, 46, 53], [0, 0, 0, 0, 0, 0, 0]], dtype=np.uint8)
    assert [bytes(r).rstrip(b"\0") for r in rows.packed(f)] == [b"-5.0", b"12.5", b""]
    assert [bytes(r).lstrip(b"\0") for r in rows.packed(f, right=True)] == [b"-5.0", b"12.5", b""]
    assert rows.packed(f).shape == (3, 4) and rows.packed(f[:0]).shape == (0, 0)


def test_overlay_replaces_rows_and_widens():
    f = rows.text(["ab", "cd", "ef"])
    out = rows.overlay(f, np.array([False, True, False]), rows.text(["long"]))
    assert rows.join_rows([out], 3) == b"ab\nlong\nef\n"
