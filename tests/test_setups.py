"""Automatic setups: the contract's greedy rule re-implemented plainly here
(Python loops, exact integer distances) and compared on random small jobs,
plus hand-built cases for ties, dropped setups and errors."""

from __future__ import annotations

import math
import random

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from stakeout import setups as setups_module
from stakeout.errors import GeometryError, JobFileError
from stakeout.setups import Setup, SetupPlan, choose_setups


class Unreachable(Exception):
    pass


def _plain_rule(ids, cn, ce, sn, se, max_distance, max_backsight, r95=None, tolerance=None):
    """The job-file contract's rule, written out literally (squared distances in
    exact integer arithmetic for integer inputs).  With ``r95`` and ``tolerance``:
    the rule of "Automatic setups that keep stakes within tolerance"."""

    def d2(n1, e1, n2, e2):
        return (n2 - n1) ** 2 + (e2 - e1) ** 2

    ctrl = list(zip(ids, cn, ce))
    stakes = list(range(len(sn)))

    def others_within(c, limit):
        return [o for o in ctrl if o[0] != c[0] and 0 < d2(c[1], c[2], o[1], o[2]) <= limit**2]

    candidates = [c for c in ctrl if others_within(c, max_backsight)]

    def backsight(c):
        # farthest other control point within max_backsight, ties by id
        return min(others_within(c, max_backsight), key=lambda o: (-d2(c[1], c[2], o[1], o[2]), o[0]))

    def q(c, j):
        b = backsight(c)
        return float(r95(*(np.array([v], dtype=float) for v in (c[1], c[2], b[1], b[2], sn[j], se[j])))[0])

    def in_distance(c):
        return {j for j in stakes if d2(c[1], c[2], sn[j], se[j]) <= max_distance**2}

    by_precision = r95 is not None and tolerance is not None
    kept_within = {j for c in candidates for j in in_distance(c) if by_precision and q(c, j) <= tolerance}

    def reach(c):
        if not by_precision:
            return in_distance(c)
        # within the tolerance, or by distance alone for a stake no candidate keeps within it
        return {j for j in in_distance(c) if j not in kept_within or q(c, j) <= tolerance}

    reached_by_any = set().union(*(reach(c) for c in candidates)) if candidates else set()
    for j in stakes:
        if j not in reached_by_any:
            raise Unreachable(j)

    unreached, chosen = set(stakes), []
    while unreached:
        # most stakes not yet reached; ties by id (string order)
        best = min(candidates, key=lambda c: (-len(reach(c) & unreached), c[0]))
        chosen.append(best)
        unreached -= reach(best)

    if by_precision:  # the chosen setup reaching it with the smallest r95, ties by id
        assign = [min((c for c in chosen if j in reach(c)), key=lambda c: (q(c, j), c[0])) for j in stakes]
    else:  # nearest chosen setup, ties by id
        assign = [min(chosen, key=lambda c: (d2(c[1], c[2], sn[j], se[j]), c[0])) for j in stakes]
    kept = [c for c in chosen if any(a is c for a in assign)]  # a setup nearest to no stake is not needed
    out = []
    for c in kept:
        mine = [j for j in stakes if assign[j] is c]
        b = backsight(c)
        far = max(math.sqrt(d2(c[1], c[2], sn[j], se[j])) for j in mine)
        out.append((c[0], b[0], len(mine), far))
    index = [next(k for k, c in enumerate(kept) if assign[j] is c) for j in stakes]
    return out, index


_ids = st.lists(st.text(alphabet="AB19", min_size=1, max_size=3), min_size=2, max_size=10, unique=True)
_grid = st.integers(-40, 40)


@st.composite
def _jobs(draw):
    ids = draw(_ids)
    cn = draw(st.lists(_grid, min_size=len(ids), max_size=len(ids)))
    ce = draw(st.lists(_grid, min_size=len(ids), max_size=len(ids)))
    m = draw(st.integers(1, 25))
    # stakes near the control points, so that most jobs can be covered
    near = draw(st.lists(st.integers(0, len(ids) - 1), min_size=m, max_size=m))
    sn = [cn[k] + draw(st.integers(-25, 25)) for k in near]
    se = [ce[k] + draw(st.integers(-25, 25)) for k in near]
    max_distance = draw(st.integers(10, 60))
    max_backsight = draw(st.integers(20, 120))
    return ids, cn, ce, sn, se, max_distance, max_backsight


@settings(max_examples=400, deadline=None)
@given(_jobs())
def test_follows_the_greedy_rule(job):
    # Brute force: the plain re-implementation above on small integer grids, where
    # equal distances (and so the id tie-breaks) are common.
    ids, cn, ce, sn, se, max_distance, max_backsight = job
    try:
        want, want_index = _plain_rule(ids, cn, ce, sn, se, max_distance, max_backsight)
    except Unreachable as exc:
        j = exc.args[0]
        names = [f"P{k}" for k in range(len(sn))]
        with pytest.raises(GeometryError, match=f"stake 'P{j}' at"):
            choose_setups(ids, cn, ce, sn, se, max_distance, max_backsight, stake_ids=names)
        return
    plan = choose_setups(ids, cn, ce, sn, se, max_distance, max_backsight)
    got = [(s.occupied_id, s.backsight_id, s.stake_count, s.farthest_sight) for s in plan.setups]
    assert [g[:3] for g in got] == [w[:3] for w in want]
    for g, w in zip(got, want):
        assert g[3] == pytest.approx(w[3], rel=1e-12)
    assert plan.setup_index.tolist() == want_index


def _toy_r95(on, oe, bn, be, sn, se):
    """A stand-in for the predicted r95 that depends on the sight and the backsight, rounded
    to a coarse step so that ties (broken by id) are common."""
    sight = np.hypot(sn - on, se - oe)
    bs = np.hypot(bn - on, be - oe)
    return np.round(0.002 + sight * 2e-4 + 0.5 / np.maximum(bs, 1.0), 3)


@settings(max_examples=300, deadline=None)
@given(_jobs(), st.sampled_from([0.004, 0.006, 0.008, 0.012]))
def test_follows_the_rule_within_tolerance(job, tolerance):
    # Brute force, as above, for the rule with a predicted precision and a tolerance.
    ids, cn, ce, sn, se, max_distance, max_backsight = job
    try:
        want, want_index = _plain_rule(ids, cn, ce, sn, se, max_distance, max_backsight, _toy_r95, tolerance)
    except Unreachable:
        return
    plan = choose_setups(ids, cn, ce, sn, se, max_distance, max_backsight, r95=_toy_r95, tolerance=tolerance)
    got = [(s.occupied_id, s.backsight_id, s.stake_count) for s in plan.setups]
    assert got == [w[:3] for w in want]
    assert plan.setup_index.tolist() == want_index


_fcoord = st.floats(-500.0, 500.0, allow_nan=False)


@settings(max_examples=200, deadline=None)
@given(
    ctrl=st.lists(st.tuples(_fcoord, _fcoord), min_size=2, max_size=10),
    stakes=st.lists(st.tuples(_fcoord, _fcoord), min_size=1, max_size=40),
    max_distance=st.floats(50.0, 800.0),
    max_backsight=st.floats(50.0, 1500.0),
    seed=st.integers(0, 2**16),
)
def test_plan_properties(ctrl, stakes, max_distance, max_backsight, seed):
    # Properties of any plan (float coordinates): every stake within max_distance of its
    # setup and on its nearest chosen setup, each backsight the farthest within
    # max_backsight, counts and farthest sights agree, and the order in which the
    # control points are listed does not matter.
    ids = [f"CP{k}" for k in range(len(ctrl))]
    cn = np.array([c[0] for c in ctrl])
    ce = np.array([c[1] for c in ctrl])
    sn = np.array([s[0] for s in stakes])
    se = np.array([s[1] for s in stakes])
    try:
        plan = choose_setups(ids, cn, ce, sn, se, max_distance, max_backsight)
    except GeometryError:
        # then some stake really is out of reach of every control point with a backsight
        d_cc = np.hypot(cn[:, None] - cn[None, :], ce[:, None] - ce[None, :])
        other = (cn[:, None] != cn[None, :]) | (ce[:, None] != ce[None, :])
        cand = (other & (d_cc <= max_backsight * (1 + 1e-12))).any(axis=1)
        d_cs = np.hypot(sn[None, :] - cn[cand, None], se[None, :] - ce[cand, None])
        assert not (d_cs <= max_distance * (1 - 1e-12)).any(axis=0).all()
        return
    occ_n, occ_e, bs_n, bs_e = plan.per_stake()
    assert bs_n.tolist() == [plan.setups[k].backsight_n for k in plan.setup_index]
    assert bs_e.tolist() == [plan.setups[k].backsight_e for k in plan.setup_index]
    d = np.hypot(sn - occ_n, se - occ_e)
    assert (d <= max_distance * (1 + 1e-12)).all()
    chosen_n = np.array([s.occupied_n for s in plan.setups])
    chosen_e = np.array([s.occupied_e for s in plan.setups])
    d_all = np.hypot(sn[:, None] - chosen_n[None, :], se[:, None] - chosen_e[None, :])
    assert (d <= d_all.min(axis=1) * (1 + 1e-12)).all()
    for k, s in enumerate(plan.setups):
        mine = plan.setup_index == k
        assert s.stake_count == mine.sum() > 0
        assert s.farthest_sight == pytest.approx(d[mine].max(), rel=1e-12)
        d_bs = np.hypot(cn - s.occupied_n, ce - s.occupied_e)
        ok = ((cn != s.occupied_n) | (ce != s.occupied_e)) & (d_bs <= max_backsight * (1 + 1e-12))
        assert math.hypot(s.backsight_n - s.occupied_n, s.backsight_e - s.occupied_e) == pytest.approx(
            d_bs[ok].max(), rel=1e-12
        )
    perm = list(range(len(ids)))
    random.Random(seed).shuffle(perm)
    again = choose_setups([ids[i] for i in perm], cn[perm], ce[perm], sn, se, max_distance, max_backsight)
    assert again.setups == plan.setups
    assert again.setup_index.tolist() == plan.setup_index.tolist()


def test_ties_go_to_the_smaller_id_in_string_order():
    # Two control points reach the same stakes: "CP10" < "CP9" as strings (not as numbers).
    ids = ["CP9", "CP10"]
    plan = choose_setups(ids, [0.0, 0.0], [-10.0, 10.0], [0.0, 5.0, -5.0], [0.0, 0.0, 0.0], 50.0, 100.0)
    assert [s.occupied_id for s in plan.setups] == ["CP10"]
    assert plan.setups[0].backsight_id == "CP9"
    assert plan.setup_index.tolist() == [0, 0, 0]


def test_nearest_setup_and_tie_by_id():
    # Two setups needed; the stake half-way between them goes to the smaller id.
    ids = ["S2", "S1"]
    plan = choose_setups(ids, [0.0, 100.0], [0.0, 0.0], [-30.0, 50.0, 130.0], [0.0, 0.0, 0.0], 60.0, 200.0)
    order = [s.occupied_id for s in plan.setups]
    assert sorted(order) == ["S1", "S2"]
    at = {s.occupied_id: k for k, s in enumerate(plan.setups)}
    assert plan.setup_index.tolist() == [at["S2"], at["S1"], at["S1"]]
    assert plan.setups[at["S1"]].stake_count == 2
    assert plan.setups[at["S1"]].farthest_sight == pytest.approx(50.0)


def test_setup_nearest_to_no_stake_is_dropped():
    # A (off the line) reaches the most stakes and is taken first; B and C are then
    # needed for the two end stakes, and each stake on the line is nearer to B or C
    # than to A, so A sets out nothing and is dropped.
    ids = ["A", "B", "C"]
    cn, ce = [5.0, 1.0, 9.0], [4.8, 0.0, 0.0]
    sn = [-5.0] + [float(k) for k in range(11)] + [15.0]
    se = [0.0] * len(sn)
    plan = choose_setups(ids, cn, ce, sn, se, 7.0, 20.0)
    # B and C tie (one new stake each) after A: B first by id
    assert [s.occupied_id for s in plan.setups] == ["B", "C"]
    assert [s.stake_count for s in plan.setups] == [7, 6]  # stake N 5 is equidistant: B by id
    assert all(s.backsight_id != s.occupied_id for s in plan.setups)


def test_only_control_points_with_a_backsight_are_candidates():
    # "LONE" reaches every stake but has no other control point within max_backsight.
    ids = ["LONE", "P1", "P2"]
    plan = choose_setups(ids, [0.0, 500.0, 520.0], [0.0, 0.0, 0.0], [400.0, 450.0], [0.0, 0.0], 200.0, 50.0)
    assert [s.occupied_id for s in plan.setups] == ["P1"]
    assert plan.setups[0].backsight_id == "P2"


def test_backsight_is_the_farthest_within_reach_ties_by_id():
    ids = ["O", "NEAR", "FAR-B", "FAR-A", "TOO-FAR", "SAME-SPOT"]
    cn = [0.0, 10.0, 0.0, 30.0, 0.0, 0.0]
    ce = [0.0, 0.0, 30.0, 0.0, 31.0, 0.0]
    plan = choose_setups(ids, cn, ce, [0.0], [-1.0], 5.0, 30.0)
    assert plan.setups[0].occupied_id == "O"  # the only one reaching the stake
    # FAR-A and FAR-B both at 30 (inclusive); FAR-A by id; SAME-SPOT gives no direction
    assert plan.setups[0].backsight_id == "FAR-A"
    assert (plan.setups[0].backsight_n, plan.setups[0].backsight_e) == (30.0, 0.0)


def test_max_distance_is_inclusive():
    # 3-4-5: the stake is exactly max_distance from the control point
    plan = choose_setups(["A", "B"], [0.0, 0.0], [0.0, 1.0], [300.0], [400.0], 500.0, 10.0)
    assert plan.setups[0].occupied_id == "A" and plan.setups[0].farthest_sight == 500.0


def test_unreachable_stake_is_named():
    ids = ["A", "B"]
    with pytest.raises(GeometryError, match=r"stake '1002' at N 900\.0 E 0\.0: .*max_distance = 100\.0"):
        choose_setups(ids, [0.0, 50.0], [0.0, 0.0], [10.0, 900.0], [0.0, 0.0], 100.0, 100.0,
                      stake_ids=["1001", "1002"])
    with pytest.raises(GeometryError, match="stake #2 "):
        choose_setups(ids, [0.0, 50.0], [0.0, 0.0], [10.0, 900.0], [0.0, 0.0], 100.0, 100.0)
    # no control point has a backsight at all
    with pytest.raises(GeometryError, match="stake #1 "):
        choose_setups(["A"], [0.0], [0.0], [10.0], [0.0], 100.0, 100.0)


def test_bad_input():
    with pytest.raises(JobFileError, match="control.point id = 'A'"):
        choose_setups(["A", "B", "A"], [0.0, 1.0, 2.0], [0.0, 0.0, 0.0], [0.0], [0.0], 10.0, 10.0)
    for bad in (0.0, -5.0, float("nan"), float("inf")):
        with pytest.raises(JobFileError, match="setup.max_distance"):
            choose_setups(["A", "B"], [0.0, 1.0], [0.0, 0.0], [0.0], [0.0], bad, 10.0)
        with pytest.raises(JobFileError, match="setup.max_backsight"):
            choose_setups(["A", "B"], [0.0, 1.0], [0.0, 0.0], [0.0], [0.0], 10.0, bad)


def test_no_stakes_no_setups():
    plan = choose_setups(["A", "B"], [0.0, 1.0], [0.0, 0.0], [], [], 10.0, 10.0)
    assert plan.setups == () and plan.setup_index.shape == (0,)
    assert all(a.shape == (0,) for a in plan.per_stake())


def test_blocks_give_the_same_plan(monkeypatch):
    # The (stake, control point) pairs are found in blocks of stakes; tiny blocks must agree with one block.
    rng = np.random.default_rng(4)
    # control on a jittered 400 m grid, so every stake is within reach
    gn, ge = np.meshgrid(np.arange(0.0, 2001.0, 400.0), np.arange(0.0, 2001.0, 400.0))
    cn = gn.ravel() + rng.uniform(-50, 50, gn.size)
    ce = ge.ravel() + rng.uniform(-50, 50, gn.size)
    sn, se = rng.uniform(0, 2000, 3001), rng.uniform(0, 2000, 3001)
    ids = [f"C{k:02d}" for k in range(cn.size)]
    whole = choose_setups(ids, cn, ce, sn, se, 600.0, 700.0)
    monkeypatch.setattr(setups_module, "_QUERIES_AT_ONCE", 50)
    blocked = choose_setups(ids, cn, ce, sn, se, 600.0, 700.0)
    assert blocked.setups == whole.setups
    assert np.array_equal(blocked.setup_index, whole.setup_index)
    assert isinstance(whole, SetupPlan) and all(isinstance(s, Setup) for s in whole.setups)


def test_auto_setups_ignored_precision_now_keep_stakes_within_tolerance(tmp_path):
    """Regression: with [instrument] and a tolerance, automatic setups were chosen by
    distance alone and 54 of the Harrow Fen sample's 264 stakes were flagged r95 >
    tolerance from distant setups although nearer control existed.  Each stake now
    goes to the chosen setup with the smallest r95 (job-file contract), recomputed
    here with the precision module for every chosen setup within max_distance."""
    import csv
    import io

    from stakeout.design import build_design
    from stakeout.jobfile import load_job
    from stakeout.precision import predict_precision

    from .helpers import SAMPLES, build_job

    job_path = SAMPLES / "harrow_fen_bypass_control_m.toml"
    out = build_job(job_path, tmp_path / "out")
    rows = list(csv.DictReader(io.StringIO((out / "setout.csv").read_text(encoding="utf-8"))))
    assert all(float(r["r95"]) <= 0.012 for r in rows)
    job = load_job(job_path)
    d = build_design(job)
    occs = d.setup.occupations
    sp = d.stakes
    q = np.array([predict_precision(o.occupied.northing, o.occupied.easting, o.backsight.northing,
                                    o.backsight.easting, sp.northing, sp.easting, job.instrument).r95 for o in occs])
    dist = np.array([np.hypot(sp.northing - o.occupied.northing, sp.easting - o.occupied.easting) for o in occs])
    q = np.where(dist <= job.setup.max_distance, q, np.inf)
    assert np.allclose(q[d.setup.setup_index, np.arange(len(sp))], q.min(axis=0), rtol=0, atol=1e-12)
