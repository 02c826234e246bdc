"""The staked file read a column at a time (issue 27) gives what the row-by-row reader gives.

The row-by-row reader (``shots.read_shots`` with the column reader switched off) is the
reference: on random files, plain ones and ones with every kind of trouble (quotes, blank rows,
CR and CRLF line ends, rows of other widths, numbers the reader refuses, unsafe or non-ASCII ids,
values out of range, long fields), both give the same shots or the same one-line error.
"""

from __future__ import annotations

import numpy as np
import pytest

from stakeout import shots as shots_module
from stakeout.errors import StakedFileError
from stakeout.shots import parse_columns, read_shots

NUMBERS = ["1840005.811", "-12.5", "+3", ".5", "7.", "1e3", "2E-2", " 4.25 ", "0"]
HEIGHTS = ["312.4", "-0.5", " 99 ", "1e2", "0.", "+7.25"]
ODD_NUMBERS = ["1.2.3", "1e999", "١٢٣", "1_0", "", "nan", "inf", "--1", "e5", "1e13", "２"]
IDS = ["1000", "A12", "CP-1", "x_9", "P 7"]
ODD_IDS = ["", "é5", "a\x0bb", "測量", "=1", "a;b"]


def _file(rng: np.random.Generator, odd: bool) -> tuple[str, str]:
    """A random staked file and its delimiter's name; ``odd``: with rare trouble of every kind."""
    def one_of(pool: list[float]) -> float:
        return pool[int(rng.integers(len(pool)))]

    level = one_of([0.0, 0.05, 0.2, 1.0]) if odd else 0.0  # how much trouble this file has

    def rare(p: float) -> bool:
        return rng.random() < p * level

    def one(pool: list[str]) -> str:
        return pool[int(rng.integers(len(pool)))]

    def number() -> str:
        return one(ODD_NUMBERS) if rare(0.03) else one(NUMBERS)

    delim = one([",", ";", "\t"])
    end = one(["\n", "\r\n", "\r"]) if odd else "\n"  # line ends: no trouble, another way of the files
    rows = []
    if rng.random() < 0.4:
        rows.append(delim.join(["point", "northing", "easting", "elevation", "description"]))
    for _ in range(int(rng.integers(1, 40))):
        z = "" if rng.random() < 0.3 else (one(ODD_NUMBERS + ["1840005.811"]) if rare(0.03) else one(HEIGHTS))
        fields = [one(ODD_IDS) if rare(0.03) else one(IDS), number(), number(), z, one(["STK", " note "])]
        if rare(0.02):
            fields[4] = '"quoted, text"'
        if rare(0.01):
            fields[4] = "x" * 5000
        if rare(0.03):
            fields = fields[: int(rng.integers(2, 6))]  # another width
        rows.append(delim.join(fields))
        if odd and rng.random() < 0.05:
            rows.append(one(["", "   ", delim * 3]))  # a blank record (no trouble either)
    text = end.join(rows) + (end if rng.random() < 0.8 else "")
    return text, {",": "comma", ";": "semicolon", "\t": "tab"}[delim]


def _read(path, delimiter: str, monkeypatch, rowwise: bool):
    """What read_shots gives (the shots' fields, or the error's words); ``rowwise``: the reference."""
    with monkeypatch.context() as m:
        if rowwise:
            m.setattr(shots_module, "_columns_at_once", lambda *a, **k: None)
        try:
            s = read_shots(path, parse_columns(None), delimiter)
        except StakedFileError as exc:
            return str(exc)
    return (s.point, s.northing.tolist(), s.easting.tolist(), [None if v != v else v for v in s.elevation.tolist()],
            s.description, s.line, s.columns, s.columns_from, s.encoding)


@pytest.mark.parametrize("seed", range(200))
def test_column_reader_reads_what_the_row_reader_reads(tmp_path, monkeypatch, seed):
    rng = np.random.default_rng(seed)
    text, delimiter = _file(rng, odd=seed % 4 != 0)
    if seed % 3 == 0:
        delimiter = "auto"
    path = tmp_path / "shots.csv"
    path.write_bytes(text.encode("utf-8"))
    assert _read(path, delimiter, monkeypatch, False) == _read(path, delimiter, monkeypatch, True)


def test_column_reader_takes_a_plain_file(tmp_path, monkeypatch):
    # not a vacuous comparison: a plain file goes the column way (and gives the same shots)
    taken = []
    real = shots_module._columns_at_once

    def spy(*args, **kwargs):
        out = real(*args, **kwargs)
        taken.append(out is not None)
        return out

    monkeypatch.setattr(shots_module, "_columns_at_once", spy)
    path = tmp_path / "shots.csv"
    path.write_text("point,northing,easting,elevation,description\n1000,1840005.811,6484985.080,,STK\n"
                    "1001,1840004.343,6484988.826,12.5,STK\n\n9002,1840123.456,6485567.890,,STRAY\n")
    s = read_shots(path)
    assert taken == [True]
    assert s.point == ["1000", "1001", "9002"] and s.line == [2, 3, 5]
    assert s.northing.tolist() == [1840005.811, 1840004.343, 1840123.456]
    assert np.isnan(s.elevation[0]) and s.elevation[1] == 12.5 and s.description == ["STK", "STK", "STRAY"]
