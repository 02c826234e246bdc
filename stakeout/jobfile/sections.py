"""Cross-section keys of the job file (contract, second set): ``[[superelevation]]`` rows,
template lines (``from``, ``steepen_with_inner``, ``rollover``, ``dz`` from another line),
``cross_slope = "superelevation"`` and widening (``offset`` as rows of ``{station, offset}``).

Everything the job file alone can decide is checked here (unknown ``from``
codes, cycles, codes used twice, the wrong side, a rollover without an
inner slope, bounds); what needs the alignment's stationing (rows in
station order, lines that cross) is checked by :mod:`stakeout.crosssection`.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from ..errors import JobFileError
from ..job import (DesignFile, JobInfo, OffsetLine, SuperelevationFile, SuperelevationPeriod, SuperelevationRow,
                   WideningRow)
from ..limits import MAX_CROSS_SLOPE, MAX_HEIGHT, MAX_ROLLOVER, check_length
from ..textsafety import show_value
from .reader import Table, check_safe_text, station_ref

__all__ = ["OFFSET_KEYS", "read_offset_line", "check_template_lines", "read_superelevation", "percent"]

#: Keys of one ``staking.offsets`` entry.
OFFSET_KEYS = ("offset", "code", "dz", "cross_slope", "from", "steepen_with_inner", "rollover")

SUPERELEVATION = "superelevation"


def percent(t: Table, k: str, bound: float = MAX_CROSS_SLOPE, required: bool = False,
            nonnegative: bool = False) -> float | None:
    """A slope or slope difference in percent, within +-``bound``."""
    x = t.number(k, required, bound=math.inf)  # a finite number, named in the error if not
    if x is None:
        return None
    if abs(x) > bound:
        lo = "0" if nonnegative else f"-{bound:g}"
        raise JobFileError(f"{t.key(k)} = {show_value(t.raw(k))}: out of range; it must lie within {lo} to {bound:g} "
                           "percent")
    if nonnegative and x < 0:
        raise JobFileError(f"{t.key(k)} = {show_value(t.raw(k))}: must be 0 or more (percent)")
    return x + 0.0


def _flag(t: Table, k: str) -> bool:
    v = t.raw(k)
    if v is None:
        return False
    if not isinstance(v, bool):
        raise JobFileError(f"{t.key(k)} = {show_value(v)}: expected true or false")
    return v


def _widening(raw: list[Any], where: str, info: JobInfo) -> tuple[WideningRow, ...]:
    if len(raw) < 2:
        raise JobFileError(f"{where} = {show_value(raw)}: a widening needs at least two rows "
                           "{station = ..., offset = ...} (or give one number)")
    rows = []
    for i, item in enumerate(raw):
        w = f"{where}[{i}]"
        if not isinstance(item, dict):
            raise JobFileError(f"{w} = {show_value(item)}: expected {{station = ..., offset = ...}}")
        t = Table(item, w, ("station", "offset"))
        off = check_length(t.raw("offset", required=True), t.key("offset"), signed=True, allow_zero=True)
        if off == 0.0:
            raise JobFileError(f"{t.key('offset')} = {show_value(item['offset'])}: a widened line cannot reach "
                               "the centreline (offset 0)")
        rows.append(WideningRow(station_ref(t.raw("station", required=True), info.station_length,
                                            t.key("station")), off + 0.0))
    sides = {r.offset > 0 for r in rows}
    if len(sides) > 1:
        raise JobFileError(f"{where}: the rows change side ({rows[0].offset:g} to "
                           f"{next(r.offset for r in rows if (r.offset > 0) != (rows[0].offset > 0)):g}); a line "
                           "stays on one side of the centreline")
    return tuple(rows)


def read_offset_line(item: dict[str, Any], where: str, info: JobInfo) -> OffsetLine:
    """One ``staking.offsets`` entry, with the second set's keys."""
    o = Table(item, where, OFFSET_KEYS)
    raw_off = o.raw("offset", required=True)
    widening: tuple[WideningRow, ...] = ()
    if isinstance(raw_off, list):
        widening = _widening(raw_off, o.key("offset"), info)
        off = widening[0].offset
    else:
        off = float(o.number("offset", required=True) or 0.0)
    code = check_safe_text(o.raw("code", required=True), o.key("code"))
    dz = o.number("dz", bound=MAX_HEIGHT)
    raw_slope = o.raw("cross_slope")
    superelevation = raw_slope == SUPERELEVATION
    if isinstance(raw_slope, str) and not superelevation:
        raise JobFileError(f"{o.key('cross_slope')} = {show_value(raw_slope)}: use a number (percent) or "
                           f'"{SUPERELEVATION}"')
    slope = None if superelevation else percent(o, "cross_slope")
    if dz is not None and raw_slope is not None:
        raise JobFileError(f"{where}: give `dz` or `cross_slope`, not both")
    from_code = None
    if o.has("from"):
        from_code = check_safe_text(o.raw("from"), o.key("from"))
    steepen = _flag(o, "steepen_with_inner")
    rollover = percent(o, "rollover", bound=MAX_ROLLOVER, nonnegative=True)
    if off == 0.0 and not widening:
        for k in ("from", "steepen_with_inner", "rollover"):
            if o.has(k):
                raise JobFileError(f"{o.key(k)} = {show_value(o.raw(k))}: the centreline (offset 0) is measured "
                                   "from nothing")
        if superelevation:
            raise JobFileError(f'{o.key("cross_slope")} = "{SUPERELEVATION}": the centreline (offset 0) has no '
                               "side and no slope")
    for k, on in (("steepen_with_inner", steepen), ("rollover", rollover is not None)):
        if on and raw_slope is None:
            shown = "true" if o.raw(k) is True else show_value(o.raw(k))
            raise JobFileError(f"{o.key(k)} = {shown}: needs the line's own `cross_slope`")
    return OffsetLine(off + 0.0, code, dz, slope, superelevation=superelevation, from_code=from_code,
                      steepen_with_inner=steepen, rollover=rollover, widening=widening, where=where)


def check_template_lines(lines: list[OffsetLine], has_table: bool) -> None:
    """What the job file alone decides about template lines: ``from`` codes known, unique,
    acyclic, on the same side and nearer the centreline; inner slopes where
    ``rollover``/``steepen_with_inner`` need them; ``"superelevation"`` needs the table.
    """
    by_code: dict[str, list[OffsetLine]] = {}
    for ol in lines:
        by_code.setdefault(ol.code, []).append(ol)
    for ol in lines:
        if ol.superelevation and not has_table:
            raise JobFileError(f'{ol.where}.cross_slope = "{SUPERELEVATION}": the job has no superelevation '
                               "table; add [[superelevation]] rows")
        if ol.from_code is None:
            for k, on in (("rollover", ol.rollover is not None), ("steepen_with_inner", ol.steepen_with_inner)):
                if on:
                    raise JobFileError(f"{ol.where}.{k}: needs an inner slope, and the centreline has none; "
                                       "measure the line `from` a line with a cross_slope")
            continue
        w = f"{ol.where}.from = {ol.from_code!r}"
        found = by_code.get(ol.from_code)
        if not found:
            raise JobFileError(f"{w}: no offset line has that code (codes: "
                               f"{', '.join(sorted(by_code))})")
        if len(found) > 1:
            raise JobFileError(f"{w}: the code is used by {len(found)} offset lines ({found[0].where}, "
                               f"{found[1].where}); `from` needs a code used once")
    for ol in lines:  # cycles: follow `from` until the centreline or a line seen before
        seen = [ol.code]
        cur = ol
        while cur.from_code is not None:
            cur = by_code[cur.from_code][0]
            if cur.code in seen:
                chain = " -> ".join(seen + [cur.code])
                raise JobFileError(f"{ol.where}.from = {ol.from_code!r}: the lines measure from each other in a "
                                   f"cycle ({chain})")
            seen.append(cur.code)
    for ol in lines:
        if ol.from_code is None:
            continue
        inner = by_code[ol.from_code][0]
        w = f"{ol.where}.from = {ol.from_code!r}"
        mine, theirs = ol.all_offsets(), inner.all_offsets()
        if any(a * b <= 0 for a in mine for b in theirs if b != 0.0):
            raise JobFileError(f"{w}: that line lies on the other side of the centreline; `from` names a line "
                               "on the same side")
        if not ol.widening and not inner.widening and abs(inner.offset) >= abs(ol.offset):
            raise JobFileError(f"{w}: that line (offset {inner.offset:g}) is not nearer the centreline than this "
                               f"one (offset {ol.offset:g})")
        for k, on in (("rollover", ol.rollover is not None), ("steepen_with_inner", ol.steepen_with_inner)):
            if on and (not inner.has_slope or inner.all_offsets() == (0.0,)):
                raise JobFileError(f"{ol.where}.{k}: needs an inner slope, and {inner.code!r} has none (a dz line "
                                   "or a line without cross_slope)")


ReadPeriods = Callable[[str], tuple[tuple[SuperelevationPeriod, ...], DesignFile]]


def read_superelevation(top: Table, info: JobInfo, has_elevation: bool, read_file: ReadPeriods | None = None
                        ) -> tuple[tuple[SuperelevationRow, ...], SuperelevationFile | None, DesignFile | None]:
    """``[[superelevation]]`` rows, or ``[superelevation] landxml`` with ``normal_crown`` (the design
    file's ``<Superelevation>`` elements, read by ``read_file``; their rows are derived on the alignment
    by :func:`stakeout.crosssection.derive_rows`).
    """
    raw = top.raw(SUPERELEVATION)
    if raw is None:
        return (), None, None
    if not has_elevation:
        raise JobFileError(f"{SUPERELEVATION}: needs [profile] or staking.elevation; the slopes apply to design "
                           "elevations, and the job gives none")
    if isinstance(raw, dict):
        t = top.table(SUPERELEVATION, ("landxml", "normal_crown"))
        assert t is not None
        path = t.text("landxml", required=True)
        crown = percent(t, "normal_crown", required=True, nonnegative=True)
        assert path is not None and crown is not None and read_file is not None
        periods, record = read_file(path)
        return (), SuperelevationFile(path, crown, periods), record
    rows = []
    for t in top.tables(SUPERELEVATION, ("station", "left", "right"), required=True):
        left = percent(t, "left", required=True)
        right = percent(t, "right", required=True)
        assert left is not None and right is not None
        rows.append(SuperelevationRow(station_ref(t.raw("station", required=True), info.station_length,
                                                  t.key("station")), left, right, t.path))
    if not rows:
        raise JobFileError(f"{SUPERELEVATION} = []: give at least one row, or leave the key out")
    return tuple(rows), None, None
