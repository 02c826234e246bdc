"""Horizontal alignments: elements built, evaluated and inverted on arrays."""

from __future__ import annotations

from .alignment import FEATURE_ORDER, STATION_TOLERANCE, Alignment, Curve, KeyPoint, Location, Position
from .build import CLOSURE_TOLERANCE, build_alignment
from .curves import (
    ArcProperties,
    CompoundTangents,
    arc_properties,
    chained_tangents,
    compound_tangents,
    degree_of_curve_arc,
    two_centered_tangents,
)
from .elements import Arc, Element, Line, Spiral
from .specs import AlignmentSpec, ArcSpec, ChainSpec, LineSpec, PIListSpec, PISpec, SinglePISpec, SpiralSpec

__all__ = [
    "Alignment", "AlignmentSpec", "Arc", "ArcProperties", "ArcSpec", "ChainSpec", "CLOSURE_TOLERANCE",
    "CompoundTangents", "Curve", "Element", "FEATURE_ORDER", "KeyPoint", "Line", "LineSpec", "Location",
    "PIListSpec", "PISpec", "Position", "SinglePISpec", "Spiral", "SpiralSpec", "STATION_TOLERANCE", "arc_properties",
    "build_alignment", "chained_tangents", "compound_tangents", "degree_of_curve_arc", "two_centered_tangents",
]
