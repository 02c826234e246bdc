"""Reader of the staked-points file a data collector exports.

By default the columns are those of ``points.csv``:
``point,northing,easting,elevation,description``, with or without a header
row.  The first row is a header only when it names the columns: its
northing is not a number and it names both ``northing`` and ``easting``
(any case, or an alias such as ``N``/``E``), or names a column ``X`` or
``Y``; otherwise it is a shot, and a shot that does not parse is an error
with its line number (a typo in the first shot is never dropped as a
header).  A header that names at least ``point``, ``northing`` and
``easting`` sets the column order unless ``columns`` is given; a header
naming a column twice is refused.  ``X`` and ``Y`` are ambiguous in this
trade (some programs write the easting as X, others the northing), so a
header naming either is refused unless ``--columns`` gives the order.  The
delimiter is a comma, semicolon, tab or runs of spaces; ``auto`` picks the
one that splits the first record, as parsed (quotes honoured), into the
most fields.

What is accepted, and the limits (see :mod:`stakeout.limits`):

* only a regular file of at most ``MAX_STAKED_FILE_BYTES`` (256 MiB); a
  device, pipe or folder is refused before anything is read;
* encodings: UTF-8, with or without a byte-order mark; UTF-16 with a
  byte-order mark (either byte order); a file that is not valid UTF-8 is
  read as Windows-1252, the Western-European code page that Latin-1 exports
  actually use (identical to ISO 8859-1 for every printable character), and
  refused if it is not that either.  UTF-32, and NUL bytes without a mark
  (UTF-16 without a byte-order mark, or a binary file), are refused by name;
* line ends CR, LF or CRLF, mixed freely; a field of at most
  ``MAX_FIELD_CHARS`` (4,096) characters and a record of at most
  ``MAX_RECORD_CHARS`` (65,536);
* numbers in plain ASCII (``-1840005.811``, ``1.84e6``): digits 0-9, an
  optional sign, point and exponent.  Other digits Python would read
  (Arabic-Indic, full-width) and ``_`` separators are refused;
* northings and eastings within ``MAX_SHOT_COORDINATE`` (1e12: a shot keyed
  without its decimal point is the blunder a check exists to catch, so it is
  reported, not refused), elevations within
  ``MAX_HEIGHT`` (1e5) job units;
* point ids without control or format characters (they are written to
  ``check.csv`` and ``check.txt``).  Descriptions are read as given: they
  are not written to any output.

Every refusal is a :class:`~stakeout.errors.StakedFileError` naming the file
and, for a row, its line number (counted as an editor does, quoted line
breaks included).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from itertools import chain, repeat
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from .delimited import (Source, blank, check_fields, check_header_once, decode_text, detect_delimiter, not_a_number,
                        python_reads, records)
from .delimited import number as _number
from .errors import StakedFileError
from .limits import MAX_FIELD_CHARS, MAX_HEIGHT, MAX_STAKED_FILE_BYTES, read_regular_file
from .textsafety import describe_char, find_unsafe_char, show_value, unsafe_kind

__all__ = ["Shots", "read_shots", "DELIMITERS", "DEFAULT_COLUMNS", "parse_columns"]

#: Largest shot coordinate read (job units): a shot keyed without its decimal point
#: (1840005811 for 1840005.811) is reported as unmatched or out, not refused.
MAX_SHOT_COORDINATE = 1e12

DEFAULT_COLUMNS = ("point", "northing", "easting", "elevation", "description")
KNOWN_COLUMNS = ("point", "northing", "easting", "elevation", "description", "skip")
DELIMITERS = {"auto": None, "comma": ",", "semicolon": ";", "tab": "\t", "space": " "}
#: Header names that mean the easting to some programs and the northing to others.
AMBIGUOUS_NAMES = ("x", "y")
_ALIASES = {"pt": "point", "id": "point", "name": "point", "pnt": "point", "number": "point",
            "n": "northing", "north": "northing",
            "e": "easting", "east": "easting",
            "z": "elevation", "elev": "elevation", "height": "elevation", "h": "elevation",
            "desc": "description", "code": "description", "descr": "description"}


@dataclass(frozen=True)
class Shots:
    """Staked shots in file order; ``elevation`` is NaN where not given.

    ``northing``, ``easting`` and ``elevation`` are in job units; ``line``
    is each shot's line number in the file; ``encoding`` names how the file
    was read (``UTF-8``, ``UTF-16`` or ``Windows-1252``); ``columns`` is
    the column order the shots were read in and ``columns_from`` where it
    came from (``default``, ``header`` or ``--columns``).
    """

    point: list[str]
    northing: NDArray[np.float64]
    easting: NDArray[np.float64]
    elevation: NDArray[np.float64]
    description: list[str]
    line: list[int]
    encoding: str = "UTF-8"
    columns: tuple[str, ...] = DEFAULT_COLUMNS
    columns_from: str = "default"

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
    dup = [c for c in cols if c != "skip" and cols.count(c) > 1]  # in the order given: the same message every run
    if dup:
        raise StakedFileError(f"--columns {text!r}: {dup[0]!r} given twice")
    return cols


def _source(name: str) -> Source:
    return Source(f"staked file {name!r}", StakedFileError, "a staked-points file")


def _header_names(r: list[str]) -> list[str]:
    return [_ALIASES.get(c.strip().lower(), c.strip().lower()) for c in r]


def _ambiguous_header(name: str, ln: int, names: list[str], given: list[str]) -> str:
    """The refusal of a header naming ``X``/``Y``, with both readings spelt out as ``--columns``."""
    def order(x: str, y: str) -> str:
        cols = [{"x": x, "y": y}.get(n, n if n in KNOWN_COLUMNS else "skip") for n in names]
        return ",".join(cols)

    said = " and ".join(repr(g) for g in given)
    return (f"staked file {name!r} line {ln}: the header names {said}, which some programs write for the "
            "easting and others for the northing; give the order with --columns, e.g. --columns "
            f"{order('easting', 'northing')} if X is the easting, or --columns {order('northing', 'easting')} "
            "if X is the northing")


_NOT_NUMBER_CHAR = re.compile(r"[^0-9eE+\-.]")


def _numbers_at_once(values: list[str]) -> NDArray[np.float64] | None:
    """The values as numbers where every one is a number :data:`_NUMBER` takes and finite, else None.

    Over the characters ``0-9 e E + - .`` alone ``float`` takes exactly what :data:`_NUMBER`
    matches (no ``inf``, ``nan`` or ``_`` can be spelt with them).
    """
    if _NOT_NUMBER_CHAR.search("".join(values)) is not None:
        return None
    try:
        v = np.array(list(map(float, values)), dtype=np.float64)
    except ValueError:
        return None
    return v if bool(np.isfinite(v).all()) else None


def _columns_at_once(text: str, delim: str, ncols: int, idx: dict[str, int], need: int, skip_first: bool
                     ) -> tuple[list[str], NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], list[str],
                                list[int]] | None:
    """The shots of a plain file read a column at a time: no quotes, every record on one line of at
    most ``MAX_FIELD_CHARS`` characters, every row as wide, ASCII point ids, and every value one the
    row-by-row reader takes.  None for anything else: the row-by-row reader then reads the file,
    and names the first thing that is wrong, as it always has.

    Returns
    -------
    (point, northing, easting, elevation, description, line) or None
    """
    if '"' in text:
        return None
    if "\r" in text:  # a CR or CRLF ends a line as LF does (_LINE)
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    if max(map(len, lines), default=0) > MAX_FIELD_CHARS:
        return None
    kept = [i for i, line in enumerate(lines) if line.replace(delim, "").strip()]  # _blank
    body = kept[1:] if skip_first else kept
    if not body:
        return None
    rows = [lines[i] for i in body]
    k = rows[0].count(delim) + 1
    if not need <= k <= max(ncols, need) or list(map(str.count, rows, repeat(delim))).count(k - 1) != len(rows):
        return None
    flat = delim.join(rows).split(delim)

    def column(name: str) -> list[str] | None:
        j = idx.get(name)
        return None if j is None or j >= k else list(map(str.strip, flat[j::k]))

    point = column("point")
    assert point is not None
    ids = "".join(point)
    if not all(point) or not (ids.isascii() and ids.isprintable()):  # find_unsafe_char finds nothing
        return None
    n, e = (_numbers_at_once(column(c) or []) for c in ("northing", "easting"))
    if n is None or e is None or np.abs(n).max() > MAX_SHOT_COORDINATE or np.abs(e).max() > MAX_SHOT_COORDINATE:
        return None
    z = np.full(len(rows), np.nan)
    given = column("elevation")
    if given is not None:
        has = [i for i, t in enumerate(given) if t]
        zv = _numbers_at_once([given[i] for i in has])
        if zv is None or (zv.size and np.abs(zv).max() > MAX_HEIGHT):
            return None
        z[has] = zv
    desc = column("description") or [""] * len(rows)
    return point, n, e, z, desc, [i + 1 for i in body]


def read_shots(path: str | Path, columns: tuple[str, ...] = DEFAULT_COLUMNS, delimiter: str = "auto",
               columns_given: bool = False) -> Shots:
    """Read and validate a staked-points file.

    Parameters
    ----------
    path : str or Path
        The file exported by the data collector.
    columns : tuple of str
        Column order when there is no header naming them (or always, with
        ``columns_given``): names from ``KNOWN_COLUMNS``.
    delimiter : str
        A key of :data:`DELIMITERS`; ``auto`` detects it.
    columns_given : bool
        True when the user gave ``--columns``: a header row is then skipped
        and does not set the order.

    Returns
    -------
    Shots
        Shots in file order; coordinates and elevations in job units.

    Raises
    ------
    StakedFileError
        Missing, not a regular file, too large, undecodable or empty file,
        or a malformed row (named by its line number).
    """
    p = Path(path)
    name = str(p)
    raw = read_regular_file(p, "staked file", MAX_STAKED_FILE_BYTES, StakedFileError)
    src = _source(name)
    text, encoding = decode_text(raw, src)
    del raw
    if re.search(r"\S", text) is None:
        raise StakedFileError(f"staked file {name!r}: empty; no shots to check")
    if delimiter not in DELIMITERS:
        raise StakedFileError(f"--delimiter {delimiter!r}: use one of {', '.join(DELIMITERS)}")
    delim = DELIMITERS[delimiter] or detect_delimiter(text, src)

    rows = ((ln, r) for ln, r in records(text, delim, src) if not blank(r))
    first = next(rows, None)
    if first is None:
        raise StakedFileError(f"staked file {name!r}: empty; no shots to check")
    ln0, r0 = first
    check_fields(src, ln0, r0)
    cols = columns
    ni = cols.index("northing")
    names = _header_names(r0)
    ambiguous = [r0[i].strip() for i, n in enumerate(names) if n in AMBIGUOUS_NAMES]
    has_header = ((ni >= len(r0) or _number(r0[ni].strip()) is None)
                  and (("northing" in names and "easting" in names) or bool(ambiguous)))
    if has_header and ambiguous and not columns_given:
        raise StakedFileError(_ambiguous_header(name, ln0, names, ambiguous))
    columns_from = "--columns" if columns_given else "default"
    if has_header and not columns_given:
        check_header_once(src, ln0, names, r0, [c for c in KNOWN_COLUMNS if c != "skip"],
                          "name each column once, or give --columns")
        if all(n in names for n in ("point", "northing", "easting")):
            cols = tuple(n if n in KNOWN_COLUMNS and n != "skip" else "skip" for n in names)
            columns_from = "header"
    idx = {c: i for i, c in enumerate(cols) if c != "skip"}
    need = max(idx["point"], idx["northing"], idx["easting"]) + 1
    if delim != " ":
        plain = _columns_at_once(text, delim, len(cols), idx, need, has_header)
        if plain is not None:
            return Shots(*plain, encoding, cols, columns_from)
    point: list[str] = []
    north: list[float] = []
    east: list[float] = []
    elev: list[float] = []
    desc: list[str] = []
    line_no: list[int] = []

    def bad_number(ln: int, key: str, text: str) -> StakedFileError:
        msg = f"staked file {name!r} line {ln}: {key} {show_value(text)} {not_a_number(text)}"
        if not python_reads(text) and ln == ln0:
            msg += (f" (line {ln0} is not taken as a header: a header names its columns, e.g. "
                    "point,northing,easting)")
        return StakedFileError(msg)

    for ln, r in (rows if has_header else chain([first], rows)):
        if ln != ln0:
            check_fields(src, ln, r)
        r = [c.strip() for c in r]
        if not need <= len(r) <= max(len(cols), need):
            raise StakedFileError(
                f"staked file {name!r} line {ln}: {len(r)} columns, expected {len(cols)} ({','.join(cols)})"
            )
        pid = r[idx["point"]]
        if not pid:
            raise StakedFileError(f"staked file {name!r} line {ln}: empty point number")
        bad = find_unsafe_char(pid)
        if bad is not None:
            raise StakedFileError(
                f"staked file {name!r} line {ln}: point {show_value(pid)} holds {describe_char(pid[bad])}, "
                f"{unsafe_kind(pid[bad])}"
            )
        vals = []
        for key in ("northing", "easting"):
            v = _number(r[idx[key]])
            if v is None:
                raise bad_number(ln, key, r[idx[key]])
            if abs(v) > MAX_SHOT_COORDINATE:
                raise StakedFileError(
                    f"staked file {name!r} line {ln}: {key} {show_value(r[idx[key]])} is out of range; "
                    f"coordinates must lie within -{MAX_SHOT_COORDINATE:,.0f} to {MAX_SHOT_COORDINATE:,.0f} job units"
                )
            vals.append(v)
        z = math.nan
        if "elevation" in idx and idx["elevation"] < len(r) and r[idx["elevation"]]:
            zv = _number(r[idx["elevation"]])
            if zv is None:
                raise bad_number(ln, "elevation", r[idx["elevation"]])
            if abs(zv) > MAX_HEIGHT:
                raise StakedFileError(
                    f"staked file {name!r} line {ln}: elevation {show_value(r[idx['elevation']])} is out of "
                    f"range; elevations must lie within -{MAX_HEIGHT:,.0f} to {MAX_HEIGHT:,.0f} job units"
                )
            z = zv
        point.append(pid)
        north.append(vals[0])
        east.append(vals[1])
        elev.append(z)
        d = idx.get("description")
        desc.append(r[d] if d is not None and d < len(r) else "")
        line_no.append(ln)
    if not point:
        raise StakedFileError(f"staked file {name!r}: line {ln0} is a header (it names the columns) and no "
                              "shots follow")
    return Shots(point, np.array(north, dtype=np.float64), np.array(east, dtype=np.float64),
                 np.array(elev, dtype=np.float64), desc, line_no, encoding, cols, columns_from)
