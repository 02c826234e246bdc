"""Spiral (clothoid) transitions against outside references.

Sources, named again beside each check:

- New Hampshire DOT, "Spiral Curve Data" (CADD help page), the published
  example kept in ``tests/reference/nhdot_spiral_curve.py``;
- scipy as the reference library (its own test value in
  ``tests/reference/scipy_fresnel.py``): ``scipy.special.fresnel`` for spirals that
  start from a tangent, ``scipy.integrate.quad`` on the cosine and sine of the
  heading for the others (a clothoid's heading is quadratic in its length);
- the series for X, Y and the relations p, k, LT, ST common to route-surveying
  texts (references.md, "Spiral curves (clothoids)");
- the outputs and job-file contracts (join features, ``spirals.csv``,
  ``elements.csv``) for what each value means;
- ezdxf to read ``plan.dxf`` back.

Everything independent of the package lives in the "reference" section below:
the clothoid is integrated here, element by element, from the job's own inputs.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path

import ezdxf
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import integrate, special
from typer.testing import CliRunner

from stakeout.alignment import (
    Alignment,
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
)
from stakeout.cli import app
from stakeout.job import OffsetLine, Staking
from stakeout.staking import plan_stakes
from stakeout.stations import Stationing
from stakeout.presentation import deflection_rows

from .helpers import build_job, read_rows, write_job
from .reference import nhdot_spiral_curve as nh
from .reference import scipy_fresnel

#: Hypothesis settings of every property here (no deadline: scipy's quad runs per point).
FREE = {"deadline": None, "suppress_health_check": [HealthCheck.too_slow]}

runner = CliRunner()
HERE = Path(__file__).resolve().parent


# ==== reference: the clothoid integrated with scipy, independent of the package ===========


def ref_local(s: float, k0: float, k1: float, length: float) -> tuple[float, float, float]:
    """Position (x along the start tangent, y square to it, positive RIGHT) and the heading
    change (radians, positive clockwise) at arc length ``s`` of an element whose signed
    curvature runs linearly from ``k0`` to ``k1`` over ``length``.

    The heading is tau(u) = k0 u + (k1 - k0) u^2 / (2 L); x = int cos tau, y = int sin tau.
    """
    c = (k1 - k0) / length
    tau = k0 * s + 0.5 * c * s * s
    if k0 == 0.0 and k1 == 0.0:  # a line
        return s, 0.0, 0.0
    if k0 == k1:  # an arc: closed form (chord of half the turn)
        return math.sin(k0 * s) / k0, (1.0 - math.cos(k0 * s)) / k0, tau
    if k0 == 0.0:
        # scipy.special.fresnel: S(z) = int_0^z sin(pi t^2 / 2) dt, C(z) likewise with cos.
        # tau = |c| u^2 / 2 = pi t^2 / 2 with u = a t, a = sqrt(pi / |c|).
        a = math.sqrt(math.pi / abs(c))
        fs, fc = special.fresnel(s / a)
        return a * float(fc), math.copysign(a * float(fs), c), tau
    # scipy.integrate.quad on the cosine and sine of the heading
    x = integrate.quad(lambda u: math.cos(k0 * u + 0.5 * c * u * u), 0.0, s, epsabs=1e-13 * abs(s), epsrel=1e-13,
                       limit=200)[0]
    y = integrate.quad(lambda u: math.sin(k0 * u + 0.5 * c * u * u), 0.0, s, epsabs=1e-13 * abs(s), epsrel=1e-13,
                       limit=200)[0]
    return x, y, tau


@dataclass
class RefElement:
    """One element of the reference chain (job units, degrees clockwise from grid north)."""

    start: float
    length: float
    n0: float
    e0: float
    az0: float
    k0: float
    k1: float

    def at(self, ds: float, offset: float = 0.0) -> tuple[float, float, float]:
        """Northing, easting and azimuth (degrees) at ``ds`` along, ``offset`` right."""
        x, y, tau = ref_local(ds, self.k0, self.k1, self.length)
        a = math.radians(self.az0)
        n = self.n0 + x * math.cos(a) - y * math.sin(a)
        e = self.e0 + x * math.sin(a) + y * math.cos(a)
        az = a + tau
        # right normal (N, E) = (-sin az, cos az)
        return n - offset * math.sin(az), e + offset * math.cos(az), math.degrees(az)

    @property
    def end(self) -> tuple[float, float, float]:
        return self.at(self.length)


def ref_chain(spec: ChainSpec) -> list[RefElement]:
    """Walk a Form A chain from its start with the reference integrals."""
    out: list[RefElement] = []
    station, n, e, az = spec.start_station, spec.start_northing, spec.start_easting, spec.azimuth
    for el in spec.elements:
        if isinstance(el, LineSpec):
            length, k0, k1 = el.length, 0.0, 0.0
        elif isinstance(el, ArcSpec):
            length = el.length if el.length is not None else el.radius * math.radians(el.delta)
            k0 = k1 = el.turn / el.radius
        else:
            assert isinstance(el, SpiralSpec)
            length = el.length
            k0 = 0.0 if el.radius_start is None else el.turn / el.radius_start
            k1 = 0.0 if el.radius_end is None else el.turn / el.radius_end
        r = RefElement(station, length, n, e, az, k0, k1)
        out.append(r)
        n, e, az = r.end
        station += length
    return out


def ref_point(chain: list[RefElement], station: float, offset: float = 0.0) -> tuple[float, float, float]:
    starts = [r.start for r in chain]
    i = max(0, min(len(chain) - 1, int(np.searchsorted(starts, station, side="right")) - 1))
    return chain[i].at(station - chain[i].start, offset)


def series_xy(length: float, theta: float, terms: int = 20) -> tuple[float, float]:
    """X, Y of a spiral from its tangent end by the series of references.md (route-surveying texts):
    X = L (1 - t^2/10 + t^4/216 - t^6/9360 + ...), Y = L (t/3 - t^3/42 + t^5/1320 - ...), general
    terms (-1)^n t^(2n) / ((4n+1)(2n)!) and (-1)^n t^(2n+1) / ((4n+3)(2n+1)!)."""
    x = sum((-1) ** n * theta ** (2 * n) / ((4 * n + 1) * math.factorial(2 * n)) for n in range(terms))
    y = sum((-1) ** n * theta ** (2 * n + 1) / ((4 * n + 3) * math.factorial(2 * n + 1)) for n in range(terms))
    return length * x, length * y


def ref_pi_curve(radii, spirals, arc_deltas, turn=1):
    """Chain a curve at a PI from the origin heading north (reference integrals) and intersect
    its end tangents: returns (t_back, t_ahead, total deflection in degrees)."""
    ks = [0.0, *(1.0 / r for r in radii), 0.0]
    n = e = az = 0.0
    for i, r in enumerate(radii):
        if spirals[i] > 0.0:
            el = RefElement(0.0, spirals[i], n, e, az, turn * ks[i], turn * ks[i + 1])
            n, e, az = el.end
        if arc_deltas[i] > 0.0:
            el = RefElement(0.0, r * math.radians(arc_deltas[i]), n, e, az, turn / r, turn / r)
            n, e, az = el.end
    if spirals[-1] > 0.0:
        el = RefElement(0.0, spirals[-1], n, e, az, turn * ks[-2], 0.0)
        n, e, az = el.end
    # back tangent: the line through the origin along north; ahead: through (n, e) along az
    a = math.radians(az)
    # PI = (t_back, 0) = (n, e) - t_ahead (cos a, sin a)  ->  t_ahead = e / sin a
    t_ahead = e / math.sin(a)
    t_back = n - t_ahead * math.cos(a)
    return t_back, t_ahead, abs(az)


def dms(text: str) -> float:
    """``d-mm-ss.s`` -> decimal degrees."""
    sign = -1.0 if text.startswith("-") else 1.0
    d, m, s = (float(v) for v in text.lstrip("-").split("-"))
    return sign * (d + m / 60.0 + s / 3600.0)


# ==== 1. published: NH DOT "Spiral Curve Data" =============================================


@pytest.fixture(scope="module")
def nh_out(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("nh")
    return build_job(write_job(tmp, nh.JOB), tmp / "out")


def test_nh_dot_spiral_curve_data(nh_out):
    # New Hampshire DOT, "Spiral Curve Data" (CADD help page), [published]: PI 23+96.20
    # (N 405083.92, E 964724.93), Delta 77-47-44.8 RT, Rc 300.00, Ls 200.00 -> theta_s 19-05-54.9,
    # Delta_c 39-35-54.9, Ts 346.15, Es 92.58, Lc 207.34, LT 134.12, ST 67.38, p 5.53, k 99.63,
    # Xc 197.79, Yc 22.05.  Printed precision: 0.01 ft, 0.1 second (tests/reference/nhdot_spiral_curve.py).
    spirals = read_rows(nh_out / "spirals.csv")
    assert len(spirals) == 2
    for row in spirals:
        assert float(row["length"]) == nh.SPIRAL_LENGTH.approx()
        assert float(row["theta_deg"]) == nh.THETA_S.approx()  # NH DOT theta_s
        assert float(row["long_tangent"]) == nh.LT.approx()  # NH DOT LT
        assert float(row["short_tangent"]) == nh.ST.approx()  # NH DOT ST
        assert float(row["p"]) == nh.P.approx()  # NH DOT p
        assert float(row["k"]) == nh.K.approx()  # NH DOT k
        assert float(row["x"]) == nh.XC.approx()  # NH DOT Xc
        assert float(row["y"]) == nh.YC.approx()  # NH DOT Yc
        assert row["turn"] == "right"
    assert (spirals[0]["radius_start"], spirals[0]["radius_end"]) == ("", "300.0000")
    assert (spirals[1]["radius_start"], spirals[1]["radius_end"]) == ("300.0000", "")

    elements = read_rows(nh_out / "elements.csv")
    assert [r["kind"] for r in elements] == ["line", "spiral", "arc", "spiral", "line"]
    arc = elements[2]
    assert float(arc["length"]) == nh.LC.approx()  # NH DOT Lc
    delta_c = float(arc["end_azimuth_deg"]) - float(arc["start_azimuth_deg"])
    assert delta_c == nh.DELTA_C.approx()  # NH DOT Delta_c
    (curve,) = read_rows(nh_out / "curves.csv")
    assert float(curve["delta_deg"]) == nh.DELTA_C.approx()  # NH DOT Delta_c
    assert curve["delta_dms"] == nh.DELTA_C.printed
    assert float(curve["length"]) == nh.LC.approx()  # NH DOT Lc
    assert float(curve["pi_station"]) == nh.PI_STATION.approx()  # NH DOT PI station

    # key points: NH DOT [computed] TS 20+50.05, SC 22+50.05, CS 24+57.39, ST 26+57.39
    rows = read_rows(nh_out / "stations.csv")
    by_feature: dict[str, list[dict]] = {}
    for r in rows:
        if r["feature"]:
            by_feature.setdefault(r["feature"], []).append(r)
    for feature, fig in (("TS", nh.TS_STATION), ("SC", nh.SC_STATION), ("CS", nh.CS_STATION), ("ST", nh.ST_STATION)):
        hits = by_feature[feature]
        assert len(hits) == 3  # one per offset line
        assert {r["station_label"] for r in hits} == {fig.printed}
    # Ts = distance PI -> TS and PI -> ST (NH DOT Ts 346.15), from the stakes' coordinates
    for feature in ("TS", "ST"):
        cl = [r for r in by_feature[feature] if r["code"] == "CL"][0]
        ts = math.hypot(float(cl["northing"]) - nh.PI_NORTHING.value, float(cl["easting"]) - nh.PI_EASTING.value)
        assert ts == nh.TS.approx()  # NH DOT Ts

    # the curve report (stakeout curve): Ts both sides and Es
    r = runner.invoke(app, ["curve", str(nh_out.parent / "job.toml")])
    assert r.exit_code == 0, r.output
    back = float(re.search(r"tangent PI to start \(back\)\s+([\d.]+)", r.output).group(1))
    ahead = float(re.search(r"tangent PI to end \(ahead\)\s+([\d.]+)", r.output).group(1))
    external = float(re.search(r"external \(PI to the curve\)\s+([\d.]+)", r.output).group(1))
    assert back == nh.TS.approx()  # NH DOT Ts
    assert ahead == nh.TS.approx()  # NH DOT Ts
    assert external == nh.ES.approx()  # NH DOT Es
    assert nh.THETA_S.printed in r.output  # NH DOT theta_s
    assert nh.DELTA_C.printed in r.output  # NH DOT Delta_c


def test_nh_dot_relations_of_the_source():
    # The relations of references.md (route-surveying texts) applied by hand to the NH DOT
    # inputs give the NH DOT printed values: ties the published data to the formulas used below.
    r, ls, big_i = nh.RADIUS.value, nh.SPIRAL_LENGTH.value, math.radians(nh.DELTA.value)
    th = ls / (2 * r)
    x, y = series_xy(ls, th)
    p = y - r * (1 - math.cos(th))
    k = x - r * math.sin(th)
    assert (x, y, p, k) == pytest.approx((nh.XC.value, nh.YC.value, nh.P.value, nh.K.value), abs=nh.XC.tol)
    assert (r + p) * math.tan(big_i / 2) + k == nh.TS.approx()  # Ts
    assert (r + p) / math.cos(big_i / 2) - r == nh.ES.approx()  # Es
    assert x - y / math.tan(th) == nh.LT.approx()  # LT
    assert y / math.sin(th) == nh.ST.approx()  # ST


# ==== random spiralled alignments ==========================================================


@dataclass
class GenCurve:
    """A curve of a generated chain: its turn, radii in order, where it has spirals, which arcs have no length."""

    turn: int
    radii: list[float]
    spirals: list[bool]  # before the first arc, between arcs, after the last
    arc_zero: list[bool]  # an arc with no length (only between two spirals)


def _curve_elements(draw, c: GenCurve, total_deg: float) -> list:
    """Form A elements of one curve turning ``total_deg`` in all."""
    ks = [0.0, *(1.0 / r for r in c.radii), 0.0]
    weights = []  # (kind, index, weight)
    for i in range(len(c.radii)):
        if c.spirals[i]:
            weights.append(("spiral", i, draw(st.floats(0.2, 1.0))))
        if not c.arc_zero[i]:
            weights.append(("arc", i, draw(st.floats(0.2, 1.0))))
    if c.spirals[-1]:
        weights.append(("spiral", len(c.radii), draw(st.floats(0.2, 1.0))))
    wsum = sum(w for _, _, w in weights)
    out = []
    for kind, i, w in weights:
        ang = math.radians(total_deg * w / wsum)
        if kind == "arc":
            out.append(ArcSpec(c.radii[i], c.turn, delta=math.degrees(ang)))
        else:
            length = 2.0 * ang / (ks[i] + ks[i + 1])  # theta = L (1/R_start + 1/R_end) / 2
            rs = None if ks[i] == 0.0 else 1.0 / ks[i]
            re_ = None if ks[i + 1] == 0.0 else 1.0 / ks[i + 1]
            out.append(SpiralSpec(length, c.turn, rs, re_))
    return out


@st.composite
def spiral_chains(draw, max_curves: int = 3):
    """A random Form A chain of curves with spirals (entry, exit, between arcs, spiral-spiral at a
    common radius), joined by tangents or directly (reverse spirals, PT TS, ST PC, PCC, PRC).
    The heading stays within 60 degrees of the start, so the alignment never comes back near itself."""
    els: list = []
    if draw(st.booleans()):
        els.append(LineSpec(draw(st.floats(10, 400))))
    rel = 0.0
    for j in range(draw(st.integers(1, max_curves))):
        if j and draw(st.booleans()):
            els.append(LineSpec(draw(st.floats(10, 400))))
        total = draw(st.floats(5, 60))
        turn = draw(st.sampled_from([-1, 1]))
        if abs(rel + turn * total) > 60:
            turn = -turn
        rel += turn * total
        radii = [draw(st.floats(80, 1500))]
        if draw(st.booleans()):
            ratio = draw(st.one_of(st.floats(0.3, 0.75), st.floats(1.35, 3.0)))
            radii.append(radii[0] * ratio)
        n = len(radii)
        spirals = [draw(st.booleans()) for _ in range(n + 1)]
        if n == 2:
            spirals[1] = spirals[1] or draw(st.booleans())  # mostly with a spiral between the arcs
        if not any(spirals):
            spirals[draw(st.integers(0, n))] = True  # every curve has a spiral
        arc_zero = [spirals[i] and spirals[i + 1] and draw(st.integers(0, 3)) == 0 for i in range(n)]
        els.extend(_curve_elements(draw, GenCurve(turn, radii, spirals, arc_zero), total))
    if draw(st.booleans()):
        els.append(LineSpec(draw(st.floats(10, 400))))
    return ChainSpec("S", draw(st.floats(-500, 5000)), draw(st.floats(-1e5, 1e5)), draw(st.floats(-1e5, 1e5)),
                     draw(st.floats(0, 359.999)), tuple(els))


def min_radius(spec: ChainSpec) -> float:
    radii = [1e9]
    for el in spec.elements:
        if isinstance(el, ArcSpec):
            radii.append(el.radius)
        elif isinstance(el, SpiralSpec):
            radii += [r for r in (el.radius_start, el.radius_end) if r is not None]
    return min(radii)


# ==== 2. independent reference: scipy against the engine ====================================


@settings(max_examples=80, **FREE)
@given(spiral_chains(), st.data())
def test_evaluate_against_scipy(spec, data):
    # scipy.special.fresnel (spirals from a tangent) and scipy.integrate.quad on the heading
    # (spirals between arcs, exit spirals), chained element by element from the job's start:
    # position and azimuth at random stations and offsets to 1e-9 of the length.
    a = build_alignment(spec)
    chain = ref_chain(spec)
    assert len(a.elements) == len(chain)
    omax = 0.5 * min_radius(spec)
    m = 24
    s = np.array(data.draw(st.lists(st.floats(0, 1), min_size=m, max_size=m))) * a.length + a.start_station
    o = np.array(data.draw(st.lists(st.floats(-omax, omax), min_size=m, max_size=m)))
    n, e, az = a.evaluate(s, o, miter=False)
    tol = 1e-9 * a.length
    for i in range(m):
        rn, re_, raz = ref_point(chain, float(s[i]), float(o[i]))
        assert math.hypot(n[i] - rn, e[i] - re_) <= tol, (s[i], o[i])
        assert abs((az[i] - raz + 180.0) % 360.0 - 180.0) <= 1e-9


@settings(max_examples=150, **FREE)
@given(st.floats(1.0, 2000.0), st.floats(0.02, 3.0), st.sampled_from(["entry", "exit", "between"]),
       st.floats(0.2, 5.0), st.sampled_from([-1, 1]), st.floats(0, 360), st.data())
def test_single_spiral_against_scipy(length, theta, kind, ratio, turn, az, data):
    # One spiral at random length and central angle (up to 3 rad), against scipy: fresnel for an
    # entry spiral, quad on the heading for an exit spiral and one between two arcs.
    if kind == "between":
        if abs(ratio - 1.0) < 0.05:
            ratio = 1.5
        # theta = L (1/R1 + 1/R2) / 2 with R2 = R1 * ratio
        r1 = length * (1.0 + 1.0 / ratio) / (2.0 * theta)
        rs, re_ = r1, r1 * ratio
    elif kind == "entry":
        rs, re_ = None, length / (2.0 * theta)
    else:
        rs, re_ = length / (2.0 * theta), None
    spec = ChainSpec("S", 100.0, 5000.0, -3000.0, az, (SpiralSpec(length, turn, rs, re_),))
    a = build_alignment(spec)
    (ref,) = ref_chain(spec)
    s = np.array(data.draw(st.lists(st.floats(0, 1), min_size=16, max_size=16))) * length + 100.0
    n, e, azs = a.evaluate(s)
    for i in range(s.size):
        rn, re2, raz = ref.at(float(s[i]) - 100.0)
        assert math.hypot(n[i] - rn, e[i] - re2) <= 1e-9 * length
        assert abs((azs[i] - raz + 180.0) % 360.0 - 180.0) <= 1e-9
    el = a.elements[0]
    rn, re2, raz = ref.end
    assert math.hypot(el.end_northing - rn, el.end_easting - re2) <= 1e-9 * length
    assert el.central_angle == pytest.approx(math.degrees(theta), rel=1e-12)


@settings(**FREE)
@given(st.floats(1.0, 1000.0), st.floats(1e-4, 1.2))
def test_series_xy(length, theta):
    # The series of references.md (route-surveying texts) for X, Y at the end of a spiral from
    # a tangent, against scipy's Fresnel integrals and against the engine (spiral_figures and
    # the evaluated SC), to 1e-9 of the length.
    from stakeout.alignment.clothoid import spiral_figures

    r = length / (2.0 * theta)
    x, y = series_xy(length, theta)
    fx, fy, _ = ref_local(length, 0.0, 1.0 / r, length)  # scipy.special.fresnel
    assert abs(x - fx) <= 1e-9 * length and abs(y - fy) <= 1e-9 * length
    f = spiral_figures(length, None, r)
    assert abs(f.x - x) <= 1e-9 * length and abs(f.y - y) <= 1e-9 * length
    a = build_alignment(ChainSpec("S", 0.0, 0.0, 0.0, 0.0, (SpiralSpec(length, 1, None, r),)))
    el = a.elements[0]
    assert abs(el.end_northing - x) <= 1e-9 * length and abs(el.end_easting - y) <= 1e-9 * length


def test_scipy_fresnel_value():
    # scipy's own tests give fresnel(0.5) = (S 0.064732432859999287, C 0.49234422587144644)
    # (references.md): the reference library behaves as the reference says.
    s, c = special.fresnel(scipy_fresnel.ARGUMENT.value)
    assert s == pytest.approx(scipy_fresnel.S.value, rel=1e-15)
    assert c == pytest.approx(scipy_fresnel.C.value, rel=1e-15)


@st.composite
def spiral_pi_lists(draw, max_pis: int = 4):
    """A random Form B PI list with spiral-curve-spirals and compound curves with spirals between
    their arcs, sized by the reference tangents (scipy) so every curve fits between its PIs.
    Returns the spec and, per PI index, the reference (t_back, t_ahead)."""
    k = draw(st.integers(1, max_pis))
    lengths = [draw(st.floats(300, 3000)) for _ in range(k + 1)]
    heading0 = draw(st.floats(0, 360))
    rel = 0.0
    heads = [heading0]
    for _ in range(k):
        d = draw(st.floats(8, 60)) * draw(st.sampled_from([-1, 1]))
        if abs(rel + d) > 60:
            d = -d
        rel += d
        heads.append(heading0 + rel)
    n, e = draw(st.floats(-1e5, 1e6)), draw(st.floats(-1e5, 1e6))
    pts = [(n, e)]
    for length, h in zip(lengths, heads):
        n += length * math.cos(math.radians(h))
        e += length * math.sin(math.radians(h))
        pts.append((n, e))
    pis = [PISpec(*pts[0], where="pi[0]")]
    tangents: dict[int, tuple[float, float]] = {}
    for i in range(1, k + 1):
        defl = abs(heads[i] - heads[i - 1])
        narcs = draw(st.sampled_from([1, 1, 2, 2, 3]))
        radii = [draw(st.floats(1.0, 10.0))]
        for _ in range(narcs - 1):
            radii.append(radii[-1] * draw(st.one_of(st.floats(0.3, 0.75), st.floats(1.35, 3.0))))
        spirals_on = [draw(st.booleans()) for _ in range(narcs + 1)]
        if not any(spirals_on):
            spirals_on[0] = spirals_on[-1] = True
        ks = [0.0, *(1.0 / r for r in radii), 0.0]
        w_sp = [draw(st.floats(0.2, 1.0)) if on else 0.0 for on in spirals_on]
        w_arc = [draw(st.floats(0.2, 1.0)) for _ in radii]
        wsum = sum(w_sp) + sum(w_arc)
        theta = [math.radians(defl) * w / wsum for w in w_sp]
        spirals = [2.0 * th / (ks[j] + ks[j + 1]) for j, th in enumerate(theta)]  # theta = L (k_a + k_b) / 2
        deltas = [defl * w / wsum for w in w_arc]
        t_back, t_ahead, _ = ref_pi_curve(radii, spirals, deltas)
        room = 0.45 * min(lengths[i - 1], lengths[i])
        scale = room / max(abs(t_back), abs(t_ahead)) * draw(st.floats(0.2, 1.0))
        rest = draw(st.integers(0, narcs - 1))
        pis.append(PISpec(*pts[i], tuple(r * scale for r in radii),
                          tuple(None if j == rest else d for j, d in enumerate(deltas)), where=f"pi[{i}]",
                          spirals=tuple(ls * scale for ls in spirals)))
        tangents[i] = (t_back * scale, t_ahead * scale)
    pis.append(PISpec(*pts[-1], where=f"pi[{k + 1}]"))
    return PIListSpec("R", draw(st.floats(-1000, 10000)), tuple(pis)), tangents


def alignment_min_radius(a: Alignment) -> float:
    return min([r for el in a.elements for r in (el.radius_start, el.radius_end) if r is not None] + [1e9])


def random_alignments():
    """Form B PI lists with spirals, or Form A chains with spirals (reverse spirals among them)."""
    return st.one_of(spiral_pi_lists().map(lambda x: x[0]), spiral_chains())


# ==== 3. properties ========================================================================


@settings(max_examples=100, **FREE)
@given(spiral_pi_lists())
def test_closure_pi_list_with_spirals(case):
    # Closure: the build walks the elements and checks the PT against the PI geometry itself;
    # here the PI of every curve and its tangents must equal those of the reference walk
    # (scipy integrals, tangents intersected by plain vector algebra), and the POE the last PI.
    spec, tangents = case
    a = build_alignment(spec)
    curves = sorted(a.curves, key=lambda c: c.pc_station)
    assert len(curves) == len(tangents)
    for c, i in zip(curves, sorted(tangents)):
        pi = spec.pis[i]
        t_back, t_ahead = tangents[i]
        size = max(1.0, t_back + t_ahead)
        assert math.hypot(c.pi_northing - pi.northing, c.pi_easting - pi.easting) <= 1e-6 * size
        assert c.tangents.back == pytest.approx(t_back, rel=1e-9, abs=1e-9)
        assert c.tangents.ahead == pytest.approx(t_ahead, rel=1e-9, abs=1e-9)
        first, last = a.elements[c.elements[0]], a.elements[c.elements[-1]]
        # TS (or PC) = PI - T_back along the back tangent; ST (or PT) = PI + T_ahead along the ahead one
        b = math.radians(first.start_azimuth)
        assert math.hypot(first.start_northing - (pi.northing - t_back * math.cos(b)),
                          first.start_easting - (pi.easting - t_back * math.sin(b))) <= 1e-6 * size
        f = math.radians(last.end_azimuth)
        assert math.hypot(last.end_northing - (pi.northing + t_ahead * math.cos(f)),
                          last.end_easting - (pi.easting + t_ahead * math.sin(f))) <= 1e-6 * size
    end = a.elements[-1]
    assert end.end_northing == pytest.approx(spec.pis[-1].northing, abs=1e-6)
    assert end.end_easting == pytest.approx(spec.pis[-1].easting, abs=1e-6)


@pytest.mark.slow
@settings(max_examples=120, **FREE)
@given(random_alignments(), st.data())
def test_round_trip_and_monotone(spec, data):
    # station/offset -> point -> station/offset through Alignment.locate, offsets up to 0.8 of the
    # smallest radius on either side (the inside included); stationing increases along the
    # elements and along the centreline.
    a = build_alignment(spec)
    starts = np.array([el.start for el in a.elements])
    ends = np.array([el.end for el in a.elements])
    assert np.all(np.diff(starts) > 0)
    assert np.allclose(starts[1:], ends[:-1], rtol=0, atol=1e-9)
    omax = 0.8 * alignment_min_radius(a)
    m = 48
    s = np.array(data.draw(st.lists(st.floats(0, 1), min_size=m, max_size=m))) * a.length + a.start_station
    o = np.array(data.draw(st.lists(st.floats(-omax, omax), min_size=m, max_size=m)))
    n, e, _ = a.evaluate(s, o, miter=False)
    s2, o2, d2 = a.locate(n, e)
    assert np.allclose(s2, s, atol=1e-6, rtol=0)
    assert np.allclose(o2, o, atol=1e-6, rtol=0)
    assert np.allclose(d2, np.abs(o), atol=1e-6, rtol=0)
    # along the centreline, located stations increase with the station
    cs = np.linspace(a.start_station, a.end_station, 400)
    cn, ce, _ = a.evaluate(cs, miter=False)
    ls = a.locate(cn, ce).station
    assert np.all(np.diff(ls) > 0)


@settings(max_examples=50, **FREE)
@given(random_alignments(), st.lists(st.floats(-0.8, 0.8), min_size=1, max_size=4, unique=True),
       st.floats(5, 200))
def test_key_points_on_every_offset_line(spec, fractions, interval):
    # plan_stakes puts every key point (TS, SC, CS, ST, ...) on every offset line, with its features.
    a = build_alignment(spec)
    r = alignment_min_radius(a)
    offsets = sorted({round(f * r, 6) for f in fractions})
    staking = Staking(interval, tuple(OffsetLine(o, f"C{i}") for i, o in enumerate(offsets)), (), 1, "", None)
    sp = plan_stakes(a, staking, Stationing(a.start_station, a.end_station, 100, 2))
    m = len(offsets)
    assert len(sp) == m * sp.stations.size
    assert np.all(np.diff(sp.stations) > 0)
    for kp in a.key_points:
        hit = np.abs(sp.station - kp.station) < 1e-9
        assert hit.sum() == m
        assert {sp.feature[i] for i in np.where(hit)[0]} == {" ".join(kp.features)}
    # each stake lies at its offset from the centreline point of its station (stake coordinates
    # are rounded to 4 decimals; inside a curve an along error grows by R / (R - offset) <= 5)
    loc = a.locate(sp.northing, sp.easting)
    assert np.allclose(loc.offset, sp.offset, atol=1e-4, rtol=0)
    assert np.allclose(loc.station, sp.station, atol=4e-4, rtol=0)


@settings(max_examples=100, **FREE)
@given(random_alignments())
def test_continuity_at_joins(spec):
    # Position and direction continuous at every join: each element's end, integrated with scipy
    # from its own start (an independent walk), is the next element's start to 1e-9, its direction
    # to 1e-9 degrees.  Curvature continuous wherever a spiral joins (TS, SC, CS, ST, SC CS, ST TS,
    # spiral between arcs), from the engine's azimuths on both sides; it jumps only at the joins
    # the contract allows (PC, PT, PCC, PRC, PT TS, ST PC).
    a = build_alignment(spec)
    feats = {round(k.station, 6): k.features for k in a.key_points}
    els = a.elements
    for prev, cur in zip(els[:-1], els[1:]):
        ref = RefElement(prev.start, prev.length, prev.start_northing, prev.start_easting, prev.start_azimuth,
                         prev.curvature_start, prev.curvature_end)
        rn, re_, raz = ref.end
        assert math.hypot(rn - cur.start_northing, re_ - cur.start_easting) <= 1e-9 * max(1.0, prev.length)
        assert abs((raz - cur.start_azimuth + 180.0) % 360.0 - 180.0) <= 1e-9
        if not (isinstance(prev, Spiral) or isinstance(cur, Spiral)):
            continue
        join = cur.start
        f = feats.get(round(join, 6), ())
        if ("PT" in f and "TS" in f) or ("ST" in f and "PC" in f):
            continue
        h = min(prev.length, cur.length) / 4.0
        k_back = _curvature(a, join, h, -1)
        k_ahead = _curvature(a, join, h, +1)
        scale = 1.0 / alignment_min_radius(a)
        assert abs(k_back - k_ahead) <= 1e-6 * scale, (f, k_back, k_ahead)
        assert abs(prev.curvature_end - cur.curvature_start) <= 1e-12 * scale


def _curvature(a: Alignment, join: float, h: float, side: int) -> float:
    """Signed curvature (1/units, + right) at ``join`` from the engine's azimuths at
    join + side * (h, 2h, 3h): a clothoid's (or arc's) heading is quadratic in length, so the
    one-sided difference f'(0) = -(5 f1 - 8 f2 + 3 f3) / (2 side h) is exact up to rounding."""
    s = join + side * h * np.array([1.0, 2.0, 3.0])
    _, _, az = a.evaluate(s, miter=False)
    f = np.unwrap(np.radians(az))
    return float((5 * f[0] - 8 * f[1] + 3 * f[2]) / (2 * h)) * -side


# ==== 4. feature names at joins (job-file contract, "Key points where elements meet") =====


def _features(spec) -> list[str]:
    return [" ".join(k.features) for k in build_alignment(spec).key_points]


def _chain(*els) -> ChainSpec:
    return ChainSpec("F", 1000.0, 5000.0, 2000.0, 30.0, tuple(els))


RIGHT, LEFT = 1, -1  # turn


@pytest.mark.parametrize("spec, want", [
    # tangent -> spiral TS, spiral -> arc SC, arc -> spiral CS, spiral -> tangent ST;
    # reverse spirals meet through zero curvature: ST TS
    (_chain(LineSpec(100.0), SpiralSpec(60.0, RIGHT, None, 300.0), ArcSpec(300.0, RIGHT, delta=20.0),
            SpiralSpec(60.0, RIGHT, 300.0, None), SpiralSpec(50.0, LEFT, None, 250.0), ArcSpec(250.0, LEFT, delta=15.0),
            SpiralSpec(50.0, LEFT, 250.0, None), LineSpec(100.0)),
     ["POB", "TS", "SC", "CS", "ST TS", "SC", "CS", "ST", "POE"]),
    # spiral -> spiral at a common radius (a curve whose arc has no length): SC CS;
    # the alignment starting and ending on spirals: POB TS, ST POE
    (_chain(SpiralSpec(80.0, RIGHT, None, 300.0), SpiralSpec(80.0, RIGHT, 300.0, None)),
     ["POB TS", "SC CS", "ST POE"]),
    # arc -> spiral starting from a tangent (the curvature jumps): PT TS; a spiral between two
    # arcs of one curve: CS then SC
    (_chain(LineSpec(50.0), ArcSpec(400.0, RIGHT, delta=10.0), SpiralSpec(60.0, LEFT, None, 300.0),
            ArcSpec(300.0, LEFT, delta=12.0), SpiralSpec(50.0, LEFT, 300.0, 180.0), ArcSpec(180.0, LEFT, length=40.0),
            SpiralSpec(60.0, LEFT, 180.0, None), LineSpec(50.0)),
     ["POB", "PC", "PT TS", "SC", "CS", "SC", "CS", "ST", "POE"]),
    # same turn: arc -> spiral from a tangent is still PT TS (curvature 1/R -> 0)
    (_chain(ArcSpec(400.0, RIGHT, delta=10.0), SpiralSpec(60.0, RIGHT, None, 300.0), ArcSpec(300.0, RIGHT, delta=5.0)),
     ["POB PC", "PT TS", "SC", "PT POE"]),
    # a spiral ending on a tangent followed by an arc: ST (spiral -> tangent) and PC (tangent -> arc),
    # listed in the contract's order (PT, ST, PC, TS, ...)
    (_chain(LineSpec(50.0), SpiralSpec(60.0, RIGHT, None, 300.0), SpiralSpec(60.0, RIGHT, 300.0, None),
            ArcSpec(500.0, LEFT, delta=8.0), LineSpec(50.0)),
     ["POB", "TS", "SC CS", "ST PC", "PT", "POE"]),
], ids=["reverse-spirals", "spiral-spiral-ends", "pt-ts-and-between-arcs", "pt-ts-same-turn", "st-pc"])
def test_join_features(spec, want):
    # Outputs contract: feature names at joins, and the order POB, AP, PT, ST, PC, TS, PCC, PRC,
    # SC, CS, EQ, ..., POE where several coincide.
    assert _features(spec) == want


@pytest.mark.parametrize("delta", [77.79577778, 60.0, 45.0, 33.3, 12.5])
def test_spirals_taking_the_whole_angle_meet_at_sc_cs(delta):
    # Job-file contract: "spiral -> spiral at a common radius (a curve whose arc has no length)"
    # is one key point SC CS.  Form C with spirals = [Ls, Ls], Ls = R * I (radians): each spiral
    # turns theta = Ls / 2R = I / 2, so the "rest" left for the arc is zero.
    r = 300.0
    ls = r * math.radians(delta)
    spec = SinglePISpec("Z", 2000.0, 1000.0, 1000.0, 40.0, 40.0 + delta, (r,), (None,), 50.0, 50.0,
                        spirals=(ls, ls))
    a = build_alignment(spec)
    assert [" ".join(k.features) for k in a.key_points] == ["POB", "TS", "SC CS", "ST", "POE"]
    assert [el.kind for el in a.elements] == ["line", "spiral", "spiral", "line"]
    # the symmetric spiral curve's tangent, Ts = (R + p) tan(I/2) + k (references.md)
    th = ls / (2 * r)
    x, y = series_xy(ls, th)
    ts = (r + y - r * (1 - math.cos(th))) * math.tan(math.radians(delta) / 2) + x - r * math.sin(th)
    (curve,) = a.curves
    assert curve.tangents.back == pytest.approx(ts, abs=1e-6)
    assert curve.tangents.ahead == pytest.approx(ts, abs=1e-6)


def test_compound_with_spiral_between_arcs_features():
    # Form C compound curve with a spiral between its arcs, in, between and out spirals:
    # TS, SC, CS (arc -> spiral), SC (spiral -> arc), CS, ST; one curve.
    spec = SinglePISpec("C", 3000.0, 1000.0, 1000.0, 10.0, 95.0, (600.0, 250.0), (None, 30.0), 20.0, 20.0,
                        spirals=(120.0, 90.0, 80.0))
    a = build_alignment(spec)
    assert [" ".join(k.features) for k in a.key_points] == ["POB", "TS", "SC", "CS", "SC", "CS", "ST", "POE"]
    assert len(a.curves) == 1
    # the rest = I - the other arcs - every spiral's theta (job-file contract)
    thetas = [120.0 / 600.0 / 2, 90.0 * (1 / 600.0 + 1 / 250.0) / 2, 80.0 / 250.0 / 2]
    rest = 85.0 - 30.0 - math.degrees(sum(thetas))
    arcs = [el for el in a.elements if isinstance(el, Arc)]
    assert arcs[0].delta == pytest.approx(rest, abs=1e-9)
    assert arcs[1].delta == pytest.approx(30.0, abs=1e-9)
    # closure against the reference walk: tangents from the PI
    t_back, t_ahead, total = ref_pi_curve((600.0, 250.0), (120.0, 90.0, 80.0), (rest, 30.0))
    assert total == pytest.approx(85.0, abs=1e-9)
    assert a.curves[0].tangents.back == pytest.approx(t_back, abs=1e-6)
    assert a.curves[0].tangents.ahead == pytest.approx(t_ahead, abs=1e-6)


# ==== 5. spirals.csv and elements.csv against the reference chain =========================

METRIC_JOB = """format = 1
[job]
name = "Spiral chain, metres"
units = "m"
[alignment]
name = "SP"
start = { station = "1+000", northing = 5000.0, easting = 2000.0 }
azimuth = "30-00-00"
[[alignment.element]]
kind = "line"
length = 80.0
[[alignment.element]]
kind = "spiral"
length = 60.0
radius_end = 200.0
turn = "right"
[[alignment.element]]
kind = "arc"
radius = 200.0
delta = "25-00-00"
turn = "right"
[[alignment.element]]
kind = "spiral"
length = 50.0
radius_start = 200.0
radius_end = 120.0
turn = "right"
[[alignment.element]]
kind = "arc"
radius = 120.0
length = 40.0
turn = "right"
[[alignment.element]]
kind = "spiral"
length = 70.0
radius_start = 120.0
turn = "right"
[[alignment.element]]
kind = "spiral"
length = 60.0
radius_end = 300.0
turn = "left"
[[alignment.element]]
kind = "arc"
radius = 300.0
delta = "10-00-00"
turn = "left"
[[alignment.element]]
kind = "spiral"
length = 60.0
radius_start = 300.0
turn = "left"
[[alignment.element]]
kind = "line"
length = 100.0
[staking]
interval = 20
offsets = [{ offset = -3.5, code = "EPL" }, { offset = 0.0, code = "CL" }, { offset = 5.0, code = "EPR" }]
"""

#: The chain of METRIC_JOB as the reference walks it (the job file's own numbers).
METRIC_SPEC = ChainSpec("SP", 1000.0, 5000.0, 2000.0, 30.0, (
    LineSpec(80.0), SpiralSpec(60.0, RIGHT, None, 200.0), ArcSpec(200.0, RIGHT, delta=25.0),
    SpiralSpec(50.0, RIGHT, 200.0, 120.0), ArcSpec(120.0, RIGHT, length=40.0), SpiralSpec(70.0, RIGHT, 120.0, None),
    SpiralSpec(60.0, LEFT, None, 300.0), ArcSpec(300.0, LEFT, delta=10.0), SpiralSpec(60.0, LEFT, 300.0, None),
    LineSpec(100.0)))


@pytest.fixture(scope="module")
def metric_out(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("metric")
    return build_job(write_job(tmp, METRIC_JOB), tmp / "out")


def _tangent_frame(n0, e0, az_deg, n1, e1, turn) -> tuple[float, float]:
    """(x along the tangent at (n0, e0) with azimuth az, y square to it toward the turn) of (n1, e1)."""
    a = math.radians(az_deg)
    dn, de = n1 - n0, e1 - e0
    x = dn * math.cos(a) + de * math.sin(a)
    y = (de * math.cos(a) - dn * math.sin(a)) * turn  # right of the tangent, times turn: toward the curve
    return x, y


def test_spirals_csv_against_definitions(metric_out):
    # Outputs contract, spirals.csv: theta = L (1/R_start + 1/R_end) / 2; for a spiral with a tangent
    # end, x, y = the other end from the tangent end along and square to that tangent, p = y - R(1 -
    # cos theta), k = x - R sin theta, long tangent = x - y / tan theta, short = y / sin theta; for a
    # spiral between two arcs, x, y from its start along its start tangent and p, k, tangents empty.
    # Reference: the chain walked with scipy (fresnel / quad) from the job's numbers.
    chain = ref_chain(METRIC_SPEC)
    rows = read_rows(metric_out / "spirals.csv")
    specs = [(i, el) for i, el in enumerate(METRIC_SPEC.elements) if isinstance(el, SpiralSpec)]
    assert len(rows) == len(specs) == 5
    assert list(rows[0])[:14] == ["spiral", "start_station", "end_station", "length", "radius_start",
                                  "radius_end", "theta_deg", "x", "y", "p", "k", "long_tangent",
                                  "short_tangent", "turn"]
    q = 6e-5  # 4 decimals printed
    for row, (i, sp) in zip(rows, specs):
        ref = chain[i]
        n1, e1, az1 = ref.end
        assert float(row["start_station"]) == pytest.approx(ref.start, abs=q)
        assert float(row["end_station"]) == pytest.approx(ref.start + sp.length, abs=q)
        assert float(row["length"]) == pytest.approx(sp.length, abs=q)
        assert row["radius_start"] == ("" if sp.radius_start is None else f"{sp.radius_start:.4f}")
        assert row["radius_end"] == ("" if sp.radius_end is None else f"{sp.radius_end:.4f}")
        assert row["turn"] == ("right" if sp.turn > 0 else "left")
        inv = [0.0 if r is None else 1.0 / r for r in (sp.radius_start, sp.radius_end)]
        theta = sp.length * sum(inv) / 2.0
        assert float(row["theta_deg"]) == pytest.approx(math.degrees(theta), abs=1e-8)
        if sp.radius_start is None:  # from its tangent end, the start (TS)
            x, y = _tangent_frame(ref.n0, ref.e0, ref.az0, n1, e1, sp.turn)
        elif sp.radius_end is None:  # from its tangent end, the end (ST), looking back along that tangent
            x, y = _tangent_frame(n1, e1, az1 + 180.0, ref.n0, ref.e0, -sp.turn)
        else:  # between two arcs: from its start along its start tangent
            x, y = _tangent_frame(ref.n0, ref.e0, ref.az0, n1, e1, sp.turn)
        assert float(row["x"]) == pytest.approx(x, abs=q)
        assert float(row["y"]) == pytest.approx(y, abs=q)
        if sp.radius_start is not None and sp.radius_end is not None:
            assert [row[c] for c in ("p", "k", "long_tangent", "short_tangent")] == ["", "", "", ""]
            continue
        radius = sp.radius_end if sp.radius_start is None else sp.radius_start
        # the same figures by the route-surveying series (references.md)
        assert (x, y) == pytest.approx(series_xy(sp.length, theta), abs=1e-9)
        assert float(row["p"]) == pytest.approx(y - radius * (1 - math.cos(theta)), abs=q)
        assert float(row["k"]) == pytest.approx(x - radius * math.sin(theta), abs=q)
        assert float(row["long_tangent"]) == pytest.approx(x - y / math.tan(theta), abs=q)
        assert float(row["short_tangent"]) == pytest.approx(y / math.sin(theta), abs=q)


def test_elements_csv_against_reference(metric_out):
    # Outputs contract, elements.csv: one row per element; kind; stations; ends; azimuths;
    # radius_start / radius_end empty where infinite (an arc both equal); turn empty for a line.
    chain = ref_chain(METRIC_SPEC)
    rows = read_rows(metric_out / "elements.csv")
    assert list(rows[0]) == ["element", "kind", "start_station", "end_station", "length", "start_northing",
                             "start_easting", "end_northing", "end_easting", "start_azimuth_deg",
                             "end_azimuth_deg", "radius_start", "radius_end", "turn", "alignment"]
    assert len(rows) == len(chain)
    q = 6e-5
    for k, (row, ref, sp) in enumerate(zip(rows, chain, METRIC_SPEC.elements), start=1):
        n1, e1, az1 = ref.end
        kind = {LineSpec: "line", ArcSpec: "arc", SpiralSpec: "spiral"}[type(sp)]
        assert row["element"] == str(k) and row["kind"] == kind
        assert float(row["start_station"]) == pytest.approx(ref.start, abs=q)
        assert float(row["end_station"]) == pytest.approx(ref.start + ref.length, abs=q)
        assert float(row["length"]) == pytest.approx(ref.length, abs=q)
        assert float(row["start_northing"]) == pytest.approx(ref.n0, abs=q)
        assert float(row["start_easting"]) == pytest.approx(ref.e0, abs=q)
        assert float(row["end_northing"]) == pytest.approx(n1, abs=q)
        assert float(row["end_easting"]) == pytest.approx(e1, abs=q)
        assert float(row["start_azimuth_deg"]) == pytest.approx(ref.az0 % 360.0, abs=1e-8)
        assert float(row["end_azimuth_deg"]) == pytest.approx(az1 % 360.0, abs=1e-8)
        if kind == "line":
            assert (row["radius_start"], row["radius_end"], row["turn"]) == ("", "", "")
            continue
        assert row["turn"] == ("right" if sp.turn > 0 else "left")
        if kind == "arc":
            assert row["radius_start"] == row["radius_end"] == f"{sp.radius:.4f}"
        else:
            assert row["radius_start"] == ("" if sp.radius_start is None else f"{sp.radius_start:.4f}")
            assert row["radius_end"] == ("" if sp.radius_end is None else f"{sp.radius_end:.4f}")


def test_metric_job_features_in_stations_csv(metric_out):
    # Outputs contract: features on every offset line of stations.csv, in the join table's names
    # (exit spiral meeting a reverse entry spiral: ST TS).
    chain = ref_chain(METRIC_SPEC)
    rows = [r for r in read_rows(metric_out / "stations.csv") if r["feature"]]
    want = ["POB", "TS", "SC", "CS", "SC", "CS", "ST TS", "SC", "CS", "ST", "POE"]
    joins = [c.start for c in chain] + [chain[-1].start + chain[-1].length]
    assert [r["feature"] for r in rows] == [f for f in want for _ in range(3)]
    assert [r["code"] for r in rows] == ["EPL", "CL", "EPR"] * len(want)
    got = [float(r["station"]) for r in rows]
    assert got == pytest.approx([s for s in joins for _ in range(3)], abs=6e-5)


# ==== 6. DXF: spirals drawn as splines within 0.0005 units ==================================


def _job_alignment(job_dir: Path) -> Alignment:
    from stakeout.jobfile import load_job

    return build_alignment(load_job(job_dir / "job.toml").alignment)


@pytest.mark.parametrize("which, offsets", [("metric_out", (-3.5, 0.0, 5.0)), ("nh_out", (-12.0, 0.0, 12.0))])
def test_dxf_spirals_are_splines_on_the_curve(which, offsets, request):
    # plan.dxf read back with ezdxf: every spiral, on the centreline and on each offset line, is a
    # SPLINE whose evaluated points (2000 segments, not only its fit points) lie within 0.0005
    # units of the engine's curve at that offset (Alignment.locate), over exactly the spiral's
    # stations, ending on the element's ends.
    out = request.getfixturevalue(which)
    doc = ezdxf.readfile(out / "plan.dxf")
    assert not doc.audit().has_errors
    a = _job_alignment(out.parent)
    spirals = [el for el in a.elements if isinstance(el, Spiral)]
    splines = doc.modelspace().query("SPLINE")
    assert len(splines) == len(spirals) * len(offsets)
    seen = set()
    for spl in splines:
        pts = np.array([(p.x, p.y) for p in spl.construction_tool().approximate(segments=2000)])
        loc = a.locate(pts[:, 1], pts[:, 0])
        target = min(offsets, key=lambda o: abs(o - float(np.median(loc.offset))))
        assert np.max(np.abs(loc.offset - target)) <= 0.0005
        assert np.max(np.abs(loc.distance - abs(target))) <= 0.0005
        assert spl.dxf.layer == ("SO-CL" if target == 0.0 else "SO-OFFSET")
        j = [k for k, el in enumerate(spirals) if el.start - 1e-6 <= float(np.median(loc.station)) <= el.end + 1e-6]
        assert len(j) == 1
        el = spirals[j[0]]
        assert loc.station.min() >= el.start - 1e-6 and loc.station.max() <= el.end + 1e-6
        (n0, n1), (e0, e1), _ = a.evaluate(np.array([el.start, el.end]), target, miter=False)
        assert list(pts[0]) == pytest.approx([e0, n0], abs=1e-6)
        assert list(pts[-1]) == pytest.approx([e1, n1], abs=1e-6)
        seen.add((j[0], target))
    assert len(seen) == len(spirals) * len(offsets)


# ==== 7. deflection sheet: spiral rows against scipy =======================================


@dataclass
class SheetSection:
    """A spiral's part of deflections.txt: where it is set from and its rows (label, length along,
    deflection in degrees, chord from the start), on the centreline and on each offset line."""

    start: str
    label: str
    rows: list
    offsets: dict


_ROW = re.compile(r"^\s*(\S+)\s+([\d.]+)\s+(\d+-\d+-\d+)\s+([\d.]+)\s+([\d.]+)(?:\s+\d+-\d+-\d+)?$")


def _spiral_sections(text: str) -> list[SheetSection]:
    out: list[SheetSection] = []
    cur = None  # the section being read, or None inside an arc's
    rows = None  # the list the next rows go to
    for line in text.splitlines():
        line = line.strip("\f")
        if line.startswith("deflection ="):
            break
        m = re.match(r"curve \d+, spiral from (.*) (\S+): L ", line)
        if m:
            cur = SheetSection(m.group(1), m.group(2), [], {})
            rows = cur.rows
            out.append(cur)
            continue
        if line.startswith("curve "):
            cur = rows = None
            continue
        m = re.match(r"\s+offset line \S+ ([\d.]+) (LT|RT):", line)
        if m:
            rows = None
            if cur is not None:
                rows = cur.offsets.setdefault(float(m.group(1)) * (-1 if m.group(2) == "LT" else 1), [])
            continue
        m = _ROW.match(line)
        if m and rows is not None:
            rows.append((m.group(1), float(m.group(2)), dms(m.group(3)), float(m.group(4))))
    return out


def _ref_deflection(sp: SpiralSpec, along: float, offset: float = 0.0) -> tuple[float, float, float]:
    """Deflection (degrees, toward the curve), chord and length along the line at ``offset``, from
    the spiral's start along its start tangent, from the scipy position (fresnel from a tangent,
    quad otherwise); the offset point is the centreline point plus ``offset`` square to it."""
    k0 = 0.0 if sp.radius_start is None else sp.turn / sp.radius_start
    k1 = 0.0 if sp.radius_end is None else sp.turn / sp.radius_end
    ref = RefElement(0.0, sp.length, 0.0, 0.0, 0.0, k0, k1)  # start tangent along +N
    n0, e0, _ = ref.at(0.0, offset)
    n, e, _ = ref.at(along, offset)
    x, y = n - n0, (e - e0) * sp.turn  # y toward the curve
    tau = k0 * along + (k1 - k0) * along * along / (2 * sp.length)
    return math.degrees(math.atan2(y, x)), math.hypot(x, y), along - offset * tau


@pytest.mark.parametrize("which", ["metric_out", "nh_out"])
def test_deflection_sheet_spiral_rows(which, request):
    # deflections.txt: on a spiral, deflection = atan(y / x) and chord = hypot(x, y) of the point's
    # position from the spiral's start along its start tangent -- the TS, or the CS for an exit
    # spiral -- against the scipy position; printed to 1 second and 4 decimals.  Offset lines (as
    # the sheet's foot says): the same from the offset point opposite the start, along the offset
    # line's start tangent, with the length along the offset line (integral of 1 - k o).
    out = request.getfixturevalue(which)
    if which == "nh_out":
        specs = [SpiralSpec(200.0, RIGHT, None, 300.0), SpiralSpec(200.0, RIGHT, 300.0, None)]
        offsets = (-12.0, 12.0)
    else:
        specs = [el for el in METRIC_SPEC.elements if isinstance(el, SpiralSpec)]
        offsets = (-3.5, 5.0)
    sections = _spiral_sections((out / "deflections.txt").read_text(encoding="utf-8"))
    assert len(sections) == len(specs)
    for sec, sp in zip(sections, specs):
        if sp.radius_end is None:  # an exit spiral is set from the CS
            assert "CS" in sec.start.split()
        elif sp.radius_start is None:
            assert "TS" in sec.start.split()
        rows = sec.rows
        assert rows[0][0] == sec.label and rows[0][1] == 0.0 and rows[0][2] == 0.0
        assert rows[-1][1] == pytest.approx(sp.length, abs=6e-5)
        for lab, along, defl, chord in rows[1:]:
            d_ref, c_ref, _ = _ref_deflection(sp, along)
            assert abs(defl - d_ref) <= 0.55 / 3600.0, (lab, defl, d_ref)
            assert chord == pytest.approx(c_ref, abs=1.1e-4)
        if not sec.offsets:
            continue
        assert sorted(sec.offsets) == sorted(offsets)
        for o, orows in sec.offsets.items():
            assert [r[0] for r in orows] == [r[0] for r in rows]
            for (lab, s_cl, _, _), (_, along, defl, chord) in zip(rows[1:], orows[1:]):
                d_ref, c_ref, a_ref = _ref_deflection(sp, s_cl, o)
                assert abs(defl - d_ref) <= 0.55 / 3600.0, (lab, o, defl, d_ref)
                assert chord == pytest.approx(c_ref, abs=1.1e-4)
                assert along == pytest.approx(a_ref, abs=1.1e-4)


def test_deflection_rows_against_scipy():
    # deflection_rows (what the sheet prints) at full precision: every spiral row's deflection is
    # atan(y/x) of the scipy position from the TS (from the CS for an exit spiral), to 1e-9 degrees.
    a = build_alignment(METRIC_SPEC)
    stations = np.arange(1000.0, a.end_station, 7.0)
    specs = METRIC_SPEC.elements
    n_spiral = 0
    for _, i, rows in deflection_rows(a, stations):
        sp = specs[i]
        if not isinstance(sp, SpiralSpec):
            continue
        n_spiral += 1
        el = a.elements[i]
        assert rows[0][0] == pytest.approx(el.start) and rows[-1][0] == pytest.approx(el.end)
        for st_, along, defl, chord, _ in rows:
            assert along == pytest.approx(st_ - el.start, abs=1e-9)
            d_ref, c_ref, _ = _ref_deflection(sp, along)
            assert defl == pytest.approx(d_ref, abs=1e-9)
            assert chord == pytest.approx(c_ref, abs=1e-9 * sp.length)
    assert n_spiral == 5


def test_whole_angle_spirals_end_to_end(tmp_path):
    # The same Form C curve written as a job file (I = 60 deg, R = 300, spirals = [R I, R I]): the
    # build succeeds and stations.csv carries one SC CS key point on each offset line
    # (job-file contract: "spiral -> spiral at a common radius ... SC CS").
    ls = repr(300.0 * math.radians(60.0))
    job = write_job(tmp_path, f"""format = 1
[job]
name = "Spirals taking the whole angle"
units = "ft"
[alignment]
name = "Z"
[alignment.at_pi]
station = "20+00"
northing = 1000.0
easting = 1000.0
back_tangent_azimuth = "40-00-00"
ahead_tangent_azimuth = "100-00-00"
radius = 300.0
spirals = [{ls}, {ls}]
lead_in = 50
lead_out = 50
[staking]
interval = 50
offsets = [{{ offset = -6.0, code = "L" }}, {{ offset = 0.0, code = "CL" }}]
""")
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "out")])
    assert r.exit_code == 0, r.output
    feats = [row["feature"] for row in read_rows(tmp_path / "out" / "stations.csv") if row["feature"]]
    assert feats == [f for f in ["POB", "TS", "SC CS", "ST", "POE"] for _ in range(2)]


# ==== 8. broken jobs: messages beyond the key (the corpus checks the key and exit 2) ========


@pytest.mark.parametrize("name, words", [
    ("spiral_angles_exceed_i", r"alignment\.pi\[1\]\.spirals: .*the rest would be -\d"),  # below zero
    ("spiral_does_not_fit", r"curve at alignment\.pi\[1\] does not fit"),
    ("spiral_curves_overlap", r"curves at alignment\.pi\[1\] and alignment\.pi\[2\] overlap"),
    ("spiral_curvature_jump", r"alignment\.element\[2\]: .*curvature jumps.*300\.0000.*250\.0000"),
    ("spiral_no_radius", r"alignment\.element\[1\]: .*radius_start.*radius_end"),
    ("spiral_wrong_count", r"alignment\.pi\[1\]\.spirals = .*has 2 entries but needs 3"),
    ("spiral_negative_length", r"alignment\.element\[1\]\.length = -60"),
    ("spiral_negative_entry", r"alignment\.pi\[1\]\.spirals\[0\] = -100"),
    ("spiral_without_radius", r"alignment\.pi\[1\]\.spirals: .*radius"),
])
def test_spiral_broken_jobs_say_why(name, words, tmp_path):
    job = HERE / "broken_jobs" / f"{name}.toml"
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "out")])
    assert r.exit_code == 2, r.output
    assert re.search(words, r.output), r.output
    assert not (tmp_path / "out").exists()


def test_spiral_spec_without_radius_refused():
    # The builder itself refuses a spiral with no finite radius (a GeometryError naming the element),
    # whatever reads the job.
    from stakeout.errors import GeometryError

    spec = ChainSpec("X", 0.0, 0.0, 0.0, 0.0, (LineSpec(10.0), SpiralSpec(50.0, RIGHT, None, None, "alignment.element[1]")))
    with pytest.raises(GeometryError, match=r"alignment\.element\[1\]"):
        build_alignment(spec)


# ==== unequal spirals at a PI: tangents and external =======================================


@settings(max_examples=60, **FREE)
@given(st.floats(100, 2000), st.floats(20, 120), st.floats(0.05, 0.45), st.floats(0.05, 0.45),
       st.sampled_from([-1, 1]), st.floats(0, 360))
def test_unequal_spirals_tangents_and_external(radius, big_i, f1, f2, turn, back_az):
    # Unequal spirals (references.md, route-surveying texts):
    #   T1 = (R + p1) tan(I/2) + k1 - (p1 - p2) / sin I,  T2 = (R + p2) tan(I/2) + k2 + (p1 - p2) / sin I,
    # with p, k from the series X, Y; and the external (PI to the nearest point of the curve) by a
    # brute-force search on the scipy reference walk, refined with scipy.optimize.minimize_scalar.
    from scipy.optimize import minimize_scalar

    from stakeout.presentation import curve_views

    ii = math.radians(big_i)
    ls1, ls2 = 2 * radius * ii * f1, 2 * radius * ii * f2  # theta_i = Ls_i / 2R = f_i I
    spec = SinglePISpec("U", 5000.0, 2000.0, 3000.0, back_az, back_az + turn * big_i, (radius,), (None,),
                        10.0, 10.0, spirals=(ls1, ls2))
    a = build_alignment(spec)

    def pk(ls):
        th = ls / (2 * radius)
        x, y = series_xy(ls, th)
        return y - radius * (1 - math.cos(th)), x - radius * math.sin(th)

    (p1, k1), (p2, k2) = pk(ls1), pk(ls2)
    t1 = (radius + p1) * math.tan(ii / 2) + k1 - (p1 - p2) / math.sin(ii)
    t2 = (radius + p2) * math.tan(ii / 2) + k2 + (p1 - p2) / math.sin(ii)
    (curve,) = a.curves
    assert curve.tangents.back == pytest.approx(t1, abs=1e-6 * t1)
    assert curve.tangents.ahead == pytest.approx(t2, abs=1e-6 * t2)
    # the TS lies T1 back from the PI, the ST T2 ahead
    ts, st_ = a.elements[1], a.elements[-2]
    b, f = math.radians(back_az), math.radians(back_az + turn * big_i)
    assert math.hypot(ts.start_northing - (2000.0 - t1 * math.cos(b)), ts.start_easting - (3000.0 - t1 * math.sin(b))) < 1e-6
    assert math.hypot(st_.end_northing - (2000.0 + t2 * math.cos(f)), st_.end_easting - (3000.0 + t2 * math.sin(f))) < 1e-6

    # external by brute force on the reference walk (the curve: spiral, arc, spiral)
    arc_delta = big_i - math.degrees((ls1 + ls2) / (2 * radius))
    chain = ref_chain(ChainSpec("U", 0.0, ts.start_northing, ts.start_easting, back_az, (
        SpiralSpec(ls1, turn, None, radius), ArcSpec(radius, turn, delta=arc_delta),
        SpiralSpec(ls2, turn, radius, None))))
    total = ls1 + ls2 + radius * math.radians(arc_delta)

    def dist(s: float) -> float:
        n, e, _ = ref_point(chain, s)
        return math.hypot(n - 2000.0, e - 3000.0)

    grid = np.linspace(0.0, total, 801)
    j = int(np.argmin([dist(float(s)) for s in grid]))
    lo, hi = grid[max(j - 1, 0)], grid[min(j + 1, grid.size - 1)]
    best = minimize_scalar(dist, bounds=(lo, hi), method="bounded", options={"xatol": 1e-10}).fun
    (ct,) = curve_views(a)
    assert ct.external == pytest.approx(best, abs=1e-6)
