"""Angles: parsing, DMS formatting, exact degree trigonometry, azimuths.

Conventions: angles are decimal degrees; azimuths run clockwise from grid
north and are normalised to ``[0, 360)``.  Accepted text forms (job-file
contract): ``"45-30-15.5"`` (degrees-minutes-seconds), ``"45°30'15.5\\""``,
plain decimal ``"45.5"``, and, where a direction is asked for, a quadrant
bearing ``"N 45-30-15 E"``.
"""

from __future__ import annotations

import re

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import JobFileError
from .numbers import scaled

__all__ = [
    "parse_angle",
    "parse_direction",
    "format_dms",
    "format_azimuth_dms",
    "normalize_azimuth",
    "angle_difference",
    "sincosd",
    "azimuth_between",
]

_NUM = r"\d+(?:\.\d*)?|\.\d+"
# re.ASCII: only the digits 0-9 (never Arabic-Indic or full-width digits) and ASCII spaces
_DASH = re.compile(rf"^([+-]?)(\d+)-(\d+(?:\.\d*)?)(?:-({_NUM}))?$", re.ASCII)
_DECIMAL = re.compile(rf"^([+-]?)({_NUM})$", re.ASCII)
_SYMBOL = re.compile(
    rf"^([+-]?)\s*({_NUM})\s*°\s*(?:({_NUM})\s*['′]\s*)?(?:({_NUM})\s*(?:\"|″|'')\s*)?$", re.ASCII
)
_BEARING = re.compile(r"^([NSns])\s*(.*?)\s*([EWew])$", re.ASCII)

_FORMS = '"45-30-15.5", "45°30\'15.5\\"" or decimal degrees'


def _bad(where: str, value: object, why: str) -> JobFileError:
    return JobFileError(f"{where} = {value!r}: {why}")


def parse_angle(value: object, where: str = "angle") -> float:
    """Parse an angle given as a number (decimal degrees) or DMS text.

    Parameters
    ----------
    value : float, int or str
        ``45.5``, ``"45.5"``, ``"45-30-00"``, ``"45-30"`` or ``"45°30'00\\""``.
    where : str
        The job-file key, named in any error.

    Returns
    -------
    float
        Decimal degrees (sign kept).

    Raises
    ------
    JobFileError
        For garbage, or minutes or seconds of 60 or more.
    """
    if isinstance(value, bool):
        raise _bad(where, value, f"expected an angle: {_FORMS}")
    if isinstance(value, (int, float)):
        out = float(value)
        if not np.isfinite(out):
            raise _bad(where, value, "angle must be finite")
        return out
    if not isinstance(value, str):
        raise _bad(where, value, f"expected an angle: {_FORMS}")
    text = value.strip()
    m = _DECIMAL.match(text)
    if m:
        return float(text)
    m = _DASH.match(text) or _SYMBOL.match(text.replace("º", "°"))
    if not m:
        raise _bad(where, value, f"not an angle; write {_FORMS}")
    sign, d, mi, s = m.groups()
    if (mi is not None or s is not None) and "." in d:
        raise _bad(where, value, "degrees must be whole when minutes follow")
    if s is not None and mi is not None and "." in mi:
        raise _bad(where, value, "minutes must be whole when seconds follow")
    minutes = float(mi) if mi is not None else 0.0
    seconds = float(s) if s is not None else 0.0
    if minutes >= 60.0:
        raise _bad(where, value, "minutes must be less than 60")
    if seconds >= 60.0:
        raise _bad(where, value, "seconds must be less than 60")
    out = float(d) + minutes / 60.0 + seconds / 3600.0
    return -out if sign == "-" else out


def parse_direction(value: object, where: str = "azimuth") -> float:
    """Parse a direction: an azimuth (angle forms) or a quadrant bearing.

    Parameters
    ----------
    value : float, int or str
        An azimuth in any :func:`parse_angle` form, clockwise from north, or
        a bearing ``"N 45-30-15 E"`` / ``"S 10 W"`` (angle 0 to 90).
    where : str
        The job-file key, named in any error.

    Returns
    -------
    float
        Azimuth in degrees, normalised to ``[0, 360)``.
    """
    if isinstance(value, str):
        m = _BEARING.match(value.strip())
        if m:
            ns, body, ew = (g.upper() if len(g) == 1 else g for g in m.groups())
            a = parse_angle(body, where)
            if not 0.0 <= a <= 90.0:
                raise _bad(where, value, "a bearing's angle must be 0 to 90 degrees")
            az = {("N", "E"): a, ("S", "E"): 180.0 - a,
                  ("S", "W"): 180.0 + a, ("N", "W"): 360.0 - a}[(ns, ew)]
            return float(normalize_azimuth(az))
    az = parse_angle(value, where)
    if not 0.0 <= az <= 360.0:
        raise _bad(where, value, "azimuth must be between 0 and 360 degrees")
    return float(normalize_azimuth(az))


def normalize_azimuth(az: ArrayLike) -> NDArray[np.float64] | float:
    """Reduce azimuths (degrees) to ``[0, 360)``; never returns 360."""
    a = np.mod(np.asarray(az, dtype=float), 360.0)
    a = np.where(a >= 360.0, 0.0, a) + 0.0
    return float(a) if a.ndim == 0 else a


def angle_difference(a: ArrayLike, b: ArrayLike) -> NDArray[np.float64] | float:
    """Signed turn from direction ``a`` to ``b`` in degrees, in ``(-180, 180]``.

    Positive is clockwise (a right turn, looking ahead).
    """
    d = np.mod(np.asarray(b, dtype=float) - np.asarray(a, dtype=float), 360.0)
    d = np.where(d > 180.0, d - 360.0, d) + 0.0
    return float(d) if d.ndim == 0 else d


def sincosd(x: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Sine and cosine of angles in degrees, exact at multiples of 90.

    The argument is reduced to ``[-45, 45]`` about the nearest quadrant
    before converting to radians, as geographiclib's ``Math.sincosd`` does.
    """
    x = np.asarray(x, dtype=float)
    r = np.fmod(x, 360.0)
    q = np.rint(r / 90.0)
    r = np.deg2rad(r - 90.0 * q)
    s, c = np.sin(r), np.cos(r)
    qi = q.astype(np.int64)
    odd = (qi & 1).astype(bool)
    # quadrants 0..3: (s, c), (c, -s), (-s, -c), (-c, s)
    sin = np.where(odd, c, s)
    cos = np.where(odd, s, c)
    sin = np.where(qi & 2, -sin, sin) + 0.0
    cos = np.where((qi + 1) & 2, -cos, cos) + 0.0
    return sin, cos


def azimuth_between(
    n1: ArrayLike, e1: ArrayLike, n2: ArrayLike, e2: ArrayLike
) -> NDArray[np.float64] | float:
    """Grid azimuth (degrees, clockwise from north) from point 1 to point 2."""
    dn = np.asarray(n2, dtype=float) - np.asarray(n1, dtype=float)
    de = np.asarray(e2, dtype=float) - np.asarray(e1, dtype=float)
    return normalize_azimuth(np.degrees(np.arctan2(de, dn)))


def _dms_parts(
    x: NDArray[np.float64], decimals: int, wrap360: bool
) -> tuple[NDArray[np.bool_], NDArray[np.int64], NDArray[np.int64], NDArray[np.int64]]:
    # Round once, in whole units of the last printed digit, then split with
    # integer arithmetic: carries into minutes and degrees come out right and
    # the sign is handled apart (-1.5 deg is -1-30-00, never -2-30-00).
    scale = 10**decimals
    total = scaled(np.abs(x), 3600 * scale)
    if wrap360:
        total = total % (360 * 3600 * scale)
    neg = (x < 0) & (total > 0)
    deg = total // (3600 * scale)
    rem = total % (3600 * scale)
    return neg, deg, rem // (60 * scale), rem % (60 * scale)


def _join_dms(neg: NDArray[np.bool_], deg: NDArray[np.int64], mins: NDArray[np.int64], secs: NDArray[np.int64],
              decimals: int) -> list[str]:
    scale = 10**decimals
    out = []
    for n, d, m, s in zip(neg.tolist(), deg.tolist(), mins.tolist(), secs.tolist()):
        if decimals:
            sec = f"{s // scale:02d}.{s % scale:0{decimals}d}"
        else:
            sec = f"{s:02d}"
        out.append(f"{'-' if n else ''}{d}-{m:02d}-{sec}")
    return out


def format_dms(angle: ArrayLike, decimals: int = 1) -> str | list[str]:
    """Format degrees as ``D-MM-SS.s`` with rounding carried (never ``59-60``).

    Parameters
    ----------
    angle : float or array of float
        Degrees; negative values get a leading ``-``.
    decimals : int
        Decimals of the seconds.

    Returns
    -------
    str or list of str
        One string for a scalar, a list for an array.
    """
    x = np.asarray(angle, dtype=float)
    out = _join_dms(*_dms_parts(np.atleast_1d(x), decimals, False), decimals)
    return out[0] if x.ndim == 0 else out


def format_azimuth_dms(az: ArrayLike, decimals: int = 1) -> str | list[str]:
    """Format azimuths as ``D-MM-SS.s``, wrapping a rounded 360 to 0."""
    x = np.asarray(normalize_azimuth(az), dtype=float)
    out = _join_dms(*_dms_parts(np.atleast_1d(x), decimals, True), decimals)
    return out[0] if x.ndim == 0 else out
