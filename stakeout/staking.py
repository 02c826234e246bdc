"""Which stations and offsets to stake, and how the points are numbered.

The plan is every whole multiple of the interval on the alignment, every
key point (POB, AP, PC, PCC, PRC, PT, POE) and every extra station, each on
every offset line.  Points are numbered from ``first_point`` by station,
then by offset from left to right.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace
from functools import cached_property

import numpy as np
from numpy.typing import NDArray

from .alignment import FEATURE_ORDER, STATION_TOLERANCE, Alignment
from .crosssection import SectionPlan, section
from .errors import JobFileError
from .job import Staking
from .limits import check_point_numbers
from .ondemand import OnDemand
from .numbers import round_to
from .profile import Profile
from .stations import Stationing

__all__ = ["StakePoints", "Layout", "MoreStakes", "with_stakes", "join_stakes",
           "plan_stakes", "check_offsets", "MAX_MITER_RATIO", "MERGE_TOLERANCE", "COORDINATE_DECIMALS",
           "MAX_POINTS"]

#: Longest point id (prefix + number), as for every id the job file gives.
MAX_ID_CHARS = 20

#: Most points one job may stake (memory stays under a few GB).
MAX_POINTS = 10_000_000

#: Decimals of stake coordinates, as written to the point file.
COORDINATE_DECIMALS = 4

#: Stations closer than this (job units) are staked once; a key point wins.
#: It lies below the 4-decimal resolution of the CSV files.
MERGE_TOLERANCE = 5e-5


#: Stakes placed at once (the alignment's evaluation temporaries are several arrays of this size).
_EVALUATE_BLOCK = 1 << 18


class EachStake(OnDemand):
    """A text for each of ``n`` stakes, made by ``make(i)`` when asked for: a column of ids, labels
    or codes without a million strings when only some rows are shown.
    """

    def __init__(self, n: int, make: Callable[[int], str]) -> None:
        self.n = n
        self.make = make

    def __len__(self) -> int:
        return self.n

    def one(self, i: int) -> str:
        """The text of stake ``i``."""
        return self.make(i)


@dataclass(frozen=True)
class Layout:
    """Where the stakes beyond the plain grid sit in the table (:func:`with_stakes`).

    Every per-point index is into the grid's own tuple followed by the
    ``more_`` one: ``station_of`` into ``stations`` then ``more_stations``,
    ``code_of`` into ``codes`` then ``more_codes``, ``feature_of`` into
    ``features`` then ``more_features`` (a grid point takes its station's).
    ``grid`` is the table index of each grid point (station by station,
    offsets left to right).  ``description_of`` is -1 where the point file's
    description is made from the stake, else an index into ``descriptions``.
    The last ``len(names)`` points carry the ids the job gave them; every
    point before them is numbered ``first_point`` upwards in table order.
    """

    station_of: NDArray[np.int64]
    more_stations: NDArray[np.float64]
    code_of: NDArray[np.int64]
    more_codes: tuple[str, ...]
    feature_of: NDArray[np.int64]
    more_features: tuple[str, ...]
    grid: NDArray[np.int64]
    #: Table index of each added stake, in the order given to :func:`with_stakes`.
    added: NDArray[np.int64]
    description_of: NDArray[np.int64]
    descriptions: tuple[str, ...]
    names: tuple[str, ...] = ()


@dataclass(frozen=True)
class StakePoints:
    """Every staked point in point-number order.

    The plan is a grid: every staked station on every offset line, station by
    station and offsets left to right within a station.  Per-station data
    (``stations``, internal stations, and ``features``) and per-offset data
    (``offsets``, ``codes``) describe that grid.  Stakes beyond it (catch and
    reference stakes among their station's, listed points after the grid)
    are placed by a :class:`Layout`; without one, per-point arrays are laid
    out as ``station_index * len(offsets) + offset_index``.  The stations
    printed come from ``stationing``.  The per-point text lists are built on
    first use only.
    """

    stations: NDArray[np.float64]
    features: tuple[str, ...]
    offsets: NDArray[np.float64]
    codes: tuple[str, ...]
    first_point: int
    prefix: str
    stationing: Stationing
    northing: NDArray[np.float64]
    easting: NDArray[np.float64]
    azimuth: NDArray[np.float64]
    elevation: NDArray[np.float64] | None  # design elevation of each point (NaN: none), None when the job gives none
    #: Offset of each point where some line is widened or the table holds more than the grid
    #: (None: ``offsets`` tiled).
    point_offsets: NDArray[np.float64] | None = None
    #: Cross slope applied to each point (percent; NaN: none), None without design elevations.
    slope: NDArray[np.float64] | None = None
    #: Stakes beyond the grid (None: the plain grid).
    layout: Layout | None = None

    def __len__(self) -> int:
        return int(self.northing.size)

    @property
    def numbered(self) -> int:
        """How many points are numbered (every point but those the job named)."""
        return len(self) - (len(self.layout.names) if self.layout is not None else 0)

    @property
    def grid_size(self) -> int:
        """Points of the grid (staked stations x offset lines)."""
        return int(self.stations.size * self.offsets.size)

    @cached_property
    def grid_index(self) -> NDArray[np.int64]:
        """Table index of each grid point (station by station, offsets left to right)."""
        if self.layout is None:
            return np.arange(len(self), dtype=np.int64)
        return self.layout.grid

    @cached_property
    def number(self) -> NDArray[np.int64]:
        """Point numbers (without the prefix) of the numbered points (:attr:`numbered`)."""
        return self.first_point + np.arange(self.numbered, dtype=np.int64)

    @cached_property
    def station_of(self) -> NDArray[np.int64]:
        """Each point's station: an index into :attr:`all_stations`."""
        if self.layout is not None:
            return self.layout.station_of
        return np.repeat(np.arange(self.stations.size, dtype=np.int64), self.offsets.size)

    @cached_property
    def all_stations(self) -> NDArray[np.float64]:
        """Internal stations of the grid, then of the stakes off them (listed points)."""
        if self.layout is None:
            return self.stations
        return np.concatenate([self.stations, self.layout.more_stations])

    @cached_property
    def station(self) -> NDArray[np.float64]:
        """Internal station of each point."""
        if self.layout is not None:
            return self.all_stations[self.layout.station_of]
        return np.repeat(self.stations, self.offsets.size)

    @cached_property
    def station_values(self) -> NDArray[np.float64]:
        """The station in force at each staked station of the grid (one per station)."""
        return self.stationing.station(self.stations)

    @cached_property
    def all_station_values(self) -> NDArray[np.float64]:
        """The station in force at each of :attr:`all_stations`."""
        return self.stationing.station(self.all_stations)

    @cached_property
    def regions(self) -> NDArray[np.int64]:
        """Stationing region of each staked station of the grid (one per station)."""
        return self.stationing.region(self.stations)

    @cached_property
    def all_regions(self) -> NDArray[np.int64]:
        """Stationing region of each of :attr:`all_stations`."""
        return self.stationing.region(self.all_stations)

    @cached_property
    def offset(self) -> NDArray[np.float64]:
        """Offset of each point (negative left)."""
        if self.point_offsets is not None:
            return self.point_offsets
        return np.tile(self.offsets, self.stations.size)

    @cached_property
    def point(self) -> list[str]:
        """Point ids: prefix + number, then the ids the job gave."""
        named = list(self.layout.names) if self.layout is not None else []
        return [f"{self.prefix}{k}" for k in self.number.tolist()] + named

    def code_at(self, i: int) -> str:
        """The code of point ``i`` (as :attr:`code`, without building every one)."""
        if self.layout is not None:
            return self.all_codes[int(self.layout.code_of[i])]
        return self.codes[i % max(1, self.offsets.size)]

    def feature_at(self, i: int) -> str:
        """The key-point features of point ``i`` (as :attr:`feature`, without building every one)."""
        if self.layout is not None:
            return self.all_features[int(self.layout.feature_of[i])]
        return self.features[i // max(1, self.offsets.size)]

    def label_at(self, i: int) -> str:
        """The station label of point ``i`` (as :attr:`station_label`, without building every one)."""
        if self.layout is not None:
            return self.all_labels[int(self.layout.station_of[i])]
        return self.labels[i // max(1, self.offsets.size)]

    def point_id(self, i: int) -> str:
        """The id of point ``i`` (without building every id)."""
        if i < self.numbered:
            return f"{self.prefix}{self.first_point + i}"
        assert self.layout is not None
        return self.layout.names[i - self.numbered]

    @cached_property
    def labels(self) -> list[str]:
        """Station labels, one per station of the grid."""
        return self.stationing.labels(self.stations)

    @cached_property
    def all_labels(self) -> list[str]:
        """Station labels of :attr:`all_stations`."""
        if self.layout is None:
            return self.labels
        return self.labels + self.stationing.labels(self.layout.more_stations)

    @cached_property
    def station_label(self) -> list[str]:
        """Station label of each point."""
        if self.layout is not None:
            labels = self.all_labels
            return [labels[i] for i in self.layout.station_of.tolist()]
        m = self.offsets.size
        return [lab for lab in self.labels for _ in range(m)]

    @cached_property
    def all_codes(self) -> tuple[str, ...]:
        """The offset lines' codes, then the codes of stakes beyond the grid."""
        return self.codes + (self.layout.more_codes if self.layout is not None else ())

    @cached_property
    def code_of(self) -> NDArray[np.int64]:
        """Each point's code: an index into :attr:`all_codes`."""
        if self.layout is not None:
            return self.layout.code_of
        return np.tile(np.arange(self.offsets.size, dtype=np.int64), self.stations.size)

    @cached_property
    def code(self) -> list[str]:
        """Code of each point."""
        if self.layout is not None:
            codes = self.all_codes
            return [codes[i] for i in self.layout.code_of.tolist()]
        return list(self.codes) * self.stations.size

    @cached_property
    def all_features(self) -> tuple[str, ...]:
        """The grid stations' features, then the features of stakes beyond the grid."""
        return self.features + (self.layout.more_features if self.layout is not None else ())

    @cached_property
    def feature_of(self) -> NDArray[np.int64]:
        """Each point's features: an index into :attr:`all_features`."""
        if self.layout is not None:
            return self.layout.feature_of
        return np.repeat(np.arange(self.stations.size, dtype=np.int64), self.offsets.size)

    @cached_property
    def feature(self) -> list[str]:
        """Key-point features of each point (empty for ordinary stations)."""
        if self.layout is not None:
            feats = self.all_features
            return [feats[i] for i in self.layout.feature_of.tolist()]
        m = self.offsets.size
        return [f for f in self.features for _ in range(m)]


def _stations(alignment: Alignment, staking: Staking, stationing: Stationing,
              more_keys: tuple[NDArray[np.float64], tuple[str, ...]] | None = None
              ) -> tuple[NDArray[np.float64], list[str]]:
    lo, hi = alignment.start_station, alignment.end_station
    step = staking.interval
    count = (hi - lo) / step * len(staking.offsets)
    if count > MAX_POINTS:
        raise JobFileError(
            f"staking.interval = {step!r}: would stake about {count:,.0f} points on {hi - lo:.1f} units of "
            f"alignment; the limit is {MAX_POINTS:,} (split the job or widen the interval)"
        )
    if stationing.equations:
        regular = stationing.interval_stations(step)
    else:
        k0 = int(np.ceil(lo / step - 1e-9))
        k1 = int(np.floor(hi / step + 1e-9))
        regular = np.arange(k0, k1 + 1, dtype=np.float64) * step
        regular = regular[(regular >= lo - STATION_TOLERANCE) & (regular <= hi + STATION_TOLERANCE)]
    extra_values = []
    for ref in staking.extra_stations:
        value = stationing.to_internal(ref)
        if not lo - STATION_TOLERANCE <= value <= hi + STATION_TOLERANCE:
            raise JobFileError(f"{ref.where} = {ref.value!r}: off the alignment, which runs from "
                               f"{stationing.label(lo)} to {stationing.label(hi)}")
        extra_values.append(value)
    extra = np.array(extra_values, dtype=np.float64)
    keys = np.array([kp.station for kp in alignment.key_points] + [eq.internal for eq in stationing.equations],
                    dtype=np.float64)
    key_feats = [" ".join(kp.features) for kp in alignment.key_points] + ["EQ"] * len(stationing.equations)
    if more_keys is not None and more_keys[0].size:
        on = (more_keys[0] >= lo - STATION_TOLERANCE) & (more_keys[0] <= hi + STATION_TOLERANCE)
        keys = np.concatenate([keys, more_keys[0][on]])
        key_feats += [f for f, keep in zip(more_keys[1], on.tolist()) if keep]
    # key points first so that a merge keeps the key point's exact station
    values = np.concatenate([keys, regular, extra])
    feats = key_feats + [""] * (regular.size + extra.size)
    order = np.argsort(values, kind="stable")
    values = values[order]
    rank = np.empty(order.size, dtype=np.int64)
    rank[order] = np.arange(order.size)
    new = np.ones(values.size, dtype=bool)
    new[1:] = np.diff(values) > MERGE_TOLERANCE
    group = np.cumsum(new) - 1
    # within a group, keep the first key point if any, else the first value
    is_key = np.zeros(values.size, dtype=bool)
    is_key[rank[: keys.size]] = True
    big = np.iinfo(np.int64).max
    pick = np.full(group[-1] + 1, big, dtype=np.int64)
    np.minimum.at(pick, group[is_key], np.where(is_key)[0])
    firsts = np.where(new)[0]
    pick = np.where(pick == big, firsts, pick)
    sorted_feats = [feats[i] for i in order.tolist()]
    out_feats = [sorted_feats[i] for i in pick.tolist()]
    # key points that coincide (a PVC at a PC) are one stake carrying every feature
    counts = np.bincount(group[is_key], minlength=pick.size)
    for g in np.nonzero(counts > 1)[0].tolist():  # one step per coinciding group of key points
        words = {w for i in np.nonzero(is_key & (group == g))[0].tolist() for w in sorted_feats[i].split()}
        out_feats[g] = " ".join(f for f in FEATURE_ORDER if f in words)
    return values[pick], out_feats


#: Longest miter at an angle point, as a multiple of the offset (a deflection of about 168.5 degrees).
MAX_MITER_RATIO = 10.0


def _offset_key(staking: Staking, ol_offset: float) -> str:
    code = next(ol.code for ol in staking.offsets if ol.offset == ol_offset)
    return f"staking.offsets (offset = {ol_offset!r}, code = {code!r})"


def check_offsets(alignment: Alignment, staking: Staking) -> None:
    """Refuse offset lines that cannot be staked faithfully.

    An offset on the inside of a curve at or past the smallest radius the
    element reaches would put stakes through (or on) the centre, running
    backwards; at an angle point turning back on itself the miter stake
    would lie far from the alignment (more than :data:`MAX_MITER_RATIO`
    times the offset).

    Raises
    ------
    JobFileError
        Naming the offset line, the element or PI, and its radius or deflection.
    """
    for i, el in enumerate(alignment.elements, start=1):  # one step per element
        if not el.turn:
            continue
        radii = [r for r in (el.radius_start, el.radius_end) if r is not None]
        r_min = min(radii)
        for ol in staking.offsets:
            for off in ol.all_offsets():  # a widened line: each of its rows' offsets
                if off * el.turn >= r_min:  # positive: on the side of the centre
                    raise JobFileError(
                        f"{_offset_key(staking, ol.offset)}: lies {abs(off):g} inside element {i} ({el.kind}, "
                        f"smallest radius {r_min:.4f}), at or past its centre; no stake can follow the curve there")
    worst = max((abs(off) for ol in staking.offsets for off in ol.all_offsets()), default=0.0)
    if worst == 0.0:
        return
    for kp in alignment.key_points:
        if "AP" not in kp.features:
            continue
        i = int(np.searchsorted([el.start for el in alignment.elements], kp.station - STATION_TOLERANCE,
                                side="right")) - 1
        back, ahead = alignment.elements[i].end_azimuth, alignment.elements[i + 1].start_azimuth
        half = np.radians(((ahead - back + 180.0) % 360.0 - 180.0) / 2.0)
        ratio = 1.0 / max(np.cos(half), 1e-300)
        if ratio > MAX_MITER_RATIO:
            raise JobFileError(
                f"angle point at {kp.northing:.4f} N {kp.easting:.4f} E: deflects {abs(np.degrees(2 * half)):.4f} "
                f"degrees, so the offset stakes would sit {ratio:.1f} times their offset from it (limit "
                f"{MAX_MITER_RATIO:g}); add a curve at this PI")


def plan_stakes(alignment: Alignment, staking: Staking, stationing: Stationing,
                profile: Profile | None = None, sections: SectionPlan | None = None) -> StakePoints:
    """Compute every stake point of a job.

    Parameters
    ----------
    alignment : Alignment
        The built alignment.
    staking : Staking
        The job's ``[staking]`` table.
    stationing : Stationing
        The alignment's stationing: reads extra stations, labels stakes.
    profile : Profile, optional
        The vertical alignment: design elevations (plus each offset line's
        ``dz`` or ``cross_slope``), and with ``staking.profile_points``
        (default true) its PVI, PVC, PVT, HP and LP staked too.
    sections : SectionPlan, optional
        The cross-section (:mod:`stakeout.crosssection`): superelevation,
        template lines and widening; its ``SE`` and ``WC`` stations staked
        as key points.  ``staking.offsets`` must be in its line order.

    Raises
    ------
    JobFileError
        A stake beyond the profile, naming its station.
    """
    more = None
    if profile is not None and staking.profile_points is not False:
        more = profile.feature_points()
    if sections is not None and sections.key_stations.size:
        more = (sections.key_stations, sections.key_features) if more is None else (
            np.concatenate([more[0], sections.key_stations]), more[1] + sections.key_features)
    stations, feats = _stations(alignment, staking, stationing, more)
    count = stations.size * len(staking.offsets)
    if count > MAX_POINTS:
        raise JobFileError(f"staking: the job would stake {count:,} points (interval stations, key points and "
                           f"extra stations on every offset line); the limit is {MAX_POINTS:,}")
    check_point_numbers(staking.first_point, count)
    last_id = f"{staking.point_prefix}{staking.first_point + count - 1}"
    if len(last_id) > MAX_ID_CHARS:
        raise JobFileError(
            f"staking.point_prefix = {staking.point_prefix!r}: with first_point = {staking.first_point} the last "
            f"point id {last_id!r} has {len(last_id)} characters; ids may have at most {MAX_ID_CHARS} "
            "(shorten the prefix or lower staking.first_point)")
    offs = np.array([ol.offset for ol in staking.offsets], dtype=np.float64)
    check_offsets(alignment, staking)
    centre: NDArray[np.float64] | None = None
    if profile is not None:
        off = ~profile.covers(stations)
        if np.any(off):
            first = float(stations[off][0])
            raise JobFileError(
                f"profile: the stake at {stationing.label(first)} lies beyond the profile, which runs from "
                f"{stationing.label(profile.start)} to {stationing.label(profile.end)}; extend the profile")
        centre = profile.elevation(stations)
    elif staking.elevation is not None:
        centre = np.full(stations.size, staking.elevation)
    # the cross-section once: offsets of widened lines, each stake's slope and elevation
    sec = section(sections, stations, centre) if sections is not None else None
    st = np.repeat(stations, offs.size)
    widened = sec is not None and sections is not None and sections.widened
    of = sec.offset.ravel() if widened and sec is not None else np.tile(offs, stations.size)
    # Round once to the point file's decimals: every output (points, setout,
    # plan, check) then works from exactly the coordinates the crew loads.
    # A block of points at a time: each point is its own, and the evaluation's temporaries stay bounded.
    n, e, az = (np.empty(st.size) for _ in range(3))
    for a in range(0, st.size, _EVALUATE_BLOCK):
        b = min(st.size, a + _EVALUATE_BLOCK)
        bn, be, baz = alignment.evaluate(st[a:b], of[a:b])
        n[a:b], e[a:b], az[a:b] = round_to(bn, COORDINATE_DECIMALS), round_to(be, COORDINATE_DECIMALS), baz
    elev = slope = None
    if sec is not None and sec.elevation is not None:
        elev, slope = sec.elevation.ravel(), sec.slope.ravel()
    elif centre is not None:
        drop = np.array([ol.elevation_change() for ol in staking.offsets], dtype=np.float64)
        elev = np.repeat(centre, offs.size) + np.tile(drop, stations.size)
    return StakePoints(
        stations=stations,
        features=tuple(feats),
        offsets=offs,
        codes=tuple(ol.code for ol in staking.offsets),
        first_point=staking.first_point,
        prefix=staking.point_prefix,
        stationing=stationing,
        northing=n,
        easting=e,
        azimuth=az,
        elevation=elev,
        point_offsets=of if widened else None,
        slope=slope,
    )


@dataclass(frozen=True)
class MoreStakes:
    """Stakes to add to a grid plan (:func:`with_stakes`).

    ``after`` is the grid station whose stakes each one follows (an index into
    the plan's stations), or -1 for a stake after the whole grid (a listed
    point).  Stakes following the same station keep the order given; after
    the grid the numbered ones come first, then those with a ``name`` (an id
    the job gave), each in the order given.  ``elevation`` is NaN where a
    stake has none; ``description`` None where the point file's description
    is made from the stake, as for every grid stake.
    """

    after: NDArray[np.int64]
    station: NDArray[np.float64]
    offset: NDArray[np.float64]
    northing: NDArray[np.float64]
    easting: NDArray[np.float64]
    azimuth: NDArray[np.float64]
    elevation: NDArray[np.float64]
    code: tuple[str, ...]
    feature: tuple[str, ...]
    description: tuple[str | None, ...]
    name: tuple[str | None, ...]

    def __len__(self) -> int:
        return int(self.after.size)


def _check_names(plan: StakePoints, names: tuple[str, ...], numbered: int) -> None:
    """Refuse an id the job gives (a listed point's) that is also a numbered stake's, or given twice."""
    seen: set[str] = set()
    for name in names:
        rest = name[len(plan.prefix):] if name.startswith(plan.prefix) else ""
        if (rest.isascii() and rest.isdigit() and str(int(rest)) == rest
                and plan.first_point <= int(rest) < plan.first_point + numbered):
            raise JobFileError(f"staking.points: the id {name!r} is also the number of one of the alignment's "
                               f"stakes ({plan.prefix}{plan.first_point} to {plan.prefix}{plan.first_point + numbered - 1}); "
                               "one id names one point: give the row another id, or leave it out to number the row")
        if name in seen:
            raise JobFileError(f"staking.points: the id {name!r} is given twice; one id names one point")
        seen.add(name)


def join_stakes(parts: list[MoreStakes]) -> MoreStakes:
    """Several sets of stakes to add as one, in the order given."""
    if len(parts) == 1:
        return parts[0]
    return MoreStakes(
        after=np.concatenate([p.after for p in parts]), station=np.concatenate([p.station for p in parts]),
        offset=np.concatenate([p.offset for p in parts]), northing=np.concatenate([p.northing for p in parts]),
        easting=np.concatenate([p.easting for p in parts]), azimuth=np.concatenate([p.azimuth for p in parts]),
        elevation=np.concatenate([p.elevation for p in parts]), code=sum((p.code for p in parts), ()),
        feature=sum((p.feature for p in parts), ()), description=sum((p.description for p in parts), ()),
        name=sum((p.name for p in parts), ()))


def _vocabulary(words: tuple[str, ...], base: int) -> tuple[NDArray[np.int64], tuple[str, ...]]:
    """Each word's index (from ``base``) into the distinct words in first-seen order, and those words."""
    distinct = tuple(dict.fromkeys(words))
    at = {w: base + i for i, w in enumerate(distinct)}
    return np.array([at[w] for w in words], dtype=np.int64), distinct


def with_stakes(plan: StakePoints, more: MoreStakes) -> StakePoints:
    """The stake table of ``plan`` with ``more`` stakes in it (see :class:`MoreStakes`).

    Stakes following a station are numbered after that station's grid
    stakes, so every later point's number moves up; listed points follow
    the grid.  ``plan`` must be a plain grid (no layout yet).

    Raises
    ------
    JobFileError
        The numbers would pass the point-number limits or the id length.
    """
    assert plan.layout is None
    if not len(more):
        return plan
    k, m = plan.stations.size, plan.offsets.size
    g, j = plan.grid_size, len(more)
    tail = more.after < 0
    named = np.array([x is not None for x in more.name], dtype=bool)
    group = np.concatenate([np.repeat(np.arange(k, dtype=np.int64), m),
                            np.where(tail, k + named.astype(np.int64), more.after)])
    added = np.concatenate([np.zeros(g, dtype=np.int8), np.ones(j, dtype=np.int8)])
    order = np.lexsort((added, group))  # stable: stakes of one group keep the order given
    rank = np.empty_like(order)
    rank[order] = np.arange(order.size, dtype=np.int64)

    def merged(grid: NDArray[np.float64], extra: NDArray[np.float64]) -> NDArray[np.float64]:
        return np.concatenate([grid, extra])[order]

    n_tail = int(tail.sum())
    more_station_of = np.where(tail, k + np.cumsum(tail) - 1, more.after)
    station_of = np.concatenate([np.repeat(np.arange(k, dtype=np.int64), m), more_station_of])[order]
    code_idx, more_codes = _vocabulary(more.code, m)
    code_of = np.concatenate([np.tile(np.arange(m, dtype=np.int64), k), code_idx])[order]
    feat_idx, more_features = _vocabulary(more.feature, k)
    feature_of = np.concatenate([np.repeat(np.arange(k, dtype=np.int64), m), feat_idx])[order]
    given = [t for t in more.description if t is not None]
    desc_vocab = tuple(dict.fromkeys(given))
    at = {t: i for i, t in enumerate(desc_vocab)}
    desc_idx = np.array([-1 if t is None else at[t] for t in more.description], dtype=np.int64)
    description_of = np.concatenate([np.full(g, -1, dtype=np.int64), desc_idx])[order]
    names = tuple(x for x in (more.name[i - g] for i in order[order >= g].tolist()) if x is not None)
    numbered = g + j - len(names)
    check_point_numbers(plan.first_point, numbered)
    last_id = f"{plan.prefix}{plan.first_point + numbered - 1}"
    if numbered and len(last_id) > MAX_ID_CHARS:
        raise JobFileError(
            f"staking.point_prefix = {plan.prefix!r}: with first_point = {plan.first_point} the last point id "
            f"{last_id!r} has {len(last_id)} characters; ids may have at most {MAX_ID_CHARS} (shorten the prefix "
            "or lower staking.first_point)")
    _check_names(plan, names, numbered)
    elevation = None
    if plan.elevation is not None or not np.isnan(more.elevation).all():
        base = plan.elevation if plan.elevation is not None else np.full(g, np.nan)
        elevation = merged(base, more.elevation)
    slope = None if plan.slope is None else merged(plan.slope, np.full(j, np.nan))
    # rounded once to the point file's decimals, as the grid's are (plan_stakes)
    more = replace(more, northing=round_to(more.northing, COORDINATE_DECIMALS),
                   easting=round_to(more.easting, COORDINATE_DECIMALS))
    layout = Layout(station_of=station_of, more_stations=more.station[tail].astype(np.float64),
                    code_of=code_of, more_codes=more_codes, feature_of=feature_of, more_features=more_features,
                    grid=rank[:g], added=rank[g:], description_of=description_of, descriptions=desc_vocab, names=names)
    assert layout.more_stations.size == n_tail
    return replace(plan, northing=merged(plan.northing, more.northing),
                   easting=merged(plan.easting, more.easting), azimuth=merged(plan.azimuth, more.azimuth),
                   elevation=elevation, point_offsets=merged(plan.offset, more.offset), slope=slope, layout=layout)
