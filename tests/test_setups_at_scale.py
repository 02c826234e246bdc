"""Issue 26 item 16: automatic setups were quadratic in control points.  The
grid search must give exactly the plan of the rule applied by brute force
(full distance matrices, written here from the contract's four steps) on
many control points, most of them far from every stake.
"""

import numpy as np
import pytest

from stakeout.errors import GeometryError

from stakeout.setups import choose_setups


def _brute(ids, cn, ce, sn, se, md, mb):
    order = sorted(range(len(ids)), key=ids.__getitem__)
    cn, ce = cn[order], ce[order]
    sid = [ids[i] for i in order]
    dcc = (cn[:, None] - cn[None, :]) ** 2 + (ce[:, None] - ce[None, :]) ** 2
    other = (cn[:, None] != cn[None, :]) | (ce[:, None] != ce[None, :])
    cand = np.flatnonzero((other & (dcc <= mb * mb)).any(axis=1))
    reach = ((cn[cand, None] - sn[None, :]) ** 2 + (ce[cand, None] - se[None, :]) ** 2) <= md * md
    if not reach.any(axis=0).all():
        raise ValueError("a stake out of reach")
    unreached = np.ones(sn.size, dtype=bool)
    chosen = []
    while unreached.any():
        best = int(np.argmax((reach & unreached).sum(axis=1)))
        chosen.append(best)
        unreached &= ~reach[best]
    by_id = sorted(range(len(chosen)), key=lambda k: int(cand[chosen[k]]))
    ctrl = cand[[chosen[k] for k in by_id]]
    d2 = (cn[ctrl, None] - sn[None, :]) ** 2 + (ce[ctrl, None] - se[None, :]) ** 2
    nearest = np.asarray(by_id)[np.argmin(d2, axis=0)]
    kept = [k for k in range(len(chosen)) if (nearest == k).any()]
    out = []
    for k in kept:
        o = cand[chosen[k]]
        d = np.where(other[o] & (dcc[o] <= mb * mb), dcc[o], -1.0)
        out.append((sid[o], sid[int(np.argmax(d))], int((nearest == k).sum())))
    return out


@pytest.mark.parametrize("md,mb", [(150.0, 300.0), (300.0, 60.0), (300.0, 40.0), (250.0, 1000.0), (40.0, 1000.0)])
def test_automatic_setups_quadratic_in_control_points(md, mb):
    rng = np.random.default_rng(11)
    # a corridor of stakes along 3 km and 4,000 control points over 30 km, on a 5 m lattice so that
    # equal distances (and the tie-breaks by id) occur
    sn = np.round(rng.uniform(0, 3000, 300) / 5) * 5
    se = np.round(rng.uniform(0, 100, 300) / 5) * 5
    cn = np.round(rng.uniform(-1000, 30000, 4000) / 5) * 5
    ce = np.round(rng.uniform(-500, 500, 4000) / 5) * 5
    ids = [f"C{k}" for k in rng.permutation(4000)]
    try:
        want = _brute(ids, cn, ce, sn, se, md, mb)
    except ValueError:  # some stake is out of reach
        with pytest.raises(GeometryError):
            choose_setups(ids, cn, ce, sn, se, md, mb)
        return
    plan = choose_setups(ids, cn, ce, sn, se, md, mb)
    got = [(s.occupied_id, s.backsight_id, s.stake_count) for s in plan.setups]
    assert got == want


def test_automatic_setups_recounted_every_stake_for_every_setup_chosen():
    """Regression: the greedy cover counted a candidates x stakes matrix again for each setup it chose,
    so a long corridor needing thousands of setups took hours (a 2,000-element design: 960 s in
    choose_setups). Only the counts a choice changes are lowered now; the plan is still the rule's,
    applied by brute force here on a corridor that needs many setups."""
    rng = np.random.default_rng(5)
    sn = np.round(rng.uniform(0, 20000, 2000) / 5) * 5  # 20 km of stakes, setups reaching 120 m
    se = np.round(rng.uniform(0, 60, 2000) / 5) * 5
    cn = np.round(np.arange(0, 20150, 50.0) + rng.uniform(-10, 10, 403))
    ce = np.round(rng.uniform(-40, 100, 403))
    ids = [f"K{k:04d}" for k in rng.permutation(403)]
    want = _brute(ids, cn, ce, sn, se, 120.0, 200.0)
    plan = choose_setups(ids, cn, ce, sn, se, 120.0, 200.0)
    assert len(want) > 50
    assert [(s.occupied_id, s.backsight_id, s.stake_count) for s in plan.setups] == want
