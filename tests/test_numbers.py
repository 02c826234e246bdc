"""The one rounding rule of every printed number (stakeout/numbers.py).

The outside references are Python's own formatting, ``f"{v:.{n}f}"`` (the
language reference: the exact binary value, correctly rounded, half to
even) and ``decimal.Decimal(v).quantize(...)`` with ``ROUND_HALF_EVEN``
(the decimal module: ``Decimal(v)`` is the float's exact value).  Neither
is the rule under test: the code rounds with numpy and decides only the
near-ties exactly.
"""

from __future__ import annotations

import ast
import re
from decimal import ROUND_HALF_EVEN, Decimal
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from stakeout import numbers
from stakeout.angles import format_dms
from stakeout.stations import format_station
from stakeout.writers import rows
from stakeout.writers.text import finite_or_empty, fixed, fixed_or_empty, rounded, side_text

from .helpers import SAMPLES, build_job


def _decimal(v: float, n: int) -> str:
    """Reference 2: the exact value of the float, quantized half to even (decimal module)."""
    q = Decimal(v).quantize(Decimal(1).scaleb(-n), rounding=ROUND_HALF_EVEN)
    t = f"{q:f}"
    return t[1:] if t.startswith("-") and not q else t  # the house rule: no "-0.00"


def _python(v: float, n: int) -> str:
    """Reference 1: Python's formatting, with the house rule of no negative zero."""
    t = f"{v:.{n}f}"
    return t[1:] if t.startswith("-") and t.strip("-0.") == "" else t


def _cells(field: np.ndarray) -> list[str]:
    return rows.join_rows([field], field.shape[0]).decode().split("\n")[:-1]


def _all_formatters(x: np.ndarray, n: int) -> list[list[str]]:
    """The same numbers through every formatter of the package.

    A value rounded to a float (``round_to``) prints back its digits while the scaled value
    is a whole number a float holds exactly (below 2**52); past that it is left out.
    """
    r = numbers.round_to(x, n)
    back = [f"{w:.{n}f}" if abs(v) * 10**n < 2**52 else _python(v, n) for v, w in zip(x.tolist(), r.tolist())]
    return [_cells(rows.fixed(x, n)), fixed(x, n), numbers.fixed_strings(x, n), back,
            [finite_or_empty(v, n) for v in x.tolist()]]


def _ties(n: int, count: int = 2000, top: int = 10**9) -> np.ndarray:
    """Decimal ties (k + 1/2) / 10**n as floats: each lies a little above or below the tie."""
    k = np.random.default_rng(n).integers(0, top, count)
    return np.array([float((Decimal(int(j)) + Decimal("0.5")).scaleb(-n)) for j in k])


@pytest.mark.parametrize("n", [0, 1, 2, 3, 4, 6, 8])
def test_decimal_ties_print_as_python_prints_them(n):
    x = _ties(n)
    x = np.concatenate([x, -x])
    want = [_python(v, n) for v in x.tolist()]
    assert want == [_decimal(v, n) for v in x.tolist()]  # the two references agree
    for got in _all_formatters(x, n):
        assert got == want


@pytest.mark.parametrize("n", [2, 3, 4])
def test_near_ties_either_side(n):
    t = _ties(n, 500)
    x = np.concatenate([np.nextafter(t, 0.0), t, np.nextafter(t, np.inf), np.nextafter(np.nextafter(t, np.inf), np.inf)])
    want = [_decimal(v, n) for v in x.tolist()]
    for got in _all_formatters(x, n):
        assert got == want


def test_exact_binary_ties_round_half_even():
    # 0.125, 2.5, 0.375 are exact in binary: true ties, so half to even decides (decimal module)
    x = np.array([0.125, 0.375, 2.5, 3.5, 0.5, 1.5, -2.5, -0.125])
    assert fixed(x, 2)[:2] == ["0.12", "0.38"]
    assert _cells(rows.fixed(x[2:7], 0)) == ["2", "4", "0", "2", "-2"]
    for n in (0, 1, 2):
        want = [_decimal(v, n) for v in x.tolist()]
        for got in _all_formatters(x, n):
            assert got == want


def test_the_example_of_the_issue():
    # 1840350.00015 is 1840350.000149999...98 in binary: f"{v:.4f}" (Python) prints ...0001
    v = 1840350.00015
    assert str(Decimal(v)).startswith("1840350.00014999")
    assert _cells(rows.fixed(np.array([v]), 4)) == ["1840350.0001"] == fixed([v], 4)


@pytest.mark.parametrize("n", [0, 2, 4])
def test_huge_and_tiny_values(n):
    big = np.array([2.0**52 / 10**n, 2.0**53 / 10**n, 9.0e15 / 10**n, 1e11 + 0.5 / 10**n, 123456789012.34567,
                    4503599627370495.5 / 10**n, 1e16 / 10**n])
    tiny = np.array([5e-324, 2.2250738585072014e-308, 1e-300, 0.5 / 10**n, np.nextafter(0.5 / 10**n, 1.0)])
    x = np.concatenate([big, tiny, -big, -tiny])
    want = [_decimal(v, n) for v in x.tolist()]
    for got in _all_formatters(x, n):
        assert got == want


def test_beyond_the_vectorised_limit_is_an_error():
    # rows.py formats scaled values below 10**17; past that a one-line error, as before
    with pytest.raises(ValueError, match="too large"):
        rows.fixed(np.array([1e14]), 4)


@given(st.lists(st.floats(-1e10, 1e10, allow_nan=False), min_size=1, max_size=40), st.integers(0, 6))
def test_any_value_prints_as_python_prints_it(xs, n):
    x = np.array(xs)
    want = [_python(v, n) for v in xs]
    for got in _all_formatters(x, n):
        assert got == want


@given(st.integers(0, 10**10), st.integers(1, 6), st.sampled_from([-1, 0, 1]), st.booleans())
def test_constructed_ties_property(k, n, ulps, negative):
    v = float((Decimal(k) + Decimal("0.5")).scaleb(-n))
    for _ in range(abs(ulps)):
        v = float(np.nextafter(v, np.inf if ulps > 0 else 0.0))
    v = -v if negative else v
    want = _decimal(v, n)
    assert _python(v, n) == want
    for got in _all_formatters(np.array([v]), n):
        assert got == [want]


@given(st.lists(st.floats(0, 1e8, allow_nan=False), min_size=1, max_size=40), st.sampled_from([1, 10, 100, 3600, 36000]))
def test_scaled_is_the_exact_product_rounded_half_even(xs, scale):
    # decimal module: Decimal(v) * scale is exact at this precision, then quantized half to even
    want = [int((Decimal(v) * scale).quantize(Decimal(1), rounding=ROUND_HALF_EVEN)) for v in xs]
    assert numbers.scaled(np.array(xs), scale).tolist() == want


def test_negative_zero_nan_and_empty_as_before():
    # no "-0.000" anywhere; text sheets print NaN as "nan", the "or empty" forms leave the field empty,
    # the byte fields refuse a non-finite number
    x = np.array([-0.0, -0.0004, -0.000499, -0.0006, 0.0005, np.nan])
    assert fixed(x, 3) == ["0.000", "0.000", "0.000", "-0.001", "0.001", "nan"]
    assert _cells(rows.fixed(x[:5], 3)) == ["0.000", "0.000", "0.000", "-0.001", "0.001"]
    assert [str(v) for v in rounded(x[:5], 3)] == ["0.0", "0.0", "0.0", "-0.001", "0.001"]
    assert side_text(np.array([-0.004, 0.004, -0.006, 2.5]), 2) == ["0.00", "0.00", "0.01 LT", "2.50 RT"]
    assert finite_or_empty(float("nan"), 3) == finite_or_empty(float("inf"), 3) == ""
    assert fixed_or_empty(None, 3) == "" and fixed_or_empty(-0.0001, 3) == "0.000"
    assert fixed([-0.5, -1.5], 0) == _cells(rows.fixed(np.array([-0.5, -1.5]), 0)) == ["0", "-2"]  # exact ties
    with pytest.raises(ValueError, match="non-finite"):
        rows.fixed(np.array([1.0, np.nan]), 3)
    assert np.isnan(numbers.round_to(np.array([np.nan]), 3)[0])


@pytest.mark.parametrize("n", [0, 1, 2])
def test_seconds_and_stations_round_by_the_same_rule(n):
    # a degree of 3600 seconds (common practice): seconds are the exact angle times 3600, quantized (decimal module)
    secs = _ties(n, 300, 360 * 3600 * 10**n)  # ties in seconds
    deg = np.array([float(Decimal(s) / 3600) for s in secs.tolist()])
    for d, got in zip(deg.tolist(), format_dms(deg, n)):
        total = int((Decimal(d) * 3600 * 10**n).quantize(Decimal(1), rounding=ROUND_HALF_EVEN))
        s, m, g = total % (60 * 10**n), total // (60 * 10**n) % 60, total // (3600 * 10**n)
        sec = f"{s // 10**n:02d}" + (f".{s % 10**n:0{n}d}" if n else "")
        assert got == f"{g}-{m:02d}-{sec}"
    assert _cells(rows.dms(deg, n, wrap360=False)) == format_dms(deg, n)
    st_ = _ties(n + 2, 300, 10**7) if n else _ties(2, 300, 10**7)
    dec = n + 2 if n else 2
    labels = format_station(st_, 100, dec)
    for v, got in zip(st_.tolist(), labels):
        t = _decimal(v, dec)
        whole, frac = t.split(".")
        assert got == f"{int(whole) // 100}+{int(whole) % 100:02d}.{frac}"
    assert _cells(rows.station(st_, 100, dec)) == labels


def test_numbers_imports_only_numpy():
    # the bottom of the house: it may not pull in anything of the package
    src = Path(numbers.__file__).read_text(encoding="utf-8")
    mods = set()
    for node in ast.walk(ast.parse(src)):
        if isinstance(node, ast.Import):
            mods |= {a.name.split(".")[0] for a in node.names}
        elif isinstance(node, ast.ImportFrom):
            assert node.level == 0, "numbers.py imports from the package"
            mods.add((node.module or "").split(".")[0])
    assert mods <= {"__future__", "numpy"}


def test_three_rounding_rules_for_one_number(tmp_path):
    # the defect: the point file rounded the scaled float, the sheet the exact value (one value, two prints)
    # the hillside sample's edge elevations land on decimal ties (a -2.5 % cross slope over 3.5 m
    # gives ...x.xxx5 at three decimals): each file prints the exact value rounded (decimal module)
    from stakeout.design import build_design
    from stakeout.jobfile import load_job

    job = SAMPLES / "hillside_lane_profile_m.toml"
    d = build_design(load_job(job))
    z = d.stakes.elevation
    out = build_job(job, tmp_path / "out")
    pts = [line.split(",") for line in (out / "points.csv").read_text().splitlines()[1:]]
    # the stakes' CgPoints (the control the job uses follows them with code "control")
    xml = re.findall(r'<CgPoint name="([^"]+)"(?![^>]*code="control")[^>]*>\S+ \S+ (\S+)</CgPoint>',
                     (out / "alignment.xml").read_text())
    names = {p[0] for p in pts}
    sheet = {f[0]: f[-1] for f in map(str.split, (out / "setout.txt").read_text().splitlines()) if f and f[0] in names}
    assert len(pts) == len(xml) == z.size
    ties3 = 0
    for i, (p, (name, xz)) in enumerate(zip(pts, xml)):
        v = float(z[i])
        assert p[0] == name
        assert p[3] == _decimal(v, 4)
        assert xz == _decimal(v, 6)
        assert sheet[name] == _decimal(v, 3)
        e = Decimal(v) * 1000
        ties3 += abs(e - int(e) - Decimal("0.5")) < Decimal("1e-6")
    assert ties3 > 10  # the sample does exercise ties


@pytest.mark.parametrize("n", [2, 3, 4])
def test_the_round_then_format_idiom_agrees(n):
    # check.txt, check.html and LandXML's derived values print f"{round(v, n) + 0.0:.{n}f}": Python's
    # round() is correctly rounded on the exact value too (language reference), so it is the same rule
    x = np.concatenate([_ties(n, 500), -_ties(n, 500), np.nextafter(_ties(n, 500), 0.0)])
    assert [f"{round(v, n) + 0.0:.{n}f}" for v in x.tolist()] == numbers.fixed_strings(x, n)
