"""Stations: text <-> value.

A station is a distance along the alignment.  Its text form splits it into
full stations and the remainder: ``12+34.56`` is 1234.56 with 100 units per
station (feet), ``1+234.567`` is 1234.567 with 1000 (metres).  Negative
stations print as ``-0+25.00``.
"""

from __future__ import annotations

import re

import numpy as np
from numpy.typing import ArrayLike

from .errors import JobFileError

__all__ = ["parse_station", "format_station", "station_text", "check_station_length"]

_STATION = re.compile(r"^([+-]?)(\d+)\+(\d+(?:\.\d*)?)$")
_PLAIN = re.compile(r"^[+-]?(?:\d+(?:\.\d*)?|\.\d+)$")


def check_station_length(value: object, where: str = "job.station_length") -> int:
    """Validate a station length: a positive whole number of job units."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise JobFileError(f"{where} = {value!r}: expected a whole number such as 100 or 1000")
    if value <= 0 or float(value) != int(value):
        raise JobFileError(f"{where} = {value!r}: must be a positive whole number such as 100 or 1000")
    return int(value)


def parse_station(value: object, station_length: int, where: str = "station") -> float:
    """Parse a station given as a number or as ``"12+34.56"`` text.

    Parameters
    ----------
    value : float, int or str
        The distance value, or its text form with ``+`` between full
        stations and the remainder (remainder below ``station_length``).
    station_length : int
        Units per full station (100 for feet, 1000 for metres by default).
    where : str
        The job-file key, named in any error.

    Returns
    -------
    float
        The station's distance value in job units.
    """
    if isinstance(value, bool):
        raise JobFileError(f'{where} = {value!r}: expected a station such as "12+34.56" or 1234.56')
    if isinstance(value, (int, float)):
        v = float(value)
        if not np.isfinite(v):
            raise JobFileError(f"{where} = {value!r}: station must be finite")
        return v
    if not isinstance(value, str):
        raise JobFileError(f'{where} = {value!r}: expected a station such as "12+34.56" or 1234.56')
    text = value.strip().replace(" ", "")
    if _PLAIN.match(text):
        return float(text)
    m = _STATION.match(text)
    if not m:
        raise JobFileError(f'{where} = {value!r}: not a station; write e.g. "12+34.56" or a number')
    sign, full, rest = m.groups()
    r = float(rest)
    if r >= station_length:
        raise JobFileError(
            f"{where} = {value!r}: the part after '+' must be less than the station length {station_length}"
        )
    v = int(full) * station_length + r
    return -v if sign == "-" else v


def format_station(values: ArrayLike, station_length: int, decimals: int) -> str | list[str]:
    """Format station values as ``12+34.56`` text.

    Parameters
    ----------
    values : float or array of float
        Station distance values in job units.
    station_length : int
        Units per full station.
    decimals : int
        Decimals of the remainder (2 for feet jobs, 3 for metres).

    Returns
    -------
    str or list of str
    """
    x = np.asarray(values, dtype=float)
    flat = np.atleast_1d(x)
    scale = 10**decimals
    # Round once in units of the last digit so that 12+99.999 never prints
    # as 12+100.00: the carry goes into the full stations.
    total = np.rint(np.abs(flat) * scale).astype(np.int64)
    per = int(station_length) * scale
    neg = (flat < 0) & (total > 0)
    full = total // per
    rem = total % per
    width = len(str(int(station_length) - 1)) + (decimals + 1 if decimals else 0)
    if decimals:
        rest = [f"{r // scale}.{r % scale:0{decimals}d}".rjust(width, "0") for r in rem.tolist()]
    else:
        rest = [f"{r}".rjust(width, "0") for r in rem.tolist()]
    out = [f"{'-' if n else ''}{f}+{r}" for n, f, r in zip(neg.tolist(), full.tolist(), rest)]
    return out[0] if x.ndim == 0 else out


def station_text(value: float, station_length: int, decimals: int) -> str:
    """One station as text (``12+34.56``); an empty string for a non-finite value."""
    if not np.isfinite(value):
        return ""
    out = format_station(value, station_length, decimals)
    assert isinstance(out, str)
    return out
