"""The strict table reader under every section parser: unknown keys are
errors, and every error names the key with its table (``alignment.pi[2].radius``;
array entries count from 0 in file order), the value, and what is allowed.
"""

from __future__ import annotations

import math
import re
from typing import Any

from ..angles import parse_angle, parse_direction
from ..errors import JobFileError
from ..limits import MAX_COORDINATE, check_station_value
from ..stations import StationRef, parse_station
from ..textsafety import check_safe_id, describe_char, find_unsafe_char, show_value, unsafe_kind

__all__ = ["Table", "kind_of", "SAFE_TEXT", "check_safe_text", "angle", "direction", "station", "station_ref"]

#: Point ids, codes and prefixes: letters, digits and ``_ . - / #``, not
#: starting with a character a spreadsheet or data collector would misread.
SAFE_TEXT = re.compile(r"^[A-Za-z0-9_#./][A-Za-z0-9_#./-]{0,19}$")
_SAFE_HELP = "1 to 20 of letters, digits, _ # . / - (not starting with -)"


#: A TOML bare key: shown as it is; any other key name is shown as an escaped literal.
_BARE_KEY = re.compile(r"[A-Za-z0-9_-]{1,60}")
#: Line breaks and tabs read as spaces where text may have several lines.
_LINES = str.maketrans("\n\r\t", "   ")


def check_safe_text(value: object, where: str, allow_empty: bool = False) -> str:
    """Validate an id, code or prefix: the whole text must match :data:`SAFE_TEXT`
    (a trailing newline included, so nothing splits a row of a point file).
    """
    return check_safe_id(value, where, allow_empty)


def kind_of(v: object) -> str:
    if isinstance(v, bool):
        return "true/false"
    if isinstance(v, (int, float)):
        return "a number"
    if isinstance(v, str):
        return "text"
    if isinstance(v, dict):
        return "a table"
    if isinstance(v, list):
        return "an array"
    return type(v).__name__


class Table:
    def __init__(self, data: dict[str, Any], path: str, allowed: tuple[str, ...]):
        self.data = data
        self.path = path
        unknown = [k for k in data if k not in allowed]
        if unknown:
            name = unknown[0] if _BARE_KEY.fullmatch(unknown[0]) else show_value(unknown[0])
            where = f"{path}.{name}" if path else name
            raise JobFileError(f"{where}: unknown key; allowed here: {', '.join(allowed)}")

    def key(self, k: str) -> str:
        return f"{self.path}.{k}" if self.path else k

    def has(self, k: str) -> bool:
        return k in self.data

    def raw(self, k: str, required: bool = False) -> Any:
        if k not in self.data:
            if required:
                raise JobFileError(f"{self.key(k)}: missing; this key is required")
            return None
        return self.data[k]

    def number(self, k: str, required: bool = False, positive: bool = False,
               nonnegative: bool = False, bound: float = MAX_COORDINATE) -> float | None:
        """A number; within +-``bound`` (default: the range in which 4 decimals are exact)."""
        v = self.raw(k, required)
        if v is None:
            return None
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise JobFileError(f"{self.key(k)} = {show_value(v)}: expected a number, got {kind_of(v)}")
        try:
            v = float(v)
        except OverflowError:  # a whole number beyond every float
            v = math.inf
        if not math.isfinite(v):
            raise JobFileError(f"{self.key(k)} = {show_value(self.data[k])}: must be a finite number")
        if abs(v) > bound:
            raise JobFileError(f"{self.key(k)} = {show_value(self.data[k])}: out of range; it must lie within "
                               f"-{bound:,.0f} to {bound:,.0f} job units (the range in which 4 decimals are exact)")
        if positive and v <= 0:
            raise JobFileError(f"{self.key(k)} = {v!r}: must be greater than 0")
        if nonnegative and v < 0:
            raise JobFileError(f"{self.key(k)} = {v!r}: must be 0 or more")
        return v

    def text(self, k: str, required: bool = False, choices: tuple[str, ...] | None = None,
             lines: bool = False) -> str | None:
        """Text: no control, format or separator character (ESC, NUL, a
        bidirectional override...; ``lines``: line breaks and tabs allowed,
        as in a WKT), so nothing read here can drive a terminal or forge a line.
        """
        v = self.raw(k, required)
        if v is None:
            return None
        if not isinstance(v, str):
            raise JobFileError(f"{self.key(k)} = {show_value(v)}: expected text, got {kind_of(v)}")
        i = find_unsafe_char(v.translate(_LINES) if lines else v)
        if i is not None:
            raise JobFileError(f"{self.key(k)} = {show_value(v)}: character {i + 1} is {describe_char(v[i])}, "
                               f"{unsafe_kind(v[i])}; use printable text")
        if choices is not None and v not in choices:
            allowed = " | ".join(f'"{c}"' for c in choices)
            raise JobFileError(f"{self.key(k)} = {show_value(v)}: use {allowed}")
        return v

    def table(self, k: str, allowed: tuple[str, ...], required: bool = False) -> "Table | None":
        v = self.raw(k, required)
        if v is None:
            return None
        if not isinstance(v, dict):
            raise JobFileError(f"{self.key(k)} = {v!r}: expected a table, got {kind_of(v)}")
        return Table(v, self.key(k), allowed)

    def array(self, k: str, required: bool = False) -> list[Any] | None:
        v = self.raw(k, required)
        if v is None:
            return None
        if not isinstance(v, list):
            raise JobFileError(f"{self.key(k)} = {v!r}: expected an array, got {kind_of(v)}")
        return v

    def tables(self, k: str, allowed: tuple[str, ...], required: bool = False) -> list["Table"]:
        items = self.array(k, required) or []
        out = []
        for i, item in enumerate(items):
            where = f"{self.key(k)}[{i}]"
            if not isinstance(item, dict):
                raise JobFileError(f"{where} = {item!r}: expected a table, got {kind_of(item)}")
            out.append(Table(item, where, allowed))
        return out


def angle(t: Table, k: str, required: bool = True) -> float | None:
    v = t.raw(k, required)
    return None if v is None else parse_angle(v, t.key(k))


def direction(t: Table, k: str, required: bool = True) -> float | None:
    v = t.raw(k, required)
    return None if v is None else parse_direction(v, t.key(k))


def station(t: Table, k: str, station_length: int, required: bool = True, default: float | None = None) -> float:
    v = t.raw(k, required)
    if v is None:
        assert default is not None
        return default
    return check_station_value(parse_station(v, station_length, t.key(k)), t.key(k))


def station_ref(value: object, station_length: int, where: str) -> StationRef:
    """A station given as a number, text, or ``{ station = ..., region = N }``."""
    if isinstance(value, dict):
        t = Table(value, where, ("station", "region"))
        region = t.raw("region", required=True)
        if isinstance(region, bool) or not isinstance(region, int) or region < 1:
            raise JobFileError(f"{where}.region = {region!r}: expected a region number, 1 or more")
        value = parse_station(t.raw("station", required=True), station_length, t.key("station"))
        return StationRef(check_station_value(value, t.key("station")), region, where)
    return StationRef(check_station_value(parse_station(value, station_length, where), where), None, where)
