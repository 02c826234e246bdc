"""LandXML 1.2 design files: read alignments, profiles and points; write them.

This package is the only part of stakeout that parses or writes XML.  It is
self-contained: it reads a file into plain frozen dataclasses (``X...``,
:mod:`.records`) and writes the same dataclasses back; building an alignment
from them is the caller's business.

* :mod:`.reader`: the hardened parse (no DTDs, bounded size) and choosing an
  alignment or profile;
* :mod:`.validation`: :func:`validate_geometry`, the geometry measured from
  the points and checked against itself and the attributes;
* :mod:`.writer`: :func:`write_landxml` (:func:`landxml_pieces`: the same piece by piece);
* :mod:`.describe`: what ``stakeout inspect`` prints.

An element kind lives in one table, :data:`.records.KINDS`; every module
looks a record up there and fails loudly on a class it does not know.
"""

from __future__ import annotations

from . import records
from .describe import describe
from .reader import check_units, parse_landxml, pick_alignment, pick_profile, read_landxml
from .records import *  # noqa: F403  (the records' own __all__ is the package's)
from .validation import station_at, validate_geometry
from .writer import landxml_pieces, write_landxml

__all__ = [
    "read_landxml",
    "parse_landxml",
    "pick_alignment",
    "pick_profile",
    "check_units",
    "validate_geometry",
    "station_at",
    "describe",
    "write_landxml",
    "landxml_pieces",
]
__all__ += records.__all__
