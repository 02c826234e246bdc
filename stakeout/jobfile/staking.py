"""``[staking]``: what to stake and how the points are numbered."""

from __future__ import annotations

from pathlib import Path

from ..errors import JobFileError
from ..job import JobInfo, OffsetLine, Staking
from ..limits import MAX_HEIGHT, check_first_point
from .points import read_listed_points
from .reader import Table, check_safe_text, station_ref
from .sections import read_offset_line

__all__ = ["read_staking"]


def read_staking(top: Table, info: JobInfo, base: Path | None = None) -> Staking:
    """``[staking]``: interval, offset lines, extra stations, numbering, elevation, listed points.

    ``base`` is the job file's folder, which ``points`` is relative to (default: the working folder).
    """
    t = top.table("staking", ("interval", "offsets", "extra_stations", "first_point", "point_prefix",
                              "elevation", "profile_points", "exit_spiral_from", "points"), required=True)
    assert t is not None
    interval = float(t.number("interval", required=True, positive=True) or 0.0)
    offsets: list[OffsetLine] = []
    raw = t.array("offsets")
    if raw is None:
        offsets.append(OffsetLine(0.0, "CL"))
    else:
        if not raw:
            raise JobFileError("staking.offsets = []: give at least one offset line, e.g. {offset = 0, code = \"CL\"}")
        for i, item in enumerate(raw):
            where = f"staking.offsets[{i}]"
            if not isinstance(item, dict):
                raise JobFileError(f"{where} = {item!r}: expected {{offset = ..., code = \"...\"}}")
            offsets.append(read_offset_line(item, where, info))
    seen: dict[float, int] = {}
    for i, ol in enumerate(offsets):
        if ol.widening:  # widened lines: their order and crossings are checked on the alignment
            continue
        if ol.offset in seen:
            raise JobFileError(
                f"staking.offsets[{i}].offset = {ol.offset!r}: same offset as staking.offsets[{seen[ol.offset]}]"
            )
        seen[ol.offset] = i
    extras = []
    for i, v in enumerate(t.array("extra_stations") or []):
        where = f"staking.extra_stations[{i}]"
        extras.append(station_ref(v, info.station_length, where))
    fp = t.raw("first_point")
    if fp is None:
        first_point = 1
    else:
        first_point = check_first_point(fp, "staking.first_point")
    prefix = t.raw("point_prefix")
    prefix = "" if prefix is None else check_safe_text(prefix, "staking.point_prefix", allow_empty=True)
    given = t.text("points")
    points = None if given is None else read_listed_points(given, Path(".") if base is None else base, info)
    return Staking(
        interval=interval,
        offsets=tuple(sorted(offsets, key=lambda ol: ol.offset)),
        extra_stations=tuple(extras),
        first_point=first_point,
        point_prefix=prefix,
        elevation=t.number("elevation", bound=MAX_HEIGHT),
        profile_points=_flag(t, "profile_points"),
        exit_spiral_from=t.text("exit_spiral_from", choices=("CS", "ST")) or "CS",
        points=points,
    )


def _flag(t: Table, k: str) -> bool | None:
    """A true/false key, or ``None`` when not given."""
    v = t.raw(k)
    if v is None or isinstance(v, bool):
        return v
    raise JobFileError(f"{t.key(k)} = {v!r}: expected true or false")
