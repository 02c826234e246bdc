"""The staked-file reader (stakeout/shots.py) under careless and hostile
exports.

References: RFC 4180 (CSV; quoted fields may hold line breaks) read by Python's
``csv`` module as an independent reader of the same text; the ``codecs``
UTF-16/UTF-32 encoders and byte-order marks; Python's ``float()``, which
accepts non-ASCII decimal digits and ``_`` separators (documented in the
Python reference, "Numeric literals" and ``float``), showing each hole.
"""

import codecs
import csv
import io
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.errors import StakedFileError
from stakeout.limits import MAX_STAKED_FILE_BYTES
from stakeout.shots import DEFAULT_COLUMNS, read_shots

from .helpers import SAMPLES

runner = CliRunner()
JOB = SAMPLES / "loop_ramp_usft.toml"
BAD = Path(__file__).resolve().parent / "data" / "staked_bad"
ROWS = [["1000", "1840005.811", "6484985.080", "", "STK"],
        ["1001", "1840004.343", "6484988.826", "312.5", "STK"],
        ["1002", "1840000.004", "6485000.003", "", "Höhe"]]


def _csv(rows, delim=",", eol="\n", header=None) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, delimiter=delim, lineterminator=eol)
    if header:
        w.writerow(header)
    w.writerows(rows)
    return buf.getvalue()


def _read(tmp_path, data, name="s.csv", **kw):
    p = tmp_path / name
    p.write_bytes(data if isinstance(data, bytes) else data.encode("utf-8"))
    return read_shots(p, **kw)


def _same(a, b):
    assert a.point == b.point and a.description == b.description
    np.testing.assert_array_equal(a.northing, b.northing)
    np.testing.assert_array_equal(a.easting, b.easting)
    np.testing.assert_array_equal(a.elevation, b.elevation)


def _expected():
    out = {}
    for line in (BAD / "expect.txt").read_text(encoding="utf-8").splitlines():
        if line and not line.startswith("#"):
            name, text = line.split(": ", 1)
            out[name] = text
    return out


EXPECT = _expected()


@pytest.mark.parametrize("name", sorted(EXPECT), ids=lambda n: n.rsplit(".", 1)[0])
def test_broken_staked_file(name, tmp_path):
    out = tmp_path / "chk"
    r = runner.invoke(app, ["check", str(JOB), str(BAD / name), "--out", str(out)])
    assert r.exit_code == 2, r.output
    msg = r.output.strip()
    assert len(msg.splitlines()) == 1 and msg.startswith("stakeout: error: staked file ")
    assert EXPECT[name] in msg, msg
    assert "Traceback" not in msg and not out.exists() and list(tmp_path.iterdir()) == []


def test_corpus_lists_every_file():
    assert set(EXPECT) == {p.name for p in BAD.iterdir() if p.name != "expect.txt"}


# ---- a first row is a header only if it names the columns --------------------------------
def test_check_drops_first_shot_typo(tmp_path):
    with pytest.raises(StakedFileError, match=r"line 1: northing '18400O5\.811' is not a number"):
        _read(tmp_path, "1000,18400O5.811,6484985.080,,STK\n1001,1840004.343,6484988.826,,STK\n")
    # a valid first shot is a shot, and a header of aliases is still a header
    assert _read(tmp_path, _csv(ROWS)).point == ["1000", "1001", "1002"]
    s = _read(tmp_path, _csv([r[:3] for r in ROWS], header=["PT", "N", "E"]))
    assert s.point == ["1000", "1001", "1002"] and s.line == [2, 3, 4]
    s = _read(tmp_path, _csv([[r[0], r[2], r[1]] for r in ROWS], header=["Pt", "East", "North"]))
    assert s.northing[0] == 1840005.811 and s.easting[0] == 6484985.080


def test_header_skipped_with_columns_option(tmp_path):
    data = _csv([[r[0], r[2], r[1]] for r in ROWS], header=["Pt", "East", "North"])
    s = _read(tmp_path, data, columns=("point", "easting", "northing"), columns_given=True)
    assert s.northing[2] == 1840000.004 and len(s) == 3


# ---- a header naming a column twice ---------------------------------------------------
def test_duplicate_header_columns(tmp_path):
    with pytest.raises(StakedFileError, match=r"line 1: the header names 'northing' twice \(columns 2, 4: "
                                              r"'northing', 'Northing'\); name each column once, or give --columns"):
        _read(tmp_path, "point,northing,easting,Northing\n1000,1,2,3\n")
    with pytest.raises(StakedFileError, match="names 'point' twice"):
        _read(tmp_path, "id,northing,easting,pt\n1000,1,2,3\n")
    # --columns settles it: the header row is then only skipped
    s = _read(tmp_path, "point,northing,easting,northing\n1000,1,2,3\n",
              columns=("point", "northing", "easting", "skip"), columns_given=True)
    assert s.northing[0] == 1.0


# ---- line ends and field length ---------------------------------------------------------
@pytest.mark.parametrize("eol", ["\n", "\r\n", "\r"])
@pytest.mark.parametrize("delim", [",", ";", "\t"])
def test_cr_only_line_ends(tmp_path, eol, delim):
    ref = _read(tmp_path, _csv(ROWS), "ref.csv")
    got = _read(tmp_path, _csv(ROWS, delim, eol), "eol.csv")
    _same(got, ref)
    assert got.line == [1, 2, 3]


def test_mixed_line_ends_and_blank_lines_keep_line_numbers(tmp_path):
    text = "1000,1840005.811,6484985.080\r\n\r1001,1840004.343,6484988.826\n\n\r\n1002,x,1\r"
    with pytest.raises(StakedFileError, match="line 6: northing 'x'"):
        _read(tmp_path, text)
    s = _read(tmp_path, text.replace("1002,x,1", "1002,1,1"))
    assert s.line == [1, 3, 6]


def test_space_delimited_cr_only(tmp_path):
    text = "1000 1840005.811   6484985.080\r1001\t1840004.343 6484988.826\r"
    s = _read(tmp_path, text, delimiter="space")
    assert s.point == ["1000", "1001"] and s.line == [1, 2]


def test_field_over_limit_line_number(tmp_path):
    # 200,000 characters: over the csv module's own field_size_limit (131,072),
    # which used to end in csv.Error and exit 3.
    assert csv.field_size_limit() == 131072
    huge = "x" * 200_000
    text = "1000,1840005.811,6484985.080,,STK\n" + f'1001,1840004.343,6484988.826,,"{huge}"\n'
    with pytest.raises(StakedFileError, match="line 2: a row of over 65,536 characters"):
        _read(tmp_path, text)
    text = "1000,1840005.811,6484985.080,,STK\n" + "1001,1840004.343,6484988.826,," + "y" * 4097 + "\n"
    with pytest.raises(StakedFileError, match="line 2: field 5 is 4,097 characters long; the limit is 4,096"):
        _read(tmp_path, text)
    assert len(_read(tmp_path, text.replace("y" * 4097, "y" * 4096))) == 2
    r = runner.invoke(app, ["check", str(JOB), str(tmp_path / "s.csv"), "--out", str(tmp_path / "o")])
    assert r.exit_code == 0, r.output  # read fine: both are real design points, staked within tolerance


# ---- files that are not regular, or too large ------------------------------------------
def test_staked_dev_zero(tmp_path):
    r = runner.invoke(app, ["check", str(JOB), "/dev/zero", "--out", str(tmp_path / "o")])
    assert r.exit_code == 2
    assert "staked file '/dev/zero': is not a regular file" in r.output
    assert list(tmp_path.iterdir()) == []


def test_staked_fifo_does_not_hang(tmp_path):
    fifo = tmp_path / "shots.csv"
    os.mkfifo(fifo)
    r = subprocess.run([sys.executable, "-m", "stakeout.cli", "check", str(JOB), str(fifo), "--out",
                        str(tmp_path / "o")], capture_output=True, text=True, timeout=120)
    assert r.returncode == 2 and "is not a regular file" in r.stderr


def test_staked_file_over_size_limit(tmp_path):
    big = tmp_path / "big.csv"
    with open(big, "wb") as fh:
        fh.truncate(MAX_STAKED_FILE_BYTES + 1)  # sparse
    with pytest.raises(StakedFileError, match="268,435,457 bytes; the limit is 256 MiB"):
        read_shots(big)


# ---- encodings -------------------------------------------------------------------------
@pytest.mark.parametrize("codec", ["utf-16", "utf-16-le", "utf-16-be"])
def test_utf16_staked_file(tmp_path, codec):
    text = _csv(ROWS, header=["point", "northing", "easting", "elevation", "description"])
    ref = _read(tmp_path, text, "ref.csv")
    data = text.encode(codec)
    bom = {"utf-16-le": codecs.BOM_UTF16_LE, "utf-16-be": codecs.BOM_UTF16_BE}.get(codec, b"")
    got = _read(tmp_path, bom + data, "u16.csv")  # the codec "utf-16" writes its own mark
    _same(got, ref)
    assert got.encoding == "UTF-16" and got.description[2] == "Höhe"
    with pytest.raises(StakedFileError, match="UTF-16 text without a byte-order mark"):
        _read(tmp_path, text.encode("utf-16-le"), "nobom.csv")


def test_utf8_bom_and_latin1(tmp_path):
    text = _csv(ROWS, header=["Point", "Northing", "Easting", "Elevation", "Desc"])
    ref = _read(tmp_path, text, "ref.csv")
    _same(_read(tmp_path, codecs.BOM_UTF8 + text.encode("utf-8"), "bom.csv"), ref)
    latin = _read(tmp_path, text.encode("latin-1"), "latin.csv")  # ö is 0xF6: invalid UTF-8
    _same(latin, ref)
    assert latin.encoding == "Windows-1252" and ref.encoding == "UTF-8"
    win = _read(tmp_path, "1000€,1840005.811,6484985.080\n".encode("cp1252"), "win.csv")
    assert win.point == ["1000€"]


# ---- a quoted line break in the first record -------------------------------------------
def test_quoted_newline_first_record(tmp_path):
    text = '"Point\nNo",Northing,Easting\n1000,1840005.811,6484985.080\n1001,1840004.343,6484988.826\n'
    # the defect: the raw first line holds no comma, so counting on it chose space
    assert text.splitlines()[0].count(",") == 0
    s = _read(tmp_path, text)
    assert s.point == ["1000", "1001"] and s.line == [3, 4]  # physical lines, as an editor counts
    # Python's csv reader, independently, sees the same three records
    assert [len(r) for r in csv.reader(io.StringIO(text, newline=""))] == [3, 3, 3]
    with pytest.raises(StakedFileError, match="line 4: northing 'bad'"):
        _read(tmp_path, text.replace("1840004.343", "bad"))


def test_semicolon_file_with_decimal_commas_detected(tmp_path):
    s = _read(tmp_path, "1000;1840005.811;6484985.080;;STK,1\n")
    assert s.point == ["1000"] and s.description == ["STK,1"]


# ---- digits other than ASCII in shots ----------------------------------------------------
@pytest.mark.parametrize("text", ["١٨٤٠٠٠٥.٨١١", "۱۸۴۰۰۰۵.۸۱۱", "１８４０００５.８１１", "१८४०००५.८११", "1_840_005.811"])
def test_non_ascii_digits_in_shots(tmp_path, text):
    assert float(text) == 1840005.811  # Python's float() reads these (the hole); the reader must not
    with pytest.raises(StakedFileError, match="line 2: northing .* is not a number"):
        _read(tmp_path, f"1000,1840005.811,6484985.080\n1001,{text},6484988.826\n")


def test_plain_ascii_numbers_still_read(tmp_path):
    s = _read(tmp_path, "1,+1840005.811,6.484985080e6,-12.5\n2,.5,1.,1E2\n")
    assert list(s.northing) == [1840005.811, 0.5] and list(s.easting) == [6484985.080, 1.0]
    assert list(s.elevation) == [-12.5, 100.0]
    for bad in ("nan", "inf", "1e", "0x10", "1,5", "--1"):
        with pytest.raises(StakedFileError, match="line 1"):
            _read(tmp_path, f'1,"{bad}",2\n')


# ---- numeric bounds of shots ---------------------------------------------------------------
@pytest.mark.parametrize("row, key", [("1,1e15,2", "northing"), ("1,1,-1e13", "easting"),
                                      ("1,1,2,1e300", "elevation"), ("1,1,2,-100001", "elevation")])
def test_huge_shot_values(tmp_path, row, key):
    with pytest.raises(StakedFileError, match=f"line 1: {key} .* is out of range"):
        _read(tmp_path, row + "\n")
    assert len(_read(tmp_path, "1,1e9,-1e9,-1e5\n")) == 1  # the bounds themselves are inside


def test_defaults_unchanged(tmp_path):
    assert DEFAULT_COLUMNS == ("point", "northing", "easting", "elevation", "description")
    s = read_shots(SAMPLES / "staked" / "loop_ramp_shots.csv")
    assert len(s) > 0 and s.encoding == "UTF-8"


def test_columns_given_twice_named_a_different_column_each_run():
    """Regression: with two columns given twice, the error named whichever a set of strings
    listed first, which changes with Python's string hashing from run to run (same input,
    different output).  It now names the first one repeated, in the order given."""
    code = ("from stakeout.shots import parse_columns\n"
            "try:\n    parse_columns('point,easting,northing,easting,northing,elevation,elevation')\n"
            "except Exception as e:\n    print(e)\n")
    seen = set()
    for seed in ("1", "2", "3", "4", "5", "6"):
        env = dict(os.environ, PYTHONHASHSEED=seed)
        seen.add(subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True,
                                check=True).stdout)
    assert seen == {"--columns 'point,easting,northing,easting,northing,elevation,elevation': 'easting' given twice\n"}
