"""Cross-sections: superelevation, template lines and widening (numpy, no I/O).

The job-file contract's second set: cross slopes that change along the
alignment (``[[superelevation]]`` rows, linear by true distance between
rows, held beyond the first and last), offset lines measured from another
line (``from``, ``steepen_with_inner``, ``rollover``, ``dz``) and offsets
that change along the alignment (widening, tapers).

Everything works in internal stations (true distance along the
centreline), so rows on either side of a station equation interpolate by
the distance between them.  :func:`plan_sections` resolves the job's
lines and rows against the stationing once; :func:`section` evaluates
every line at every station at once (one array operation a line, over all
stations).  Slopes are percent, negative falling away from the centreline.

Also here, a pure function for the design file's ``<Superelevation>``
elements (:func:`rows_from_design_file`): the LandXML reader hands it the
stations as plain numbers.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray

from .errors import JobFileError
from .alignment import Alignment
from .job import OffsetLine, SuperelevationFile, SuperelevationPeriod, SuperelevationRow
from .stations import Stationing

__all__ = ["SectionPlan", "Section", "plan_sections", "section", "side_slopes", "line_slope",
           "SuperelevationPeriod", "DerivedRow", "rows_from_design_file", "derive_rows", "ORDER_TOLERANCE"]

F = NDArray[np.float64]

#: Two rows closer than this (job units of internal station) share a station.
ORDER_TOLERANCE = 1e-6


@dataclass(frozen=True)
class SectionPlan:
    """The job's cross-section, resolved on the alignment's stationing.

    Attributes
    ----------
    lines : tuple of OffsetLine
        The offset lines, left to right (at every station where two differ).
    se_stations, se_left, se_right : ndarray
        The superelevation rows: internal stations (increasing) and the left
        and right slopes (percent); empty without a table.
    widen_stations, widen_offsets : tuple of ndarray or None
        Per line: its widening rows (internal stations, offsets), None for a
        line at one offset.
    key_stations : ndarray
        Internal stations to stake as key points: every superelevation row
        (``SE``) and every widening row (``WC``).
    key_features : tuple of str
        The feature of each key station.
    """

    lines: tuple[OffsetLine, ...]
    se_stations: F
    se_left: F
    se_right: F
    widen_stations: tuple[F | None, ...]
    widen_offsets: tuple[F | None, ...]
    key_stations: F
    key_features: tuple[str, ...]

    @property
    def has_table(self) -> bool:
        """True with a superelevation table."""
        return self.se_stations.size > 0

    @property
    def widened(self) -> bool:
        """True when some line's offset changes along the alignment."""
        return any(w is not None for w in self.widen_stations)


@dataclass(frozen=True)
class Section:
    """Every line at every station: arrays of shape (stations, lines).

    ``slope`` is NaN where a stake has no slope (the centreline, ``dz``
    lines, lines with neither); ``elevation`` is None without a centreline
    elevation.
    """

    offset: F
    slope: F
    elevation: F | None


def _increasing(stations: F, wheres: Sequence[str], labels: Sequence[str], what: str) -> None:
    """Refuse rows out of station order or sharing a station."""
    bad = np.nonzero(np.diff(stations) <= ORDER_TOLERANCE)[0]
    if bad.size:
        i = int(bad[0]) + 1
        raise JobFileError(f"{wheres[i]}.station = {labels[i]!r}: not after {wheres[i - 1]} ({labels[i - 1]!r}); "
                           f"{what} rows go in station order and share no station")


def _line_offsets(stations: F, widen_st: F | None, widen_off: F | None, offset: float) -> F:
    if widen_st is None or widen_off is None:
        return np.full(stations.shape, offset)
    return np.interp(stations, widen_st, widen_off)


def plan_sections(lines: Sequence[OffsetLine], rows: Sequence[SuperelevationRow | DerivedRow],
                  stationing: Stationing) -> SectionPlan:
    """Resolve rows and lines on the stationing: order them, check what needs the alignment.

    Raises
    ------
    JobFileError
        Rows out of station order or sharing a station; offset lines that
        cross (a line's |offset| leaves the range between its neighbours'),
        or a line measured ``from`` one that is not nearer the centreline.
    """
    se_st = np.array([r.station if isinstance(r, DerivedRow) else stationing.to_internal(r.station)
                      for r in rows], dtype=np.float64)  # rows from a design file are at internal stations
    _increasing(se_st, [r.where for r in rows], [stationing.label(float(s)) for s in se_st], "superelevation")
    wst: list[F | None] = []
    woff: list[F | None] = []
    for ol in lines:
        if not ol.widening:
            wst.append(None)
            woff.append(None)
            continue
        st = np.array([stationing.to_internal(r.station) for r in ol.widening], dtype=np.float64)
        _increasing(st, [f"{ol.where}.offset[{i}]" for i in range(st.size)],
                    [stationing.label(float(s)) for s in st], "widening")
        wst.append(st)
        woff.append(np.array([r.offset for r in ol.widening], dtype=np.float64))
    # order the lines left to right at every breakpoint of any widening (offsets are linear between them)
    breaks = np.unique(np.concatenate([np.zeros(1)] + [s for s in wst if s is not None]))
    table = np.array([_line_offsets(breaks, s, o, ol.offset) for ol, s, o in zip(lines, wst, woff)])
    order = np.lexsort(table.T[::-1]) if len(lines) else np.zeros(0, dtype=np.int64)
    for a, b in zip(order[:-1].tolist(), order[1:].tolist()):
        ta, tb = table[a], table[b]
        if np.any(tb < ta) or np.all(tb == ta):
            k = int(np.argmax(tb < ta)) if np.any(tb < ta) else 0
            raise JobFileError(
                f"{lines[b].where} (code {lines[b].code!r}): crosses or runs on {lines[a].where} (code "
                f"{lines[a].code!r}) at {stationing.label(float(breaks[k]))} (offsets {ta[k]:g} and {tb[k]:g}); "
                "offset lines may not cross")
    by_code = {ol.code: i for i, ol in enumerate(lines)}
    for i, ol in enumerate(lines):
        if ol.from_code is None:
            continue
        j = by_code[ol.from_code]
        if np.any(np.abs(table[j]) > np.abs(table[i])):
            k = int(np.argmax(np.abs(table[j]) > np.abs(table[i])))
            raise JobFileError(f"{ol.where}.from = {ol.from_code!r}: that line is not nearer the centreline at "
                               f"{stationing.label(float(breaks[k]))} (offsets {table[j][k]:g} and {table[i][k]:g})")
    keys = [(float(s), "SE") for s in se_st]
    keys += [(float(s), "WC") for st in wst if st is not None for s in st.tolist()]
    keys.sort()
    merged: list[tuple[float, str]] = []
    for s, f in keys:  # a station several lines widen at is one WC; an SE there is kept beside it
        if merged and abs(s - merged[-1][0]) <= ORDER_TOLERANCE:
            if f not in merged[-1][1].split():
                merged[-1] = (merged[-1][0], " ".join(sorted({*merged[-1][1].split(), f}, key=("SE", "WC").index)))
            continue
        merged.append((s, f))
    idx = order.tolist()
    return SectionPlan(
        lines=tuple(lines[i] for i in idx),
        se_stations=se_st,
        se_left=np.array([r.left for r in rows], dtype=np.float64),
        se_right=np.array([r.right for r in rows], dtype=np.float64),
        widen_stations=tuple(wst[i] for i in idx),
        widen_offsets=tuple(woff[i] for i in idx),
        key_stations=np.array([s for s, _ in merged], dtype=np.float64),
        key_features=tuple(f for _, f in merged),
    )


def side_slopes(se_stations: F, se_left: F, se_right: F, stations: F) -> tuple[F, F]:
    """Left and right cross slopes (percent) at internal stations: linear by true distance
    between rows, the first row's before it and the last row's after it.
    """
    return (np.interp(stations, se_stations, se_left), np.interp(stations, se_stations, se_right))


def line_slope(own: F, inner: F | None, steepen: bool, rollover: float | None) -> F:
    """A line's slope after its rules, from its own slope and the inner line's (percent).

    ``steepen``: where the inner slope is algebraically smaller, take it.
    ``rollover``: then move the slope toward the inner one until they differ
    by at most ``rollover``.
    """
    s = own
    if inner is None:
        return s
    if steepen:
        s = np.minimum(s, inner)
    if rollover is not None:
        s = inner + np.clip(s - inner, -rollover, rollover)
    return s


def section(plan: SectionPlan, stations: F, centre: F | None) -> Section:
    """Offset, slope and elevation of every line at every internal station.

    Parameters
    ----------
    plan : SectionPlan
        From :func:`plan_sections`.
    stations : ndarray
        Internal stations, shape (n,).
    centre : ndarray or None
        The centreline elevation at each station (job units), or None.

    Returns
    -------
    Section
        Arrays of shape (n, lines): z = z(from) + (|offset| - |offset of from|) x slope / 100,
        or z(from) + dz; ``from`` defaults to the centreline (offset 0, elevation ``centre``).
    """
    n, m = stations.size, len(plan.lines)
    offset = np.empty((n, m))
    slope = np.full((n, m), np.nan)
    elev = None if centre is None else np.empty((n, m))
    left = right = np.zeros(n)
    if plan.has_table:
        left, right = side_slopes(plan.se_stations, plan.se_left, plan.se_right, stations)
    by_code = {ol.code: j for j, ol in enumerate(plan.lines)}
    done = np.zeros(m, dtype=bool)
    for j, ol in enumerate(plan.lines):  # one step per line, each over every station
        offset[:, j] = _line_offsets(stations, plan.widen_stations[j], plan.widen_offsets[j], ol.offset)

    def resolve(j: int) -> None:
        """Slope and elevation of line ``j`` after those of the line it is measured from."""
        if done[j]:
            return
        ol = plan.lines[j]
        inner_slope: F | None = None
        z_from = centre
        off_from: F | float = 0.0
        if ol.from_code is not None:
            i = by_code[ol.from_code]
            resolve(i)
            col = slope[:, i]
            inner_slope = None if np.all(np.isnan(col)) else col
            z_from = None if elev is None else elev[:, i]
            off_from = np.abs(offset[:, i])
        centreline = plan.lines[j].offset == 0.0 and plan.widen_stations[j] is None
        if ol.superelevation:
            own: F | None = np.where(offset[:, j] < 0, left, right)
        elif ol.cross_slope is not None:
            own = np.full(n, ol.cross_slope)
        else:
            own = None
        if own is not None and not centreline:
            s = line_slope(own, inner_slope, ol.steepen_with_inner, ol.rollover)
            slope[:, j] = s
            if elev is not None and z_from is not None:
                elev[:, j] = z_from + s / 100.0 * (np.abs(offset[:, j]) - off_from)
        elif elev is not None and z_from is not None:
            elev[:, j] = z_from + (ol.dz if ol.dz is not None else 0.0)
        done[j] = True

    for j in range(m):
        resolve(j)
    return Section(offset, slope, elev)


@dataclass(frozen=True)
class DerivedRow:
    """A superelevation row derived from a design file: internal station, slopes, its source."""

    station: float
    left: float
    right: float
    where: str


def rows_from_design_file(periods: Sequence[SuperelevationPeriod], normal_crown: float) -> list[DerivedRow]:
    """The rows of the job-file contract from ``<Superelevation>`` elements.

    For each element, with outside and inside, n = ``normal_crown`` and
    e = ``FullSuperelev``: BeginRunoutSta (-n, -n); BeginRunoffSta outside 0,
    inside -n; reverse crown (outside +n, inside -n) where the outside,
    rising linearly from 0 to +e, reaches +n; FullSuperSta outside +e, inside
    -e; RunoffSta the same; reverse crown on the way out; StartofRunoutSta
    outside 0, inside -n; EndofRunoutSta (-n, -n).  Rows that coincide with
    the same slopes are one row.

    Raises
    ------
    JobFileError
        A missing station, stations out of order, or e below n, naming the element.
    """
    n = normal_crown
    out: list[DerivedRow] = []
    for p in periods:
        names = ("BeginRunoutSta", "BeginRunoffSta", "FullSuperSta", "RunoffSta", "StartofRunoutSta",
                 "EndofRunoutSta")
        sts = (p.begin_runout, p.begin_runoff, p.full_super, p.runoff, p.start_of_runout, p.end_of_runout)
        for name, v in zip(names, sts):
            if v is None:
                raise JobFileError(f"{p.where}: {name} missing; every transition station is needed to stake it")
        if p.outside_left is None:
            raise JobFileError(f"{p.where}: which side is the outside is not known (see derive_rows)")
        if p.full_superelevation is None:
            raise JobFileError(f"{p.where}: FullSuperelev missing")
        b0, b1, f0, f1, s0, s1 = (float(v) for v in sts)  # type: ignore[arg-type]
        e = abs(p.full_superelevation)
        if not (b0 <= b1 < f0 <= f1 < s0 <= s1):
            raise JobFileError(f"{p.where}: stations out of order ({', '.join(f'{a} {b}' for a, b in zip(names, sts))})")
        if e < n:
            raise JobFileError(f"{p.where}: FullSuperelev {e:g} % is below the normal crown {n:g} %; "
                               "the transition contradicts itself")

        at = [(b0, -n, -n), (b1, 0.0, -n)]
        if e > n:
            at.append((b1 + (f0 - b1) * n / e, n, -n))
        at += [(f0, e, -e), (f1, e, -e)]
        if e > n:
            at.append((f1 + (s0 - f1) * (e - n) / e, n, -n))
        at += [(s0, 0.0, -n), (s1, -n, -n)]
        rows = [DerivedRow(st, (o if p.outside_left else i) + 0.0, (i if p.outside_left else o) + 0.0, p.where)
                for st, o, i in at]
        for r in rows:
            if out and abs(r.station - out[-1].station) <= ORDER_TOLERANCE:
                if (r.left, r.right) == (out[-1].left, out[-1].right):
                    continue
                raise JobFileError(f"{r.where}: two different cross slopes at internal station {r.station:.4f}")
            if out and r.station < out[-1].station:
                raise JobFileError(f"{r.where}: overlaps the transition before it ({out[-1].where})")
            out.append(r)
    return out


def derive_rows(source: SuperelevationFile, alignment: Alignment) -> list[DerivedRow]:
    """The rows of a design file's ``<Superelevation>`` elements, each element's outside taken
    from the turn of the alignment's element at its ``FullSuperSta`` where the reader left it open.

    Raises
    ------
    JobFileError
        ``FullSuperSta`` on a tangent (no curve, so no outside), or as :func:`rows_from_design_file`.
    """
    periods = []
    for p in source.periods:
        if p.outside_left is None and p.full_super is not None:
            el = alignment.elements[int(alignment.element_at(p.full_super))]
            if not el.turn:
                raise JobFileError(f"{p.where}: FullSuperSta {p.full_super:.4f} lies on a tangent; the outside of "
                                   "the curve cannot be told")
            p = replace(p, outside_left=el.turn > 0)  # a curve turning right has its centre on the right
        periods.append(p)
    return rows_from_design_file(periods, source.normal_crown)
