"""Which stations and offsets to stake, and how the points are numbered.

The plan is every whole multiple of the interval on the alignment, every
key point (POB, AP, PC, PCC, PRC, PT, POE) and every extra station, each on
every offset line.  Points are numbered from ``first_point`` by station,
then by offset from left to right.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .alignment import STATION_TOLERANCE, Alignment
from .errors import JobFileError
from .jobfile import Staking
from .stations import format_station

__all__ = ["StakePoints", "plan_stakes", "MERGE_TOLERANCE", "COORDINATE_DECIMALS"]

#: Decimals of stake coordinates, as written to the point file.
COORDINATE_DECIMALS = 4

#: Stations closer than this (job units) are staked once; a key point wins.
#: It lies below the 4-decimal resolution of the CSV files.
MERGE_TOLERANCE = 5e-5


@dataclass(frozen=True)
class StakePoints:
    """Every staked point, flat arrays in point-number order.

    ``station_index`` refers each point to ``stations``; ``features`` holds
    one string per station (empty for ordinary stations).
    """

    stations: NDArray[np.float64]
    features: tuple[str, ...]
    point: list[str]
    number: NDArray[np.int64]
    station: NDArray[np.float64]
    station_label: list[str]
    offset: NDArray[np.float64]
    code: list[str]
    feature: list[str]
    northing: NDArray[np.float64]
    easting: NDArray[np.float64]
    azimuth: NDArray[np.float64]
    elevation: float | None

    def __len__(self) -> int:
        return int(self.number.size)


def _stations(alignment: Alignment, staking: Staking) -> tuple[NDArray[np.float64], list[str]]:
    lo, hi = alignment.start_station, alignment.end_station
    step = staking.interval
    k0 = int(np.ceil(lo / step - 1e-9))
    k1 = int(np.floor(hi / step + 1e-9))
    regular = np.arange(k0, k1 + 1, dtype=np.float64) * step
    regular = regular[(regular >= lo - STATION_TOLERANCE) & (regular <= hi + STATION_TOLERANCE)]
    for value, where in staking.extra_stations:
        if not lo - STATION_TOLERANCE <= value <= hi + STATION_TOLERANCE:
            raise JobFileError(f"{where} = {value!r}: off the alignment, which runs from {lo:.4f} to {hi:.4f}")
    extra = np.array([v for v, _ in staking.extra_stations], dtype=np.float64)
    keys = np.array([kp.station for kp in alignment.key_points], dtype=np.float64)
    key_feats = [" ".join(kp.features) for kp in alignment.key_points]
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
    return values[pick], out_feats


def plan_stakes(alignment: Alignment, staking: Staking, station_length: int, station_decimals: int) -> StakePoints:
    """Compute every stake point of a job.

    Parameters
    ----------
    alignment : Alignment
        The built alignment.
    staking : Staking
        The job's ``[staking]`` table.
    station_length : int
        Units per full station, for labels.
    station_decimals : int
        Decimals in station labels.
    """
    stations, feats = _stations(alignment, staking)
    offs = np.array([ol.offset for ol in staking.offsets], dtype=np.float64)
    codes = [ol.code for ol in staking.offsets]
    m = offs.size
    st = np.repeat(stations, m)
    of = np.tile(offs, stations.size)
    n, e, az = alignment.evaluate(st, of)
    # Round once to the point file's decimals: every output (points, setout,
    # plan, check) then works from exactly the coordinates the crew loads.
    n = np.round(n, COORDINATE_DECIMALS) + 0.0
    e = np.round(e, COORDINATE_DECIMALS) + 0.0
    number = staking.first_point + np.arange(st.size, dtype=np.int64)
    prefix = staking.point_prefix
    labels = format_station(stations, station_length, station_decimals)
    assert isinstance(labels, list)
    return StakePoints(
        stations=stations,
        features=tuple(feats),
        point=[f"{prefix}{k}" for k in number.tolist()],
        number=number,
        station=st,
        station_label=[lab for lab in labels for _ in range(m)],
        offset=of,
        code=codes * stations.size,
        feature=[f for f in feats for _ in range(m)],
        northing=n,
        easting=e,
        azimuth=az,
        elevation=staking.elevation,
    )
