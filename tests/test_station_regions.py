"""Issue 28 item 4 and issue 26 items 8 and 15: a station an equation skips or
a region that does not exist is refused naming the regions; many equations
are handled in n log n.  The reference is an independent region-by-region
walk written here from the job-file contract (common practice: a station
equation shifts the stationing ahead of it by ahead - back).
"""

import numpy as np
import pytest

from stakeout.errors import JobFileError
from stakeout.stations import StationRef, Stationing


def _reference_intervals(start, end, eqs, interval):
    """Whole multiples of interval in each region's own stationing (contract text), region by region."""
    bounds, shifts, shift = [start], [0.0], 0.0
    for back, ahead in eqs:
        internal = back - shift
        bounds.append(internal)
        shift = ahead - internal
        shifts.append(shift)
    bounds.append(end)
    out = []
    for r in range(len(shifts)):
        lo, hi, sh = bounds[r], bounds[r + 1], shifts[r]
        k = np.ceil((lo + sh) / interval - 1e-9)
        while k * interval - sh <= hi + 1e-6:
            v = k * interval - sh
            last = r == len(shifts) - 1
            if v >= lo - 1e-6 and (v <= hi + 1e-6 if last else v < hi - 1e-6):
                out.append(v)
            k += 1
    return np.array(out)


def _random_equations(rng, n):
    eqs, internal, shift = [], 0.0, 0.0
    for _ in range(n):
        internal += rng.uniform(5, 60)
        back = internal + shift
        ahead = back + rng.choice([-1, 1]) * rng.uniform(1, 30)
        eqs.append((back, ahead, "eq"))
        shift = ahead - internal
    return eqs, internal + 40


@pytest.mark.parametrize("seed", range(5))
def test_station_equations_quadratic(seed):
    rng = np.random.default_rng(seed)
    eqs, end = _random_equations(rng, 300)
    st = Stationing.with_equations(0.0, end, 1000, 3, tuple(eqs))
    got = st.interval_stations(10.0)
    want = _reference_intervals(0.0, end, [(b, a) for b, a, _ in eqs], 10.0)
    assert got.shape == want.shape and np.allclose(got, want, atol=1e-9)
    # every interval station read back in its own region lands where it was
    r = st.region(got)
    for x, reg in zip(got[::17].tolist(), r[::17].tolist()):
        assert st.to_internal(StationRef(float(st.station(x)), int(reg), "s")) == pytest.approx(x, abs=1e-9)


def test_station_inside_an_equation_gap_staked_elsewhere():
    st = Stationing.with_equations(0.0, 800.0, 1000, 3, ((200.0, 1200.0, "alignment.station_equation[0]"),))
    with pytest.raises(JobFileError, match="no such station.*region 1 runs from 0\\+000.000 to 0\\+200.000; "
                                           "region 2 runs from 1\\+200.000 to 1\\+800.000"):
        st.to_internal(StationRef(350.0, None, "staking.extra_stations[0]"))
    assert st.to_internal(StationRef(1250.0, None, "x")) == pytest.approx(250.0)
    assert st.to_internal(StationRef(150.0, None, "x")) == pytest.approx(150.0)
    # off the ends: read in the first or last region, for the caller's range check
    assert st.to_internal(StationRef(-5.0, None, "x")) == pytest.approx(-5.0)
    assert st.to_internal(StationRef(1900.0, None, "x")) == pytest.approx(900.0)


def test_region_that_does_not_exist_read_in_region_1():
    plain = Stationing(0.0, 800.0, 1000, 3)
    with pytest.raises(JobFileError, match="region 7 does not exist; the alignment has one region"):
        plain.to_internal(StationRef(123.4, 7, "staking.extra_stations[0]"))
    assert plain.to_internal(StationRef(123.4, 1, "x")) == 123.4
    st = Stationing.with_equations(0.0, 800.0, 1000, 3, ((200.0, 1200.0, "e"),))
    with pytest.raises(JobFileError, match="region 3 does not exist; the alignment has regions 1 to 2"):
        st.to_internal(StationRef(1300.0, 3, "profile.pvi[1].station"))
    with pytest.raises(JobFileError, match="not in region 1"):
        st.to_internal(StationRef(1300.0, 1, "profile.pvi[1].station"))
    # the last region runs on past the end (a profile may)
    assert st.to_internal(StationRef(1900.0, 2, "x")) == pytest.approx(900.0)
