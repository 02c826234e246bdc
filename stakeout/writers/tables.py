"""The CSV files of the outputs contract: points, stations, curves.

RFC 4180, UTF-8, ``\\n`` line ends, header first.  Point ids and codes are
restricted to a safe character set by the job-file reader, so no field
needs quoting; :func:`csv_field` quotes anything else per RFC 4180.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

from ..angles import format_dms
from ..design import Design
from ..numbers import round_to
from ..presentation import degree_of_curve_arc
from ..staking import StakePoints
from . import rows
from .several import csv_rows
from .csvtext import (DECIMALS, FORMULA_LEADS, GRADE_DECIMALS, POINTS_COLUMNS, csv_field, csv_guard, csv_text,
                      csv_text_field)
from .text import fixed_or_empty, turn_word

if TYPE_CHECKING:  # pragma: no cover
    from ..check import CheckResult

__all__ = [
    "POINTS_COLUMNS", "STATIONS_COLUMNS", "CURVES_COLUMNS",
    "SETOUT_COLUMNS", "SETUP_COLUMNS", "PRECISION_COLUMNS", "csv_field", "csv_guard", "csv_text_field", "FORMULA_LEADS",
    "csv_text", "points_csv", "stations_csv", "curves_csv", "setout_csv", "restake_csv", "RESTAKE_COLUMNS", "DECIMALS",
]

STATIONS_COLUMNS = ("point", "station", "station_label", "offset", "northing", "easting",
                    "elevation", "feature", "code",
                    # added columns
                    "region",
                    # second set: cross-sections and the ground (empty without a ground or outside it)
                    "alignment", "cross_slope", "ground_elevation", "cut_fill")
CURVES_COLUMNS = ("curve", "pi_station", "pc_station", "pt_station", "radius", "delta_deg", "delta_dms",
                  "length", "tangent_back", "tangent_ahead", "chord", "external", "middle_ordinate", "turn",
                  # added columns (allowed after the contract's)
                  "arc", "center_northing", "center_easting", "degree_of_curve",
                  # second set: the alignment's name
                  "alignment")

_CHUNK_ROWS = 16384  # rows rendered at once: small temporaries that stay in cache and are reused


class _PerPoint:
    """Vectorised per-point fields of the points ``p0:p1`` of a stake table.

    A plain grid is rendered in whole stations (per-station fields repeated
    over the offset lines, per-line fields tiled); a table with stakes
    beyond the grid through its per-point indices (each distinct station,
    code and feature formatted once per chunk).
    """

    def __init__(self, sp: StakePoints, p0: int, p1: int, shared: dict[str, rows.Field] | None = None):
        self.sp = sp
        self.shared = {} if shared is None else shared  # what every chunk of one file uses, made once
        self.p = slice(p0, p1)
        self.n = p1 - p0
        self.m = sp.offsets.size
        self.take: NDArray[np.int64] | None = None
        if sp.layout is None:  # chunks hold whole stations
            self.u = np.arange(p0 // max(1, self.m), p1 // max(1, self.m), dtype=np.int64)
        else:
            self.u, self.take = np.unique(sp.station_of[self.p], return_inverse=True)
        self.k = self.u.size

    def per_station(self, f: rows.Field) -> rows.Field:
        """A field of the chunk's stations (:attr:`u`) laid out per point."""
        return rows.repeat_rows(f, self.m) if self.take is None else f[self.take]

    def sep(self, s: str = ",") -> rows.Field:
        return rows.const(s, self.n)

    def point(self) -> list[rows.Field]:
        sp = self.sp
        if self.p.stop > sp.numbered:  # the ids the job gave (listed points): each as written
            return [rows.text([sp.point_id(i) for i in range(self.p.start, self.p.stop)])]
        first = sp.first_point + self.p.start
        return [rows.const(sp.prefix, self.n), rows.integer(np.arange(first, first + self.n, dtype=np.int64))]

    def label(self, guard: bool = False) -> rows.Field:
        """Station labels; ``guard``: a label that is a whole field (``-0+120.000``) gets the
        :func:`csv_guard` apostrophe.
        """
        sp = self.sp
        st = sp.stationing  # every label comes from the stationing: stations in force there
        f = rows.station(sp.all_station_values[self.u], st.station_length, st.decimals)
        twice = st.occurs_twice(sp.all_stations[self.u])
        if twice.any():  # a station an equation doubles carries its region, as Stationing.labels writes it
            k = self.k
            suffix = np.concatenate([rows.const("(", k), rows.integer(sp.all_regions[self.u]), rows.const(")", k)],
                                    axis=1)
            f = np.concatenate([f, rows.blank(suffix, ~twice)], axis=1)
        if guard and f.size:
            f = np.hstack([np.where(f[:, :1] == ord("-"), ord("'"), 0).astype(np.uint8), f])
        return self.per_station(f)

    def station(self, decimals: int) -> rows.Field:
        return self.per_station(rows.fixed(self.sp.all_station_values[self.u], decimals))

    def offset(self, decimals: int) -> rows.Field:
        if self.sp.point_offsets is not None:  # widened lines or more than the grid: each point's own offset
            return rows.fixed(self.sp.point_offsets[self.p], decimals)
        return rows.tile_rows(rows.fixed(self.sp.offsets, decimals), self.k)

    def code(self) -> rows.Field:
        if self.take is None:
            return rows.tile_rows(rows.text(self.sp.codes), self.k)
        return rows.text(self.sp.all_codes)[self.sp.code_of[self.p]]

    def region(self) -> rows.Field:
        return self.per_station(rows.integer(self.sp.all_regions[self.u]))

    def _features(self, key: str, words: Callable[[], list[str]]) -> rows.Field:
        """Per point, the text ``words()`` gives for each of :attr:`StakePoints.all_features`
        (laid out once a file, under ``key``).
        """
        table = self.shared.get(key)
        if table is None:
            table = self.shared[key] = rows.text(words())
        if self.take is None:
            return rows.repeat_rows(table[self.u], self.m)
        return table[self.sp.feature_of[self.p]]

    def feature_words(self) -> rows.Field:
        """Features followed by a space, or nothing, per point."""
        return self._features("feature words", lambda: [f + " " if f else "" for f in self.sp.all_features])

    def side_offset(self, decimals: int) -> rows.Field:
        """The offset's size and side, ``16.00 LT`` / ``12.00 RT`` / ``0.00``."""
        sp = self.sp
        words = rows.text([" LT", " RT", ""])
        if self.take is not None:  # each point's own side, as printed (one that rounds to zero is on the line)
            o = round_to(sp.offset[self.p], decimals)
            side = words[np.where(o < 0, 0, np.where(o > 0, 1, 2))]
            return np.concatenate([rows.fixed(np.abs(sp.offset[self.p]), decimals), side], axis=1)
        offs = sp.offsets
        # the side of the offset as printed: one that rounds to zero is on the line (as text.side_text)
        o = round_to(offs, decimals)
        side = words[np.where(o < 0, 0, np.where(o > 0, 1, 2))]
        if sp.point_offsets is not None:  # widened lines: each point's own offset, the line's side
            return np.concatenate([rows.fixed(np.abs(sp.point_offsets[self.p]), decimals),
                                   rows.tile_rows(side, self.k)], axis=1)
        both = np.concatenate([rows.fixed(np.abs(offs), decimals), side], axis=1)
        return rows.tile_rows(both, self.k)

    def feature(self) -> rows.Field:
        return self._features("features", lambda: list(self.sp.all_features))

    def elevation(self) -> rows.Field:
        """Design elevations, empty where a stake has none (a reference stake)."""
        return self.optional(self.sp.elevation, DECIMALS)

    def cross_slope(self) -> rows.Field:
        """The slope applied to each point (percent, 4 decimals), empty where none."""
        return self.optional(self.sp.slope, DECIMALS)

    def optional(self, values: NDArray[np.float64] | None, decimals: int) -> rows.Field:
        """Per-point numbers, empty where NaN (or all empty without ``values``)."""
        if values is None:
            return rows.const("", self.n)
        v = values[self.p]
        none = np.isnan(v)
        if not none.any():
            return rows.fixed(v, decimals)
        return rows.blank(rows.fixed(np.where(none, 0.0, v), decimals), none)

    def col(self, values: NDArray[np.float64], decimals: int) -> rows.Field:
        return rows.fixed(values[self.p], decimals)

    def dms(self, values: NDArray[np.float64]) -> rows.Field:
        return rows.dms(values[self.p], 1)

    def given_text(self, default: list[rows.Field]) -> list[rows.Field]:
        """``default`` (the parts of one text field), or where the table gives a point its own
        description (a listed point), that description as a CSV text field.
        """
        lay = self.sp.layout
        if lay is None or not lay.descriptions:
            return default
        di = lay.description_of[self.p]
        own = di >= 0
        if not own.any():
            return default
        texts = [csv_text_field(t).encode("utf-8") for t in lay.descriptions] + [b""]
        a = np.array(texts, dtype=bytes)
        table = a.view(np.uint8).reshape(len(texts), a.dtype.itemsize)
        return [rows.blank(np.concatenate(default, axis=1), own), table[np.where(own, di, len(texts) - 1)]]


def _csv(header: Sequence[str], sp: StakePoints, layout: Callable[[_PerPoint], list[rows.Field]]
         ) -> Iterator[bytes]:
    """Render a per-point CSV in chunks (whole stations of a plain grid): the header, then each
    chunk's rows as one piece (:func:`rows.in_order`: on the cores the writing leaves free, never
    more than a few ahead).
    """
    m = max(1, sp.offsets.size)
    step = _CHUNK_ROWS if sp.layout is not None else max(1, _CHUNK_ROWS // m) * m

    shared: dict[str, rows.Field] = {}

    def chunk(p0: int) -> bytes:  # each chunk is vectorised
        part = _PerPoint(sp, p0, min(p0 + step, len(sp)), shared)
        return rows.join_rows(layout(part), part.n)

    yield (",".join(header) + "\n").encode("ascii")
    yield from rows.in_order(chunk, range(0, len(sp), step))


def points_csv(design: Design) -> Iterator[bytes]:
    """``points.csv``: the file a crew loads onto a data collector."""
    d = DECIMALS
    sp, unit = design.stakes, design.unit

    def layout(p: _PerPoint) -> list[rows.Field]:
        # description: code, key-point features, station, offset with its side (`EPL PC 14+11.02 16.00 LT`)
        # (a listed point: the description its row gives)
        return [*p.point(), p.sep(), p.col(sp.northing, d), p.sep(), p.col(sp.easting, d), p.sep(),
                p.elevation(), p.sep(), *p.given_text([p.code(), p.sep(" "), p.feature_words(), p.label(),
                                                       p.sep(" "), p.side_offset(unit.station_decimals)])]

    return _csv(POINTS_COLUMNS, sp, layout)


def stations_csv(design: Design) -> Iterator[bytes]:
    """``stations.csv``: every staked point with where it sits on the alignment."""
    d = DECIMALS
    sp = design.stakes
    name = np.frombuffer(csv_text_field(design.alignment.name).encode("utf-8"), dtype=np.uint8)
    ew = design.earthwork
    gz, cf = (None, None) if ew is None else (ew.ground_elevation, ew.cut_fill)

    def layout(p: _PerPoint) -> list[rows.Field]:
        return [*p.point(), p.sep(), p.station(d), p.sep(), p.label(guard=True), p.sep(), p.offset(d), p.sep(),
                p.col(sp.northing, d), p.sep(), p.col(sp.easting, d), p.sep(), p.elevation(), p.sep(),
                p.feature(), p.sep(), p.code(), p.sep(), p.region(),
                p.sep(), np.broadcast_to(name, (p.n, name.size)), p.sep(), p.cross_slope(), p.sep(),
                p.optional(gz, d), p.sep(), p.optional(cf, d)]

    return _csv(STATIONS_COLUMNS, sp, layout)


def curves_csv(design: Design) -> bytes:
    """``curves.csv``: one row per arc; a compound curve has a row per arc.

    ``pc_station``/``pt_station`` are the arc's own start and end (PC or
    PCC/PRC, PCC/PRC or PT); ``pi_station`` is the PI of the whole curve.
    """
    unit, station = design.unit, design.stationing.station
    rows = []
    d = DECIMALS
    name = csv_text_field(design.alignment.name)
    for cv in design.presentation.curves:
        curve = cv.curve
        for arc_no, (_, el) in enumerate(cv.arcs, start=1):
            p = el.props
            assert p is not None
            fields = [
                str(curve.number),
                "" if curve.pi_station is None else fixed_or_empty(float(station(curve.pi_station)), d),
                fixed_or_empty(float(station(el.start)), d),
                fixed_or_empty(float(design.stationing.station_back(el.end)), d),
                fixed_or_empty(p.radius, d),
                f"{el.delta:.8f}",
                str(format_dms(el.delta, 1)),
                fixed_or_empty(p.length, d),
                fixed_or_empty(p.tangent, d),
                fixed_or_empty(p.tangent, d),
                fixed_or_empty(p.chord, d),
                fixed_or_empty(p.external, d),
                fixed_or_empty(p.middle_ordinate, d),
                turn_word(el.turn),
                str(arc_no),
                fixed_or_empty(el.center_northing, d),
                fixed_or_empty(el.center_easting, d),
                f"{degree_of_curve_arc(p.radius):.8f}" if unit.is_feet else "",
                name,
            ]
            rows.append(",".join(fields))
    return csv_text(CURVES_COLUMNS, rows).encode("utf-8")


SETOUT_COLUMNS = ("point", "station", "offset", "azimuth_deg", "azimuth_dms", "angle_right_deg",
                  "angle_right_dms", "grid_distance", "ground_distance")
#: Added to setout.csv when the setups come from control points or are several.
SETUP_COLUMNS = ("setup", "occupied", "backsight")
#: Added to setout.csv with ``[instrument]`` (job units).
PRECISION_COLUMNS = ("sigma_along", "sigma_across", "r95")


def setout_csv(design: Design) -> Iterator[bytes]:
    """``setout.csv``: angle and distance from each stake's occupied point.

    Added columns, after the contract's: ``zenith_deg,slope_distance`` with
    instrument and target heights and elevations; ``setup,occupied,backsight``
    (setup number, occupied and backsight ids) when the setups come from
    control points or are several; ``sigma_along,sigma_across,r95`` with
    ``[instrument]``.  A stake at the instrument has its angle fields empty.
    """
    assert design.setup is not None
    sdes = design.setup
    sp, so = design.stakes, sdes.setout
    d = DECIMALS
    header = list(SETOUT_COLUMNS)
    zen = so.zenith is not None and so.slope_distance is not None
    if zen:
        header += ["zenith_deg", "slope_distance"]
    listed = sdes.listed
    if listed:
        header += list(SETUP_COLUMNS)
        occ_ids = rows.text([o.occupied.id for o in sdes.occupations])
        bs_ids = rows.text([o.backsight.id if o.backsight is not None else "" for o in sdes.occupations])
        numbers = rows.integer(np.arange(1, len(sdes.occupations) + 1))
    prec = sdes.precision
    if prec is not None:
        header += list(PRECISION_COLUMNS)
    at = so.at_instrument
    blank_any = bool(at.any())

    def angle(f: rows.Field, p: _PerPoint) -> rows.Field:
        return rows.blank(f, at[p.p]) if blank_any else f

    def layout(p: _PerPoint) -> list[rows.Field]:
        f = [*p.point(), p.sep(), p.station(d), p.sep(), p.offset(d), p.sep(), angle(p.col(so.azimuth, 8), p),
             p.sep(), angle(p.dms(so.azimuth), p), p.sep(), angle(p.col(so.angle_right, 8), p), p.sep(),
             angle(p.dms(so.angle_right), p), p.sep(), p.col(so.grid_distance, d), p.sep(),
             p.col(so.ground_distance, d)]
        if zen:
            assert so.zenith is not None and so.slope_distance is not None
            # empty for a stake without a design elevation (a reference stake): no height to sight
            f += [p.sep(), p.optional(so.zenith, 8), p.sep(), p.optional(so.slope_distance, d)]
        if listed:
            k = sdes.setup_index[p.p]
            f += [p.sep(), numbers[k], p.sep(), occ_ids[k], p.sep(), bs_ids[k]]
        if prec is not None:
            f += [p.sep(), p.col(prec.sigma_along, d), p.sep(), p.col(prec.sigma_across, d), p.sep(),
                  p.col(prec.r95, d)]
        return f

    return _csv(header, sp, layout)


PROFILE_COLUMNS = ("pvi", "station", "station_label", "elevation", "grade_in", "grade_out", "curve_length_back",
                   "curve_length_ahead", "pvc_station", "pvc_elevation", "pvt_station", "pvt_elevation", "k_value",
                   "high_low_station", "high_low_elevation",
                   # added columns
                   "high_low", "radius",
                   # second set: the alignment's name; the vertical curve's whole length (back + ahead)
                   "alignment", "curve_length")



def profile_csv(design: Design) -> bytes:
    """``profile.csv``: one row per PVI, stations in force there, grades in percent."""
    assert design.profile is not None
    st = design.stationing
    d = DECIMALS

    def station(v: float | None) -> str:
        return "" if v is None else fixed_or_empty(float(st.station(v)), d)

    def grade(g: float | None) -> str:
        return "" if g is None else fixed_or_empty(100.0 * g, GRADE_DECIMALS)

    lines = []
    name = csv_text_field(design.alignment.name)
    for i, r in enumerate(design.presentation.profile_rows, start=1):
        whole = (r.curve_length_back or 0.0) + (r.curve_length_ahead or 0.0)
        lines.append(",".join([
            str(i), station(r.station), csv_text_field(st.label(r.station)), fixed_or_empty(r.elevation, d),
            grade(r.grade_in), grade(r.grade_out),
            fixed_or_empty(r.curve_length_back, d), fixed_or_empty(r.curve_length_ahead, d),
            station(r.pvc_station), fixed_or_empty(r.pvc_elevation, d),
            station(r.pvt_station), fixed_or_empty(r.pvt_elevation, d),
            fixed_or_empty(r.k_value, d), station(r.high_low_station), fixed_or_empty(r.high_low_elevation, d),
            r.high_low_kind or "", fixed_or_empty(r.radius, d), name, fixed_or_empty(whole or None, d),
        ]))
    return csv_text(PROFILE_COLUMNS, lines).encode("utf-8")


ELEMENTS_COLUMNS = ("element", "kind", "start_station", "end_station", "length", "start_northing", "start_easting",
                    "end_northing", "end_easting", "start_azimuth_deg", "end_azimuth_deg", "radius_start",
                    "radius_end", "turn",
                    # second set: the alignment's name
                    "alignment")


def elements_csv(design: Design) -> bytes:
    """``elements.csv``: one row per element in order, stations in force at each end.

    An element ending at an equation point ends at the back station; the
    next one starts at the ahead station.  Radii are empty where infinite.
    """
    st = design.stationing
    d = DECIMALS
    lines = []
    name = csv_text_field(design.alignment.name)
    for i, el in enumerate(design.alignment.elements, start=1):
        lines.append(",".join([
            str(i), el.kind, fixed_or_empty(float(st.station(el.start)), d),
            fixed_or_empty(float(st.station_back(el.end)), d), fixed_or_empty(el.length, d),
            fixed_or_empty(el.start_northing, d), fixed_or_empty(el.start_easting, d),
            fixed_or_empty(el.end_northing, d), fixed_or_empty(el.end_easting, d),
            f"{el.start_azimuth % 360.0:.8f}", f"{el.end_azimuth % 360.0:.8f}",
            fixed_or_empty(el.radius_start, d), fixed_or_empty(el.radius_end, d), turn_word(el.turn), name,
        ]))
    return csv_text(ELEMENTS_COLUMNS, lines).encode("utf-8")


SPIRALS_COLUMNS = ("spiral", "start_station", "end_station", "length", "radius_start", "radius_end", "theta_deg",
                   "x", "y", "p", "k", "long_tangent", "short_tangent", "turn",
                   # added columns
                   "element",
                   # second set: the alignment's name
                   "alignment")


def spirals_csv(design: Design) -> bytes:
    """``spirals.csv``: one row per spiral, its figures as the contract defines them."""
    st = design.stationing
    d = DECIMALS
    lines = []
    name = csv_text_field(design.alignment.name)
    for sv in design.presentation.spirals:
        el, f, i = sv.element, sv.figures, sv.index + 1
        lines.append(",".join([
            str(sv.number), fixed_or_empty(float(st.station(el.start)), d),
            fixed_or_empty(float(st.station_back(el.end)), d), fixed_or_empty(el.length, d),
            fixed_or_empty(el.radius_start, d), fixed_or_empty(el.radius_end, d), f"{f.theta_deg:.8f}",
            fixed_or_empty(f.x, d), fixed_or_empty(f.y, d), fixed_or_empty(f.p, d), fixed_or_empty(f.k, d),
            fixed_or_empty(f.long_tangent, d), fixed_or_empty(f.short_tangent, d), turn_word(el.turn), str(i),
            name,
        ]))
    return csv_text(SPIRALS_COLUMNS, lines).encode("utf-8")


#: ``restake.csv`` is laid out as ``points.csv``, so a crew loads it the same way.
RESTAKE_COLUMNS = POINTS_COLUMNS


def restake_csv(d: Design, r: "CheckResult") -> bytes:
    """``restake.csv``: the design points still to set, in point order.

    Out of tolerance (by the shot that governs them, so also a point whose
    good shot was superseded by one out of tolerance) or not staked; every
    row exactly as in ``points.csv`` (the rows are taken from it).
    """
    parts = d.parts or (d,)  # several alignments: every alignment's stakes, as in points.csv
    data = np.frombuffer(csv_rows([b"".join(points_csv(p)) for p in parts]), dtype=np.uint8)
    line_of_byte = np.concatenate([[0], np.cumsum(data[:-1] == 10)])  # line 0 is the header
    # one line per stake (no text field holds a line break: the job-file readers refuse them)
    keep = np.zeros(sum(len(p.stakes) for p in parts) + 1, dtype=bool)
    keep[0] = True
    keep[np.asarray(r.restake, dtype=np.int64) + 1] = True
    out: bytes = data[keep[line_of_byte]].tobytes()
    return out
