"""The elements of an alignment: one frozen class per kind, one small protocol.

Every element knows where it starts and ends (northing, easting, azimuth),
its length, its signed curvature at each end (positive turning right,
1/job units) and which vectorised kernel evaluates and projects it.  Code
outside this module never asks an element its kind by name: it calls the
protocol, or looks the class up in a table keyed by class.

Positions along the alignment are *internal stations*: the POB's station
plus the distance along the centreline, with no station equation applied
(LandXML calls the same thing ``staInternal``).  :mod:`stakeout.stations`
turns them into the stations printed in every output.

Conventions: lengths in job units; azimuths in degrees clockwise from grid
north; ``turn`` +1 right, -1 left, 0 for a line.

Adding a kind: a frozen class here with the fields of :class:`Element`, a
:class:`Kernel` for it in :mod:`stakeout.alignment.kernels`, its features
in :data:`JOIN_FEATURES`, its reading in the job-file reader and its
drawing in the DXF writer (see DEVELOPERS.md).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

from ..angles import normalize_azimuth, sincosd
from .curves import ArcProperties, arc_properties
from .kernels import CLOTHOID, CONSTANT_CURVATURE, Kernel

__all__ = ["Element", "Line", "Arc", "Spiral", "JOIN_FEATURES", "join_features", "join_problem", "start_features",
           "end_features"]


@dataclass(frozen=True)
class Element:
    """What every element has (job units, degrees clockwise from grid north).

    ``start`` is the internal station of the element's start; ``turn`` is
    +1 right, -1 left, 0 straight.
    """

    start: float
    length: float
    start_northing: float
    start_easting: float
    start_azimuth: float
    end_northing: float
    end_easting: float
    end_azimuth: float
    turn: int = 0

    #: Name of the kind in output tables (``elements.csv``); never branched on.
    kind: ClassVar[str] = ""
    #: The vectorised kernel that evaluates and projects this kind.
    kernel: ClassVar[Kernel] = CONSTANT_CURVATURE
    #: True for elements that belong to a curve (they turn).
    curving: ClassVar[bool] = False

    @property
    def end(self) -> float:
        """Internal station at the element's end."""
        return self.start + self.length

    @property
    def curvature_start(self) -> float:
        """Signed curvature at the start (1/job units, positive right)."""
        return 0.0

    @property
    def curvature_end(self) -> float:
        """Signed curvature at the end (1/job units, positive right)."""
        return 0.0

    @property
    def radius_start(self) -> float | None:
        """Radius at the start; ``None`` where infinite."""
        k = self.curvature_start
        return None if k == 0.0 else 1.0 / abs(k)

    @property
    def radius_end(self) -> float | None:
        """Radius at the end; ``None`` where infinite."""
        k = self.curvature_end
        return None if k == 0.0 else 1.0 / abs(k)

    @property
    def central_angle(self) -> float:
        """Total turn of the direction along the element, degrees (0 for a line)."""
        return 0.0

    def bbox_samples(self) -> int:
        """How many evenly spaced points bound the element (with :meth:`bbox_pad`)."""
        return 2

    def bbox_pad(self) -> float:
        """How far the element may bulge beyond the box of its samples (job units)."""
        return 0.0

    def kernel_params(self) -> tuple[float, float]:
        """The kernel's per-element numbers: curvature at the start and at the end."""
        return self.curvature_start, self.curvature_end


@dataclass(frozen=True)
class Line(Element):
    """A tangent: constant direction."""

    kind: ClassVar[str] = "line"

    @classmethod
    def follow(cls, start: float, n: float, e: float, azimuth: float, length: float) -> "Line":
        """The line of ``length`` from (n, e) in the direction ``azimuth``."""
        s, c = sincosd(azimuth)
        n1, e1 = n + length * float(c), e + length * float(s)
        return cls(float(start), length, n, e, azimuth, n1, e1, azimuth)


@dataclass(frozen=True)
class Arc(Element):
    """A circular arc of ``radius``, central angle ``delta`` (degrees), centre and figures."""

    radius: float = 0.0
    delta: float = 0.0
    center_northing: float = 0.0
    center_easting: float = 0.0
    props: ArcProperties | None = None

    kind: ClassVar[str] = "arc"
    curving: ClassVar[bool] = True

    @classmethod
    def follow(cls, start: float, n: float, e: float, azimuth: float, length: float, radius: float,
               turn: int) -> "Arc":
        """The arc of ``length`` and ``radius`` leaving (n, e) along ``azimuth``, turning ``turn``."""
        r = radius
        d_rad = length / r
        d_deg = math.degrees(d_rad)
        chord = 2.0 * r * math.sin(d_rad / 2.0)
        s, c = sincosd(azimuth + turn * d_deg / 2.0)
        n1, e1 = n + chord * float(c), e + chord * float(s)
        s0, c0 = sincosd(azimuth)
        cn = n - turn * r * float(s0)
        ce = e + turn * r * float(c0)
        a1 = float(normalize_azimuth(azimuth + turn * d_deg))
        return cls(float(start), length, n, e, float(azimuth), n1, e1, a1, turn, r, d_deg, cn, ce,
                   arc_properties(r, d_deg))

    @property
    def curvature_start(self) -> float:
        return self.turn / self.radius

    @property
    def curvature_end(self) -> float:
        return self.turn / self.radius

    @property
    def central_angle(self) -> float:
        return self.delta

    def bbox_samples(self) -> int:
        return max(3, int(math.ceil(self.delta / 10.0)) + 1)

    def bbox_pad(self) -> float:
        return self.radius * (1.0 - math.cos(math.radians(5.0)))


@dataclass(frozen=True)
class Spiral(Element):
    """A clothoid: signed curvature linear in length from ``k_start`` to ``k_end``
    (1/job units, positive right; 0 where it meets a tangent).
    """

    k_start: float = 0.0
    k_end: float = 0.0

    kind: ClassVar[str] = "spiral"
    kernel: ClassVar[Kernel] = CLOTHOID
    curving: ClassVar[bool] = True

    @classmethod
    def follow(cls, start: float, n: float, e: float, azimuth: float, length: float, k_start: float,
               k_end: float) -> "Spiral":
        """The spiral of ``length`` leaving (n, e) along ``azimuth``, curvature ``k_start`` -> ``k_end``."""
        from .clothoid import clothoid_points

        n1, e1, a1 = clothoid_points(length, 0.0, n, e, azimuth, k_start, k_end, length)
        turn = 1 if k_start + k_end > 0 else -1
        return cls(float(start), length, n, e, float(azimuth), float(n1), float(e1), float(a1), turn,
                   float(k_start), float(k_end))

    @property
    def curvature_start(self) -> float:
        return self.k_start

    @property
    def curvature_end(self) -> float:
        return self.k_end

    @property
    def central_angle(self) -> float:
        return math.degrees(abs(self.k_start + self.k_end) * self.length / 2.0)

    def bbox_samples(self) -> int:
        return max(3, int(math.ceil(self.central_angle / 10.0)) + 1)

    def bbox_pad(self) -> float:
        k = max(abs(self.k_start), abs(self.k_end))
        return (1.0 - math.cos(math.radians(5.0))) / k


#: Key-point feature at the join of two kinds, (kind before, kind after) ->
#: feature; a join of two lines is an angle point only where they deflect.
#: Joins of curving elements depend on their curvatures (:func:`join_features`).
JOIN_FEATURES: dict[tuple[type[Element], type[Element]], str] = {
    (Line, Line): "AP",
    (Line, Arc): "PC",
    (Arc, Line): "PT",
    (Line, Spiral): "TS",
    (Spiral, Line): "ST",
    (Spiral, Arc): "SC",
    (Arc, Spiral): "CS",
}

#: Feature an alignment's first element adds at the POB, and its last at the POE.
START_FEATURES: dict[type[Element], tuple[str, ...]] = {Line: (), Arc: ("PC",), Spiral: ("TS",)}
END_FEATURES: dict[type[Element], tuple[str, ...]] = {Line: (), Arc: ("PT",), Spiral: ("ST",)}

#: Curvatures closer than this (1/job units, relative) are the same at a join.
_K_TOLERANCE = 1e-9


def _same_k(a: float, b: float) -> bool:
    return abs(a - b) <= _K_TOLERANCE * max(1.0, abs(a), abs(b))


def join_problem(prev: Element, cur: Element) -> str | None:
    """Why the join of ``prev`` and ``cur`` cannot be staked, or ``None``.

    A spiral must meet what it joins at the same curvature, except that a
    spiral may start from zero curvature after an arc, or end at zero
    before one (the curvature then jumps, as at a PT or PC).
    """
    if not (isinstance(prev, Spiral) or isinstance(cur, Spiral)):
        return None
    k0, k1 = prev.curvature_end, cur.curvature_start
    if _same_k(k0, k1):
        return None
    if isinstance(prev, Arc) and k1 == 0.0 or isinstance(cur, Arc) and k0 == 0.0:
        return None
    r0 = "infinite" if k0 == 0.0 else f"{1.0 / abs(k0):.4f}"
    r1 = "infinite" if k1 == 0.0 else f"{1.0 / abs(k1):.4f}"
    return f"the curvature jumps at the join: radius {r0} ({prev.kind}) meets radius {r1} ({cur.kind})"


def join_features(prev: Element, cur: Element, deflects: bool) -> tuple[str, ...]:
    """Key-point features where ``prev`` ends and ``cur`` begins.

    ``deflects`` says whether the direction changes at the join (it makes
    a join of two lines an angle point).
    """
    if isinstance(prev, Arc) and isinstance(cur, Arc):
        return ("PCC" if prev.turn == cur.turn else "PRC",)
    if isinstance(prev, Spiral) and isinstance(cur, Spiral):
        # reverse spirals meet at zero curvature; a curve whose arc has no length at a common radius
        return ("ST", "TS") if cur.k_start == 0.0 else ("SC", "CS")
    if isinstance(prev, Arc) and isinstance(cur, Spiral) and cur.k_start == 0.0:
        return ("PT", "TS")  # the curvature jumps from the arc to a spiral starting from a tangent
    if isinstance(prev, Spiral) and isinstance(cur, Arc) and prev.k_end == 0.0:
        return ("ST", "PC")
    feature = JOIN_FEATURES[(type(prev), type(cur))]
    if feature == "AP" and not deflects:
        return ()
    return (feature,)


def start_features(first: Element) -> tuple[str, ...]:
    """Features the first element adds at the POB (``PC`` for an arc)."""
    return START_FEATURES[type(first)]


def end_features(last: Element) -> tuple[str, ...]:
    """Features the last element adds at the POE (``PT`` for an arc)."""
    return END_FEATURES[type(last)]
