"""Plain descriptions of an alignment as the job file gives it.

These are pure data, validated for type and sign by the job-file reader;
:mod:`stakeout.alignment.build` turns them into geometry.  Angles are
decimal degrees, azimuths clockwise from grid north, lengths in job units.
``where`` fields carry the job-file key so geometry errors can name it.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["LineSpec", "ArcSpec", "SpiralSpec", "AnchoredSpec", "FixedSpec", "ChainSpec", "PISpec", "PIListSpec",
           "SinglePISpec", "AlignmentSpec"]


@dataclass(frozen=True)
class LineSpec:
    """A tangent of ``length`` units continuing the current direction."""

    length: float
    where: str = ""


@dataclass(frozen=True)
class ArcSpec:
    """A circular arc: ``radius`` and either ``delta`` (degrees) or ``length``.

    ``turn`` is +1 for right (clockwise), -1 for left, looking ahead.
    """

    radius: float
    turn: int
    delta: float | None = None
    length: float | None = None
    where: str = ""


@dataclass(frozen=True)
class SpiralSpec:
    """A clothoid of ``length`` from ``radius_start`` to ``radius_end``
    (``None``: infinite, meeting a tangent there); ``turn`` +1 right, -1 left.
    """

    length: float
    turn: int
    radius_start: float | None = None
    radius_end: float | None = None
    where: str = ""


@dataclass(frozen=True)
class ChainSpec:
    """Form A: elements chained from a start point and azimuth."""

    name: str
    start_station: float
    start_northing: float
    start_easting: float
    azimuth: float
    elements: tuple[LineSpec | ArcSpec | SpiralSpec, ...]


@dataclass(frozen=True)
class PISpec:
    """One point of a PI list.

    ``radii`` empty: no curve (an angle point, or the POB/POE).  Otherwise
    the arcs in station order with their ``deltas`` in degrees, exactly one
    of them ``None`` (the "rest" of the intersection angle).
    """

    northing: float
    easting: float
    radii: tuple[float, ...] = ()
    deltas: tuple[float | None, ...] = ()
    where: str = ""
    spirals: tuple[float, ...] = ()  # empty, or one more than radii: before, between, after the arcs


@dataclass(frozen=True)
class PIListSpec:
    """Form B: POB, PIs, POE.

    ``join_tolerance``: a tangent between two curves shorter than this (job
    units), or an overlap of the curves up to it, is taken as none: the
    curves meet at one PCC or PRC (the designer's rounded radii).
    """

    name: str
    start_station: float
    pis: tuple[PISpec, ...]
    join_tolerance: float = 0.01


@dataclass(frozen=True)
class SinglePISpec:
    """Form C: one curve at a PI given by its station, as in a curve table."""

    name: str
    pi_station: float
    northing: float
    easting: float
    back_azimuth: float
    ahead_azimuth: float
    radii: tuple[float, ...]
    deltas: tuple[float | None, ...]
    lead_in: float = 0.0
    lead_out: float = 0.0
    where: str = "alignment.at_pi"
    spirals: tuple[float, ...] = ()  # empty, or one more than radii: before, between, after the arcs


@dataclass(frozen=True)
class AnchoredSpec:
    """An element given with its own start point and direction (from a design
    file), so that each element starts exactly where the file puts it.
    """

    northing: float
    easting: float
    azimuth: float
    element: LineSpec | ArcSpec | SpiralSpec


@dataclass(frozen=True)
class FixedSpec:
    """An alignment whose every element is anchored (a LandXML ``CoordGeom``)."""

    name: str
    start_station: float
    elements: tuple[AnchoredSpec, ...]


AlignmentSpec = ChainSpec | PIListSpec | SinglePISpec | FixedSpec
