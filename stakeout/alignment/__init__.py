"""Horizontal alignments: lines and circular arcs, built, evaluated, inverted."""

from __future__ import annotations

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
from .geometry import FEATURE_ORDER, STATION_TOLERANCE, Alignment, Curve, Element, KeyPoint
from .specs import AlignmentSpec, ArcSpec, ChainSpec, LineSpec, PIListSpec, PISpec, SinglePISpec

__all__ = [
    "Alignment", "AlignmentSpec", "ArcProperties", "ArcSpec", "ChainSpec", "CLOSURE_TOLERANCE",
    "CompoundTangents", "Curve", "Element", "FEATURE_ORDER", "KeyPoint", "LineSpec", "PIListSpec",
    "PISpec", "SinglePISpec", "STATION_TOLERANCE", "arc_properties", "build_alignment",
    "chained_tangents", "compound_tangents", "degree_of_curve_arc", "two_centered_tangents",
]
