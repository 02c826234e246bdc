"""Reader of the staked-points file a data collector exports.

By default the columns are those of ``points.csv``:
``point,northing,easting,elevation,description``, with or without a header
row (a first row whose northing is not a number is a header).  A header
that names at least ``point``, ``northing`` and ``easting`` (any case) sets
the column order; otherwise ``columns`` does.  The delimiter is a comma,
semicolon, tab or runs of spaces; ``auto`` picks it from the first line.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from .errors import StakedFileError

__all__ = ["Shots", "read_shots", "DELIMITERS", "DEFAULT_COLUMNS", "parse_columns"]

DEFAULT_COLUMNS = ("point", "northing", "easting", "elevation", "description")
KNOWN_COLUMNS = ("point", "northing", "easting", "elevation", "description", "skip")
DELIMITERS = {"auto": None, "comma": ",", "semicolon": ";", "tab": "\t", "space": " "}
_ALIASES = {"pt": "point", "id": "point", "name": "point", "pnt": "point", "number": "point",
            "n": "northing", "north": "northing", "y": "northing",
            "e": "easting", "east": "easting", "x": "easting",
            "z": "elevation", "elev": "elevation", "height": "elevation", "h": "elevation",
            "desc": "description", "code": "description", "descr": "description"}


@dataclass(frozen=True)
class Shots:
    """Staked shots in file order; ``elevation`` is NaN where not given."""

    point: list[str]
    northing: NDArray[np.float64]
    easting: NDArray[np.float64]
    elevation: NDArray[np.float64]
    description: list[str]
    line: list[int]

    def __len__(self) -> int:
        return len(self.point)


def parse_columns(text: str | None) -> tuple[str, ...]:
    """Parse ``--columns point,easting,northing,...`` (``skip`` ignores a column)."""
    if text is None:
        return DEFAULT_COLUMNS
    cols = tuple(c.strip().lower() for c in text.split(","))
    for c in cols:
        if c not in KNOWN_COLUMNS:
            raise StakedFileError(f"--columns {text!r}: unknown column {c!r}; use {', '.join(KNOWN_COLUMNS)}")
    for need in ("point", "northing", "easting"):
        if need not in cols:
            raise StakedFileError(f"--columns {text!r}: must name {need!r}")
    dup = [c for c in set(cols) if c != "skip" and cols.count(c) > 1]
    if dup:
        raise StakedFileError(f"--columns {text!r}: {dup[0]!r} given twice")
    return cols


def _number(s: str) -> float | None:
    try:
        v = float(s)
    except ValueError:
        return None
    return v if math.isfinite(v) else None


def _split(text: str, delimiter: str) -> list[list[str]]:
    if delimiter == " ":
        return [line.split() for line in text.splitlines()]
    return list(csv.reader(io.StringIO(text), delimiter=delimiter, skipinitialspace=True))


def read_shots(path: str | Path, columns: tuple[str, ...] = DEFAULT_COLUMNS, delimiter: str = "auto",
               columns_given: bool = False) -> Shots:
    """Read and validate a staked-points file.

    Raises
    ------
    StakedFileError
        Missing or empty file, or a malformed row (named by its line number).
    """
    p = Path(path)
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise StakedFileError(f"staked file {str(p)!r}: not found") from None
    except OSError as exc:
        raise StakedFileError(f"staked file {str(p)!r}: cannot be read ({exc.strerror})") from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    name = str(p)
    lines = text.splitlines()
    first = next((ln for ln in lines if ln.strip()), None)
    if first is None:
        raise StakedFileError(f"staked file {name!r}: empty; no shots to check")
    if delimiter not in DELIMITERS:
        raise StakedFileError(f"--delimiter {delimiter!r}: use one of {', '.join(DELIMITERS)}")
    delim = DELIMITERS[delimiter]
    if delim is None:
        counts = {d: first.count(d) for d in (",", ";", "\t")}
        best = max(counts, key=lambda d: counts[d])
        delim = best if counts[best] else " "
    rows = _split(text, delim)
    numbered = [(i + 1, r) for i, r in enumerate(rows) if any(c.strip() for c in r)]
    cols = columns
    ln0, r0 = numbered[0]
    ni = cols.index("northing")
    has_header = len(r0) <= ni or _number(r0[ni].strip()) is None
    if has_header:
        names = [_ALIASES.get(c.strip().lower(), c.strip().lower()) for c in r0]
        if not columns_given and all(n in names for n in ("point", "northing", "easting")):
            cols = tuple(n if n in KNOWN_COLUMNS and n != "skip" else "skip" for n in names)
        numbered = numbered[1:]
    if not numbered:
        raise StakedFileError(f"staked file {name!r}: line {ln0} is taken as a header (its northing is not a "
                              "number) and no shots follow")
    idx = {c: i for i, c in enumerate(cols) if c != "skip"}
    need = max(idx["point"], idx["northing"], idx["easting"]) + 1
    point, north, east, elev, desc, line_no = [], [], [], [], [], []
    for ln, r in numbered:
        r = [c.strip() for c in r]
        if not need <= len(r) <= max(len(cols), need):
            raise StakedFileError(
                f"staked file {name!r} line {ln}: {len(r)} columns, expected {len(cols)} ({','.join(cols)})"
            )
        pid = r[idx["point"]]
        if not pid:
            raise StakedFileError(f"staked file {name!r} line {ln}: empty point number")
        vals = []
        for key in ("northing", "easting"):
            v = _number(r[idx[key]])
            if v is None:
                raise StakedFileError(f"staked file {name!r} line {ln}: {key} {r[idx[key]]!r} is not a number")
            vals.append(v)
        z = math.nan
        if "elevation" in idx and idx["elevation"] < len(r) and r[idx["elevation"]]:
            zv = _number(r[idx["elevation"]])
            if zv is None:
                raise StakedFileError(
                    f"staked file {name!r} line {ln}: elevation {r[idx['elevation']]!r} is not a number")
            z = zv
        point.append(pid)
        north.append(vals[0])
        east.append(vals[1])
        elev.append(z)
        d = idx.get("description")
        desc.append(r[d] if d is not None and d < len(r) else "")
        line_no.append(ln)
    return Shots(point, np.array(north), np.array(east), np.array(elev), desc, line_no)
