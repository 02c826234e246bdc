"""The documented bounds (stakeout/limits.py): numeric bounds, file size and
kind, job-file encodings.

References: IEEE 754 binary64 has a 53-bit significand (the standard; Python's
``math.ulp`` and ``sys.float_info.mant_dig`` report it); the ``decimal`` module
as an exact reference for 4-decimal arithmetic; ``tomllib`` (the TOML reader
of the standard library) for the decoded job text; the byte-order marks of
``codecs`` (from the Unicode standard).
"""

import codecs
import math
import os
import sys
import tomllib
from decimal import Decimal

import pytest
from hypothesis import given
from hypothesis import strategies as st

from stakeout import limits
from stakeout.errors import JobFileError, StakedFileError
from stakeout.limits import (
    MAX_COORDINATE,
    MAX_HEIGHT,
    MAX_JOB_FILE_BYTES,
    MAX_LENGTH,
    MAX_POINT_NUMBER,
    MAX_STATION,
    check_coordinate,
    check_first_point,
    check_height,
    check_length,
    check_point_numbers,
    check_station_value,
    decode_job_text,
    read_regular_file,
    unicode_bom,
)

from .helpers import SAMPLES


# ---- why 1e9: the float64 argument, checked ------------------------------------------
def test_bound_keeps_four_decimals_exact():
    # IEEE 754 binary64: 53-bit significand, so the spacing below 2**30 is 2**-23.
    assert sys.float_info.mant_dig == 53
    assert MAX_COORDINATE < 2**30 and MAX_STATION < 2**30 and MAX_LENGTH < 2**30
    assert math.ulp(MAX_COORDINATE) == 2.0**-23
    assert math.ulp(MAX_COORDINATE) < 5e-5 / 100  # 100x finer than half a unit of the 4th decimal
    # and the defect it prevents: at 1e16 consecutive doubles are 2 apart
    assert math.ulp(1e16) == 2.0 and 1e16 + 1 == 1e16
    # a point number is exact as a float64 too
    assert MAX_POINT_NUMBER < 2**53 and float(MAX_POINT_NUMBER) == MAX_POINT_NUMBER


@given(st.integers(-10**13, 10**13), st.integers(-10**13, 10**13))
def test_four_decimal_sums_exact_within_bound(a, b):
    # Values with 4 decimals inside the bound (|v| <= 1e9 = 10**13 ten-thousandths):
    # float addition then 4-decimal formatting equals exact decimal addition.
    x, y = a / 10**4, b / 10**4
    exact = (Decimal(a) + Decimal(b)).scaleb(-4)
    assert f"{x:.4f}" == f"{Decimal(a).scaleb(-4):.4f}"
    if abs(exact) <= Decimal(MAX_COORDINATE):
        assert f"{x + y:.4f}" == f"{exact:.4f}"


# ---- the check functions ------------------------------------------------------------
@pytest.mark.parametrize("fn, key, bound", [(check_coordinate, "setup.occupied.northing", MAX_COORDINATE),
                                            (check_station_value, "alignment.start.station", MAX_STATION)])
def test_huge_station_or_coordinate_refused(fn, key, bound):
    assert fn(bound, key) == bound and fn(-bound, key) == -bound and fn(0, key) == 0.0
    for bad in (bound * (1 + 1e-15), -1e16, 1e300, 10**400):
        with pytest.raises(JobFileError) as err:
            fn(bad, key)
        msg = str(err.value)
        assert msg.startswith(f"{key} = ") and "1,000,000,000" in msg and "\n" not in msg
    for bad in (math.nan, math.inf, -math.inf, True, "12", None):
        with pytest.raises(JobFileError, match=key.replace(".", r"\.")):
            fn(bad, key)


@given(st.floats(allow_nan=False, allow_infinity=False))
def test_coordinate_bound_property(v):
    try:
        assert check_coordinate(v, "k") == v
    except JobFileError:
        assert abs(v) > 1e9
    else:
        assert abs(v) <= 1e9


def test_huge_lengths_refused():
    assert check_length(50.0, "staking.interval") == 50.0
    assert check_length(0, "alignment.at_pi.lead_in", allow_zero=True) == 0.0
    assert check_length(-16.0, "staking.offsets[0].offset", signed=True, allow_zero=True) == -16.0
    with pytest.raises(JobFileError, match=r"staking\.interval = 0: must be greater than 0"):
        check_length(0, "staking.interval")
    with pytest.raises(JobFileError, match="0 or more"):
        check_length(-1, "alignment.at_pi.lead_in", allow_zero=True)
    with pytest.raises(JobFileError, match="must not be 0"):
        check_length(0.0, "k", signed=True)
    for key, v in (("alignment.at_pi.lead_in", 1e14), ("staking.interval", 1e20)):
        with pytest.raises(JobFileError, match=rf"{key.replace('.', '.')} = .*out of range.*0 to 1,000,000,000"):
            check_length(v, key, allow_zero=True)
    with pytest.raises(JobFileError, match="-1,000,000,000 to 1,000,000,000"):
        check_length(-2e9, "staking.offsets[1].offset", signed=True)


def test_huge_heights_refused():
    assert check_height(-1000.0, "scale.ellipsoid_height") == -1000.0
    assert check_height(MAX_HEIGHT, "k") == MAX_HEIGHT
    with pytest.raises(JobFileError, match=r"setup\.instrument_height = 1e\+300: out of range; .*0 to 100,000"):
        check_height(1e300, "setup.instrument_height", nonnegative=True)
    with pytest.raises(JobFileError, match="0 or more"):
        check_height(-1.5, "setup.target_height", nonnegative=True)
    with pytest.raises(JobFileError, match="-100,000 to 100,000"):
        check_height(-1e6, "staking.elevation")


def test_first_point_past_int64():
    assert check_first_point(1000) == 1000 and check_first_point(0) == 0
    assert check_first_point(MAX_POINT_NUMBER) == MAX_POINT_NUMBER
    for bad in (2**63, 10**15, MAX_POINT_NUMBER + 1):
        with pytest.raises(JobFileError, match=r"staking\.first_point = .*out of range; point numbers run from 0 "
                                               "to 999,999,999,999,999"):
            check_first_point(bad)
    for bad in (-1, 1.0, True, "1"):
        with pytest.raises(JobFileError, match="whole number"):
            check_first_point(bad)
    check_point_numbers(MAX_POINT_NUMBER - 9, 10)
    with pytest.raises(JobFileError, match=r"staking\.first_point = 999999999999990: 11 points would run to "
                                           "1,000,000,000,000,000"):
        check_point_numbers(MAX_POINT_NUMBER - 9, 11)


# ---- files that are not regular, or too large ------------------------------------------
def test_dev_zero_job_file_refused():
    with pytest.raises(JobFileError, match="job file '/dev/zero': is not a regular file"):
        read_regular_file("/dev/zero", "job file", MAX_JOB_FILE_BYTES)


def test_fifo_refused_without_blocking(tmp_path):
    fifo = tmp_path / "pipe.toml"
    os.mkfifo(fifo)  # nobody writes: opening it for reading would block
    with pytest.raises(StakedFileError, match="staked file .*pipe.toml': is not a regular file"):
        read_regular_file(fifo, "staked file", 100, StakedFileError)


def test_oversize_job_file_refused(tmp_path):
    big = tmp_path / "big.toml"
    with open(big, "wb") as fh:
        fh.truncate(MAX_JOB_FILE_BYTES + 1)  # sparse: no disk space used
    with pytest.raises(JobFileError, match=r"big\.toml': 16,777,217 bytes; the limit is 16 MiB"):
        read_regular_file(big, "job file", MAX_JOB_FILE_BYTES)
    ok = tmp_path / "ok.toml"
    ok.write_bytes(b"x" * 1000)
    assert read_regular_file(ok, "job file", 1000) == b"x" * 1000
    ok.write_bytes(b"x" * 1001)
    with pytest.raises(JobFileError, match="1,001 bytes; the limit is 1,000 bytes"):
        read_regular_file(ok, "job file", 1000)


def test_read_regular_file_messages(tmp_path):
    with pytest.raises(JobFileError, match="job file .*nope.toml': not found"):
        read_regular_file(tmp_path / "nope.toml", "job file", 10)
    with pytest.raises(JobFileError, match="is a folder, not a file"):
        read_regular_file(tmp_path, "job file", 10)
    real = tmp_path / "real.toml"
    real.write_bytes(b"format = 1\n")
    link = tmp_path / "link.toml"
    link.symlink_to(real)
    assert read_regular_file(link, "job file", 100) == b"format = 1\n"  # a link to a file is read
    (tmp_path / "dangling.toml").symlink_to(tmp_path / "gone.toml")
    with pytest.raises(JobFileError, match="not found"):
        read_regular_file(tmp_path / "dangling.toml", "job file", 10)
    if os.geteuid() != 0:
        real.chmod(0)
        with pytest.raises(JobFileError, match="cannot be read"):
            read_regular_file(real, "job file", 100)


def test_file_growing_while_read_refused(tmp_path, monkeypatch):
    f = tmp_path / "j.toml"
    f.write_bytes(b"a" * 10)
    real_read = os.read
    state = {"n": 0}

    def growing(fd, n):  # as if a writer appended while we read
        state["n"] += 1
        return b"a" * 10 if state["n"] < 5 else real_read(fd, n)

    monkeypatch.setattr(limits.os, "read", growing)
    with pytest.raises(JobFileError, match="grew past the limit"):
        read_regular_file(f, "job file", 25)


# ---- byte-order marks in the job file ---------------------------------------------------
def test_bom_in_job_file():
    text = (SAMPLES / "loop_ramp_usft.toml").read_text(encoding="utf-8")
    data = codecs.BOM_UTF8 + text.encode("utf-8")
    assert decode_job_text(data, "j.toml") == text
    assert tomllib.loads(decode_job_text(data, "j.toml")) == tomllib.loads(text)
    # without the fix tomllib refuses the mark itself
    with pytest.raises(tomllib.TOMLDecodeError):
        tomllib.loads(data.decode("utf-8"))


@pytest.mark.parametrize("codec, name", [("utf-16", "UTF-16"), ("utf-16-le", None), ("utf-32", "UTF-32")])
def test_utf16_job_file_named(codec, name):
    data = "format = 1\n".encode(codec)  # utf-16-le writes no mark: its NUL bytes give it away
    with pytest.raises(JobFileError) as err:
        decode_job_text(data, "j.toml")
    msg = str(err.value)
    assert msg.startswith("j.toml: ")
    assert (f"is {name} text" in msg) if name else ("NUL byte" in msg and "UTF-16" in msg)


def test_invalid_utf8_job_file_byte_offset():
    data = "name = \"Süd\"\n".encode("latin-1")
    bad = data.index(b"\xfc")  # independent: where the Latin-1 byte sits
    with pytest.raises(JobFileError, match=f"j.toml: not UTF-8 text \\(byte {bad}\\)"):
        decode_job_text(data, "j.toml")
    with pytest.raises(JobFileError, match=f"byte {bad + 3}\\)"):
        decode_job_text(codecs.BOM_UTF8 + data, "j.toml")


def test_unicode_bom_names():
    assert unicode_bom(codecs.BOM_UTF32_LE + b"x") == "UTF-32"  # not mistaken for UTF-16
    assert unicode_bom(codecs.BOM_UTF16_BE) == "UTF-16"
    assert unicode_bom(codecs.BOM_UTF8) == "UTF-8"
    assert unicode_bom(b"format") is None


def test_huge_station_length():
    from stakeout.limits import MAX_STATION_LENGTH, check_station_length
    from stakeout.stations import check_station_length as current

    assert check_station_length(100) == 100 and check_station_length(1000.0) == 1000
    assert check_station_length(MAX_STATION_LENGTH) == MAX_STATION_LENGTH
    with pytest.raises(JobFileError, match="out of range"):  # the reader's check is the bounded one now
        current(1e20)
    for v in (1e20, 10**20, 1e300, 10**400):
        with pytest.raises(JobFileError, match=r"job\.station_length = .*out of range; a station length runs "
                                               "from 1 to 1,000,000"):
            check_station_length(v)
    for v in (0, -100, 100.5, math.nan, math.inf, True, "100"):
        with pytest.raises(JobFileError, match=r"job\.station_length = "):
            check_station_length(v)
    # same messages as the reader's current check for ordinary mistakes
    for v in (0, 100.5, "100"):
        with pytest.raises(JobFileError) as ours:
            check_station_length(v)
        with pytest.raises(JobFileError) as theirs:
            current(v)
        assert str(ours.value) == str(theirs.value)
