"""Property tests on random valid alignments (hypothesis), and the inverse
against shapely on a densified alignment."""

import math

import numpy as np
import pytest
import shapely
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from shapely.geometry import LineString

from stakeout.alignment import (
    Arc,
    ArcSpec,
    ChainSpec,
    LineSpec,
    PIListSpec,
    PISpec,
    SinglePISpec,
    Spiral,
    SpiralSpec,
    build_alignment,
    compound_tangents,
)
from stakeout.job import OffsetLine, Staking
from stakeout.staking import plan_stakes
from stakeout.stations import Stationing

from .helpers import arc_end_by_rotation


@st.composite
def pi_lists(draw, max_pis=5):
    """A random PI list whose curves fit; heading stays within 60 deg of the
    start so the alignment never comes back near itself."""
    k = draw(st.integers(1, max_pis))
    lengths = [draw(st.floats(300, 3000)) for _ in range(k + 1)]
    heading0 = draw(st.floats(0, 360))
    rel = 0.0
    heads = [heading0]
    for _ in range(k):
        while True:
            d = draw(st.floats(-60, 60))
            if abs(d) >= 3 and abs(rel + d) <= 60:
                break
            d = math.copysign(max(3.0, abs(d)), -rel if rel else 1.0)
            if abs(rel + d) <= 60:
                break
        rel += d
        heads.append(heading0 + rel)
    n, e = draw(st.floats(-1e6, 6e6)), draw(st.floats(-1e6, 6e6))
    pts = [(n, e)]
    for L, h in zip(lengths, heads):
        n += L * math.cos(math.radians(h))
        e += L * math.sin(math.radians(h))
        pts.append((n, e))
    pis = [PISpec(*pts[0], where="pi[0]")]
    for i in range(1, k + 1):
        defl = abs(heads[i] - heads[i - 1])
        narcs = draw(st.sampled_from([0, 1, 1, 2, 2, 3]))
        if narcs == 0:
            pis.append(PISpec(*pts[i], where=f"pi[{i}]"))
            continue
        radii = tuple(draw(st.floats(1.0, 10.0)) for _ in range(narcs))
        shares = [draw(st.floats(0.2, 1.0)) for _ in range(narcs)]
        deltas = tuple(defl * s / sum(shares) for s in shares)
        t = compound_tangents(radii, deltas)
        room = 0.45 * min(lengths[i - 1], lengths[i])
        scale = room / max(t.back, t.ahead) * draw(st.floats(0.2, 1.0))
        radii = tuple(r * scale for r in radii)
        rest = draw(st.integers(0, narcs - 1))
        pis.append(PISpec(*pts[i], radii, tuple(None if j == rest else d for j, d in enumerate(deltas)),
                          where=f"pi[{i}]"))
    pis.append(PISpec(*pts[-1], where=f"pi[{k + 1}]"))
    return PIListSpec("R", draw(st.floats(-1000, 10000)), tuple(pis))


@settings(max_examples=150)
@given(pi_lists())
def test_closure_pi_list(spec):
    # Walking the arcs must land on the PT that the PI geometry predicts
    # (PT = PI + T_ahead along the ahead tangent), to 1e-9 relative.
    a = build_alignment(spec)
    curve_pis = [p for p in spec.pis[1:-1] if p.radii]
    assert len(a.curves) <= len(curve_pis)
    for c in a.curves:
        last = a.elements[c.elements[-1]]
        az = math.radians(last.end_azimuth)
        pt_n = c.pi_northing + c.tangents.ahead * math.cos(az)
        pt_e = c.pi_easting + c.tangents.ahead * math.sin(az)
        size = max(1.0, c.tangents.back + c.tangents.ahead)
        assert math.hypot(pt_n - last.end_northing, pt_e - last.end_easting) <= 1e-9 * size + 1e-9 * abs(pt_n)
    end = a.elements[-1]
    assert end.end_northing == pytest.approx(spec.pis[-1].northing, abs=1e-6)
    assert end.end_easting == pytest.approx(spec.pis[-1].easting, abs=1e-6)


@settings(max_examples=150)
@given(pi_lists(), st.data())
def test_round_trip_and_monotone(spec, data):
    a = build_alignment(spec)
    starts = np.array([el.start for el in a.elements])
    assert np.all(np.diff(starts) > 0)
    assert a.length == pytest.approx(sum(el.length for el in a.elements))
    min_r = min([el.radius_start for el in a.elements if el.radius_start] + [1e9])
    omax = min(0.4 * min_r, 25.0)
    m = 64
    s = np.array(data.draw(st.lists(st.floats(0, 1), min_size=m, max_size=m))) * a.length + a.start_station
    o = np.array(data.draw(st.lists(st.floats(-omax, omax), min_size=m, max_size=m)))
    # keep clear of angle points, whose inside corner belongs to the other leg
    ap = np.array([k.station for k in a.key_points if "AP" in k.features])
    if ap.size:
        keep = np.min(np.abs(s[:, None] - ap[None, :]), axis=1) > 2 * omax + 1
        s, o = s[keep], o[keep]
    n, e, _ = a.evaluate(s, o, miter=False)
    s2, o2, d2 = a.locate(n, e)
    assert np.allclose(s2, s, atol=1e-6, rtol=0)
    assert np.allclose(o2, o, atol=1e-6, rtol=0)
    assert np.allclose(d2, np.abs(o), atol=1e-6)


@st.composite
def chains(draw):
    els = []
    for _ in range(draw(st.integers(1, 6))):
        if draw(st.booleans()):
            els.append(LineSpec(draw(st.floats(1, 500))))
        else:
            r = draw(st.floats(20, 2000))
            if draw(st.booleans()):
                els.append(ArcSpec(r, draw(st.sampled_from([-1, 1])), delta=draw(st.floats(0.5, 300))))
            else:
                els.append(ArcSpec(r, draw(st.sampled_from([-1, 1])), length=draw(st.floats(1, 5 * r))))
    return ChainSpec("C", draw(st.floats(-500, 5000)), draw(st.floats(-1e6, 1e6)), draw(st.floats(-1e6, 1e6)),
                     draw(st.floats(0, 359.999)), tuple(els))


@settings(max_examples=150)
@given(chains())
def test_chain_elements_close_by_rotation(spec):
    # Each arc's end equals the start rotated about the centre (independent
    # construction with complex numbers), and lines run straight.
    a = build_alignment(spec)
    for el in a.elements:
        if isinstance(el, Arc):
            n1, e1, cn, ce = arc_end_by_rotation(el.start_northing, el.start_easting, el.start_azimuth,
                                                 el.radius, el.delta, el.turn)
            assert (el.end_northing, el.end_easting) == pytest.approx((n1, e1), abs=1e-6)
            assert (el.center_northing, el.center_easting) == pytest.approx((cn, ce), abs=1e-6)
        n, e, az = a.evaluate(np.array([el.end - 1e-9]))
        assert (float(n[0]), float(e[0])) == pytest.approx((el.end_northing, el.end_easting), abs=1e-6)
    feats = [f for k in a.key_points for f in k.features]
    assert feats[0] == "POB" and feats[-1] == "POE"
    for c in a.curves:
        assert len({a.elements[i].turn for i in c.elements}) == 1


@settings(max_examples=60)
@given(pi_lists(max_pis=3), st.lists(st.floats(-30, 30), min_size=1, max_size=5, unique=True),
       st.floats(5, 200))
def test_key_points_on_every_offset_line(spec, offsets, interval):
    a = build_alignment(spec)
    # an offset at or past a curve's centre is refused (test_crew_safeguards holds that); stay inside it
    r_min = min([el.radius_start for el in a.elements if el.radius_start] + [1e9])
    assume(max(abs(o) for o in offsets) < 0.9 * r_min)
    staking = Staking(interval, tuple(sorted((OffsetLine(o, f"C{i}") for i, o in enumerate(offsets)),
                                             key=lambda x: x.offset)), (), 1, "", None)
    sp = plan_stakes(a, staking, Stationing(a.start_station, a.end_station, 100, 2))
    m = len(offsets)
    assert len(sp) == m * sp.stations.size
    assert np.all(np.diff(sp.stations) > 0)
    for kp in a.key_points:
        hit = np.abs(sp.station - kp.station) < 1e-9
        assert hit.sum() == m
        assert set(sp.feature[i] for i in np.where(hit)[0]) == {" ".join(kp.features)}
    # numbering: by station, then offset left to right
    assert np.all(np.diff(sp.number) == 1)
    assert np.all(np.diff(sp.offset.reshape(-1, m), axis=1) > 0)


def _densify(a, step=0.05):
    s = np.unique(np.concatenate([np.arange(a.start_station, a.end_station, step), [a.end_station]]))
    n, e, _ = a.evaluate(s)
    return s, LineString(np.column_stack([e, n]))


@pytest.mark.parametrize("sample", ["loop_ramp_usft.toml", "site_road_metric.toml", "curve_table_ramp.toml"])
def test_inverse_against_shapely(sample):
    # shapely/GEOS as the reference: line_locate_point and distance on a
    # densified centreline (5 cm vertices, chord error < 1e-6 units on R >= 100).
    from stakeout.jobfile import load_job
    from .helpers import SAMPLES

    a = build_alignment(load_job(SAMPLES / sample).alignment)
    s0, line = _densify(a)
    rng = np.random.default_rng(7)
    s = rng.uniform(a.start_station + 1, a.end_station - 1, 300)
    o = rng.uniform(-20, 20, 300)
    n, e, _ = a.evaluate(s, o)
    st_, off, dist = a.locate(n, e)
    pts = shapely.points(e, n)
    ref_s = shapely.line_locate_point(line, pts) + a.start_station
    ref_d = shapely.distance(line, pts)
    assert np.allclose(st_, ref_s, atol=2e-3)
    assert np.allclose(dist, ref_d, atol=1e-5)
    assert np.allclose(np.abs(off), ref_d, atol=1e-5)


def test_grid_inverse_matches_brute_force():
    # The grid prefilter must never change the answer: compare with every element.
    els = []
    for i in range(60):
        els.append(LineSpec(80.0 + 7 * (i % 5)))
        els.append(ArcSpec(150.0 + 10 * (i % 7), 1 if (i // 2) % 2 else -1, delta=25.0 + (i % 4)))
    a = build_alignment(ChainSpec("G", 0.0, 5_000_000.0, 500_000.0, 33.0, tuple(els)))
    rng = np.random.default_rng(11)
    s = rng.uniform(a.start_station - 50, a.end_station + 50, 4000)
    o = rng.uniform(-400, 400, s.size)
    n, e, _ = a.evaluate(np.clip(s, a.start_station, a.end_station), o)
    n = np.concatenate([n, [0.0, 9e6]])
    e = np.concatenate([e, [0.0, 9e6]])
    got = np.stack(a.locate(n, e))
    ref = a._locate_all(n, e)
    assert np.allclose(got[2], ref[2], atol=1e-9)
    same = np.abs(got[2] - ref[2]) < 1e-9
    assert np.allclose(got[0][same], ref[0][same], atol=1e-6)


@settings(max_examples=150)
@given(st.floats(0, 360), st.floats(2, 175), st.sampled_from([-1, 1]),
       st.lists(st.floats(20, 3000), min_size=1, max_size=3), st.data())
def test_single_pi_curve_properties(back, defl, turn, radii, data):
    # Form C: the built curve's PI is the given PI and station; the PT lies on the
    # ahead tangent at T_ahead from the PI (closure against the PI geometry).
    shares = [data.draw(st.floats(0.1, 1.0)) for _ in radii]
    deltas = [defl * s / sum(shares) for s in shares]
    rest = data.draw(st.integers(0, len(radii) - 1))
    ahead = (back + turn * defl) % 360
    spec = SinglePISpec("C", 5000.0, 1e6, 2e6, back, ahead, tuple(radii),
                        tuple(None if i == rest else d for i, d in enumerate(deltas)),
                        lead_in=data.draw(st.floats(0, 500)), lead_out=data.draw(st.floats(0, 500)))
    a = build_alignment(spec)
    (c,) = a.curves
    assert c.pi_station == pytest.approx(5000.0, abs=1e-9)
    assert (c.pi_northing, c.pi_easting) == pytest.approx((1e6, 2e6), abs=1e-7)
    last = a.elements[c.elements[-1]]
    az = math.radians(ahead)
    assert last.end_northing == pytest.approx(1e6 + c.tangents.ahead * math.cos(az), abs=1e-6)
    assert last.end_easting == pytest.approx(2e6 + c.tangents.ahead * math.sin(az), abs=1e-6)
    assert c.delta == pytest.approx(defl, abs=1e-9)
    assert {a.elements[i].turn for i in c.elements} == {turn}


@pytest.mark.slow
def test_grid_inverse_with_spirals_matches_shapely():
    # Reference: shapely's distance to the centreline densified every 0.05 (the chord error of that
    # spacing on these radii is below 1e-6). The inverse on an alignment of tangents, clothoids and
    # arcs skips candidate pairs by their middle-point bounds and a grid of a quarter of the mean
    # element length: neither may change the nearest distance, for shots near and far.
    pis = [PISpec(0.0, 0.0, where="pob")]
    n = e = 0.0
    for i in range(1, 7):
        n += 900.0
        e += 450.0 if i % 2 else -450.0
        pis.append(PISpec(n, e, (600.0 if i % 3 else 250.0,), (None,), f"pi{i}", (90.0, 60.0 + 10 * i)))
    pis[-1] = PISpec(n, e, where="poe")
    a = build_alignment(PIListSpec("SP", 0.0, tuple(pis)))
    assert any(isinstance(el, Spiral) for el in a.elements) and len(a.elements) > 8  # the grid is used
    s = np.linspace(a.start_station, a.end_station, int(a.length / 0.05) + 1)
    cn, ce, _ = a.evaluate(s, 0.0)
    line = LineString(np.column_stack([ce, cn]))
    rng = np.random.default_rng(5)
    st_ = rng.uniform(a.start_station + 1, a.end_station - 1, 3000)
    off = np.concatenate([rng.uniform(-15, 15, 2000), rng.uniform(-900, 900, 1000)])
    pn, pe, _ = a.evaluate(st_, off, miter=False)
    got = a.locate(pn, pe)
    want = shapely.distance(shapely.points(pe, pn), line)
    assert np.max(np.abs(got.distance - want)) < 1e-5
    assert np.max(np.abs(np.abs(got.offset) - want)) < 1e-5  # inside the ends: offset is the distance, signed
    near = np.abs(off) <= 15
    assert np.allclose(got.station[near], st_[near], atol=1e-6)


def test_shot_nearest_the_extended_first_tangent_is_found():
    # regression: a shot before the start lay in a grid cell of later elements only; the first
    # tangent, extended back, is nearer (8.8035) than any of them (41.52), but the grid never offered it
    # (an alignment from a random search that looped back towards its start)
    els = (LineSpec(30.580785720456614), SpiralSpec(112.80108818861969, -1, None, 928.411342205209),
           ArcSpec(928.411342205209, -1, length=273.6055706709776), SpiralSpec(136.1851273528939, -1, 928.411342205209, None),
           LineSpec(186.3015933720779), SpiralSpec(24.18953873516082, -1, None, 100.73668463908503),
           ArcSpec(100.73668463908503, -1, length=208.07490442702172), SpiralSpec(35.00741686509599, -1, 100.73668463908503, None),
           SpiralSpec(305.538173972859, -1, None, 431.16692532230223), ArcSpec(431.16692532230223, -1, length=256.3427002335122),
           SpiralSpec(302.9266163056955, -1, 431.16692532230223, None), LineSpec(117.93453434544273),
           SpiralSpec(349.7838924286177, 1, None, 455.3324635377726), ArcSpec(455.3324635377726, 1, length=113.78776192512736),
           SpiralSpec(165.39364141333357, 1, 455.3324635377726, None))
    a = build_alignment(ChainSpec("C", 509877.02044522396, 5e6, 5e5, 174.14936186606224, els))
    n, e = 5000107.495687282, 499997.8345665278
    got = a.locate(n, e)
    # independent: the distance to the first tangent's line, extended back (plain vector algebra)
    az = math.radians(174.14936186606224)
    dn, de = n - 5e6, e - 5e5
    assert de * math.sin(az) + dn * math.cos(az) < 0  # before the start
    assert float(got.distance) == pytest.approx(abs(de * math.cos(az) - dn * math.sin(az)), abs=1e-9)
    assert float(got.station) == pytest.approx(509877.02044522396 + de * math.sin(az) + dn * math.cos(az), abs=1e-9)


def test_points_without_finite_coordinates_get_no_station():
    # regression: a NaN point shifted the rows of the other points (or raised), and with an exact tie
    # elsewhere it took that point's answer; it now gets NaN and the others theirs
    els = tuple(x for i in range(6) for x in (LineSpec(80.0 + 7 * i), ArcSpec(150.0, 1 if i % 2 else -1, delta=25.0)))
    a = build_alignment(ChainSpec("G", 0.0, 5e6, 5e5, 33.0, els))
    pc_n, pc_e = a.elements[1].start_northing, a.elements[1].start_easting
    got = np.stack(a.locate([np.nan, pc_n, np.inf, 5e6 + 10], [0.0, pc_e, 5e5, -np.inf]))
    assert np.isnan(got[:, [0, 2, 3]]).all()
    assert got[:, 1] == pytest.approx([80.0, 0.0, 0.0], abs=1e-9)


def test_grid_of_a_long_tangent_among_short_elements_stays_small():
    # regression: a 50 km tangent among 2,000 elements of 10 m made a grid of millions of cells
    # (seconds and gigabytes); the cell now grows until the grid holds at most MAX_CELLS entries,
    # and the inverse still finds each shot's own station
    from stakeout.alignment.index import MAX_CELLS

    els = (LineSpec(50000.0),) + tuple(x for i in range(1000) for x in (LineSpec(10.0), ArcSpec(200.0, 1 if i % 2 else -1,
                                                                                                  length=10.0)))
    a = build_alignment(ChainSpec("P", 0.0, 5e6, 5e5, 45.0, els))
    grid = a._grid()
    assert grid is not None
    assert sum(int(grid.size[v]) for v in grid.cell_set.values()) <= MAX_CELLS
    rng = np.random.default_rng(4)
    s = rng.uniform(a.start_station, a.end_station, 5000)
    n, e, _ = a.evaluate(s, rng.uniform(-5, 5, s.size))
    assert np.allclose(a.locate(n, e).station, s, atol=1e-6)
