"""Stations: text <-> value, and the stationing of an alignment.

A station's text form splits it into full stations and the remainder:
``12+34.56`` is 1234.56 with 100 units per station (feet), ``1+234.567``
is 1234.567 with 1000 (metres).  Negative stations print as ``-0+25.00``.

The geometry works in *internal stations*: the POB's station plus the
distance along the centreline, no equation applied.  :class:`Stationing`
maps internal stations to the stations in force (region by region, across
station equations) and back, and formats every station label of every
output.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import cached_property
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import JobFileError
from .numbers import scaled

__all__ = ["parse_station", "format_station", "station_text", "check_station_length", "StationRef",
           "Equation", "Stationing"]

_STATION = re.compile(r"^([+-]?)([0-9]+)\+([0-9]+)(\.[0-9]*)?$")
_PLAIN = re.compile(r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)$")


def check_station_length(value: object, where: str = "job.station_length") -> int:
    """Validate a station length: a positive whole number of job units, within bounds."""
    from .limits import check_station_length as bounded

    return bounded(value, where)


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
    sign, full, whole, frac = m.groups()
    digits = len(str(int(station_length) - 1))
    if len(whole) != digits:
        example = {2: "12+34.56", 3: "1+234.567"}.get(digits, "1+" + "0" * digits)
        raise JobFileError(
            f"{where} = {value!r}: the part after '+' must have exactly {digits} digits before any decimals "
            f"(station length {station_length}), e.g. {example!r}"
        )
    r = float(whole + (frac or ""))
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
    total = scaled(np.abs(flat), scale)
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


class StationRef(NamedTuple):
    """A station as the job file gives it: its value, the region it is read
    in (``None``: wherever it lies) and the key that gave it.
    """

    value: float
    region: int | None
    where: str


#: Relative distance from an equation point within which an internal station is taken to be
#: on it (the ahead station; the back station for what ends there).
EQUATION_SNAP = 1e-10


@dataclass(frozen=True)
class Equation:
    """A station equation at internal station ``internal``: the station
    ``back`` before it is the same point as ``ahead`` after it.
    """

    internal: float
    back: float
    ahead: float
    where: str = ""


@dataclass(frozen=True)
class Stationing:
    """Internal stations <-> stations in force, and their labels.

    Region 1 runs from the POB to the first equation, region ``r`` from
    equation ``r - 1`` to equation ``r``; in region ``r`` the station is
    the internal station plus a constant shift (0 in region 1).  An
    equation point belongs to the region ahead of it.

    Parameters
    ----------
    start, end : float
        Internal stations of the POB and POE (job units).
    station_length : int
        Units per full station (100 for feet, 1000 for metres by default).
    decimals : int
        Decimals of the remainder in labels (2 for feet jobs, 3 for metres).
    equations : tuple of Equation
        In order along the alignment.
    """

    @classmethod
    def with_equations(cls, start: float, end: float, station_length: int, decimals: int,
                       given: tuple[tuple[float, float, str], ...]) -> "Stationing":
        """Stationing from equations given as (back station, ahead station, key).

        Each back station is read in the region before its equation.

        Raises
        ------
        JobFileError
            An equation off the alignment or out of order, naming its key.
        """
        eqs: list[Equation] = []
        shift = 0.0
        prev = start
        for back, ahead, where in given:
            internal = back - shift
            if not prev < internal < end:
                what = "out of order" if internal <= prev and prev > start else "off the alignment"
                raise JobFileError(
                    f"{where}.back = {station_text(back, station_length, decimals)!r}: {what}; the equation must "
                    f"lie on the alignment after the previous one (region {len(eqs) + 1} runs from "
                    f"{station_text(prev + shift, station_length, decimals)} to "
                    f"{station_text(end + shift, station_length, decimals)})")
            eqs.append(Equation(internal, back, ahead, where))
            shift = ahead - internal
            prev = internal
        return cls(start, end, station_length, decimals, tuple(eqs))

    start: float
    end: float
    station_length: int
    decimals: int
    equations: tuple[Equation, ...] = ()

    @property
    def regions(self) -> int:
        """Number of stationing regions."""
        return len(self.equations) + 1

    @cached_property
    def _breaks(self) -> NDArray[np.float64]:
        return np.array([eq.internal for eq in self.equations], dtype=np.float64)

    @cached_property
    def _snap(self) -> NDArray[np.float64]:
        """How near an equation point counts as on it: a few units in the last place of the
        station (a length summed along the elements, or a staInternal written with fewer
        digits, lands within this of the equation it is meant to sit on).
        """
        return EQUATION_SNAP * np.maximum(1.0, np.abs(self._breaks))

    @cached_property
    def _shifts(self) -> NDArray[np.float64]:
        return np.array([0.0] + [eq.ahead - eq.internal for eq in self.equations], dtype=np.float64)

    @cached_property
    def _bounds(self) -> NDArray[np.float64]:
        """Internal stations where each region starts, then the end (regions + 1 values)."""
        return np.concatenate([[self.start], self._breaks, [self.end]])

    def region(self, internal: ArrayLike) -> NDArray[np.int64]:
        """Region (from 1) of each internal station; an equation point is in the region ahead."""
        x = np.asarray(internal, dtype=float)
        if not self.equations:
            return np.ones(x.shape, dtype=np.int64)
        return np.searchsorted(self._breaks - self._snap, x, side="right").astype(np.int64) + 1

    def station(self, internal: ArrayLike) -> NDArray[np.float64]:
        """The station in force at each internal station (the ahead station at an equation)."""
        x = np.asarray(internal, dtype=float)
        if not self.equations:
            return x
        return x + self._shifts[self.region(x) - 1]

    def station_back(self, internal: ArrayLike) -> NDArray[np.float64]:
        """Like :meth:`station`, but an equation point takes its back station
        (for the end of what runs up to it).
        """
        x = np.asarray(internal, dtype=float)
        if not self.equations:
            return x
        r = np.searchsorted(self._breaks + self._snap, x, side="left")
        return x + self._shifts[r]

    def region_range(self, region: int) -> tuple[float, float]:
        """Internal stations where ``region`` starts and ends."""
        b = self._bounds
        return float(b[region - 1]), float(b[region])

    def shift(self, region: int) -> float:
        """Station minus internal station in ``region``."""
        return float(self._shifts[region - 1])

    def _region_text(self, r: int) -> str:
        lo, hi = self.region_range(r)
        return f"region {r} runs from {self.format_value(lo + self.shift(r))} to {self.format_value(hi + self.shift(r))}"

    def _regions_text(self, near: list[int]) -> str:
        """What the regions are, for a message: all of them when few, else those in ``near``."""
        rs = list(range(1, self.regions + 1)) if self.regions <= 6 else sorted(set(near))
        text = "; ".join(self._region_text(r) for r in rs)
        return text if self.regions <= 6 else f"{text} (of {self.regions} regions)"

    def to_internal(self, ref: StationRef) -> float:
        """The internal station of a station given in the job file.

        The station is read in the region where it lies; one that lies in
        two regions (after an equation that steps back) must name its
        region, or it is an error naming both.  A station before the first
        region or beyond the last is read there, so the caller's range
        check names it; one between regions (inside the gap of an
        equation that steps ahead) exists nowhere and is an error naming
        the regions, as is a ``region`` that does not exist.

        Raises
        ------
        JobFileError
            Naming the key, the value and the regions there are.
        """
        if ref.region is not None:
            if not 1 <= ref.region <= self.regions:
                there = ("the alignment has one region (no station equations)" if self.regions == 1 else
                         f"the alignment has regions 1 to {self.regions}")
                raise JobFileError(f"{ref.where} = {{ station = {self.format_value(ref.value)!r}, region = "
                                   f"{ref.region} }}: region {ref.region} does not exist; {there}")
            xr = ref.value - self.shift(ref.region)
            lo, hi = self.region_range(ref.region)
            # the first and last regions run on past the ends (a profile may); the others end at equations
            low_ok = ref.region == 1 or lo - 1e-9 <= xr
            high_ok = ref.region == self.regions or xr <= hi + 1e-9
            if not (low_ok and high_ok):
                raise JobFileError(f"{ref.where} = {self.format_value(ref.value)!r}: not in region {ref.region}; "
                                   f"{self._region_text(ref.region)}")
            return xr
        if not self.equations:
            return ref.value
        b = self._bounds
        x: NDArray[np.float64] = ref.value - self._shifts  # the value read in every region at once
        inside = (b[:-1] - 1e-9 <= x) & (x <= b[1:] + 1e-9)
        hits = np.flatnonzero(inside)
        # a station equal to an equation's back station and its ahead region's start is one point
        if hits.size == 2 and abs(x[hits[0]] - x[hits[1]]) <= 1e-9:
            hits = hits[1:]
        if hits.size > 1:
            names = " and ".join(str(int(r) + 1) for r in hits[:6]) + (" and more" if hits.size > 6 else "")
            raise JobFileError(
                f"{ref.where} = {self.format_value(ref.value)!r}: lies in regions {names} (an equation steps "
                f"back there); write {{ station = ..., region = N }}"
            )
        if hits.size:
            return float(x[hits[0]])
        first_lo = b[0]
        last_hi = b[-1] + self._shifts[-1]
        if ref.value < first_lo or ref.value > last_hi:  # off the alignment: the caller's range check names it
            return float(x[-1] if ref.value > last_hi else x[0])
        # in a gap: name the regions on either side of it
        starts = b[:-1] + self._shifts
        ends = b[1:] + self._shifts
        below = np.flatnonzero(ends < ref.value)
        above = np.flatnonzero(starts > ref.value)
        near = [int(below[np.argmax(ends[below])]) + 1] if below.size else []
        near += [int(above[np.argmin(starts[above])]) + 1] if above.size else []
        raise JobFileError(
            f"{ref.where} = {self.format_value(ref.value)!r}: no such station; it lies in the gap of a station "
            f"equation, in no region ({self._regions_text(near)})")

    def interval_stations(self, interval: float) -> NDArray[np.float64]:
        """Internal stations of every whole multiple of ``interval`` in each region's own stationing."""
        b, sh = self._bounds, self._shifts
        lo, hi = b[:-1], b[1:]
        k0 = np.ceil((lo + sh) / interval - 1e-9).astype(np.int64)
        k1 = np.floor((hi + sh) / interval + 1e-9).astype(np.int64)
        cnt = np.maximum(k1 - k0 + 1, 0)
        region = np.repeat(np.arange(self.regions), cnt)
        k = np.repeat(k0 - (np.cumsum(cnt) - cnt), cnt) + np.arange(int(cnt.sum()))
        v = k.astype(np.float64) * interval
        if self.equations:
            v = v - sh[region]
        last = region == self.regions - 1
        keep = (v >= lo[region] - 1e-6) & np.where(last, v <= hi[region] + 1e-6, v < hi[region] - 1e-6)
        return v[keep]

    def occurs_twice(self, internal: ArrayLike) -> NDArray[np.bool_]:
        """Whether the station in force at each internal station also lies in another region
        (after an equation that steps back), to the decimals its label prints.
        """
        x = np.asarray(internal, dtype=float)
        twice = np.zeros(x.shape, dtype=bool)
        if not self.equations:
            return twice
        v, own = self.station(x), self.region(x)
        tol = 0.5 * 10.0 ** -self.decimals
        # each region's stations run from a to b; a region ends with its equation's back station,
        # which is a station of that region too (to_internal reads it there)
        a = self._bounds[:-1] + self._shifts
        b = self._bounds[1:] + self._shifts
        # regions holding each station, counted by binary search (n log n in the equations):
        # those starting at or before it less those ending before it
        count = (np.searchsorted(np.sort(a - tol), v, side="right")
                 - np.searchsorted(np.sort(b + tol), v, side="left"))
        # only the equation point itself, when its ahead station equals the back one, is the same
        # place as the region behind's last station and no second occurrence
        behind = np.maximum(own - 2, 0)
        at_equation = ((own > 1) & (np.abs(x - self._bounds[own - 1]) <= self._snap[behind])
                       & (np.abs(v - b[behind]) <= tol)) if self.regions > 1 else np.zeros(x.shape, dtype=bool)
        twice = count - 1 - at_equation > 0
        return twice

    def labels(self, internal: ArrayLike) -> list[str]:
        """Station labels (``12+34.56``) of internal stations, in force there.

        A station that occurs twice (after an equation that steps back) carries
        its region, ``11+50.00(2)``; labels that occur once are unchanged.
        """
        x = np.atleast_1d(np.asarray(internal, dtype=float))
        out = format_station(self.station(x), self.station_length, self.decimals)
        out = out if isinstance(out, list) else [out]
        twice = self.occurs_twice(x)
        if twice.any():
            regions = self.region(x)
            for i in np.flatnonzero(twice).tolist():  # only the few stations an equation doubles
                out[i] = f"{out[i]}({int(regions[i])})"
        return out

    def label(self, internal: float | None) -> str:
        """One station label (with its region where the station occurs twice); empty for
        ``None`` or a non-finite value.
        """
        if internal is None:
            return ""
        text = station_text(float(self.station(internal)), self.station_length, self.decimals)
        if text and bool(self.occurs_twice(internal)):
            text = f"{text}({int(self.region(internal))})"
        return text

    def format_value(self, station: float) -> str:
        """Label of a station value already in force (not an internal station)."""
        return station_text(station, self.station_length, self.decimals)
