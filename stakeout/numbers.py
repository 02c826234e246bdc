"""The one rounding rule of every printed number.

A number printed with ``n`` decimals shows the exact binary value of the
float rounded to ``n`` decimals, half to even: exactly what Python's
``f"{v:.{n}f}"`` prints.  The point file, the sheets, the DXF text, the
reports and LandXML therefore agree digit for digit.  (Rounding the scaled
float ``v * 10**n`` instead is not the same: the product is itself rounded,
so a value just below a tie, such as 1840350.00015, can land on the tie and
round up.)

The work is vectorised: the scaled values are rounded with numpy and only
the few that lie within a few units in the last place of a tie (or are too
large for the float product to be trusted) are decided exactly, with
integer arithmetic on each float's exact ratio.  A negative value that
rounds to zero prints without its sign (never ``-0.000``).

Only numpy is imported here: this module sits below everything else.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = ["scaled", "round_to", "fixed_strings", "fixed_string"]

# A scaled value whose distance from the nearest tie (k + 1/2) is below this
# many times the value is decided exactly.  The float product is within half
# a unit in the last place (2**-53 of the value) of the exact one, so any
# margin of at least twice that is safe; this one is sixteen times it.  From
# 2**48 up every value takes the exact path (the margin covers the whole
# unit interval), which also covers products too large to hold every integer.
_MARGIN = 2.0**-49


def _exact(m: float, scale: int) -> int:
    """``m * scale`` rounded half to even, computed on the exact value of ``m`` (``m >= 0``)."""
    p, q = m.as_integer_ratio()  # m == p / q exactly, q a power of two
    quo, rem = divmod(p * scale, q)
    twice = 2 * rem
    if twice > q or (twice == q and quo % 2 == 1):
        quo += 1
    return quo


def scaled(magnitudes: ArrayLike, scale: int) -> NDArray[np.int64]:
    """Non-negative numbers times a whole ``scale``, rounded half to even on the exact value.

    ``scaled(m, 10**n)`` holds the digits ``f"{m:.{n}f}"`` prints (without the
    point).  A non-finite input gives whatever ``np.rint(...).astype(np.int64)``
    gives for it (callers screen those out first or blank them).

    Parameters
    ----------
    magnitudes : array of float
        Values ``>= 0`` (pass ``np.abs(x)``: the rule is symmetric).
    scale : int
        Units of the last printed digit per unit of the value (``10**decimals``,
        ``3600 * 10**decimals`` for seconds of a degree).

    Returns
    -------
    array of int64
        The rounded scaled values, in the input's shape.
    """
    m = np.asarray(magnitudes, dtype=np.float64)
    y = m * float(scale)
    r = np.rint(y)
    out = r.astype(np.int64)
    # |y - r| is 1/2 at a tie of the float product; a value within the margin of it is decided
    # exactly (NaN and infinity compare False and keep the cast above).  One margin for the
    # whole array, from its largest value, while that is small; else each value's own.
    top = float(y.max()) if y.size else 0.0
    if top < 2.0**40:  # False for NaN and infinity too
        np.subtract(y, r, out=y)
        near = np.abs(y, out=y) >= 0.5 - top * _MARGIN
    else:
        gap = np.abs(y - r)
        y *= _MARGIN
        near = gap + y >= 0.5
    if near.any():
        flat_m = m.ravel()
        idx = np.flatnonzero(near)
        idx = idx[flat_m[idx] * float(scale) < 2.0**63]  # beyond int64 nothing is exact anyway
        out.reshape(-1)[idx] = [_exact(v, scale) for v in flat_m[idx].tolist()]
    return out


def round_to(values: ArrayLike, decimals: int) -> NDArray[np.float64]:
    """Values rounded to ``decimals`` by the printing rule, as floats (no negative zero).

    Each result is the float nearest the decimal ``f"{v:.{decimals}f}"``
    prints, so printing it again with ``decimals`` gives the same digits
    (while ``|v| * 10**decimals`` stays below 2**52, where a float still holds
    every such decimal closely enough).  Non-finite values pass through unchanged.
    """
    x = np.asarray(values, dtype=np.float64)
    scale = 10**decimals
    finite = np.isfinite(x)
    k = scaled(np.where(finite, np.abs(x), 0.0), scale).astype(np.float64)
    out = np.where(finite, np.copysign(k, x) / float(scale), x) + 0.0
    return np.asarray(out, dtype=np.float64)


def fixed_strings(values: ArrayLike, decimals: int) -> list[str]:
    """Values as text with ``decimals`` decimals: ``f"{v:.{decimals}f}"``, never ``-0.00``.

    NaN and infinities print as Python prints them (``nan``, ``inf``, ``-inf``).
    """
    x = np.asarray(values, dtype=np.float64).ravel()
    fmt = f"%.{decimals}f"
    out = [fmt % v for v in x.tolist()]
    # a negative value printing as zero loses its sign (-0.0 included): rounded to zero means
    # |x| <= 1/2 unit of the last digit, so only the few strings within a whole unit are looked at
    for i in np.flatnonzero(np.signbit(x) & (x >= -1.0 / 10**decimals)).tolist():
        if out[i].strip("-0.") == "":
            out[i] = out[i][1:]
    return out


def fixed_string(value: float, decimals: int) -> str:
    """One value as :func:`fixed_strings` prints it."""
    return fixed_strings([value], decimals)[0]
