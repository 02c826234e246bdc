"""CSV text (a toolkit of the CSV writers): RFC 4180 fields and files, the decimals of CSV numbers."""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover
    import numpy as np
    from numpy.typing import NDArray

__all__ = ["DECIMALS", "GRADE_DECIMALS", "POINTS_COLUMNS", "FORMULA_LEADS", "csv_field", "csv_guard", "csv_text_field",
           "csv_text", "numbers_or_empty"]

#: The point file's layout: points.csv, and restake.csv and control.csv laid out the same way.
POINTS_COLUMNS = ("point", "northing", "easting", "elevation", "description")

DECIMALS = 4  # coordinates, stations, offsets and distances in CSV
#: Decimals of grades in percent (profile.csv, and report.html's profile table).
GRADE_DECIMALS = 6


def csv_field(value: str) -> str:
    """Quote a field per RFC 4180 when it holds a comma, quote or line break."""
    if any(c in value for c in ',"\r\n'):
        return '"' + value.replace('"', '""') + '"'
    return value


#: First characters that make a spreadsheet take a field as a formula (common practice: the usual
#: CSV-injection guidance names these six).
FORMULA_LEADS = ("=", "+", "-", "@", "\t", "\r")


def csv_guard(value: str) -> str:
    """A text field that no spreadsheet runs as a formula: one starting with
    ``= + - @``, tab or CR gets a leading apostrophe (``'-0+120.000``);
    numbers are never text fields and are written as they are.
    """
    return "'" + value if value[:1] in FORMULA_LEADS else value


def csv_text_field(value: str) -> str:
    """:func:`csv_guard`, then :func:`csv_field`: how every text field of every CSV is written."""
    return csv_field(csv_guard(value))


def csv_text(header: Sequence[str], lines: Iterable[str]) -> str:
    """Join a header and already formatted lines into CSV text."""
    body = "\n".join(lines)
    return ",".join(header) + "\n" + (body + "\n" if body else "")


def numbers_or_empty(values: "NDArray[np.float64]", decimals: int = DECIMALS) -> list[str]:
    """Numbers with ``decimals`` decimals (never ``-0.0000``), an empty field where NaN."""
    import numpy as np

    from ..numbers import fixed_strings

    v = np.asarray(values, dtype=np.float64)
    none = np.isnan(v)
    return ["" if e else t for t, e in zip(fixed_strings(np.where(none, 0.0, v), decimals), none.tolist())]
