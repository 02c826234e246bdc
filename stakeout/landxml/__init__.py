"""LandXML 1.2 design files: read alignments, profiles and points; write them.

This package is the only part of stakeout that parses or writes XML.  It is
self-contained: it reads a file into plain frozen dataclasses (``X...``,
:mod:`.records`) and writes the same dataclasses back; building an alignment
from them is the caller's business.

* :mod:`.reader`: the hardened parse (no DTDs, bounded size) and choosing an
  alignment or profile;
* :mod:`.validation`: :func:`validate_geometry`, the geometry measured from
  the points and checked against itself and the attributes;
* :mod:`.writer`: :func:`write_landxml`;
* :mod:`.describe`: what ``stakeout inspect`` prints.

An element kind lives in one table, :data:`.records.KINDS`; every module
looks a record up there and fails loudly on a class it does not know.
"""

from __future__ import annotations

from .describe import describe
from .reader import check_units, parse_landxml, pick_alignment, pick_profile, read_landxml
from .records import (
    KINDS,
    LANDXML_NS,
    MAX_FILE_BYTES,
    XPVI,
    XAlignment,
    XCurve,
    XDesign,
    XElement,
    XEquation,
    XKind,
    XLine,
    XMeasured,
    XPoint,
    XPoints,
    XProfile,
    XCoordinateSystem,
    XSpiral,
    XSuperelevation,
    XUnits,
    kind_of,
)
from .validation import station_at, validate_geometry
from .writer import write_landxml

__all__ = [
    "LANDXML_NS",
    "MAX_FILE_BYTES",
    "XUnits",
    "XLine",
    "XCurve",
    "XSpiral",
    "XSuperelevation",
    "XCoordinateSystem",
    "XElement",
    "XEquation",
    "XAlignment",
    "XPVI",
    "XProfile",
    "XPoint",
    "XPoints",
    "XDesign",
    "XMeasured",
    "XKind",
    "KINDS",
    "kind_of",
    "read_landxml",
    "parse_landxml",
    "pick_alignment",
    "pick_profile",
    "check_units",
    "validate_geometry",
    "station_at",
    "describe",
    "write_landxml",
]
