"""Predicted stake precision against a Monte Carlo of the field procedure,
the textbook angle-error terms, and a worked setout example.

The Monte Carlo below is written from the job-file contract's error model,
not from the module: it displaces the instrument and the backsight target,
orients the circle from the displaced pointing, turns the design angle with a
pointing error, lays the distance with the EDM error and adds the pole error,
all with exact (non-linear) trigonometry.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from stakeout.errors import GeometryError, JobFileError
from stakeout.precision import InstrumentSpec, Precision, flag_exceeding, predict_precision

from .reference import design_notes

ARCSEC = math.pi / 648000.0
DRAWS = 250_000  # relative standard error of a sample sigma ~ 1/sqrt(2 N) = 0.14 %

# the contract's example [instrument] table (job-file.md)
CONTRACT = InstrumentSpec(angle_sigma_arcsec=2.0, distance_sigma=0.002, distance_ppm=2.0,
                          centering_sigma=0.001, pole_sigma=0.003)
# centring dominates (a short backsight makes it worse): the correlation shows
CENTRING = InstrumentSpec(angle_sigma_arcsec=1.0, distance_sigma=0.001, distance_ppm=1.0,
                          centering_sigma=0.005, pole_sigma=0.0)
# pointing and ppm dominate
POINTING = InstrumentSpec(angle_sigma_arcsec=5.0, distance_sigma=0.001, distance_ppm=5.0,
                          centering_sigma=0.0005, pole_sigma=0.001)


def _monte_carlo(occ, bs, stakes, spec, seed):
    """Sample sigma along and across of stakes set out from one setup.

    occ, bs: (N, E) marks; stakes: (m, 2).  The setup errors (instrument and
    target centring, backsight pointing) are shared by all stakes of a draw,
    as in the field; each stake gets its own turning, distance and pole errors.
    """
    rng = np.random.default_rng(seed)
    stakes = np.asarray(stakes, dtype=float)
    m = len(stakes)
    sc, sp = spec.centering_sigma, spec.pole_sigma
    sa = spec.angle_sigma_arcsec * ARCSEC
    # 1. the instrument stands off its mark
    inst_n = occ[0] + rng.normal(0.0, sc, (DRAWS, 1))
    inst_e = occ[1] + rng.normal(0.0, sc, (DRAWS, 1))
    # 2. the backsight target stands off its mark
    tgt_n = bs[0] + rng.normal(0.0, sc, (DRAWS, 1))
    tgt_e = bs[1] + rng.normal(0.0, sc, (DRAWS, 1))
    # 3. point at the target (true direction of the telescope) and set the circle
    #    to the backsight's grid azimuth from the marks
    pointed = np.arctan2(tgt_e - inst_e, tgt_n - inst_n) + rng.normal(0.0, sa, (DRAWS, 1))
    circle_set = math.atan2(bs[1] - occ[1], bs[0] - occ[0])
    zero = pointed - circle_set  # true direction of circle reading 0
    # 4. turn the circle to the stake's design azimuth, with a second pointing error
    az_design = np.arctan2(stakes[:, 1] - occ[1], stakes[:, 0] - occ[0])  # (m,)
    dist_design = np.hypot(stakes[:, 1] - occ[1], stakes[:, 0] - occ[0])
    sight = az_design + zero + rng.normal(0.0, sa, (DRAWS, m))
    # 5. lay the distance off with the EDM error a + b ppm in quadrature
    sd = np.sqrt(spec.distance_sigma**2 + (spec.distance_ppm * 1e-6 * dist_design) ** 2)
    laid = dist_design + rng.normal(0.0, 1.0, (DRAWS, m)) * sd
    set_n = inst_n + laid * np.cos(sight)
    set_e = inst_e + laid * np.sin(sight)
    # 6. the pole on the stake is off by pole_sigma per axis
    set_n = set_n + rng.normal(0.0, sp, (DRAWS, m))
    set_e = set_e + rng.normal(0.0, sp, (DRAWS, m))
    rn, re = set_n - stakes[:, 0], set_e - stakes[:, 1]
    along = rn * np.cos(az_design) + re * np.sin(az_design)
    across = -rn * np.sin(az_design) + re * np.cos(az_design)
    return along.std(axis=0), across.std(axis=0)


def _polar(occ, az_deg, dist):
    az = np.radians(np.asarray(az_deg, dtype=float))
    d = np.asarray(dist, dtype=float)
    return np.column_stack([occ[0] + d * np.cos(az), occ[1] + d * np.sin(az)])


# (name, occupied, backsight azimuth deg, backsight length, stakes as (azimuth deg, distance))
GEOMETRIES = [
    # short backsight; stakes near and far, including one on the backsight line at
    # the backsight's distance (theta = 0, D = L: the instrument-centring terms cancel
    # across the line) and one behind the instrument (theta = 180: they add)
    ("short backsight", (1000.0, 2000.0), 37.0, 30.0,
     [(37.0, 30.0), (40.0, 8.0), (97.0, 45.0), (217.0, 30.0), (300.0, 150.0), (130.0, 400.0)]),
    # long backsight; a stake a few metres away and stakes well beyond the backsight
    ("long backsight", (250_000.0, 480_000.0), 301.5, 800.0,
     [(301.5, 800.0), (10.0, 5.0), (90.0, 300.0), (200.0, 1200.0), (300.0, 2000.0)]),
    # moderate backsight in the south-west quadrant, angles all round
    ("moderate backsight", (-500.0, 75.0), 212.25, 180.0,
     [(212.25, 90.0), (0.0, 60.0), (45.0, 250.0), (135.0, 500.0), (260.0, 20.0), (359.0, 180.0)]),
]


@pytest.mark.parametrize("spec", [CONTRACT, CENTRING, POINTING], ids=["contract", "centring", "pointing"])
@pytest.mark.parametrize("geom", GEOMETRIES, ids=[g[0] for g in GEOMETRIES])
def test_first_order_matches_monte_carlo(geom, spec):
    # Independent Monte Carlo of the contract's error model (this file), 250k draws:
    # the first-order prediction within 1 % for every stake, along and across.
    name, occ, bs_az, bs_len, polar = geom
    bs = _polar(occ, [bs_az], [bs_len])[0]
    stakes = _polar(occ, [p[0] for p in polar], [p[1] for p in polar])
    seed = sum(map(ord, name)) * 1000 + int(spec.angle_sigma_arcsec * 10)  # fixed seed
    mc_along, mc_across = _monte_carlo(occ, bs, stakes, spec, seed)
    got = predict_precision(occ[0], occ[1], bs[0], bs[1], stakes[:, 0], stakes[:, 1], spec)
    np.testing.assert_allclose(got.sigma_along, mc_along, rtol=0.01)
    np.testing.assert_allclose(got.sigma_across, mc_across, rtol=0.01)
    np.testing.assert_allclose(got.r95, 2.4477 * np.maximum(got.sigma_along, got.sigma_across), rtol=1e-12)


def test_instrument_centring_correlation_is_kept():
    # On the backsight line at the backsight's distance (theta = 0, D = L), the
    # instrument's centring moves the stake and turns the circle so that the across
    # parts cancel (Ghilani & Wolf's centring term sqrt(D1^2 + D2^2 - 2 D1 D2 cos theta)
    # vanishes; from memory).  Treating the two parts as independent would give
    # sqrt(2) x centering_sigma instead: the Monte Carlo tells them apart.
    occ, bs_len = (0.0, 0.0), 30.0
    bs = _polar(occ, [0.0], [bs_len])[0]
    stakes = _polar(occ, [0.0, 180.0], [bs_len, bs_len])
    spec = InstrumentSpec(0.0, 0.001, 0.0, 0.005, 0.0)
    _, mc_across = _monte_carlo(occ, bs, stakes, spec, seed=11)
    got = predict_precision(*occ, *bs, stakes[:, 0], stakes[:, 1], spec).sigma_across
    sc = spec.centering_sigma
    # independent parts (wrong): position sc, orientation D/L * sc, target D/L * sc
    uncorrelated = math.sqrt(sc**2 + sc**2 + sc**2)
    # theta = 0: only the target term remains; theta = 180: (1 + D/L)^2 sc^2 + target
    np.testing.assert_allclose(got, [sc, math.sqrt(5.0) * sc], rtol=1e-9)
    np.testing.assert_allclose(mc_across, got, rtol=0.01)
    assert abs(mc_across[0] / uncorrelated - 1.0) > 0.3
    assert abs(mc_across[1] / uncorrelated - 1.0) > 0.2


def _closed_form(occ, bs, stake, spec):
    """Ghilani & Wolf's angle-error terms (Elementary Surveying, errors in angle
    measurement; from memory, check the edition), times D, plus the pole; EDM
    a + b ppm in quadrature (manufacturer's specification form)."""
    d1 = math.hypot(bs[0] - occ[0], bs[1] - occ[1])  # backsight
    d2 = math.hypot(stake[0] - occ[0], stake[1] - occ[1])  # foresight (the stake)
    a1 = math.atan2(bs[1] - occ[1], bs[0] - occ[0])
    a2 = math.atan2(stake[1] - occ[1], stake[0] - occ[0])
    theta = a2 - a1
    sa = spec.angle_sigma_arcsec * ARCSEC
    sc = spec.centering_sigma
    # angle = difference of two pointed directions: sqrt(2) x one pointing
    var_angle = 2.0 * sa**2
    # instrument centring: e_i sqrt(D1^2 + D2^2 - 2 D1 D2 cos theta) / (D1 D2)
    var_angle += sc**2 * (d1**2 + d2**2 - 2.0 * d1 * d2 * math.cos(theta)) / (d1 * d2) ** 2
    # backsight-target centring e_t / D1 (the stake's own target error is the pole)
    var_angle += (sc / d1) ** 2
    across = math.sqrt(d2**2 * var_angle + spec.pole_sigma**2)
    along = math.sqrt(sc**2 + spec.distance_sigma**2 + (spec.distance_ppm * 1e-6 * d2) ** 2
                      + spec.pole_sigma**2)
    return along, across


def test_worked_setout_example():
    # [computed] references.md "Setout": occupy N 5000 E 5000, backsight N 5300 E 5000,
    # target N 5100 E 5173.205 -> angle right 60-00-00, distance 200.000.
    # Stated instrument: the contract's [instrument] example (2", 2 mm + 2 ppm,
    # centring 1 mm, pole 3 mm).  Worked by hand:
    #   along^2  = 0.001^2 + 0.002^2 + (2e-6 * 200)^2 + 0.003^2 = 1.4160e-5 -> 0.0037630
    #   across^2 = 200^2 * 2 * (2 * 4.8481e-6)^2                 = 7.5214e-6  (pointing)
    #            + 0.001^2 * (200^2 + 300^2 - 2*200*300*cos 60) / 300^2 = 7.7778e-7 (instrument)
    #            + 0.001^2 * 200^2 / 300^2                        = 4.4444e-7  (target)
    #            + 0.003^2                                        = 9.0000e-6  (pole)
    #            = 1.77436e-5 -> 0.0042123;  r95 = 2.4477 * 0.0042123 = 0.0103105
    (on, oe), (bn, be), (tn, te) = design_notes.OCCUPIED.value, design_notes.BACKSIGHT.value, design_notes.TARGET.value
    got = predict_precision(on, oe, bn, be, [tn], [te], CONTRACT)
    assert isinstance(got, Precision)
    assert got.sigma_along[0] == pytest.approx(0.0037630, abs=5e-8)
    assert got.sigma_across[0] == pytest.approx(0.0042123, abs=5e-8)
    assert got.r95[0] == pytest.approx(0.0103105, abs=1e-7)
    assert flag_exceeding(got.r95, 0.01).tolist() == [True]
    assert flag_exceeding(got.r95, 0.02).tolist() == [False]


_coord = st.floats(-1e5, 1e5, allow_nan=False)
_length = st.floats(1.0, 3000.0)
_angle = st.floats(0.0, 360.0)
_spec = st.builds(
    InstrumentSpec,
    st.floats(0.0, 20.0), st.floats(0.0, 0.02), st.floats(0.0, 20.0), st.floats(0.0, 0.01), st.floats(0.0, 0.01),
)


@settings(max_examples=200, deadline=None)
@given(on=_coord, oe=_coord, bs_az=_angle, bs_len=_length, st_az=_angle, st_len=_length, spec=_spec)
def test_matches_textbook_angle_error_terms(on, oe, bs_az, bs_len, st_az, st_len, spec):
    # Property: J Sigma J^T equals the closed form built from Ghilani & Wolf's terms.
    occ = (on, oe)
    bs = _polar(occ, [bs_az], [bs_len])[0]
    stake = _polar(occ, [st_az], [st_len])[0]
    along, across = _closed_form(occ, bs, stake, spec)
    got = predict_precision(on, oe, bs[0], bs[1], stake[0], stake[1], spec)
    assert float(got.sigma_along) == pytest.approx(along, rel=1e-6, abs=1e-12)
    assert float(got.sigma_across) == pytest.approx(across, rel=1e-6, abs=1e-12)


@settings(max_examples=100, deadline=None)
@given(
    shift_n=_coord, shift_e=_coord, turn=_angle,
    bs_az=_angle, bs_len=_length, st_az=st.lists(_angle, min_size=1, max_size=5),
    spec=_spec,
)
def test_invariant_under_rotation_and_translation(shift_n, shift_e, turn, bs_az, bs_len, st_az, spec):
    # Property: the model has no preferred origin or direction (along/across are
    # relative to the sight), so moving and turning the whole job changes nothing.
    dists = np.linspace(5.0, 900.0, len(st_az))
    bs = _polar((0.0, 0.0), [bs_az], [bs_len])[0]
    stakes = _polar((0.0, 0.0), st_az, dists)
    a = predict_precision(0.0, 0.0, bs[0], bs[1], stakes[:, 0], stakes[:, 1], spec)
    occ2 = (shift_n, shift_e)
    bs2 = _polar(occ2, [bs_az + turn], [bs_len])[0]
    stakes2 = _polar(occ2, np.asarray(st_az) + turn, dists)
    b = predict_precision(*occ2, bs2[0], bs2[1], stakes2[:, 0], stakes2[:, 1], spec)
    for x, y in zip(a, b):
        np.testing.assert_allclose(x, y, rtol=1e-6, atol=1e-12)


def test_one_setup_per_stake_equals_separate_calls():
    # Multi-setup jobs pass occupied and backsight per stake: each stake must come
    # out as if computed alone from its own setup.
    rng = np.random.default_rng(5)
    m = 40
    occ = rng.uniform(0, 1000, (m, 2))
    bs = occ + rng.uniform(-300, 300, (m, 2))
    stakes = occ + rng.uniform(-400, 400, (m, 2))
    got = predict_precision(occ[:, 0], occ[:, 1], bs[:, 0], bs[:, 1], stakes[:, 0], stakes[:, 1], CONTRACT)
    for i in range(m):
        one = predict_precision(occ[i, 0], occ[i, 1], bs[i, 0], bs[i, 1], stakes[i, 0], stakes[i, 1], CONTRACT)
        assert got.sigma_along[i] == pytest.approx(float(one.sigma_along), rel=1e-12)
        assert got.sigma_across[i] == pytest.approx(float(one.sigma_across), rel=1e-12)
        along, across = _closed_form(occ[i], bs[i], stakes[i], CONTRACT)
        assert got.sigma_along[i] == pytest.approx(along, rel=1e-6)
        assert got.sigma_across[i] == pytest.approx(across, rel=1e-6)


def test_many_stakes_are_computed_in_blocks_alike():
    # More stakes than one block of Jacobians: the blocks join seamlessly.
    m = 70_000
    rng = np.random.default_rng(9)
    stakes = rng.uniform(-500, 500, (m, 2))
    got = predict_precision(0.0, 0.0, 300.0, 40.0, stakes[:, 0], stakes[:, 1], CONTRACT)
    assert got.sigma_along.shape == (m,)
    for i in (0, 65_535, 65_536, m - 1):
        along, across = _closed_form((0.0, 0.0), (300.0, 40.0), stakes[i], CONTRACT)
        assert got.sigma_along[i] == pytest.approx(along, rel=1e-9)
        assert got.sigma_across[i] == pytest.approx(across, rel=1e-9)


def test_stake_on_the_occupied_mark():
    # No sight: "along" is grid north (setout reports azimuth 0 there); the angle
    # terms vanish with D = 0, leaving centring, the constant EDM part and the pole.
    got = predict_precision(10.0, 20.0, 110.0, 20.0, [10.0], [20.0], CONTRACT)
    expect = math.sqrt(0.001**2 + 0.002**2 + 0.003**2)
    assert got.sigma_along[0] == pytest.approx(expect, rel=1e-12)
    assert got.sigma_across[0] == pytest.approx(math.sqrt(0.001**2 + 0.003**2), rel=1e-12)


def test_backsight_on_the_occupied_point_is_an_error():
    with pytest.raises(GeometryError, match="backsight N 5.0 E 6.0"):
        predict_precision([1.0, 5.0], [2.0, 6.0], 5.0, 6.0, [10.0, 10.0], [0.0, 0.0], CONTRACT)


@pytest.mark.parametrize(
    "field, key",
    [("angle_sigma_arcsec", "instrument.angle_sigma"), ("distance_sigma", "instrument.distance_sigma"),
     ("distance_ppm", "instrument.distance_ppm"), ("centering_sigma", "instrument.centering_sigma"),
     ("pole_sigma", "instrument.pole_sigma")],
)
@pytest.mark.parametrize("bad", [-0.001, float("nan"), float("inf"), "2", True])
def test_bad_instrument_values_name_the_key(field, key, bad):
    values: dict[str, object] = {"angle_sigma_arcsec": 2.0, "distance_sigma": 0.002, "distance_ppm": 2.0,
                                 "centering_sigma": 0.001, "pole_sigma": 0.003}
    values[field] = bad
    with pytest.raises(JobFileError, match=key):
        InstrumentSpec(**values)


def test_flag_exceeding():
    r95 = np.array([0.009, 0.010, 0.011])
    # a radius equal to the tolerance does not exceed it
    assert flag_exceeding(r95, 0.010).tolist() == [False, False, True]
    for bad in (0.0, -0.01, float("nan"), "x"):
        with pytest.raises(JobFileError, match="horizontal_tolerance"):
            flag_exceeding(r95, bad)  # type: ignore[arg-type]
