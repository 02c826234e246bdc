"""Cross-sections: superelevation, template lines and widening, checked against
outside references and an independent per-stake computation.

The independent computation below walks every stake of ``stations.csv`` in
plain Python: the centreline by hand from the PI list (tangent, circular arc
by rotation about its centre, tangent), the offset, slope and elevation by
the job-file contract's rules written out again (linear interpolation by
true distance, z = z(from) + (|offset| - |offset of from|) x slope / 100,
steepen, rollover), nothing imported from ``stakeout`` but the command.
"""

from __future__ import annotations

import cmath
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from stakeout.crosssection import (SuperelevationPeriod, line_slope, plan_sections, rows_from_design_file, section,
                                   side_slopes)
from stakeout.errors import JobFileError
from stakeout.job import OffsetLine, SuperelevationRow, WideningRow
from stakeout.stations import StationRef, Stationing

from .helpers import build_job, read_rows, write_job
from .reference import superelevation_exercise, transition_length_rule

TOL = 0.0002  # the acceptance tolerance of issue 22 (job units, percent)


# ---- a job writer and the independent computation ----------------------------------------------------------

def _pis(turn: int) -> list[tuple[float, float]]:
    # (northing, easting); turn -1 mirrors the easting about the first PI: a left-turning curve
    pts = [(1000.0, 2000.0), (1300.0, 2100.0), (1500.0, 2400.0)]
    return [(n, 2000.0 + turn * (e - 2000.0)) for n, e in pts]


def _station_text(s):
    if isinstance(s, tuple):
        return f'{{ station = "{s[0]}", region = {s[1]} }}'
    return f'"{s}"'


def job_toml(lines, rows, turn=1, equation=None, radius=300.0, units="m", interval=20.0):
    """TOML of a metre job on a one-curve PI list with a 1 % profile."""
    (n0, e0), (n1, e1), (n2, e2) = _pis(turn)
    out = ['format = 1', '[job]', 'name = "Sections check"', f'units = "{units}"', '[alignment]', 'name = "SX"',
           'start_station = "0+000"',
           '[[alignment.pi]]', f'northing = {n0}', f'easting = {e0}',
           '[[alignment.pi]]', f'northing = {n1}', f'easting = {e1}', f'radius = {radius}',
           '[[alignment.pi]]', f'northing = {n2}', f'easting = {e2}']
    if equation:
        out += ['[[alignment.station_equation]]', f'back = "{equation[0]}"', f'ahead = "{equation[1]}"']
    out += ['[profile]', '[[profile.pvi]]', 'station = "0+000"', 'elevation = 50.0', '[[profile.pvi]]',
            'station = "0+800"', 'elevation = 58.0', '[staking]', f'interval = {interval}', 'offsets = [']
    for ln in lines:
        parts = [f'code = "{ln["code"]}"']
        if isinstance(ln["offset"], list):
            rows_ = ", ".join(f'{{ station = {_station_text(s)}, offset = {o} }}' for s, o in ln["offset"])
            parts.append(f"offset = [{rows_}]")
        else:
            parts.append(f'offset = {ln["offset"]}')
        for k in ("from", "dz", "rollover"):
            if k in ln:
                parts.append(f'{k} = {ln[k]!r}'.replace("'", '"'))
        if "cross_slope" in ln:
            cs = ln["cross_slope"]
            parts.append('cross_slope = "superelevation"' if cs == "se" else f"cross_slope = {cs}")
        if ln.get("steepen"):
            parts.append("steepen_with_inner = true")
        out.append("  { " + ", ".join(parts) + " },")
    out.append("]")
    for s, left, right in rows:
        out += ["[[superelevation]]", f"station = {_station_text(s)}", f"left = {left}", f"right = {right}"]
    return "\n".join(out) + "\n"


class Hand:
    """The job recomputed by hand, stake by stake."""

    def __init__(self, lines, rows, turn=1, equation=None, radius=300.0):
        (n0, e0), (n1, e1), (n2, e2) = _pis(turn)
        self.p0, self.p1, self.p2 = complex(e0, n0), complex(e1, n1), complex(e2, n2)
        self.radius, self.turn = radius, turn
        self.shift = 0.0 if equation is None else _value(equation[0]) - _value(equation[1])
        self.back = None if equation is None else _value(equation[0])
        self.lines = {ln["code"]: ln for ln in lines}
        self.rows = sorted((self.internal(s), left, right) for s, left, right in rows)
        a1 = _azimuth(self.p1 - self.p0)
        a2 = _azimuth(self.p2 - self.p1)
        delta = math.remainder(a2 - a1, 2 * math.pi)  # positive turning right
        self.a1, self.delta = a1, abs(delta)
        t = radius * math.tan(self.delta / 2)
        self.pc_station = abs(self.p1 - self.p0) - t
        self.pc = self.p1 - t * _unit(a1)
        self.pt_station = self.pc_station + radius * self.delta
        self.pt = self.p1 + t * _unit(a2)
        self.a2 = a2
        self.centre = self.pc + turn * radius * _unit(a1 + math.pi / 2)

    def internal(self, s):
        if isinstance(s, tuple):
            value, region = _value(s[0]), s[1]
            return value + (self.shift if region == 2 else 0.0)
        return _value(s) + (self.shift if self.back is not None and _value(s) > self.back else 0.0)

    def centreline(self, s):
        """Point (complex E + iN) and azimuth (radians) at internal station s."""
        if s <= self.pc_station:
            return self.p0 + s * _unit(self.a1), self.a1
        if s >= self.pt_station:
            return self.pt + (s - self.pt_station) * _unit(self.a2), self.a2
        turned = (s - self.pc_station) / self.radius
        rot = cmath.exp(-1j * self.turn * turned)  # clockwise in the E-N plane for a right turn
        return self.centre + (self.pc - self.centre) * rot, self.a1 + self.turn * turned

    def slopes(self, s):
        if not self.rows:
            return None
        st_ = [r[0] for r in self.rows]
        return (float(np.interp(s, st_, [r[1] for r in self.rows])),
                float(np.interp(s, st_, [r[2] for r in self.rows])))

    def offset(self, code, s):
        off = self.lines[code]["offset"]
        if not isinstance(off, list):
            return float(off)
        return float(np.interp(s, [self.internal(a) for a, _ in off], [o for _, o in off]))

    def stake(self, code, s):
        """(offset, slope or None, elevation) of line ``code`` at internal station s."""
        ln = self.lines[code]
        off = self.offset(code, s)
        zc = 50.0 + 8.0 * s / self.internal("0+800")
        if "from" in ln:
            o_in, s_in, z_in = self.stake(ln["from"], s)
        else:
            o_in, s_in, z_in = 0.0, None, zc
        if off == 0.0:
            return off, None, zc + ln.get("dz", 0.0)
        cs = ln.get("cross_slope")
        if cs is None:
            return off, None, z_in + ln.get("dz", 0.0)
        own = (self.slopes(s)[0 if off < 0 else 1]) if cs == "se" else float(cs)
        if s_in is not None:
            if ln.get("steepen") and s_in < own:
                own = s_in
            r = ln.get("rollover")
            if r is not None and abs(own - s_in) > r:
                own = s_in + math.copysign(r, own - s_in)
        return off, own, z_in + (abs(off) - abs(o_in)) * own / 100.0


def _value(text):
    a, b = str(text).split("+")
    return float(a) * 1000 + float(b)


def _azimuth(v):
    return math.atan2(v.real, v.imag)


def _unit(az):
    return complex(math.sin(az), math.cos(az))


def _compare(hand, out):
    rows = read_rows(out / "stations.csv")
    assert rows
    for r in rows:
        s = float(r["station"]) + (hand.shift if r["region"] == "2" else 0.0)
        off, slope, z = hand.stake(r["code"], s)
        p, az = hand.centreline(s)
        q = p + off * _unit(az + math.pi / 2)
        assert float(r["offset"]) == pytest.approx(off, abs=TOL), r
        assert float(r["northing"]) == pytest.approx(q.imag, abs=TOL), r
        assert float(r["easting"]) == pytest.approx(q.real, abs=TOL), r
        assert float(r["elevation"]) == pytest.approx(z, abs=TOL), r
        if slope is None:
            assert r["cross_slope"] == "", r
        else:
            assert float(r["cross_slope"]) == pytest.approx(slope, abs=TOL), r
        assert r["alignment"] == "SX" and r["ground_elevation"] == "" and r["cut_fill"] == ""
    return rows


def _features_at(rows, hand, feature):
    return sorted({round(float(r["station"]) + (hand.shift if r["region"] == "2" else 0.0), 4)
                   for r in rows if feature in r["feature"].split()})


TEMPLATE = [
    {"code": "SHL", "offset": -5.0, "from": "EPL", "cross_slope": -4.0, "rollover": 8.0, "steepen": True},
    {"code": "EPL", "offset": -3.5, "cross_slope": "se"},
    {"code": "CL", "offset": 0.0},
    {"code": "EPR", "offset": 3.5, "cross_slope": "se"},
    {"code": "SHR", "offset": 5.0, "from": "EPR", "cross_slope": -4.0, "rollover": 8.0, "steepen": True},
    {"code": "HGR", "offset": 6.0, "from": "SHR", "dz": -0.25},
]


def _rows_for(turn):
    """A full transition: normal crown, level outside, reverse crown, full 6 %, and back."""
    out_, in_ = (0, 1) if turn > 0 else (1, 0)  # a right turn lifts the left side (the outside)

    def row(s, o, i):
        pair = [0.0, 0.0]
        pair[out_], pair[in_] = o, i
        return (s, pair[0], pair[1])

    return [row("0+100", -2.0, -2.0), row("0+130", 0.0, -2.0), row("0+160", 2.0, -2.0),
            row("0+220", 6.0, -6.0), row("0+330", 6.0, -6.0), row("0+420", 0.0, -2.0), row("0+450", -2.0, -2.0)]


@pytest.mark.parametrize("turn", [1, -1], ids=["right-turning", "left-turning"])
def test_every_stake_against_an_independent_computation(tmp_path, turn):
    rows = _rows_for(turn)
    out = build_job(write_job(tmp_path, job_toml(TEMPLATE, rows, turn=turn)), tmp_path / "out")
    hand = Hand(TEMPLATE, rows, turn=turn)
    staked = _compare(hand, out)
    assert _features_at(staked, hand, "SE") == [100.0, 130.0, 160.0, 220.0, 330.0, 420.0, 450.0]
    # the high side is the outside: on a right turn the left (common practice: superelevation banks inward)
    full = [r for r in staked if float(r["station"]) == 300.0]
    edge = {r["code"]: float(r["cross_slope"] or "nan") for r in full}
    high, low = ("EPL", "EPR") if turn > 0 else ("EPR", "EPL")
    assert edge[high] == 6.0 and edge[low] == -6.0


def test_metre_job_with_an_equation_and_a_taper(tmp_path):
    # the equation steps back 10 m at 0+150: 0+140 to 0+150 occur twice; slopes and offsets run by true distance
    lines = [
        {"code": "EPL", "offset": -3.5, "cross_slope": "se"},
        {"code": "CL", "offset": 0.0},
        {"code": "EPR", "cross_slope": "se", "offset": [("0+120", 3.5), (("0+145", 2), 6.5), ("0+250", 6.5),
                                                        ("0+280", 3.5)]},
        {"code": "SHR", "from": "EPR", "cross_slope": -4.0, "steepen": True, "rollover": 8.0,
         "offset": [("0+120", 5.0), (("0+145", 2), 8.0), ("0+250", 8.0), ("0+280", 5.0)]},
        {"code": "KBR", "from": "SHR", "dz": -0.15,
         "offset": [("0+120", 5.5), (("0+145", 2), 8.5), ("0+250", 8.5), ("0+280", 5.5)]},
    ]
    rows = [("0+100", -2.0, -2.0), (("0+145", 1), -2.0, 0.0), (("0+145", 2), -2.0, 2.0), ("0+200", -5.0, 5.0)]
    eq = ("0+150", "0+140")
    job = write_job(tmp_path, job_toml(lines, rows, turn=-1, equation=eq, interval=10.0))
    out = build_job(job, tmp_path / "out")
    hand = Hand(lines, rows, turn=-1, equation=eq)
    staked = _compare(hand, out)
    assert _features_at(staked, hand, "SE") == [100.0, 145.0, 155.0, 210.0]
    assert _features_at(staked, hand, "WC") == [120.0, 155.0, 260.0, 290.0]
    # the taper from 0+120 to 0+145 (region 2) is 35 m of true distance, not 25 m of station difference
    mid = [r for r in staked if r["code"] == "EPR" and float(r["station"]) == 140.0 and r["region"] == "1"]
    assert float(mid[0]["offset"]) == pytest.approx(3.5 + 3.0 * 20.0 / 35.0, abs=1e-4)


def test_trial_right_edge_at_full_superelevation(tmp_path):
    # issue 22's trial: 4 % full superelevation, 3.75 m lane, the right edge on the outside of a left-turning
    # curve stakes at the centreline + 0.150 (0.04 x 3.75), not the normal crown's -0.094 (rows given inline:
    # the design file's <Superelevation> is not read yet).
    lines = [{"code": "CL", "offset": 0.0}, {"code": "EPR", "offset": 3.75, "cross_slope": "se"}]
    rows = [("0+100", -2.5, -2.5), ("0+150", -2.5, 0.0), ("0+200", -4.0, 4.0), ("0+300", -4.0, 4.0)]
    out = build_job(write_job(tmp_path, job_toml(lines, rows, turn=-1)), tmp_path / "out")
    by = {(r["station"], r["code"]): r for r in read_rows(out / "stations.csv")}
    cl, ep = by[("260.0000", "CL")], by[("260.0000", "EPR")]
    assert float(ep["elevation"]) - float(cl["elevation"]) == pytest.approx(0.150, abs=1e-9)
    assert ep["cross_slope"] == "4.0000"


def test_published_transition_problem_edge_elevations(tmp_path):
    # Source: the route-design exercise in tests/reference/superelevation_exercise.py (inputs published,
    # edge elevations worked by hand from them): two 10-ft lanes, crown 1 %, PC 120+00 at 600.00 ft, +4 %,
    # e = 3 %, runout 117+00 to 118+00, runoff to 121+00, reverse crown ("hinge") at 119+00
    ex = superelevation_exercise
    n, e = ex.NORMAL_CROWN.value, ex.SUPERELEVATION.value
    w = ex.LANE_WIDTH.value
    start = ex.PC_STATION.value - 500.0
    z0 = ex.PC_ELEVATION.value - 500.0 * ex.GRADE.value / 100.0
    rows = [(ex.RUNOUT_START.printed, -n, -n), (ex.RUNOFF_START.printed, 0, -n), (ex.HINGE.printed, n, -n),
            (ex.RUNOFF_END.printed, e, -e)]
    text = f"""format = 1
[job]
name = "Published transition"
units = "ft"
[alignment]
name = "T"
start = {{ station = {start}, northing = 5000.0, easting = 5000.0 }}
azimuth = 0.0
[[alignment.element]]
kind = "line"
length = 500.0
[[alignment.element]]
kind = "arc"
radius = 1500.0
length = 300.0
turn = "right"
[profile]
[[profile.pvi]]
station = {start}
elevation = {z0}
[[profile.pvi]]
station = {start + 800.0}
elevation = {z0 + 800.0 * ex.GRADE.value / 100.0}
[staking]
interval = 50.0
offsets = [{{ offset = {-w}, code = "OUT", cross_slope = "superelevation" }}, {{ offset = 0.0, code = "CL" }},
           {{ offset = {w}, code = "IN", cross_slope = "superelevation" }}]
{_se_rows(rows)}
"""
    out = build_job(write_job(tmp_path, text), tmp_path / "out")
    staked = read_rows(out / "stations.csv")
    by = {(r["station_label"], r["code"]): float(r["elevation"]) for r in staked}
    for fig in (ex.AT_117_50, ex.AT_118_50, ex.AT_121_50):
        assert (by[(fig.printed, "OUT")], by[(fig.printed, "CL")], by[(fig.printed, "IN")]) == fig.approx()
    # the reverse-crown ("hinge") station is a row: staked with feature SE
    assert {r["station_label"]: r["feature"] for r in staked}[ex.HINGE.printed + ".00"] == "SE"


def _se_rows(rows):
    return "\n".join(f'[[superelevation]]\nstation = "{s}"\nleft = {a}\nright = {b}' for s, a, b in rows)


def test_published_transition_length_rule(tmp_path):
    # Source: tests/reference/transition_length_rule.py (L = N b e = 70 m for b = 7 m, e = 1 in 15, N = 150).
    # Rotated about its inner edge (here the centreline, the edge line b out): over L the edge rises b e
    # relative to the axis, at 1 in N
    ref = transition_length_rule
    b, e, big_n = ref.WIDTH.value, ref.SUPERELEVATION.value, ref.RATE.value
    assert big_n * b * e == ref.LENGTH.approx()
    rows = [("0+100", 0.0, 0.0), (f"0+{100.0 + ref.LENGTH.value:07.3f}", 0.0, 100.0 * e)]
    lines = [{"code": "CL", "offset": 0.0}, {"code": "E", "offset": b, "cross_slope": "se"}]
    out = build_job(write_job(tmp_path, job_toml(lines, rows, interval=10.0)), tmp_path / "out")
    rise = {}
    for r in read_rows(out / "stations.csv"):
        rise.setdefault(float(r["station"]), {})[r["code"]] = float(r["elevation"])
    d = {s: v["E"] - v["CL"] for s, v in rise.items()}
    assert d[170.0] - d[100.0] == pytest.approx(b * e, abs=1e-4)
    assert (d[150.0] - d[140.0]) / 10.0 == pytest.approx(1.0 / big_n, abs=1e-5)


# ---- hand-derived template values ---------------------------------------------------------------------------

def test_rollover_limited_high_side_shoulder():
    # Hand derivation: lane +6 % (high side of a superelevated curve), shoulder -4 %, rollover 8 %:
    # the break would be 10 %, so the shoulder turns to 6 - 8 = -2 %.  Lane 3.5 m, shoulder to 5.0 m:
    # z(EP) = zc + 0.035 x 6 = zc + 0.210; z(SH) = z(EP) - 0.02 x 1.5 = zc + 0.180.
    assert float(line_slope(np.array([-4.0]), np.array([6.0]), True, 8.0)[0]) == -2.0
    plan, z = _one_station([("SH", -5.0, "EP", -4.0, 8.0, True), ("EP", -3.5, None, "se", None, False)],
                           left=6.0, right=-6.0)
    assert z["EP"] == pytest.approx(0.210, abs=1e-12)
    assert z["SH"] == pytest.approx(0.180, abs=1e-12)


def test_steepened_low_side_shoulder():
    # Hand derivation: lane -6 % (low side), shoulder -4 % with steepen_with_inner: the lane falls more
    # steeply, so the shoulder takes -6 %; the rollover (8 %) does not bind.  z(EP) = zc - 0.210,
    # z(SH) = z(EP) - 0.06 x 1.5 = zc - 0.300.
    plan, z = _one_station([("EP", 3.5, None, "se", None, False), ("SH", 5.0, "EP", -4.0, 8.0, True)],
                           left=6.0, right=-6.0)
    assert z["EP"] == pytest.approx(-0.210, abs=1e-12)
    assert z["SH"] == pytest.approx(-0.300, abs=1e-12)
    # on the flat (normal crown -2 %) the shoulder keeps its own -4 %: the lane is flatter
    plan, z = _one_station([("EP", 3.5, None, "se", None, False), ("SH", 5.0, "EP", -4.0, 8.0, True)],
                           left=-2.0, right=-2.0)
    assert z["SH"] == pytest.approx(-0.070 - 0.060, abs=1e-12)


def _one_station(specs, left, right):
    lines = [OffsetLine(off, code, cross_slope=None if cs == "se" else cs, superelevation=cs == "se",
                        from_code=fr, rollover=ro, steepen_with_inner=stp, where=f"l{k}")
             for k, (code, off, fr, cs, ro, stp) in enumerate(specs)]
    stn = Stationing.with_equations(0.0, 1000.0, 1000, 3, ())
    rows = [SuperelevationRow(StationRef(0.0, None, "r0"), left, right, "r0")]
    plan = plan_sections(lines, rows, stn)
    sec = section(plan, np.array([500.0]), np.array([0.0]))
    assert sec.elevation is not None
    return plan, {ol.code: float(sec.elevation[0, j]) for j, ol in enumerate(plan.lines)}


# ---- properties ---------------------------------------------------------------------------------------------

slopes_ = st.floats(-12.0, 12.0, allow_nan=False)


@settings(max_examples=60, deadline=None)
@given(o1=st.floats(0.5, 10.0), w2=st.floats(0.1, 5.0), w3=st.floats(0.1, 3.0), s1=slopes_, s2=slopes_,
       dz=st.floats(-1.0, 1.0), side=st.sampled_from([-1.0, 1.0]))
def test_line_from_another_is_the_sum_of_its_segments(o1, w2, w3, s1, s2, dz, side):
    # common practice: a template's breaks add up segment by segment from the centreline out
    specs = [("A", side * o1, None, s1, None, False), ("B", side * (o1 + w2), "A", s2, None, False)]
    lines = [OffsetLine(off, c, cross_slope=cs, from_code=fr, where=c) for c, off, fr, cs, _, _ in specs]
    lines.append(OffsetLine(side * (o1 + w2 + w3), "C", dz=dz, from_code="B", where="C"))
    stn = Stationing.with_equations(0.0, 100.0, 1000, 3, ())
    sec = section(plan_sections(lines, [], stn), np.array([10.0]), np.array([100.0]))
    assert sec.elevation is not None
    z = dict(zip([ol.code for ol in plan_sections(lines, [], stn).lines], sec.elevation[0].tolist()))
    assert z["B"] - 100.0 == pytest.approx(o1 * s1 / 100 + w2 * s2 / 100, abs=1e-9)
    assert z["C"] == pytest.approx(z["B"] + dz, abs=1e-12)


@settings(max_examples=60, deadline=None)
@given(gaps=st.lists(st.floats(1.0, 200.0), min_size=1, max_size=6), data=st.data())
def test_slopes_continuous_along_the_alignment(gaps, data):
    # the table is piecewise linear: no jump anywhere, held flat beyond the ends
    at = np.concatenate([[100.0], 100.0 + np.cumsum(gaps)])
    left = np.array(data.draw(st.lists(slopes_, min_size=at.size, max_size=at.size)))
    right = np.array(data.draw(st.lists(slopes_, min_size=at.size, max_size=at.size)))
    s = np.linspace(0.0, at[-1] + 100.0, 5001)
    eps = 1e-6
    for a, b in zip(side_slopes(at, left, right, s - eps), side_slopes(at, left, right, s + eps)):
        steepest = np.max(np.abs(np.diff(np.concatenate([left, right])))) / min(gaps) if at.size > 1 else 0.0
        assert np.all(np.abs(a - b) <= 2 * eps * steepest + 1e-9)
    lo, hi = side_slopes(at, left, right, np.array([0.0, at[-1] + 50.0]))
    assert lo[0] == left[0] and lo[1] == left[-1] and hi[1] == right[-1]


@settings(max_examples=60, deadline=None)
@given(inner=st.lists(st.floats(1.0, 10.0), min_size=2, max_size=4),
       extra=st.lists(st.floats(0.5, 6.0), min_size=2, max_size=4), side=st.sampled_from([-1.0, 1.0]))
def test_widening_never_crosses(inner, extra, side):
    # two widened lines at the same rows: accepted only when one stays outside the other everywhere,
    # and then at every station between the rows it does (linear between rows, held beyond)
    k = min(len(inner), len(extra))
    stn = Stationing.with_equations(0.0, 1000.0, 1000, 3, ())
    sts = [StationRef(100.0 + 50.0 * i, None, f"r{i}") for i in range(k)]
    a = OffsetLine(side * inner[0], "A", widening=tuple(WideningRow(s, side * v) for s, v in zip(sts, inner)),
                   where="A")
    outer = [side * (v + w) for v, w in zip(inner, extra)]
    b = OffsetLine(outer[0], "B", widening=tuple(WideningRow(s, v) for s, v in zip(sts, outer)), where="B")
    plan = plan_sections([b, a], [], stn)
    sec = section(plan, np.linspace(0.0, 1000.0, 2001), None)
    assert [ol.code for ol in plan.lines] == (["B", "A"] if side < 0 else ["A", "B"])
    assert np.all(np.abs(sec.offset[:, 1 if side > 0 else 0]) > np.abs(sec.offset[:, 0 if side > 0 else 1]))
    crossing = [side * (v - 0.5 if i == k - 1 else v + 1.0) for i, v in enumerate(inner)]
    c = OffsetLine(crossing[0], "C", widening=tuple(WideningRow(s, v) for s, v in zip(sts, crossing)), where="C")
    with pytest.raises(JobFileError, match="may not cross"):
        plan_sections([a, c], [], stn)


@settings(max_examples=60, deadline=None)
@given(width=st.floats(2.5, 4.0), e=st.floats(2.5, 10.0), n=st.floats(1.0, 2.5), grad=st.floats(0.3, 0.9))
def test_relative_gradient_over_the_runoff(width, e, n, grad):
    # common practice (AASHTO's maximum relative gradient, e.g. TxDOT Roadway Design Manual 9.2.10): the edge's
    # grade relative to the centreline over the runoff is the change of slope x width / runoff length; with the
    # runoff sized as L = width x e / grad the relative gradient is grad (percent)
    length = width * e / grad
    rows = [SuperelevationRow(StationRef(s, None, f"r{i}"), a, b, f"r{i}")
            for i, (s, a, b) in enumerate([(100.0, 0.0, -n), (100.0 + length, e, -e)])]
    line = OffsetLine(-width, "EL", superelevation=True, where="EL")
    stn = Stationing.with_equations(0.0, 1000.0 + length, 1000, 3, ())
    s = np.linspace(100.0, 100.0 + length, 7)
    sec = section(plan_sections([line], rows, stn), s, 50.0 + 0.02 * s)
    assert sec.elevation is not None
    relative = np.diff(sec.elevation[:, 0] - (50.0 + 0.02 * s)) / np.diff(s) * 100.0
    assert relative == pytest.approx(np.full(6, grad), rel=1e-9)


# ---- the design file's <Superelevation> rows ----------------------------------------------------------------

def test_rows_from_a_design_file_period():
    # the contract's derivation, worked by hand: normal crown 2 %, e = 6 %, a right-turning curve (outside left):
    # reverse crown where the outside, rising 0 -> 6 over 130..190, reaches +2: 130 + 60 x 2/6 = 150;
    # on the way out, falling 6 -> 0 over 400..460, it passes +2 at 400 + 60 x 4/6 = 440
    p = SuperelevationPeriod(100.0, 130.0, 190.0, 400.0, 460.0, 490.0, 6.0, True, "Superelevation[0]")
    got = [v for r in rows_from_design_file([p], 2.0) for v in (r.station, r.left, r.right)]
    assert got == pytest.approx([v for row in [(100.0, -2.0, -2.0), (130.0, 0.0, -2.0), (150.0, 2.0, -2.0), (190.0, 6.0, -6.0),
                                 (400.0, 6.0, -6.0), (440.0, 2.0, -2.0), (460.0, 0.0, -2.0), (490.0, -2.0, -2.0)] for v in row])
    # a left-turning curve mirrors the sides
    q = SuperelevationPeriod(100.0, 130.0, 190.0, 400.0, 460.0, 490.0, 6.0, False, "Superelevation[0]")
    assert [(r.left, r.right) for r in rows_from_design_file([q], 2.0)][2] == (-2.0, 2.0)
    with pytest.raises(JobFileError, match="FullSuperSta missing"):
        rows_from_design_file([SuperelevationPeriod(1.0, 2.0, None, 4.0, 5.0, 6.0, 4.0, True, "S")], 2.0)
    with pytest.raises(JobFileError, match="out of order"):
        rows_from_design_file([SuperelevationPeriod(1.0, 9.0, 3.0, 4.0, 5.0, 6.0, 4.0, True, "S")], 2.0)


def test_pi_list_with_spirals_and_a_full_transition(tmp_path):
    # a spiralled curve (60 m spirals): slopes and elevations by the hand computation; positions by what any
    # offset stake must satisfy (common practice: offsets are square to the centreline): every stake of a
    # station lies on one line through the centreline stake, at its offset's distance, left and right opposite
    rows = _rows_for(1)
    text = job_toml(TEMPLATE, rows).replace("radius = 300.0", "radius = 300.0\nspirals = [60.0, 60.0]")
    out = build_job(write_job(tmp_path, text), tmp_path / "out")
    hand = Hand(TEMPLATE, rows)
    by_station: dict[str, dict[str, dict]] = {}
    for r in read_rows(out / "stations.csv"):
        off, slope, z = hand.stake(r["code"], float(r["station"]))
        assert float(r["elevation"]) == pytest.approx(z, abs=TOL), r
        assert (r["cross_slope"] == "") if slope is None else float(r["cross_slope"]) == pytest.approx(slope, abs=TOL)
        by_station.setdefault(r["station"], {})[r["code"]] = r
    assert {"TS", "SC", "CS", "ST"} <= {f for s in by_station.values() for f in s["CL"]["feature"].split()}
    for stakes in by_station.values():
        c = complex(float(stakes["CL"]["easting"]), float(stakes["CL"]["northing"]))
        vec = {k: complex(float(r["easting"]), float(r["northing"])) - c for k, r in stakes.items() if k != "CL"}
        for k, v in vec.items():
            assert abs(v) == pytest.approx(abs(float(stakes[k]["offset"])), abs=TOL)
            assert abs((v.conjugate() * vec["EPR"]).imag) <= TOL * (abs(v) + abs(vec["EPR"]))
        assert (vec["EPL"].conjugate() * vec["EPR"]).real < 0


def test_widened_lines_drawn_as_polylines(tmp_path):
    # ezdxf reading back and shapely measuring: each widened line is one polyline on SO-OFFSET through every
    # one of its stakes (within a millimetre), not a parallel offset; the plan picture draws it as a path too
    import ezdxf
    from shapely.geometry import LineString, Point

    lines = [
        {"code": "CL", "offset": 0.0},
        {"code": "EPR", "cross_slope": -2.0, "offset": [("0+120", 3.5), ("0+160", 6.0)]},
        {"code": "SHR", "from": "EPR", "cross_slope": -4.0, "offset": [("0+120", 5.0), ("0+160", 7.5)]},
    ]
    out = build_job(write_job(tmp_path, job_toml(lines, [])), tmp_path / "out")
    doc = ezdxf.readfile(out / "plan.dxf")
    polys = [LineString([(p[0], p[1]) for p in e.get_points("xy")])
             for e in doc.modelspace().query('LWPOLYLINE[layer=="SO-OFFSET"]')]
    assert len(polys) == 2
    for r in read_rows(out / "stations.csv"):
        if r["code"] != "CL":
            pt = Point(float(r["easting"]), float(r["northing"]))
            assert min(p.distance(pt) for p in polys) < 0.001, r
    assert (out / "plan.svg").read_text().count('class="so-offset"') == 2


def test_outputs_show_the_sections(tmp_path):
    # lxml (reference parser) reads the diagram: both sides drawn through every row, each SE row marked;
    # the report holds the table and each stake's slope; `stakeout curve` lists the rows; same bytes twice
    from lxml import etree
    from typer.testing import CliRunner

    from stakeout.cli import app

    rows = _rows_for(1)
    job = write_job(tmp_path, job_toml(TEMPLATE, rows))
    out = build_job(job, tmp_path / "out")
    svg = etree.fromstring((out / "superelevation.svg").read_bytes())
    ns = {"s": "http://www.w3.org/2000/svg"}
    assert len(svg.findall(".//s:polyline", ns)) == 2
    left = svg.find('.//s:polyline[@class="left"]', ns).get("points").split()
    assert len(left) == len(rows) + 2  # the rows and the two ends
    assert len(svg.findall('.//s:line[@class="se"]', ns)) == len(rows)
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "<h2>Superelevation</h2>" in html and "slope %" in html
    assert html.count("<td class=\"n\">6.0000</td>") == 2  # the two full-superelevation rows, left side
    r = CliRunner().invoke(app, ["curve", str(job)])
    assert r.exit_code == 0 and "SUPERELEVATION" in r.stdout and "0+160.000    2.0000   -2.0000" in r.stdout
    again = build_job(job, tmp_path / "again")
    for name in ("superelevation.svg", "stations.csv", "report.html", "plan.dxf"):
        assert (out / name).read_bytes() == (again / name).read_bytes()


def test_design_file_rows_through_the_design(tmp_path):
    # the hook for <Superelevation>: periods as the LandXML reader will hand them (outside left open), the
    # outside taken from the curve's turn at FullSuperSta.  Issue 22's trial figures: 4 % full superelevation,
    # normal crown 2.5 %, a 3.75 m lane on the outside (the right, the curve turns left): CL + 0.150 at full
    from dataclasses import replace

    from stakeout.design import build_design
    from stakeout.jobfile import parse_job
    from stakeout.job import SuperelevationFile, SuperelevationPeriod

    lines = [{"code": "EPL", "offset": -3.75, "cross_slope": "se"}, {"code": "CL", "offset": 0.0},
             {"code": "EPR", "offset": 3.75, "cross_slope": "se"}]
    text = job_toml(lines, [("0+000", -2.5, -2.5)], turn=-1)
    job = parse_job(text.encode("utf-8"), str(tmp_path / "job.toml"))
    period = SuperelevationPeriod(100.0, 130.0, 220.0, 300.0, 360.0, 390.0, 4.0, None, "Superelevation[0]")
    job = replace(job, superelevation=(), superelevation_file=SuperelevationFile("d.xml", 2.5, (period,)))
    d = build_design(job)
    assert d.sections is not None
    # rows: 100 (-2.5, -2.5), 130 outside level, reverse crown at 130 + 90 x 2.5/4, 220 full, 300 full,
    # reverse crown at 300 + 60 x 1.5/4, 360 outside level, 390 normal crown; the right is the outside
    assert d.sections.se_stations.tolist() == pytest.approx([100.0, 130.0, 186.25, 220.0, 300.0, 322.5, 360.0,
                                                             390.0])
    assert d.sections.se_right.tolist() == [-2.5, 0.0, 2.5, 4.0, 4.0, 2.5, 0.0, -2.5]
    assert d.sections.se_left.tolist() == [-2.5, -2.5, -2.5, -4.0, -4.0, -2.5, -2.5, -2.5]
    sp = d.stakes
    assert sp.elevation is not None
    k = int(np.flatnonzero(sp.stations == 260.0)[0])
    z = sp.elevation.reshape(-1, 3)[k]
    assert z[2] - z[1] == pytest.approx(0.150, abs=1e-12) and z[0] - z[1] == pytest.approx(-0.150, abs=1e-12)
    feats = dict(zip(sp.stations.tolist(), sp.features))
    assert all("SE" in feats[s].split() for s in d.sections.se_stations.tolist())


def test_cross_slope_of_a_billion_percent_refused(tmp_path):
    # issue 26 item 11: `cross_slope = 1e9` was read (bounded only as a coordinate) and staked a stake a
    # billion units high; slopes are now bounded to +-100 % (a dz gives a steeper face)
    from stakeout.jobfile import parse_job

    text = job_toml([{"code": "CL", "offset": 0.0}, {"code": "E", "offset": 3.0, "cross_slope": 1e9}], [])
    with pytest.raises(JobFileError, match=r"staking.offsets\[1\].cross_slope = 1000000000.0: out of range"):
        parse_job(text.encode("utf-8"))
    ok = job_toml([{"code": "CL", "offset": 0.0}, {"code": "E", "offset": 3.0, "cross_slope": -100.0}], [])
    assert parse_job(ok.encode("utf-8")).staking.offsets[1].cross_slope == -100.0


@settings(max_examples=80, deadline=None)
@given(data=st.data())
def test_random_templates_against_the_hand_computation(data):
    # random tables and chained templates: every line at many stations equals the rules written out by hand
    k = data.draw(st.integers(1, 5))
    gaps = data.draw(st.lists(st.floats(5.0, 80.0), min_size=k, max_size=k))
    at = 100.0 + np.cumsum(gaps)
    rows = [(f"0+{s:07.3f}", data.draw(slopes_), data.draw(slopes_)) for s in at.tolist()]
    lines = [{"code": "CL", "offset": 0.0}]
    for side, name in ((-1.0, "L"), (1.0, "R")):
        w = data.draw(st.floats(2.5, 4.0))
        sh = {"code": f"SH{name}", "from": f"EP{name}", "cross_slope": data.draw(st.floats(-8.0, 2.0))}
        if data.draw(st.booleans()):
            sh["rollover"] = data.draw(st.floats(0.0, 10.0))
        if data.draw(st.booleans()):
            sh["steepen"] = True
        taper = data.draw(st.floats(0.0, 3.0))
        if name == "R" and taper > 0.5:
            a, b = float(at[0]), float(at[0]) + 40.0
            ep = [(f"0+{a:07.3f}", w), (f"0+{b:07.3f}", w + taper)]
            lines += [{"code": "EPR", "cross_slope": "se", "offset": ep},
                      {**sh, "offset": [(s, o + 1.5) for s, o in ep]},
                      {"code": "KBR", "from": "SHR", "dz": -0.1, "offset": [(s, o + 1.6) for s, o in ep]}]
        else:
            lines += [{"code": f"EP{name}", "cross_slope": "se", "offset": side * w},
                      {**sh, "offset": side * (w + 1.5)},
                      {"code": f"KB{name}", "from": f"SH{name}", "dz": -0.1, "offset": side * (w + 1.6)}]
    hand = Hand(lines, rows)

    def ref(s):
        return StationRef(_value(s), None, s)

    ols = []
    for ln in lines:
        off = ln["offset"]
        widening = tuple(WideningRow(ref(s), o) for s, o in off) if isinstance(off, list) else ()
        cs = ln.get("cross_slope")
        ols.append(OffsetLine(off[0][1] if widening else off, ln["code"], dz=ln.get("dz"),
                              cross_slope=None if cs in (None, "se") else cs, superelevation=cs == "se",
                              from_code=ln.get("from"), steepen_with_inner=bool(ln.get("steepen")),
                              rollover=ln.get("rollover"), widening=widening, where=ln["code"]))
    se_rows = [SuperelevationRow(ref(s), left, right, f"r{i}") for i, (s, left, right) in enumerate(rows)]
    stn = Stationing.with_equations(0.0, 2000.0, 1000, 3, ())
    plan = plan_sections(ols, se_rows, stn)
    s = np.linspace(0.0, float(at[-1]) + 60.0, 97)
    centre = 50.0 + 8.0 * s / 800.0
    sec = section(plan, s, centre)
    assert sec.elevation is not None
    for j, ol in enumerate(plan.lines):
        for i in range(0, s.size, 8):
            off, slope, z = hand.stake(ol.code, float(s[i]))
            assert sec.offset[i, j] == pytest.approx(off, abs=1e-9)
            assert sec.elevation[i, j] == pytest.approx(z, abs=1e-9)
            assert (math.isnan(sec.slope[i, j]) if slope is None else sec.slope[i, j] == pytest.approx(slope,
                                                                                                       abs=1e-9))


def test_only_the_diagram_and_its_absence(tmp_path):
    # --only superelevation-picture writes the diagram alone; a job without rows says why there is none (exit 2)
    from typer.testing import CliRunner

    from stakeout.cli import app

    from .helpers import SAMPLES

    out = build_job(SAMPLES / "kestrel_rise_superelevation_m.toml", tmp_path / "one", "--only",
                    "superelevation-picture")
    assert sorted(p.name for p in out.iterdir()) == ["superelevation.svg"]
    r = CliRunner().invoke(app, ["build", str(SAMPLES / "hillside_lane_profile_m.toml"), "--out",
                                 str(tmp_path / "none"), "--only", "superelevation-picture"])
    assert r.exit_code == 2 and "no [[superelevation]] rows" in r.output
    assert not (tmp_path / "none").exists()
