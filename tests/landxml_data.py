"""Exact invented geometry for the LandXML test files, and the files' text.

Run ``python -m tests.landxml_data`` from the repository root to rewrite
``tests/data/landxml/*.xml``; ``tests/test_landxml.py`` checks that the
committed files are exactly what this script makes, so the data stay
reproducible.

The geometry is computed here independently of ``stakeout``:

* lines and arcs by plane trigonometry (an arc's centre lies on the normal
  to its start tangent, its end is the start radius turned by the sweep);
* clothoids with scipy's Fresnel integrals (``scipy.special.fresnel``): the
  standard clothoid x(s) = A sqrt(pi) C(s / (A sqrt(pi))),
  y(s) = A sqrt(pi) S(s / (A sqrt(pi))), heading s^2 / (2 A^2), with
  A^2 = L / |k_end - k_start|; a spiral whose curvature falls is the same
  curve run backwards, and a right-hand one its mirror image;
* a spiral's PI is the intersection of its end tangents (a 2x2 solve).

Coordinates are written with Python's shortest round-trip repr, so the
files carry the computed floats exactly.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from scipy.special import fresnel

DATA = Path(__file__).resolve().parent / "data" / "landxml"
NS = "http://www.landxml.org/schema/LandXML-1.2"


def num(v: float) -> str:
    """Shortest round-trip text of a float ('INF' for infinity)."""
    if math.isinf(v):
        return "INF"
    return repr(float(v))


# ---------------------------------------------------------------------------
# geometry
# ---------------------------------------------------------------------------


@dataclass
class Seg:
    """One element as designed, with its computed points (N, E)."""

    kind: str  # "line", "arc", "spiral"
    name: str
    length: float
    start: tuple[float, float]
    end: tuple[float, float]
    az_start: float  # degrees clockwise from north
    az_end: float
    turn: int = 0  # +1 right (cw), -1 left (ccw)
    radius: float | None = None  # arc
    sweep: float | None = None  # arc, degrees
    center: tuple[float, float] | None = None
    rs: float | None = None  # spiral radii, None = INF
    re: float | None = None
    pi: tuple[float, float] | None = None
    attrs: dict[str, str] = field(default_factory=dict)


def _unit(az_deg: float) -> tuple[float, float]:
    a = math.radians(az_deg)
    return math.cos(a), math.sin(a)  # (dN, dE)


def clothoid_end(n0, e0, az0, length, rs, re, turn):
    """End of a clothoid from (n0, e0) along azimuth az0 (independent: Fresnel integrals).

    Curvature magnitude runs from 1/rs to 1/re (None = 0) over ``length``;
    ``turn`` +1 right, -1 left.  Returns (n, e, azimuth at the end).
    """
    k0 = 0.0 if rs is None else 1.0 / rs
    k1 = 0.0 if re is None else 1.0 / re
    a2 = length / abs(k1 - k0)
    a = math.sqrt(a2)
    scale = a * math.sqrt(math.pi)
    sigma = 1 if k1 > k0 else -1
    s1, s2 = k0 * a2, k1 * a2

    def canon(s):
        ss, cc = fresnel(s / scale)
        return complex(scale * cc, scale * ss)

    d = canon(s2) - canon(s1)  # displacement in the standard (left-turning) frame, x + iy
    h0 = s1 * s1 / (2.0 * a2) + (0.0 if sigma == 1 else math.pi)  # path heading at start
    canon_turn = -1 if sigma == 1 else 1  # standard frame: rising curvature turns left
    if canon_turn != turn:  # mirror image
        d = d.conjugate()
        h0 = -h0
    hm = math.pi / 2.0 - math.radians(az0)  # math heading (x = east, y = north) of the start tangent
    w = d * cmath.exp(1j * (hm - h0))
    theta = math.degrees(length * (k0 + k1) / 2.0)
    return n0 + w.imag, e0 + w.real, (az0 + turn * theta) % 360.0


def tangent_intersection(p0, az0, p1, az1):
    """Intersection of the line through p0 along az0 and the line through p1 along az1."""
    u0, u1 = np.array(_unit(az0)), np.array(_unit(az1))
    a, _ = np.linalg.solve(np.column_stack([u0, -u1]), np.array(p1) - np.array(p0))
    return float(p0[0] + a * u0[0]), float(p0[1] + a * u0[1])


def build(n0: float, e0: float, az0: float, plan: list[tuple]) -> list[Seg]:
    """Walk a plan of ("line", name, L), ("arc", name, R, sweep_deg, turn),
    ("spiral", name, L, rs, re, turn) from a start point and azimuth."""
    out: list[Seg] = []
    n, e, az = n0, e0, az0
    for step in plan:
        kind, name = step[0], step[1]
        if kind == "line":
            length = step[2]
            dn, de = _unit(az)
            end = (n + length * dn, e + length * de)
            out.append(Seg("line", name, length, (n, e), end, az, az))
            n, e = end
        elif kind == "arc":
            radius, sweep, turn = step[2], step[3], step[4]
            cn_, ce_ = _unit(az + 90.0 * turn)
            center = (n + radius * cn_, e + radius * ce_)
            radial_end = az - 90.0 * turn + turn * sweep
            rn, rn_e = _unit(radial_end)
            end = (center[0] + radius * rn, center[1] + radius * rn_e)
            az1 = (az + turn * sweep) % 360.0
            out.append(
                Seg("arc", name, radius * math.radians(sweep), (n, e), end, az, az1, turn, radius, sweep, center)
            )
            n, e, az = end[0], end[1], az1
        else:
            length, rs, re, turn = step[2], step[3], step[4], step[5]
            n1, e1, az1 = clothoid_end(n, e, az, length, rs, re, turn)
            pi = tangent_intersection((n, e), az, (n1, e1), az1)
            out.append(Seg("spiral", name, length, (n, e), (n1, e1), az, az1, turn, rs=rs, re=re, pi=pi))
            n, e, az = n1, e1, az1
    return out


# ---------------------------------------------------------------------------
# XML text (the test files; stakeout's own writer is not used for them)
# ---------------------------------------------------------------------------


def pt(tag: str, p: tuple[float, float], pad: str, z: float | None = None) -> str:
    zz = "" if z is None else f" {num(z)}"
    return f"{pad}<{tag}>{num(p[0])} {num(p[1])}{zz}</{tag}>\n"


def ccw_from_east(az: float) -> float:
    """Direction as many files in use write ``dir``: counter-clockwise from east."""
    return (90.0 - az) % 360.0


def element_xml(s: Seg, pad: str, angle: str = "deg", extra: str = "", spi_type: str = "clothoid",
                radius_attr: float | None = None, start_ref: str | None = None) -> str:
    """One CoordGeom element with attributes filled as a designer's program might."""
    name = f' name="{s.name}"' if s.name else ""
    start = f'{pad}  <Start pntRef="{start_ref}"/>\n' if start_ref else pt("Start", s.start, pad + "  ")
    if s.kind == "line":
        head = f'{pad}<Line{name} dir="{num(ccw_from_east(s.az_start))}" length="{num(s.length)}">\n'
        return head + start + pt("End", s.end, pad + "  ") + extra + f"{pad}</Line>\n"
    rot = "cw" if s.turn == 1 else "ccw"
    if s.kind == "arc":
        assert s.sweep is not None and s.radius is not None and s.center is not None
        if angle == "deg":
            delta = num(s.sweep)
        elif angle == "rad":
            delta = num(math.radians(s.sweep))
        else:  # packed dd.mm.ss, whole seconds
            total = round(s.sweep * 3600.0)
            delta = f"{total // 3600}.{(total // 60) % 60:02d}{total % 60:02d}"
        chord = 2.0 * s.radius * math.sin(math.radians(s.sweep) / 2.0)
        r = s.radius if radius_attr is None else radius_attr
        head = (
            f'{pad}<Curve{name} rot="{rot}" chord="{num(chord)}" delta="{delta}" '
            f'dirStart="{num(ccw_from_east(s.az_start))}" dirEnd="{num(ccw_from_east(s.az_end))}" '
            f'length="{num(s.length)}" radius="{num(r)}">\n'
        )
        return head + start + pt("Center", s.center, pad + "  ") + pt("End", s.end, pad + "  ") + extra + f"{pad}</Curve>\n"
    assert s.pi is not None
    rs = math.inf if s.rs is None else s.rs
    re = math.inf if s.re is None else s.re
    head = (
        f'{pad}<Spiral{name} length="{num(s.length)}" radiusStart="{num(rs)}" radiusEnd="{num(re)}" '
        f'rot="{rot}" spiType="{spi_type}" dirStart="{num(ccw_from_east(s.az_start))}" '
        f'dirEnd="{num(ccw_from_east(s.az_end))}">\n'
    )
    return head + start + pt("PI", s.pi, pad + "  ") + pt("End", s.end, pad + "  ") + extra + f"{pad}</Spiral>\n"


def units_xml(kind: str, angle: str | None) -> str:
    ang = "" if angle is None else f' angularUnit="{angle}" directionUnit="{angle}"'
    if kind == "m":
        return (
            '  <Units>\n    <Metric areaUnit="squareMeter" linearUnit="meter" volumeUnit="cubicMeter" '
            f'temperatureUnit="celsius" pressureUnit="milliBars"{ang}/>\n  </Units>\n'
        )
    lin = "USSurveyFoot" if kind == "us_ft" else "foot"
    return (
        f'  <Units>\n    <Imperial areaUnit="squareFoot" linearUnit="{lin}" volumeUnit="cubicFeet" '
        f'temperatureUnit="fahrenheit" pressureUnit="inHG"{ang}/>\n  </Units>\n'
    )


def head(units: str, namespace: bool = True) -> str:
    ns = f' xmlns="{NS}"' if namespace else ""
    return (
        '<?xml version="1.0" encoding="UTF-8"?>\n'
        "<!-- Invented test scenario for stakeout; made by tests/landxml_data.py -->\n"
        f'<LandXML{ns} date="2026-01-15" time="09:30:00" version="1.2">\n' + units
    )


def alignment_xml(name: str, sta: float, segs: list[Seg], pad: str = "    ", angle: str = "deg",
                  tail: str = "", overrides: dict[int, dict] | None = None, inner: dict[int, str] | None = None) -> str:
    total = sum(s.length for s in segs)
    body = "".join(
        element_xml(s, pad + "    ", angle, extra=(inner or {}).get(i, ""), **(overrides or {}).get(i, {}))
        for i, s in enumerate(segs, start=1)
    )
    return (
        f'{pad}<Alignment name="{name}" length="{num(total)}" staStart="{num(sta)}">\n'
        f"{pad}  <CoordGeom>\n{body}{pad}  </CoordGeom>\n{tail}{pad}</Alignment>\n"
    )


# ---------------------------------------------------------------------------
# the scenarios
# ---------------------------------------------------------------------------

ROAD_START = (5123456.789, 481234.567, 63.5)
ROAD_PLAN = [
    ("line", "T1", 150.0),
    ("spiral", "SP1", 80.0, None, 400.0, 1),
    ("arc", "C1", 400.0, 25.0, 1),
    ("spiral", "SP2", 80.0, 400.0, None, 1),
    ("line", "T2", 200.0),
    ("arc", "C2", 250.0, 40.0, -1),
    ("line", "T3", 120.0),
]
ROAD_STA = -120.0
ROAD_EQ = (450.0, 1000.0)  # staInternal, staAhead (no staBack)

# vertical: (kind, station, elevation, extra) at internal stations
ROAD_PVIS = [
    ("pvi", -120.0, 100.0, {}),
    ("para", 50.0, 102.5, {"length": 80.0}),
    ("unsym", 250.0, 98.0, {"lengthIn": 60.0, "lengthOut": 100.0}),
    ("circ", 450.0, 101.0, {"radius": 3000.0}),
    ("pvi", 700.0, 99.0, {}),
]

RAMP_START = (1840350.25, 6485420.75, 312.25)
RAMP_PLAN = [
    ("line", "L1", 300.0),
    ("spiral", "S1", 200.0, None, 1200.0, -1),
    ("arc", "C1", 1200.0, 18.0 + 15.0 / 60.0 + 30.0 / 3600.0, -1),
    ("spiral", "S2", 150.0, 1200.0, 600.0, -1),
    ("arc", "C2", 600.0, 30.0 + 20.0 / 60.0, -1),
    ("spiral", "S3", 180.0, 600.0, None, -1),
    ("line", "L2", 400.0),
]
RAMP_STA = 1000.0
# (staInternal, staBack, staAhead): a backward equation, then a forward one
RAMP_EQS = [(1400.0, 1400.0, 1350.0), (2200.0, 2150.0, 2500.0)]
RAMP_PVIS = [
    ("pvi", 1000.0, 520.0, {}),
    ("para", 1500.0, 535.0, {"length": 400.0}),
    ("unsym", 2300.0, 522.0, {"lengthIn": 300.0, "lengthOut": 200.0}),
    ("pvi", 3000.0, 540.0, {}),
]

SITE = {
    "MAIN ST": ((10250.0, 20500.0, 15.0), 0.0, [
        ("line", "", 500.0), ("arc", "", 800.0, 35.0, 1), ("line", "", 400.0)]),
    "SIDE RD": ((10600.0, 20900.0, 105.0), 5000.0, [
        ("line", "", 250.0), ("arc", "", 300.0, 20.0, -1), ("line", "", 150.0)]),
    "CUL-DE-SAC": ((9900.0, 21200.0, 200.0), 9000.0, [
        ("line", "", 120.0), ("arc", "BULB", 60.0, 250.0, 1), ("line", "", 40.0)]),
}

RAIL_START = (6200100.0, 350200.0, 10.0)
RAIL_PLAN = [
    ("line", "T1", 300.0),
    ("spiral", "TS1", 120.0, None, 1500.0, -1),
    ("arc", "R1", 1500.0, 12.0, -1),
    ("spiral", "TS2", 120.0, 1500.0, None, -1),
    ("line", "T2", 250.0),
]


def circ_length(pvis, k: int) -> float:
    """Length along a circular vertical curve at PVI k: R times the change of slope angle."""
    (_, s0, z0, _), (_, s1, z1, x), (_, s2, z2, _) = pvis[k - 1], pvis[k], pvis[k + 1]
    g1, g2 = (z1 - z0) / (s1 - s0), (z2 - z1) / (s2 - s1)
    return x["radius"] * abs(math.atan(g1) - math.atan(g2))


def profile_xml(name: str, pvis, pad: str) -> str:
    tag = {"pvi": "PVI", "para": "ParaCurve", "unsym": "UnsymParaCurve", "circ": "CircCurve"}
    rows = []
    for k, (kind, sta, z, extra) in enumerate(pvis):
        attrs = dict(extra)
        if kind == "circ":
            attrs = {"length": circ_length(pvis, k), "radius": extra["radius"]}
        text = "".join(f' {key}="{num(v)}"' for key, v in attrs.items())
        rows.append(f"{pad}  <{tag[kind]}{text}>{num(sta)} {num(z)}</{tag[kind]}>\n")
    return f'{pad}<ProfAlign name="{name}">\n' + "".join(rows) + f"{pad}</ProfAlign>\n"


def road_segments() -> list[Seg]:
    return build(*ROAD_START, ROAD_PLAN)


def ramp_segments() -> list[Seg]:
    return build(*RAMP_START, RAMP_PLAN)


def road_metric(overrides: dict[int, dict] | None = None, shift_from: int | None = None) -> str:
    """Metric road: negative staStart, spirals from and to tangent, cw and ccw arcs,
    an equation without staBack, all four kinds of vertical curve, control points,
    the first Start given by pntRef."""
    segs = road_segments()
    if shift_from is not None:  # a gap: move this element and all after it 0.05 m north
        for s in segs[shift_from - 1:]:
            s.start = (s.start[0] + 0.05, s.start[1])
            s.end = (s.end[0] + 0.05, s.end[1])
            if s.center:
                s.center = (s.center[0] + 0.05, s.center[1])
            if s.pi:
                s.pi = (s.pi[0] + 0.05, s.pi[1])
    ov = {1: {"start_ref": "POB"}}
    for k, v in (overrides or {}).items():
        ov.setdefault(k, {}).update(v)
    tail = (
        f'      <StaEquation staInternal="{num(ROAD_EQ[0])}" staAhead="{num(ROAD_EQ[1])}" staIncrement="increasing"/>\n'
        '      <Profile name="ROAD 1">\n' + profile_xml("ROAD 1 FG", ROAD_PVIS, "        ") + "      </Profile>\n"
    )
    s0 = segs[0].start
    return (
        head(units_xml("m", "decimal degrees"))
        + '  <Application name="invented design program" version="0.0"/>\n'
        + '  <CgPoints name="control">\n'
        + f'    <CgPoint name="POB" code="BEGIN">{num(s0[0])} {num(s0[1])}</CgPoint>\n'
        + '    <CgPoint name="CP101" code="CTRL">5123400.125 481300.25 312.4</CgPoint>\n'
        + '    <CgPoint name="CP102" code="CTRL">5123700.5 481600.75 318.05</CgPoint>\n'
        + '    <CgPoint name="CP103" desc="nail in kerb">5123900.0 481950.0</CgPoint>\n'
        + "  </CgPoints>\n"
        + "  <Alignments>\n"
        + alignment_xml("ROAD 1", ROAD_STA, segs, tail=tail, overrides=ov)
        + "  </Alignments>\n</LandXML>\n"
    )


def ramp_usft() -> str:
    """US survey feet: spirals from tangent, between arcs and to tangent, all turning left;
    delta in packed dd.mm.ss; a backward equation and a forward one, both with staBack."""
    segs = ramp_segments()
    eqs = "".join(
        f'      <StaEquation staInternal="{num(i)}" staBack="{num(b)}" staAhead="{num(a)}"/>\n'
        for i, b, a in RAMP_EQS
    )
    tail = eqs + '      <Profile>\n' + profile_xml("RAMP A FG", RAMP_PVIS, "        ") + "      </Profile>\n"
    return (
        head(units_xml("us_ft", "decimal dd.mm.ss"))
        + '  <Alignments name="ramps">\n'
        + alignment_xml("RAMP A", RAMP_STA, segs, angle="dms", tail=tail)
        + "  </Alignments>\n</LandXML>\n"
    )


def site_ft_multi() -> str:
    """International feet ("foot"), no namespace, three alignments; delta in radians
    (no angularUnit: the schema's default); two profiles on one alignment."""
    parts = []
    for name, (start, sta, plan) in SITE.items():
        segs = build(*start, plan)
        tail = ""
        if name == "MAIN ST":
            pv = [("pvi", 0.0, 50.0, {}), ("para", 600.0, 58.0, {"length": 200.0}), ("pvi", 1400.0, 52.0, {})]
            alt = [("pvi", 0.0, 50.0, {}), ("pvi", 1400.0, 52.0, {})]
            tail = ('      <Profile name="MAIN">\n' + profile_xml("MAIN FG", pv, "        ")
                    + profile_xml("MAIN ALT", alt, "        ") + "      </Profile>\n")
        elif name == "SIDE RD":
            pv = [("pvi", 5000.0, 61.0, {}), ("pvi", 5500.0, 55.0, {})]
            tail = '      <Profile>\n' + profile_xml("SIDE FG", pv, "        ") + "      </Profile>\n"
        parts.append(alignment_xml(name, sta, segs, angle="rad", tail=tail))
    return (
        head(units_xml("ft", None), namespace=False)
        + "  <Alignments>\n" + "".join(parts) + "  </Alignments>\n</LandXML>\n"
    )


def rail_cant() -> str:
    """Metric rail alignment with content a staking job does not use: cant,
    cross-sections, a ground profile, features, a surface, a coordinate system."""
    segs = build(*RAIL_START, RAIL_PLAN)
    feature = '          <Feature code="mast"><Property label="mast" value="M12"/></Feature>\n'
    tail = (
        '      <Profile name="RAIL">\n'
        '        <ProfSurf name="existing ground">\n'
        "          <PntList2D>0.0 41.2 250.0 42.8 500.0 44.1</PntList2D>\n"
        "        </ProfSurf>\n"
        + profile_xml("RAIL FG", [("pvi", 0.0, 41.5, {}), ("pvi", 900.0, 46.0, {})], "        ")
        + "      </Profile>\n"
        '      <CrossSects><CrossSect sta="100.0"/><CrossSect sta="200.0"/></CrossSects>\n'
        '      <Cant name="rail cant" gauge="1.435">\n'
        '        <CantStation station="300.0" appliedCant="0.0" curvature="ccw"/>\n'
        '        <CantStation station="420.0" appliedCant="95.0" curvature="ccw"/>\n'
        "      </Cant>\n"
        '      <Feature code="track"><Property label="track" value="UP"/></Feature>\n'
    )
    return (
        head(units_xml("m", "decimal degrees"))
        + '  <CoordinateSystem name="invented grid" epsgCode="25832"/>\n'
        + '  <Alignments>\n'
        + alignment_xml("UP MAIN", 0.0, segs, tail=tail, inner={3: feature})
        + "  </Alignments>\n"
        + '  <Surfaces>\n    <Surface name="EG"/>\n    <Surface name="FG"/>\n  </Surfaces>\n'
        + "</LandXML>\n"
    )


# The trial of issue 22: a left-hand spiralled curve (so the right edge is the high side), 4 %
# full superelevation on 2 % normal crown, runoff over each spiral and runout n/e of it before and
# after (common practice: the runout length = runoff x n / e), a 1 % grade, in ETRS89 / UTM 32N.
TRIAL_START = (5500100.0, 500200.0, 0.0)
TRIAL_STA = 1000.0
TRIAL_RADIUS = 300.0
TRIAL_SWEEP = 20.0  # degrees of circular arc between the spirals
TRIAL_SPIRAL = 60.0
TRIAL_PLAN = [
    ("line", "T1", 200.0),
    ("spiral", "SP1", TRIAL_SPIRAL, None, TRIAL_RADIUS, -1),
    ("arc", "C1", TRIAL_RADIUS, TRIAL_SWEEP, -1),
    ("spiral", "SP2", TRIAL_SPIRAL, TRIAL_RADIUS, None, -1),
    ("line", "T2", 200.0),
]
TRIAL_ARC = TRIAL_RADIUS * math.radians(TRIAL_SWEEP)
# internal stations: TS, SC, CS, ST and the runouts (30 m = 60 x 2 / 4)
TRIAL_SE = {
    "BeginRunoutSta": 1170.0,
    "BeginRunoffSta": 1200.0,
    "FullSuperSta": 1260.0,
    "RunoffSta": 1260.0 + TRIAL_ARC,
    "StartofRunoutSta": 1320.0 + TRIAL_ARC,
    "EndofRunoutSta": 1350.0 + TRIAL_ARC,
}
TRIAL_PVIS = [("pvi", 1000.0, 100.0, {}), ("pvi", 1700.0, 107.0, {})]


def trial_superelevation(turn: int = -1) -> str:
    """The issue-22 trial: alignment, profile and <Superelevation> in one file, with a coordinate
    system and content a staking job does not use (three Feature, one CrossSects).  ``turn`` +1 makes
    the curve right-hand (its outside, the high side, on the left)."""
    plan = [step if step[0] == "line" else (*step[:-1], turn) for step in TRIAL_PLAN]
    segs = build(*TRIAL_START[:2], 15.0, plan)
    feature = '          <Feature code="sign"><Property label="sign" value="S1"/></Feature>\n'
    stations = "".join(f"        <{k}>{num(v)}</{k}>\n" for k, v in TRIAL_SE.items())
    tail = (
        '      <Profile name="TRIAL">\n' + profile_xml("TRIAL FG", TRIAL_PVIS, "        ") + "      </Profile>\n"
        '      <CrossSects><CrossSect sta="1100.0"/></CrossSects>\n'
        f'      <Superelevation staStart="{num(TRIAL_SE["BeginRunoutSta"])}" '
        f'staEnd="{num(TRIAL_SE["EndofRunoutSta"])}">\n'
        + stations + "        <FullSuperelev>4.0</FullSuperelev>\n        <AdverseSE>non-adverse</AdverseSE>\n"
        "      </Superelevation>\n"
        '      <Feature code="road"><Property label="class" value="B"/></Feature>\n'
    )
    return (
        head(units_xml("m", "decimal degrees"))
        + '  <CoordinateSystem name="ETRS89 / UTM zone 32N" epsgCode="25832"/>\n'
        + "  <Alignments>\n"
        + alignment_xml("TRIAL", TRIAL_STA, segs, tail=tail, inner={1: feature, 5: feature})
        + "  </Alignments>\n</LandXML>\n"
    )


def broken_kink() -> str:
    """Two lines meeting with a 10 arc-second change of direction."""
    segs = build(1000.0, 2000.0, 45.0, [("line", "A", 100.0)])
    segs += build(*segs[0].end, 45.0 + 10.0 / 3600.0, [("line", "B", 100.0)])
    return head(units_xml("m", "decimal degrees")) + "  <Alignments>\n" + alignment_xml("KINK", 0.0, segs) + "  </Alignments>\n</LandXML>\n"


def broken_curvature() -> str:
    """A spiral to radius 400 followed by an arc of radius 300 (position and direction continuous)."""
    segs = build(1000.0, 2000.0, 10.0, [("line", "A", 50.0), ("spiral", "SP", 60.0, None, 400.0, 1)])
    n, e = segs[-1].end
    segs += build(n, e, segs[-1].az_end, [("arc", "C", 300.0, 20.0, 1)])
    return head(units_xml("m", "decimal degrees")) + "  <Alignments>\n" + alignment_xml("JUMP", 0.0, segs) + "  </Alignments>\n</LandXML>\n"


MALFORMED = """<?xml version="1.0" encoding="UTF-8"?>
<!-- Invented test scenario for stakeout: a closing tag is misspelt on line 9 -->
<LandXML xmlns="http://www.landxml.org/schema/LandXML-1.2" date="2026-01-15" time="09:30:00" version="1.2">
  <Units>
    <Metric areaUnit="squareMeter" linearUnit="meter" volumeUnit="cubicMeter" temperatureUnit="celsius" pressureUnit="milliBars"/>
  </Units>
  <CgPoints>
    <CgPoint name="1">100.0 200.0</CgPoint>
    <CgPoint name="2">110.0 210.0</CgPoit>
  </CgPoints>
</LandXML>
"""

BILLION_LAUGHS = """<?xml version="1.0" encoding="UTF-8"?>
<!DOCTYPE LandXML [
  <!ENTITY lol "lol">
  <!ENTITY lol1 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">
  <!ENTITY lol2 "&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;">
  <!ENTITY lol3 "&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;">
  <!ENTITY lol4 "&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;">
  <!ENTITY lol5 "&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;">
  <!ENTITY lol6 "&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;">
  <!ENTITY lol7 "&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;">
  <!ENTITY lol8 "&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;">
  <!ENTITY lol9 "&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;">
]>
<LandXML xmlns="http://www.landxml.org/schema/LandXML-1.2" date="2026-01-15" time="09:30:00" version="1.2">
  <Units>
    <Metric areaUnit="squareMeter" linearUnit="meter" volumeUnit="cubicMeter" temperatureUnit="celsius" pressureUnit="milliBars"/>
  </Units>
  <CgPoints>
    <CgPoint name="1" desc="&lol9;">100.0 200.0</CgPoint>
  </CgPoints>
</LandXML>
"""

EXTERNAL_ENTITY = """<?xml version="1.0" encoding="UTF-8"?>
<!DOCTYPE LandXML [
  <!ENTITY secret SYSTEM "file:///etc/passwd">
]>
<LandXML xmlns="http://www.landxml.org/schema/LandXML-1.2" date="2026-01-15" time="09:30:00" version="1.2">
  <Units>
    <Metric areaUnit="squareMeter" linearUnit="meter" volumeUnit="cubicMeter" temperatureUnit="celsius" pressureUnit="milliBars"/>
  </Units>
  <CgPoints>
    <CgPoint name="1" desc="&secret;">100.0 200.0</CgPoint>
  </CgPoints>
</LandXML>
"""

FILES = {
    "road_metric.xml": road_metric,
    "ramp_usft.xml": ramp_usft,
    "site_ft_multi.xml": site_ft_multi,
    "rail_cant.xml": rail_cant,
    "trial_superelevation.xml": trial_superelevation,
    "broken_gap.xml": lambda: road_metric(shift_from=5),
    "broken_kink.xml": broken_kink,
    "broken_curvature.xml": broken_curvature,
    "broken_cubic_spiral.xml": lambda: road_metric({2: {"spi_type": "cubic"}}),
    "broken_radius.xml": lambda: road_metric({3: {"radius_attr": 401.0}}),
    "broken_malformed.xml": lambda: MALFORMED,
    "broken_billion_laughs.xml": lambda: BILLION_LAUGHS,
    "broken_external_entity.xml": lambda: EXTERNAL_ENTITY,
}


def main() -> None:
    DATA.mkdir(parents=True, exist_ok=True)
    for name, make in FILES.items():
        (DATA / name).write_text(make(), encoding="utf-8")
        print("wrote", DATA / name)


if __name__ == "__main__":
    main()
