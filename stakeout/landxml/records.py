"""The plain records of a LandXML design (``X...`` dataclasses), its constants and per-kind table.

Every other module of the package reads or writes these; none of them holds
XML.  Angle conventions: azimuths in degrees clockwise from grid north;
``rot``/``turn`` +1 clockwise (right), -1 counter-clockwise (left).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
from numpy.typing import NDArray

from ..errors import GeometryError
from ..ondemand import OnDemand
from ..textsafety import find_unsafe_char

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
    "NumberedNames",
    "NumberRun",
    "XDesign",
    "XMeasured",
    "XKind",
    "KINDS",
    "kind_of",
]
# __all__ is what stakeout.landxml re-exports; the package's own helpers (fmt, shown,
# UNIT_WORDS, ANGLE_POINT_CODE) are imported by name by its modules.

LANDXML_NS = "http://www.landxml.org/schema/LandXML-1.2"
MAX_FILE_BYTES = 256 * 1024 * 1024  # bytes: larger files are refused unread (the export of ~3 million stakes)


# ---------------------------------------------------------------------------
# data classes
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class XUnits:
    """Units of a LandXML file.

    Attributes
    ----------
    unit_key : str
        The job-file unit: ``"m"``, ``"ft"`` (international foot) or
        ``"us_ft"`` (US survey foot).
    linear_unit : str
        The ``linearUnit`` as written, e.g. ``"USSurveyFoot"``.
    angular_unit : str
        ``angularUnit`` as written (schema default ``"radians"``).
    direction_unit : str
        ``directionUnit`` as written (schema default ``"radians"``).
    """

    unit_key: str
    linear_unit: str = ""
    angular_unit: str = "radians"
    direction_unit: str = "radians"


@dataclass(frozen=True)
class XLine:
    """A ``<Line>``: coordinates in file units.

    Attributes
    ----------
    index : int
        Position in its ``<CoordGeom>``, from 1.
    name : str
        ``name`` attribute ("" when absent).
    start_n, start_e, end_n, end_e : float
        Northing and easting of ``Start`` and ``End``.
    length_attr : float or None
        ``length`` attribute (a cross-check only).
    sta_start_attr : float or None
        ``staStart`` attribute as written (not used by the reader).
    angle_point : bool
        The line starts at an angle point (a PI with no curve): it holds a
        ``<Feature code="AP">``, and may start off the direction of the
        element before.
    """

    index: int
    name: str
    start_n: float
    start_e: float
    end_n: float
    end_e: float
    length_attr: float | None = None
    sta_start_attr: float | None = None
    angle_point: bool = False


@dataclass(frozen=True)
class XCurve:
    """A ``<Curve>`` (circular arc): coordinates in file units.

    Attributes
    ----------
    index, name :
        As for :class:`XLine`.
    start_n, start_e, center_n, center_e, end_n, end_e : float
        Northing and easting of ``Start``, ``Center`` and ``End``.
    rot : int
        +1 for ``cw`` (turning right), -1 for ``ccw`` (turning left).
    radius_attr, length_attr, chord_attr : float or None
        ``radius``, ``length`` (along the arc) and ``chord`` attributes.
    delta_attr : float or None
        ``delta`` attribute converted to degrees (unsigned).
    sta_start_attr : float or None
        ``staStart`` attribute as written.
    """

    index: int
    name: str
    start_n: float
    start_e: float
    center_n: float
    center_e: float
    end_n: float
    end_e: float
    rot: int
    radius_attr: float | None = None
    length_attr: float | None = None
    delta_attr: float | None = None
    chord_attr: float | None = None
    sta_start_attr: float | None = None


@dataclass(frozen=True)
class XSpiral:
    """A ``<Spiral>``: coordinates in file units.

    Attributes
    ----------
    index, name :
        As for :class:`XLine`.
    start_n, start_e, pi_n, pi_e, end_n, end_e : float
        Northing and easting of ``Start``, ``PI`` (intersection of the end
        tangents) and ``End``.
    radius_start, radius_end : float or None
        ``radiusStart``/``radiusEnd``; None for ``INF`` (a tangent end).
    rot : int
        +1 for ``cw``, -1 for ``ccw``.
    length_attr : float or None
        ``length`` attribute (a cross-check of the derived length).
    spi_type : str
        ``spiType`` as written; only ``"clothoid"`` can be staked.
    sta_start_attr : float or None
        ``staStart`` attribute as written.
    """

    index: int
    name: str
    start_n: float
    start_e: float
    pi_n: float
    pi_e: float
    end_n: float
    end_e: float
    radius_start: float | None
    radius_end: float | None
    rot: int
    length_attr: float | None = None
    spi_type: str = "clothoid"
    sta_start_attr: float | None = None


XElement = XLine | XCurve | XSpiral


@dataclass(frozen=True)
class XEquation:
    """A ``<StaEquation>``.

    Attributes
    ----------
    sta_internal : float
        Station with no equation applied (alignment ``staStart`` + distance).
    sta_ahead : float
        Station value ahead of the equation.
    sta_back : float or None
        Station value back of the equation, when the file gives it.
    increment : int
        +1 (``staIncrement="increasing"`` or absent), -1 (``decreasing``).
    """

    sta_internal: float
    sta_ahead: float
    sta_back: float | None = None
    increment: int = 1


@dataclass(frozen=True)
class XAlignment:
    """An ``<Alignment>``.

    Attributes
    ----------
    name : str
        ``name`` attribute.
    sta_start : float
        ``staStart``: the station (and internal station) of its start.
    elements : tuple of XLine, XCurve, XSpiral
        ``<CoordGeom>`` elements in order.
    equations : tuple of XEquation
        ``<StaEquation>`` elements in file order.
    length_attr : float or None
        ``length`` attribute (a cross-check).
    unsupported : tuple of str
        ``CoordGeom`` content that cannot be staked (``IrregularLine``,
        ``Chain``, a second ``CoordGeom``); :func:`validate_geometry` refuses
        an alignment that has any.
    """

    name: str
    sta_start: float
    elements: tuple[XElement, ...]
    equations: tuple[XEquation, ...] = ()
    length_attr: float | None = None
    unsupported: tuple[str, ...] = ()
    superelevations: tuple[XSuperelevation, ...] = ()


#: The station elements of a ``<Superelevation>`` in the order of a transition (LandXML 1.2 schema).
SE_STATION_ELEMENTS = ("BeginRunoutSta", "BeginRunoffSta", "FullSuperSta", "RunoffSta", "StartofRunoutSta",
                       "EndofRunoutSta")


@dataclass(frozen=True)
class XSuperelevation:
    """A ``<Superelevation>`` of an alignment (LandXML 1.2: its stations are child elements, named in
    :data:`SE_STATION_ELEMENTS`, and the rate ``FullSuperelev``, percent; ``staStart``/``staEnd``
    attributes).

    Attributes
    ----------
    index : int
        Position among the alignment's ``<Superelevation>`` elements, from 1.
    sta_start, sta_end : float or None
        ``staStart`` and ``staEnd`` attributes (internal stations).
    stations : tuple of (float or None)
        The six transition stations in the order of :data:`SE_STATION_ELEMENTS` (internal stations,
        file units); None where absent or nil.
    full_superelev : float or None
        ``FullSuperelev`` in percent.
    adverse : bool
        ``AdverseSE`` is ``adverse``.
    """

    index: int
    sta_start: float | None
    sta_end: float | None
    stations: tuple[float | None, ...]
    full_superelev: float | None
    adverse: bool = False

    @property
    def first(self) -> float | None:
        """The first station the element gives (for messages: where it starts)."""
        given = [v for v in (*self.stations, self.sta_start) if v is not None]
        return given[0] if given else None

    @property
    def last(self) -> float | None:
        """The last station the element gives."""
        given = [v for v in (*reversed(self.stations), self.sta_end) if v is not None]
        return given[0] if given else None


@dataclass(frozen=True)
class XCoordinateSystem:
    """The file's ``<CoordinateSystem>``: ``epsgCode`` and ``name`` (control characters escaped for
    showing) and ``ogcWktCode`` as given; "" when absent.
    """

    epsg_code: str = ""
    name: str = ""
    ogc_wkt: str = ""


@dataclass(frozen=True)
class XPVI:
    """One vertical intersection point of a ``<ProfAlign>``.

    Attributes
    ----------
    station : float
        Internal station (file units).
    elevation : float
        Elevation (file units).
    kind : str
        ``"pvi"`` (no vertical curve), ``"para"`` (``ParaCurve``),
        ``"unsym"`` (``UnsymParaCurve``) or ``"circ"`` (``CircCurve``).
    length : float
        Curve length: 0 for ``pvi``; the horizontal length for ``para`` and
        ``unsym`` (``lengthIn + lengthOut``); the length along the arc for
        ``circ``.
    length_in, length_out : float or None
        The halves before and after the PVI (``para``: length/2 each;
        ``unsym``: ``lengthIn``/``lengthOut``; ``pvi``: 0; ``circ``: None,
        they follow from the grades).
    radius : float or None
        ``circ`` only: ``radius`` as written (sign as the file has it).
    """

    station: float
    elevation: float
    kind: str = "pvi"
    length: float = 0.0
    length_in: float | None = 0.0
    length_out: float | None = 0.0
    radius: float | None = None


@dataclass(frozen=True)
class XProfile:
    """A ``<ProfAlign>`` (design profile) of an alignment.

    Attributes
    ----------
    name : str
        ``ProfAlign`` ``name``.
    alignment_name : str
        Name of the ``<Alignment>`` it belongs to.
    pvis : tuple of XPVI
        In file order (stations increasing).
    """

    name: str
    alignment_name: str
    pvis: tuple[XPVI, ...]


@dataclass(frozen=True, slots=True)  # slots: a file may hold millions of them
class XPoint:
    """A ``<CgPoint>``.

    Attributes
    ----------
    name : str
        ``name`` attribute ("" when absent).
    northing, easting : float
        File units.
    elevation : float or None
        File units; None when the point has two coordinates.
    code : str
        ``code`` attribute ("" when absent).
    desc : str
        ``desc`` attribute ("" when absent).
    """

    name: str
    northing: float
    easting: float
    elevation: float | None = None
    code: str = ""
    desc: str = ""


class NumberRun(NamedTuple):
    """Names that are a prefix and consecutive numbers: ``NumberRun("P", 1001, 3)`` is P1001 .. P1003."""

    prefix: str
    first: int
    size: int


class NumberedNames(OnDemand):
    """Point names in runs, made only for the rows asked for: a :class:`NumberRun`, or names as
    written (a tuple of str). Whoever makes one vouches that its names are unique and hold only
    characters XML carries (a build's stakes: their ids are checked when the job is read);
    :class:`XPoints` takes it in place of a list, so a million stakes need no million strings.
    """

    def __init__(self, runs: Sequence[NumberRun | tuple[str, ...]]) -> None:
        self._runs = list(runs)
        sizes = [r.size if isinstance(r, NumberRun) else len(r) for r in self._runs]
        self._starts: NDArray[np.int64] = np.concatenate([[0], np.cumsum(sizes)]).astype(np.int64)

    def __len__(self) -> int:
        return int(self._starts[-1])

    def one(self, i: int) -> str:
        """Name ``i``."""
        return self.span(i, i + 1)[0]

    def span(self, a: int, b: int) -> list[str]:
        """Names ``a`` to ``b``, a run at a time."""
        out: list[str] = []
        for k, r in enumerate(self._runs):
            lo, hi = max(a, int(self._starts[k])), min(b, int(self._starts[k + 1]))
            if lo >= hi:
                continue
            lo, hi = lo - int(self._starts[k]), hi - int(self._starts[k])
            if isinstance(r, NumberRun):
                out += [f"{r.prefix}{v}" for v in range(r.first + lo, r.first + hi)]
            else:
                out += list(r[lo:hi])
        return out

    def lengths(self) -> NDArray[np.int64]:
        """Characters of every name, without making them."""
        parts: list[NDArray[np.int64]] = []
        for r in self._runs:
            if isinstance(r, NumberRun):
                v = r.first + np.arange(r.size, dtype=np.int64)
                digits = np.searchsorted(10 ** np.arange(19, dtype=np.int64), np.abs(v), side="right")
                parts.append((len(r.prefix) + np.maximum(digits, 1) + (v < 0)).astype(np.int64))
            else:
                parts.append(np.array([len(t) for t in r], dtype=np.int64))
        return np.concatenate(parts) if parts else np.zeros(0, dtype=np.int64)


@dataclass(frozen=True)
class XPoints:
    """Many points as columns, for writing a build's stakes without a Python
    object per point.

    Attributes
    ----------
    names : sequence of str
        Point names (unique); a :class:`NumberedNames` makes them a block at a time.
    northing, easting : array of float
        File units.
    elevation : array of float or None
        File units; NaN (or None for the whole column) where a point has none.
    codes, descs : sequence of str or None
        ``code`` and ``desc`` attributes; "" or None where there is none.
    """

    names: Sequence[str]
    northing: NDArray[np.float64]
    easting: NDArray[np.float64]
    elevation: NDArray[np.float64] | None = None
    codes: Sequence[str] | None = None
    descs: Sequence[str] | None = None


@dataclass(frozen=True)
class XDesign:
    """Everything a staking job can take from one LandXML file.

    Attributes
    ----------
    units : XUnits
    alignments : tuple of XAlignment
    profiles : tuple of XProfile
        Design profiles of all alignments (see ``alignment_name``).
    points : tuple of XPoint
        All ``CgPoint`` elements, nested collections flattened in order.
    not_used : tuple of str
        Short descriptions of the content a staking job does not use.
    sha256 : str
        Hex SHA-256 of the file's bytes.
    application : str
        ``<Application name>`` of the software that wrote the file, if given.
    unused_kinds : tuple of (str, int)
        The same content counted per element name, in first-seen order
        (``("Feature", 15), ("Cant", 1)``): what a job reports once per file.
    coordinate_system : XCoordinateSystem or None
        The file's ``<CoordinateSystem>``, if it has one.
    """

    units: XUnits
    alignments: tuple[XAlignment, ...]
    profiles: tuple[XProfile, ...]
    points: tuple[XPoint, ...]
    not_used: tuple[str, ...]
    sha256: str
    application: str = ""
    unused_kinds: tuple[tuple[str, int], ...] = ()
    coordinate_system: XCoordinateSystem | None = None


@dataclass(frozen=True)
class XMeasured:
    """An element as measured from its points by :func:`validate_geometry`.

    Attributes
    ----------
    index : int
        Position in the ``CoordGeom``, from 1.
    kind : str
        ``"line"``, ``"arc"`` or ``"spiral"``.
    name : str
        The element's ``name``.
    sta_start : float
        Internal station of its start (file units).
    length : float
        Length along the element (file units).
    az_start, az_end : float
        Azimuths of the tangent at start and end, degrees clockwise from
        grid north, in ``[0, 360)``.
    radius_start, radius_end : float or None
        Radii at start and end (file units); None where infinite.
    turn : int
        +1 right (clockwise), -1 left, 0 for a line.
    """

    index: int
    kind: str
    name: str
    sta_start: float
    length: float
    az_start: float
    az_end: float
    radius_start: float | None
    radius_end: float | None
    turn: int


#: ``<Feature code>`` of a ``<Line>`` that starts at an angle point (a PI with no curve).
ANGLE_POINT_CODE = "AP"

UNIT_WORDS = {"m": "metres", "ft": "international feet (0.3048 m)", "us_ft": "US survey feet (1200/3937 m)"}


@dataclass(frozen=True)
class XKind:
    """What the package knows of one element record class.

    Attributes
    ----------
    tag : str
        The LandXML element (``"Line"``, ``"Curve"``, ``"Spiral"``).
    kind : str
        :attr:`XMeasured.kind` (``"line"``, ``"arc"``, ``"spiral"``).
    code : int
        The kind's number in the vectorised checks (0 line, 1 arc, 2 spiral).
    """

    tag: str
    kind: str
    code: int


#: The one per-kind table of the package, keyed by record class.
KINDS: dict[type, XKind] = {
    XLine: XKind("Line", "line", 0),
    XCurve: XKind("Curve", "arc", 1),
    XSpiral: XKind("Spiral", "spiral", 2),
}


def kind_of(el: object) -> XKind:
    """The :class:`XKind` of an element record; an unknown class is an error, never a guess.

    Raises
    ------
    GeometryError
        ``el`` is not one of the classes in :data:`KINDS`.
    """
    try:
        return KINDS[type(el)]
    except KeyError:
        raise GeometryError(
            f"element of kind {type(el).__name__!r}: LandXML knows Line, Curve and Spiral only"
        ) from None


def shown(text: str) -> str:
    """Text from a design file as the console may show it: each control, format or separator character
    (a line feed, ESC, a C1 control such as U+009B, a right-to-left override) as its escape, the rest as
    it is, so a file can never forge a line or restyle the terminal.
    """
    if find_unsafe_char(text) is None:
        return text
    return "".join(repr(ch)[1:-1] if find_unsafe_char(ch) is not None else ch for ch in text)


def fmt(v: float) -> str:
    """A number for a message: up to 6 decimals, INF for infinity, never hundreds of digits."""
    v = float(v)
    if math.isinf(v):
        return "INF" if v > 0 else "-INF"
    if not math.isfinite(v):
        return str(v)
    if abs(v) >= 1e15:
        return f"{v:.6g}"
    return f"{v:.6f}".rstrip("0").rstrip(".")
