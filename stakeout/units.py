"""Length units: metre, international foot and US survey foot, exactly.

Sources: NIST & NGS, Federal Register Vol. 85 No. 193 (2020) and 24 FR 5348
(1959): the international foot is 0.3048 m exactly, the US survey foot
1200/3937 m exactly.  The two differ by 2 ppm (0.01 ft in a mile), so a job
never converts between them silently: every length in a job is in its one
declared unit.
"""

from __future__ import annotations

from dataclasses import dataclass

from .errors import JobFileError

__all__ = [
    "METRE",
    "INTERNATIONAL_FOOT",
    "US_SURVEY_FOOT",
    "Unit",
    "UNITS",
    "get_unit",
]

METRE = 1.0  # metres
INTERNATIONAL_FOOT = 0.3048  # metres, exact (1959)
US_SURVEY_FOOT = 1200.0 / 3937.0  # metres, exact by definition


@dataclass(frozen=True)
class Unit:
    """A length unit of a job.

    Attributes
    ----------
    key : str
        The job-file spelling: ``"m"``, ``"ft"`` or ``"us_ft"``.
    metres : float
        Length of one unit in metres.
    label : str
        Human-readable name, printed on sheets.
    station_length : float
        Default length of one full station in this unit (100 ft, 1000 m).
    station_decimals : int
        Decimals in a station label (2 for feet, 3 for metres).
    symbol : str
        Short symbol printed after numbers on sheets.
    plural : str
        The unit's plural name, for "distances in ..." on sheets.
    """

    key: str
    metres: float
    label: str
    station_length: float
    station_decimals: int
    symbol: str
    plural: str

    def to_metres(self, value: float) -> float:
        """Convert a length in this unit to metres."""
        return value * self.metres

    def from_metres(self, value: float) -> float:
        """Convert a length in metres to this unit."""
        return value / self.metres

    @property
    def is_feet(self) -> bool:
        """True for either foot."""
        return self.key != "m"


UNITS: dict[str, Unit] = {
    "m": Unit("m", METRE, "metre", 1000.0, 3, "m", "metres"),
    "ft": Unit("ft", INTERNATIONAL_FOOT, "international foot (0.3048 m)", 100.0, 2, "ft", "international feet"),
    "us_ft": Unit("us_ft", US_SURVEY_FOOT, "US survey foot (1200/3937 m)", 100.0, 2, "sft", "US survey feet"),
}


def get_unit(key: object, where: str = "job.units") -> Unit:
    """Look up a unit by its job-file key.

    Raises
    ------
    JobFileError
        Naming ``where``, the value and the allowed keys.
    """
    if isinstance(key, str) and key in UNITS:
        return UNITS[key]
    allowed = ", ".join(f'"{k}"' for k in UNITS)
    raise JobFileError(f"{where} = {key!r}: unknown unit; use one of {allowed}")
