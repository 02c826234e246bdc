"""Safe ids and free text (stakeout/textsafety.py): nothing that could split
rows or drive a terminal.

References: Python's ``re`` documentation ("$ matches at the end of the
string or just before the newline at the end of the string"; fullmatch
matches the whole string) and the Unicode character database as shipped in
``unicodedata`` (categories Cc, Cf, Zl, Zp).
"""

import re
import string
import unicodedata

import pytest
from hypothesis import given
from hypothesis import strategies as st

from stakeout.errors import JobFileError
from stakeout.jobfile import SAFE_TEXT
from stakeout.textsafety import (
    MAX_FREE_TEXT_CHARS,
    SAFE_ID,
    check_free_text,
    check_safe_id,
    find_unsafe_char,
    show_value,
)

ALLOWED = set(string.ascii_letters + string.digits + "_#./-")


def _independent_is_safe_id(s: str) -> bool:
    # The rule written out with sets, not with a regular expression.
    return 1 <= len(s) <= 20 and s[0] != "-" and all(ch in ALLOWED for ch in s)


@pytest.mark.parametrize("value", ["CL\n", "P\n", "CF101\n", "LOOP-EN\n"])
def test_newline_passes_safe_text(value):
    # The defect, reproduced: `^...$` with .match accepts a trailing newline
    # (re docs: `$` also matches just before a final newline) ...
    assert SAFE_TEXT.match(value) is not None
    assert re.compile(r"^[A-Za-z0-9_#./][A-Za-z0-9_#./-]{0,19}$").match(value) is not None
    # ... and the fix refuses it, naming the key.
    with pytest.raises(JobFileError, match=r"staking\.offsets\[0\]\.code = .*\\n'"):
        check_safe_id(value, "staking.offsets[0].code")
    assert SAFE_ID.fullmatch(value) is None


def test_safe_id_accepts_what_safe_text_accepted():
    for v in ["CL", "EP-L", "P", "1000", "a.b/c#d_e", "A" * 20, ".x"]:
        assert check_safe_id(v, "k") == v
    for v in ["", "-x", "A" * 21, "a b", "é", "CL\r", "\nCL", "C\x00L", "１"]:
        with pytest.raises(JobFileError):
            check_safe_id(v, "k")
    assert check_safe_id("", "staking.point_prefix", allow_empty=True) == ""
    with pytest.raises(JobFileError, match="expected text"):
        check_safe_id(5, "k")


@given(st.text(max_size=24))
def test_safe_id_property_against_sets(s):
    ok = _independent_is_safe_id(s)
    try:
        check_safe_id(s, "staking.point_prefix")
    except JobFileError as exc:
        assert not ok
        assert "\n" not in str(exc) and str(exc).startswith("staking.point_prefix = ")
    else:
        assert ok


@pytest.mark.parametrize("ch", ["\x00", "\r", "\n", "\x0c", "\x1b", "\t", "\x7f", "\x85", "\u200b", "\u202e",
                                "\u2028", "\u2029", "\ufeff"])
def test_control_characters_in_free_text(ch):
    value = f"Cedar{ch}Flats"
    with pytest.raises(JobFileError) as err:
        check_free_text(value, "job.name")
    msg = str(err.value)
    assert msg.startswith("job.name = ") and "\n" not in msg and "\r" not in msg
    assert f"U+{ord(ch):04X}" in msg and "character 6" in msg


def test_free_text_accepts_printable_text():
    for v in ["", "Cedar Flats interchange, EB-NB loop ramp", "Route 9 — Nord/Süd (Bauabschnitt 2)",
              "طريق ١", "道路 A"]:
        assert check_free_text(v, "job.name") == v
    assert check_free_text("x" * MAX_FREE_TEXT_CHARS, "job.name")
    with pytest.raises(JobFileError, match=f"{MAX_FREE_TEXT_CHARS + 1} characters; the limit is {MAX_FREE_TEXT_CHARS}"):
        check_free_text("x" * (MAX_FREE_TEXT_CHARS + 1), "job.name")
    with pytest.raises(JobFileError, match="the limit is 10"):
        check_free_text("x" * 11, "job.name", max_len=10)
    with pytest.raises(JobFileError, match="expected text"):
        check_free_text(["a"], "job.name")


@given(st.text(max_size=30))
def test_free_text_property_against_isprintable(s):
    # Independent formulation: Python's str.isprintable() is False exactly for
    # categories Cc, Cf, Cs, Co, Cn, Zl, Zp and Zs other than the space; of those
    # the spaces (Zs), private-use (Co) and unassigned (Cn) are allowed here.
    ok = all(ch.isprintable() or unicodedata.category(ch) in ("Zs", "Co", "Cn") for ch in s)
    assert (find_unsafe_char(s) is None) == ok
    try:
        check_free_text(s, "job.name")
    except JobFileError as exc:
        assert not ok and "\n" not in str(exc)
    else:
        assert ok


def test_show_value_is_bounded_and_one_line():
    assert show_value("a\nb") == "'a\\nb'"
    long = show_value("x" * 5000)
    assert len(long) < 80 and long.endswith("...")


def test_show_value_of_a_number_past_the_digit_limit():
    # Python refuses str() of ints over 4300 digits (sys.get_int_max_str_digits)
    text = show_value(10**6000)
    assert "digits" in text and len(text) < 80
