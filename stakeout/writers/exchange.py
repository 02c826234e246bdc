"""``alignment.xml``: the staked design handed on as LandXML 1.2.

The alignment (lines, arcs and clothoids by their points, with the start
station and the station equations), the profile, and every stake as a
``CgPoint`` (name = point number, code, northing easting elevation).  The
XML itself is written by :mod:`stakeout.landxml`, the project's only XML
module; this writer only turns the design into its plain records.

The root's ``date`` and ``time`` (the schema requires both) are those of
``SOURCE_DATE_EPOCH`` (seconds since 1970-01-01 UTC, the reproducible-builds
convention) when it is set, else the fixed 1970-01-01 00:00:00 (the same as
``SOURCE_DATE_EPOCH=0``): never the clock, so the same input gives the same
bytes.
"""

from __future__ import annotations

import datetime as _dt
import math
import os
from collections.abc import Iterator
from typing import Any

import numpy as np

from .. import __version__
from ..design import Design
from ..errors import OutputError, StakeoutError
from ..landxml import XPVI, NumberedNames, NumberRun, XEquation, XPoints, landxml_pieces
from ..numbers import round_to

__all__ = ["alignment_xml", "alignment_xml_pieces"]


def _profile(d: Design) -> list[XPVI] | None:
    if d.profile is None:
        return None
    out = []
    for spec, row in zip(d.profile.pvis, d.profile.rows()):
        if spec.radius is not None and row.grade_in is not None and row.grade_out is not None:
            # derived (a cross-check on reading): rounded as the CSVs round lengths
            arc = float(round_to(spec.radius * abs(math.atan(row.grade_out) - math.atan(row.grade_in)), 4))
            out.append(XPVI(spec.station, spec.elevation, "circ", arc, None, None, spec.radius))
        elif spec.curve_length_back or spec.curve_length_ahead:
            kind = "para" if spec.curve_length_back == spec.curve_length_ahead else "unsym"
            out.append(XPVI(spec.station, spec.elevation, kind, spec.curve_length_back + spec.curve_length_ahead,
                            spec.curve_length_back, spec.curve_length_ahead))
        else:
            out.append(XPVI(spec.station, spec.elevation))
    return out


#: Largest SOURCE_DATE_EPOCH taken (9999-12-31 UTC: xs:date has four-digit years here).
_MAX_EPOCH = 253402300799


def source_date() -> _dt.datetime | None:
    """The date of ``SOURCE_DATE_EPOCH`` (UTC), None when unset or empty.

    Raises
    ------
    OutputError
        A value that is not a whole number of seconds from 0 to 253402300799.
    """
    text = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if not text:
        return None
    if not text.isdigit() or int(text) > _MAX_EPOCH:
        raise OutputError(f"SOURCE_DATE_EPOCH = {text[:40]!r}: expected whole seconds since 1970-01-01 UTC "
                          f"(0 to {_MAX_EPOCH}); it dates alignment.xml")
    return _dt.datetime.fromtimestamp(int(text), _dt.timezone.utc).replace(tzinfo=None)


#: The ``code`` of a control point's CgPoint (outputs contract, "Control points in the outputs").
CONTROL_CODE = "control"


def _points(d: Design) -> XPoints:
    """Every stake (of every alignment, in job order), then every control point the job lists or
    uses (code ``control``), as CgPoints.
    """
    parts = d.parts or (d,)
    ctrl = d.job.control_points()
    nan = np.nan
    runs: list[NumberRun | tuple[str, ...]] = []  # each stake's id made only as its block is written
    codes: list[str] = []
    for p in parts:
        sp = p.stakes
        runs.append(NumberRun(sp.prefix, sp.first_point, sp.numbered))
        if sp.layout is not None:
            runs.append(tuple(sp.layout.names))
        codes += sp.code
    north = [p.stakes.northing for p in parts] + [np.array([c.northing for c in ctrl], dtype=float)]
    east = [p.stakes.easting for p in parts] + [np.array([c.easting for c in ctrl], dtype=float)]
    heights = [p.stakes.elevation if p.stakes.elevation is not None else np.full(len(p.stakes), nan) for p in parts]
    heights.append(np.array([nan if c.elevation is None else c.elevation for c in ctrl], dtype=float))
    elevation = np.concatenate(heights)
    runs.append(tuple(c.id for c in ctrl))
    return XPoints(NumberedNames(runs), np.concatenate(north), np.concatenate(east),
                   None if np.isnan(elevation).all() else elevation, codes + [CONTROL_CODE for _ in ctrl])


def _alignment_record(d: Design) -> tuple[str, float, list[Any], list[XEquation], list[XPVI] | None, str | None]:
    """One alignment as ``write_landxml`` takes it: name, start, elements, equations, profile, profile name."""
    eqs = [XEquation(eq.internal, eq.ahead, eq.back) for eq in d.stationing.equations]
    return (d.alignment.name, d.alignment.start_station, list(d.presentation.landxml_elements), eqs, _profile(d),
            d.profile.name or None if d.profile is not None else None)


def alignment_xml(d: Design) -> bytes:
    """Render ``alignment.xml`` (LandXML 1.2, the same bytes for the same design): every
    alignment with its profile, every stake and the control.
    """
    return b"".join(alignment_xml_pieces(d))


def alignment_xml_pieces(d: Design) -> Iterator[bytes]:
    """``alignment.xml`` piece by piece (the stakes a block at a time); every check is done
    before the first piece.
    """
    points = _points(d)
    name = d.job.info.name or d.alignment.name
    first, *more = [_alignment_record(p) for p in (d.parts or (d,))]
    try:
        return landxml_pieces(d.unit.key, first[0], first[1], first[2], first[3], first[4], points, "stakeout",
                              f"staked design of {name}"[:200], profile_name=first[5],
                              application_version=__version__, created=source_date(), more_alignments=more)
    except StakeoutError as exc:  # name the output and the part of the job it comes from
        raise type(exc)(f"alignment.xml (the LandXML export of [alignment] and [profile]): {exc}") from None
