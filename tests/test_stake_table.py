"""The stake table (stakeout.staking.with_stakes): stakes added to the grid keep the contract's order.

Properties over random grids and random added stakes (hypothesis): the grid's stakes keep their
order; a stake following a station comes after that station's grid stakes and before the next
station's; listed stakes follow the grid, those with their own ids last; numbers run on without a
gap; every per-point array and index agrees with the stake it describes.  The order itself is the
job-file contract's ("numbered after the station's other stakes", "numbered after the alignment's
other stakes").
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from stakeout.staking import MoreStakes, StakePoints, with_stakes
from stakeout.stations import Stationing


def _grid(k: int, m: int) -> StakePoints:
    stations = np.arange(k, dtype=float) * 10.0
    offsets = np.linspace(-5.0, 5.0, m) if m > 1 else np.zeros(1)
    st_ = np.repeat(stations, m)
    of = np.tile(offsets, k)
    return StakePoints(stations=stations, features=tuple(f"F{i}" if i % 3 == 0 else "" for i in range(k)),
                       offsets=offsets, codes=tuple(f"L{j}" for j in range(m)), first_point=100, prefix="P",
                       stationing=Stationing.with_equations(0.0, 10.0 * k, 1000, 3, ()),
                       northing=st_ + 0.001 * of, easting=of, azimuth=np.zeros(k * m), elevation=st_ + of)


@settings(max_examples=60, deadline=None)
@given(st.integers(1, 8), st.integers(1, 4), st.data())
def test_added_stakes_keep_the_contract_order(k, m, data):
    plan = _grid(k, m)
    j = data.draw(st.integers(0, 12))
    after = np.array(data.draw(st.lists(st.integers(-1, k - 1), min_size=j, max_size=j)), dtype=np.int64)
    named = [data.draw(st.booleans()) if a < 0 else False for a in after.tolist()]
    names = tuple(f"N{i}" if nm else None for i, nm in enumerate(named))
    station = np.where(after >= 0, after * 10.0, 3.3)
    more = MoreStakes(after=after, station=station.astype(float), offset=np.full(j, 9.0),
                      northing=np.arange(j) + 5000.0, easting=np.arange(j) + 7000.0, azimuth=np.zeros(j),
                      elevation=np.where(np.arange(j) % 2 == 0, np.nan, 1.0),
                      code=tuple(f"X{i % 2}" for i in range(j)), feature=tuple("CATCH" if a >= 0 else ""
                                                                              for a in after.tolist()),
                      description=tuple(None if a >= 0 else f"row {i}" for i, a in enumerate(after.tolist())),
                      name=names)
    t = with_stakes(plan, more)
    n = k * m + j
    assert len(t) == n
    grid = t.grid_index
    assert np.all(np.diff(grid) > 0)  # the grid keeps its order
    added = t.layout.added if t.layout is not None else np.zeros(0, dtype=np.int64)
    for i, a in enumerate(after.tolist()):
        at = int(added[i])
        assert t.northing[at] == 5000.0 + i and t.code[at] == f"X{i % 2}"  # arrays follow the stake
        if a >= 0:  # after its station's grid stakes, before the next station's
            assert at > grid[a * m + m - 1] and (a == k - 1 or at < grid[(a + 1) * m])
            assert t.station[at] == a * 10.0 and t.feature[at] == "CATCH"
        else:
            assert at > grid[-1]
    # given order kept within a group; those with their own ids last, in the order given
    tail = [i for i, a in enumerate(after.tolist()) if a < 0]
    order = sorted(tail, key=lambda i: (names[i] is not None, int(added[i])))
    assert [int(added[i]) for i in order] == sorted(int(added[i]) for i in tail)
    ids = t.point
    given_ids = [x for x in names if x is not None]
    assert ids[len(ids) - len(given_ids):] == [x for x in (names[i] for i in order) if x is not None]
    assert ids[:t.numbered] == [f"P{100 + i}" for i in range(t.numbered)]  # numbers without a gap
    assert t.numbered == n - len(given_ids)
    for i in range(n):  # each index agrees with the lists
        assert t.point_id(i) == ids[i]
        assert t.all_codes[t.code_of[i]] == t.code[i]
        assert t.all_features[t.feature_of[i]] == t.feature[i]
        assert t.all_stations[t.station_of[i]] == t.station[i]
    for g in range(k * m):  # the grid's stakes keep their values
        assert t.easting[grid[g]] == plan.easting[g] and t.code[grid[g]] == plan.code[g]


def test_no_added_stakes_is_the_plain_grid():
    plan = _grid(3, 2)
    z = np.zeros(0)
    assert with_stakes(plan, MoreStakes(np.zeros(0, dtype=np.int64), z, z, z, z, z, z, (), (), (), ())) is plan
