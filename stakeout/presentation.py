"""The presentation model: what the outputs show, as numbers, computed once per build.

Every output of a build is drawn from one :class:`Presentation` of the
:class:`~stakeout.design.Design` (``d.presentation``, made on first use and
kept): the curve data of every curve (with the external measured on the
alignment), the deflection tables of every curve element with their offset
lines, the setout table's columns and notes, the spiral figures, the
profile rows, the element ends and samples the drawings trace; and it hands the
renderers the :class:`PerKind` registry their own per-kind tables are built with.  It holds
numbers (and the ids, codes and words of the job), never formatted text:
each writer only formats it.

Where the writers sit:

* **toolkits** (shared, format only): :mod:`stakeout.writers.text` (numbers,
  turn words, header block, curve-data lines, deflection titles, setout cells,
  ``Column``/``table_lines``, ``paged_parts``, cautions),
  :mod:`stakeout.writers.rows` (vectorised CSV fields),
  :mod:`stakeout.writers.csvtext` (RFC 4180 text, the point-file layout),
  :mod:`stakeout.writers.checkwords` (a check's words),
  :mod:`stakeout.writers.sections` (cross-section pieces: transitions, slopes, widened lines),
  :mod:`stakeout.writers.folder` (the atomic output folder);
* **renderers** (one output or a family each): ``tables`` (CSV, restake.csv),
  ``control`` (control.csv), ``sheets`` (``setout.txt``, ``deflections.txt``),
  ``report`` (the curve report), ``checkreport`` (check.csv, check.txt),
  ``html`` (report.html, check.html: the pictures are handed in), ``dxf``,
  ``picture`` (a package: ``plan.svg``, the residual picture),
  ``profile_picture``, ``superelevation``, ``earthwork`` (slope stakes, volumes), ``exchange`` (``alignment.xml``), ``manifest``.

A renderer imports this module, the toolkits and the design's plain
records; it never imports another renderer or :mod:`stakeout.alignment`
(its classes, kernels or clothoid): anything that depends on an element's
kind goes through a :class:`PerKind` table (``tests/test_layout.py`` holds
both rules).  Everything here is vectorised over stations: the deflection
rows of an element are one slice of the staked stations, found by
``searchsorted``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from functools import cached_property
from typing import TYPE_CHECKING, Any, cast

import numpy as np
from numpy.typing import NDArray

from .alignment import Alignment, Curve, Element
from .alignment.clothoid import SpiralFigures, clothoid_xy, spiral_figures
from .alignment.curves import degree_of_curve_arc
from .alignment.kinds import CURVE_PART, ELEMENT_CLASSES, PerKind
from .profile import PVIRow
from .staking import EachStake

if TYPE_CHECKING:  # pragma: no cover
    from .alignment.elements import Arc, Spiral
    from .design import Design
    from .landxml import XElement

__all__ = ["Presentation", "CurveView", "SpiralView", "DeflectionTable", "OffsetDeflections", "SetoutColumn",
           "SETOUT_HEADERS", "DEFLECTION_HEADERS", "AT_INSTRUMENT_NOTE", "FLAG", "PerKind", "ELEMENT_CLASSES", "Element",
           "deflection_rows", "curve_views", "degree_of_curve_arc"]

F = NDArray[np.float64]

#: What the setout table says of a stake at the occupied point, in place of an angle.
AT_INSTRUMENT_NOTE = "at the instrument"
#: The mark of a stake whose predicted 95 % radius exceeds the tolerance.
FLAG = "r95>tol"

#: The setout table's column headers, per output: (``setout.txt``, ``report.html``).  The text
#: sheet abbreviates two of them to keep 80 columns; the report has room for the words.  (They had
#: drifted apart in two writers; both outputs keep their bytes, both words are kept here.)
SETOUT_HEADERS: dict[str, tuple[str, str]] = {
    "point": ("point", "point"),
    "station": ("station", "station"),
    "offset": ("offset", "offset"),
    "code": ("code", "code"),
    "feature": ("feature", "feature"),
    "angle_right": ("ang right", "angle right"),
    "grid_distance": ("grid dist", "grid dist"),
    "ground_distance": ("grnd dist", "ground dist"),
    "design_elevation": ("design el", "design el"),
    "zenith": ("zenith", "zenith"),
    "slope_distance": ("slope dist", "slope dist"),
    "sigma_along": ("sd along", "sd along"),
    "sigma_across": ("sd across", "sd across"),
    "r95": ("r95", "r95"),
    "note": ("note", "note"),
}


#: The deflection table's column headers, per output: (``deflections.txt``, ``report.html``), one
#: per column of :attr:`DeflectionTable.rows` and the circle reading.  The sheet is narrower and
#: explains its words in its foot; both outputs keep their bytes.
DEFLECTION_HEADERS: tuple[tuple[str, str], ...] = (
    ("station", "station"),
    ("length", "from start"),
    ("deflection", "deflection"),
    ("chord", "chord from start"),
    ("sub-chord", "chord from prev"),
    ("reading", "reading"),
)


@dataclass(frozen=True)
class CurveView:
    """One curve's data: its arcs and spirals (element index, element) in order, the
    two-centred tangents named by side, and the external of a curve with spirals.

    ``back_side``/``ahead_side`` name the two-centred tangents: ``("T_A", "R1",
    radius)`` on the larger-radius side, ``("T_B", "R2", radius)`` on the smaller;
    ``None`` for other curves.  ``external`` is the distance from the PI to the
    nearest point of a curve with spirals (``None`` otherwise: an arc's own
    external is in its figures).
    """

    curve: Curve
    arcs: tuple[tuple[int, "Arc"], ...]
    spirals: tuple[tuple[int, "Spiral"], ...]
    back_side: tuple[str, str, float] | None
    ahead_side: tuple[str, str, float] | None
    external: float | None


def curve_views(alignment: Alignment) -> tuple[CurveView, ...]:
    """The :class:`CurveView` of every curve of ``alignment``."""
    externals = alignment.curve_externals()
    out = []
    for k, c in enumerate(alignment.curves):
        parts: dict[str | None, list[tuple[int, Element]]] = {"arcs": [], "spirals": []}
        for i in c.elements:
            el = alignment.elements[i]
            parts.setdefault(CURVE_PART[el], []).append((i, el))
        arcs = cast("list[tuple[int, Arc]]", parts["arcs"])
        spirals = cast("list[tuple[int, Spiral]]", parts["spirals"])
        back = ahead = None
        t = c.tangents
        if t is not None and t.t_a_side is not None:
            radii = [a.radius for _, a in arcs]
            big, small = ("T_A", "R1", max(radii)), ("T_B", "R2", min(radii))
            back, ahead = (big, small) if t.t_a_side == "back" else (small, big)
        external = float(externals[k]) if spirals and np.isfinite(externals[k]) else None
        out.append(CurveView(c, tuple(arcs), tuple(spirals), back, ahead, external))
    return tuple(out)


@dataclass(frozen=True)
class SpiralView:
    """A spiral of the alignment: its number among the spirals, element index, element, figures."""

    number: int
    index: int
    element: "Spiral"
    figures: SpiralFigures


# ---- deflections ---------------------------------------------------------------------------------
DeflectionRow = tuple[float, float, float, float, float]


def _segments(elements: list[Element], stations: list[F]) -> tuple[F, NDArray[np.int64], NDArray[np.bool_]]:
    """Every element's stations end to end, each row's element and whether it opens one."""
    size = np.array([s.size for s in stations], dtype=np.int64)
    seg = np.repeat(np.arange(len(elements)), size)
    opens = np.zeros(seg.size, dtype=bool)
    opens[(np.cumsum(size) - size)[size > 0]] = True
    return np.concatenate(stations), seg, opens


def _per_element(elements: list[Element], seg: NDArray[np.int64], field: str) -> F:
    """One number of each element, on every row of it."""
    return np.array([getattr(el, field) for el in elements], dtype=float)[seg]


def _arc_rows(elements: list[Element], stations: list[F]) -> F:
    """Arcs: deflection = s / 2R (radians), chord = 2R sin(s / 2R)."""
    s, seg, opens = _segments(elements, stations)
    r = np.array([cast("Arc", el).radius for el in elements], dtype=float)[seg]
    arc = np.maximum(s - _per_element(elements, seg, "start"), 0.0)
    defl = np.degrees(arc / (2.0 * r))
    chord = 2.0 * r * np.sin(arc / (2.0 * r))
    inc = np.concatenate([[0.0], 2.0 * r[1:] * np.sin(np.diff(arc) / (2.0 * r[1:]))])
    inc[opens] = 0.0
    return np.column_stack([s, arc, defl, chord, inc])


def _line_rows(elements: list[Element], stations: list[F]) -> F:
    """Lines (no part of a curve; for completeness): no deflection, the chord is the length."""
    s, seg, opens = _segments(elements, stations)
    along = np.maximum(s - _per_element(elements, seg, "start"), 0.0)
    inc = np.concatenate([[0.0], np.diff(along)])
    inc[opens] = 0.0
    return np.column_stack([s, along, np.zeros_like(s), along, inc])


def _clothoid_rows(elements: list[Element], stations: list[F], from_end: bool = False) -> F:
    """Spirals: from the start along the start tangent, the point (x, y) there gives
    deflection = atan(y / x) and chord = hypot(x, y); all spirals in one call.
    ``from_end`` (an exit spiral run from the ST; ``stations`` descending): the same from the
    end back along the end tangent, the clothoid's curvature running from the end's to the start's.
    """
    s, seg, opens = _segments(elements, stations)
    ends = ("curvature_end", "curvature_start") if from_end else ("curvature_start", "curvature_end")
    along = np.maximum(_per_element(elements, seg, "end") - s if from_end else s - _per_element(elements, seg, "start"),
                       0.0)
    x, y, _ = clothoid_xy(along, _per_element(elements, seg, ends[0]), _per_element(elements, seg, ends[1]),
                          _per_element(elements, seg, "length"))
    y = np.abs(y)
    defl = np.degrees(np.arctan2(y, x))
    chord = np.hypot(x, y)
    inc = np.concatenate([[0.0], np.hypot(np.diff(x), np.diff(y))])
    inc[opens] = 0.0
    return np.column_stack([s, along, defl, chord, inc])


#: How the deflection rows of a kind's elements are computed from each element's start: one call
#: for all the elements of a kind, their stations end to end.
RowsOf = Callable[[list[Element], list[F]], F]
DEFLECTION_ROWS: PerKind[RowsOf] = PerKind("deflection rows", {"line": _line_rows, "arc": _arc_rows,
                                                              "spiral": _clothoid_rows})


def _rows_by_kind(elements: list[Element], stations: list[F]) -> list[F]:
    """The deflection rows of every element, each kind's elements in one call, split again."""
    groups: dict[RowsOf, list[int]] = {}
    for k, el in enumerate(elements):
        groups.setdefault(DEFLECTION_ROWS[el], []).append(k)
    out: list[F] = [np.zeros((0, 5))] * len(elements)
    for fn, ks in groups.items():
        rows = fn([elements[k] for k in ks], [stations[k] for k in ks])
        sizes = np.array([stations[k].size for k in ks])
        for k, part in zip(ks, np.split(rows, np.cumsum(sizes)[:-1])):
            out[k] = part
    return out


def _element_stations(alignment: Alignment, stations: F) -> list[tuple[int, int, F]]:
    """Per curve element (curve number, element index, its start, the staked stations on
    it and its end, sorted, unique): each a slice of the sorted stations by ``searchsorted``.
    """
    srt = np.sort(np.asarray(stations, dtype=float))
    out = []
    for c in alignment.curves:
        for i in c.elements:
            el = alignment.elements[i]
            lo = int(np.searchsorted(srt, el.start - 1e-9, side="left"))
            hi = int(np.searchsorted(srt, el.end + 1e-9, side="right"))
            s = np.concatenate([[el.start], srt[lo:hi], [el.end]])
            out.append((c.number, i, np.unique(np.clip(s, el.start, el.end))))
    return out


def deflection_rows(alignment: Alignment, stations: F) -> list[tuple[int, int, list[DeflectionRow]]]:
    """Deflections from each curve element's start to the staked stations on it.

    Returns, per arc or spiral, ``(curve number, element index, rows)`` with
    each row ``(internal station, length from the element's start, deflection
    in degrees from the tangent there, chord from the start, chord from the
    previous row)``.  On an arc, deflection = s / 2R (radians) and chord =
    2R sin(s / 2R); on a spiral, from its start (the TS, or the CS of an exit
    spiral) along its start tangent: the point's position (x, y) there gives
    deflection = atan(y / x) and chord = hypot(x, y).
    """
    parts = _element_stations(alignment, stations)
    elements = [alignment.elements[i] for _, i, _ in parts]
    rows = _rows_by_kind(elements, [s for _, _, s in parts])
    return [(number, i, [tuple(r) for r in part.tolist()]) for (number, i, _), part in zip(parts, rows)]


def _offset_rows(alignment: Alignment, elements: list[Element], stations: list[F], o: float,
                 from_end: bool = False) -> list[F]:
    """Deflections on an offset line along each of ``elements`` at its ``stations``, from the
    offset point at the element's start along the offset line's tangent there: the chord's
    direction minus that tangent, from the points.  Every element's stations are evaluated in
    one call and the rows split again by element.  ``from_end``: from the offset point at the
    element's end, back along the offset line's tangent there (``stations`` descending).
    """
    if not elements:
        return []
    st, seg, opens = _segments(elements, stations)
    first = np.maximum.accumulate(np.where(opens, np.arange(st.size), 0))  # each row's element's first row
    n, e, az = alignment.evaluate(st, o, miter=False)
    dn, de = n - n[first], e - e[first]
    chord = np.hypot(dn, de)
    chord_az = np.degrees(np.arctan2(de, dn))
    back = 180.0 if from_end else 0.0  # from the end: the tangent there looking back
    defl = np.abs((chord_az - az[first] - back + 180.0) % 360.0 - 180.0)
    defl[chord == 0.0] = 0.0
    inc = np.concatenate([[0.0], np.hypot(np.diff(n), np.diff(e))])
    inc[opens] = 0.0
    # length along the offset line: the centreline length scaled by the radius there (exact on arcs),
    # the integral of (1 - k(s) o) ds
    k0 = _per_element(elements, seg, "curvature_start")
    k1 = _per_element(elements, seg, "curvature_end")
    s = st - _per_element(elements, seg, "start")
    length = _per_element(elements, seg, "length")
    along = s - o * (k0 * s + (k1 - k0) * s * s / (2.0 * length))
    if from_end:  # the offset line's length from the end: its whole length less the length to here
        along = length - o * (k0 * length + (k1 - k0) * length / 2.0) - along
    rows = np.column_stack([st, along, defl, chord, inc])
    return np.split(rows, np.flatnonzero(opens)[1:])


@dataclass(frozen=True)
class OffsetDeflections:
    """The deflection rows of one offset line along a curve element (as :class:`DeflectionTable`)."""

    offset: float
    code: str
    rows: F


@dataclass(frozen=True)
class DeflectionTable:
    """The deflection rows of one curve element: columns internal station, length from its
    start, deflection (degrees), chord from the start, chord from the previous row; and the
    same for each offset line, from its point opposite the element's start.
    """

    curve: int
    index: int
    element: Element
    start_feature: str  # the key-point features at the element's start ("PC", "TS", ...)
    rows: F
    offsets: tuple[OffsetDeflections, ...]
    from_end: bool = False  # an exit spiral run from its end (the ST): rows from the end back, descending

    @property
    def deflect_turn(self) -> int:
        """Which way the deflections turn seen from where they are run (+1 right, -1 left):
        the element's turn, reversed when run from its end looking back.
        """
        return -self.element.turn if self.from_end else self.element.turn

    @property
    def row_count(self) -> int:
        """Rows of the element and of its offset lines."""
        return len(self.rows) * (1 + len(self.offsets))


# ---- setout ----------------------------------------------------------------------------------------
@dataclass(frozen=True)
class SetoutColumn:
    """One column of the setout table: its key (:data:`SETOUT_HEADERS`), its values
    (numbers, or the stakes' ids, labels, codes and notes: ``decimals`` None), the decimals
    it is printed to (seconds for the angles) and whether it is printed with the column
    before it (a group).
    """

    key: str
    values: Any
    decimals: int | None = None
    grouped: bool = False


class Presentation:
    """What the outputs of one design show, each part computed on first use and kept."""

    def __init__(self, d: "Design") -> None:
        self.d = d
        self._ends: dict[float, tuple[F, F, F, F]] = {}

    @cached_property
    def catch_gaps(self) -> tuple[int, int, str]:
        """Slope-stake rows without a catch point, all rows, and why (``2 no catch within max_width,
        1 outside the ground surface``; counts by note, in alphabetical order).
        """
        ew = self.d.earthwork
        if ew is None or ew.slopes is None:
            return 0, 0, ""
        note = np.asarray(ew.slopes.result.note, dtype=str)
        words, counts = np.unique(note[note != ""], return_counts=True)  # code-point order, as sorted()
        why = ", ".join(f"{c} {t}" for t, c in zip(words.tolist(), counts.tolist()))
        return int(counts.sum()), len(ew.slopes.side), why

    @cached_property
    def slope_stake_ids(self) -> tuple[list[str], list[str]]:
        """Point ids of the catch and reference stakes, per slope-stake row ('' without a catch)."""
        ew = self.d.earthwork
        if ew is None or ew.slopes is None or ew.slopes.catch_point is None:
            return [], []
        sp, catch, ref = self.d.stakes, ew.slopes.catch_point, ew.slopes.reference_point
        assert ref is not None
        return ([sp.point_id(i) if i >= 0 else "" for i in catch.tolist()],
                [sp.point_id(i) if i >= 0 else "" for i in ref.tolist()])

    @cached_property
    def landxml_elements(self) -> tuple["XElement", ...]:
        """The alignment as LandXML records (long arcs and spirals in pieces), for ``alignment.xml``."""
        from .exported import landxml_elements

        return tuple(landxml_elements(self.d.alignment.elements))

    @cached_property
    def curves(self) -> tuple[CurveView, ...]:
        """The curve data of every curve."""
        return curve_views(self.d.alignment)

    @cached_property
    def spirals(self) -> tuple[SpiralView, ...]:
        """Every spiral of the alignment with its figures."""
        out: list[SpiralView] = []
        for i, el in enumerate(self.d.alignment.elements, start=1):
            if CURVE_PART[el] == "spirals":
                sp = cast("Spiral", el)
                f = spiral_figures(sp.length, sp.radius_start, sp.radius_end, name=f"element {i}")
                out.append(SpiralView(len(out) + 1, i - 1, sp, f))
        return tuple(out)

    @property
    def has_spirals(self) -> bool:
        """Whether the alignment has a spiral."""
        return any(CURVE_PART[el] == "spirals" for el in self.d.alignment.elements)

    @cached_property
    def profile_rows(self) -> tuple[PVIRow, ...]:
        """One row per PVI (empty without a profile)."""
        return self.d.profile.rows() if self.d.profile is not None else ()

    @cached_property
    def start_features(self) -> dict[float, str]:
        """Key-point features by station (rounded to a millionth)."""
        return {round(k.station, 6): " ".join(k.features) for k in self.d.alignment.key_points}

    @cached_property
    def offset_lines(self) -> list[tuple[float, str]]:
        """(offset, code) of every offset line off the centreline."""
        return [(ol.offset, ol.code) for ol in self.d.job.staking.offsets if ol.offset != 0.0 and not ol.widening]

    @cached_property
    def deflections(self) -> tuple[DeflectionTable, ...]:
        """The deflection table of every curve element, with its offset lines."""
        a = self.d.alignment
        parts = _element_stations(a, self.d.stakes.stations)
        elements = [a.elements[i] for _, i, _ in parts]
        rows = _rows_by_kind(elements, [s for _, _, s in parts])
        # exit spirals (curving at the start, straight at the end) run from the ST when the job says so
        ends = [k for k, el in enumerate(elements) if self.d.job.staking.exit_spiral_from == "ST"
                and CURVE_PART[el] == "spirals" and el.curvature_start != 0.0 and el.curvature_end == 0.0]
        if ends:
            rev = _clothoid_rows([elements[k] for k in ends], [parts[k][2][::-1] for k in ends], from_end=True)
            sizes = np.array([parts[k][2].size for k in ends])
            for k, part in zip(ends, np.split(rev, np.cumsum(sizes)[:-1])):
                rows[k] = part
        forward = sorted(set(range(len(elements))) - set(ends))
        offsets = []
        for o, code in self.offset_lines:
            off: list[F] = [np.zeros((0, 5))] * len(elements)
            for ks, from_end in ((forward, False), (ends, True)):
                for k, r in zip(ks, _offset_rows(a, [elements[k] for k in ks], [rows[k][:, 0] for k in ks], o,
                                                 from_end)):
                    off[k] = r
            offsets.append((o, code, off))
        feature = self.start_features
        return tuple(DeflectionTable(number, i, el, feature.get(round(el.end if k in ends else el.start, 6), ""),
                                     rows[k], tuple(OffsetDeflections(o, code, off[k]) for o, code, off in offsets),
                                     from_end=k in ends)
                     for k, ((number, i, _), el) in enumerate(zip(parts, elements)))

    @cached_property
    def stake_notes(self) -> list[str]:
        """The note of each stake in the setout table: at the instrument, r95 over the tolerance."""
        sd = self.d.setup
        assert sd is not None
        notes = [""] * len(self.d.stakes)
        for i in np.flatnonzero(sd.setout.at_instrument).tolist():
            notes[i] = AT_INSTRUMENT_NOTE
        if sd.flagged is not None:
            for i in np.flatnonzero(sd.flagged).tolist():
                notes[i] = f"{notes[i]}; {FLAG}" if notes[i] else FLAG
        return notes

    @cached_property
    def setout_columns(self) -> tuple[SetoutColumn, ...]:
        """The setout table's columns in order (those the job has), one value a stake."""
        d = self.d
        sd = d.setup
        assert sd is not None
        sp, so = d.stakes, sd.setout
        n = len(sp)  # the texts made only for the stakes a table lists (a report: a few thousand of a million)
        cols = [SetoutColumn("point", EachStake(n, sp.point_id)), SetoutColumn("station", EachStake(n, sp.label_at)),
                SetoutColumn("offset", sp.offset, d.unit.station_decimals), SetoutColumn("code", EachStake(n, sp.code_at)),
                SetoutColumn("feature", EachStake(n, sp.feature_at)), SetoutColumn("angle_right", so.angle_right, 0),
                SetoutColumn("grid_distance", so.grid_distance, 3),
                SetoutColumn("ground_distance", so.ground_distance, 3)]
        if sp.elevation is not None:
            cols.append(SetoutColumn("design_elevation", sp.elevation, 3))
        if so.zenith is not None and so.slope_distance is not None:
            cols.append(SetoutColumn("zenith", so.zenith, 0))
            cols.append(SetoutColumn("slope_distance", so.slope_distance, 3, grouped=True))
        prec = sd.precision
        if prec is not None:
            cols.append(SetoutColumn("sigma_along", prec.sigma_along, 4))
            cols.append(SetoutColumn("sigma_across", prec.sigma_across, 4, grouped=True))
            cols.append(SetoutColumn("r95", prec.r95, 4, grouped=True))
        if any(self.stake_notes):
            cols.append(SetoutColumn("note", self.stake_notes))
        return tuple(cols)

    def element_ends(self, offset: float) -> tuple[F, F, F, F]:
        """Start and end points of every element on the line at ``offset`` (northing and
        easting at the start, then at the end), one evaluation for all elements, kept for
        the next drawing of the same line.
        """
        cached = self._ends.get(offset)
        if cached is None:
            a = self.d.alignment
            s = np.array([[el.start, el.end] for el in a.elements], dtype=float).ravel()
            n, e, _ = a.evaluate(s, offset)
            cached = self._ends[offset] = (n[0::2], e[0::2], n[1::2], e[1::2])
        return cached

    def element_samples(self, el: Element, count: int, offset: float) -> tuple[F, F, F]:
        """Northing, easting and azimuth at ``count`` evenly spaced points along ``el`` on the
        line at ``offset`` (no mitre: the offset line's own points).
        """
        s = np.linspace(el.start, el.end, count)
        n, e, az = self.d.alignment.evaluate(s, offset, miter=False)
        return n, e, az


    @cached_property
    def other_control(self) -> tuple[list[str], F, F]:
        """The job's control points that no setup occupies or sights (in the job's order): ids,
        northings, eastings (the plan drawing and picture draw them with a size rule).
        """
        d = self.d
        used: set[str] = set()
        for o in d.setup.occupations if d.setup is not None else ():
            used.add(o.occupied.id)
            if o.backsight is not None:
                used.add(o.backsight.id)
        points = [p for p in d.job.control if p.id not in used]
        return ([p.id for p in points], np.array([p.northing for p in points], dtype=float),
                np.array([p.easting for p in points], dtype=float))
