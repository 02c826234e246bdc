"""The profile end to end: job file -> ``stakeout build`` / ``stakeout check``
-> stations.csv, profile.csv, setout.csv, setout.txt, check.csv, check.txt.

Sources (each named again beside its check):
- FHWA Bridge Geometry Manual (HIF-22-034, April 2022), Table 3.2: a
  1600-ft crest curve tabulated every 160 ft [published], and its high point
  [computed] (references.md, "Vertical curves"; both in tests/reference/fhwa_bridge_geometry.py);
- the route-surveying parabola y = y_PVC + g1 x + (g2 - g1) x^2 / (2L), its
  high/low point x = g1 L / (g1 - g2), K = L / |A| and the unsymmetrical
  middle ordinate e = (g2 - g1) l1 l2 / (2 (l1 + l2)) (references.md);
- an independent construction written here: an unsymmetrical vertical curve
  as two quadratic Bezier segments whose control points are the PVC, the
  points l1/2 back and l2/2 ahead of the PVI on the grades, and the PVT (the
  common tangent at the PVI station joins those two grade points);
- zenith angle = atan2(horizontal distance, height difference) from the
  occupied point's elevation and instrument height to the stake's design
  elevation plus target height (plane trigonometry, common practice for short
  sights without curvature and refraction).
"""

from __future__ import annotations

import csv
import math
import re
import tomllib
from pathlib import Path
from typing import Callable

import pytest
from typer.testing import CliRunner

from stakeout.cli import app

from .helpers import SAMPLES, build_job, check_row, read_rows, sheet_records, write_job
from .reference import fhwa_bridge_geometry as fhwa

runner = CliRunner()

HILLSIDE = SAMPLES / "hillside_lane_profile_m.toml"


# ---- an independent vertical alignment ---------------------------------------------------


def _bezier(p0: tuple[float, float], p1: tuple[float, float], p2: tuple[float, float], x: float) -> float:
    """Elevation of the quadratic Bezier p0, p1, p2 (station, elevation) at station x.

    The control stations are evenly spaced (p1 halfway), so the Bezier's
    station is linear in its parameter: t = (x - x0) / (x2 - x0).
    """
    assert math.isclose(p1[0], (p0[0] + p2[0]) / 2.0, abs_tol=1e-9)
    t = (x - p0[0]) / (p2[0] - p0[0])
    return (1 - t) ** 2 * p0[1] + 2 * t * (1 - t) * p1[1] + t * t * p2[1]


def _bezier_turning_point(p0, p1, p2) -> tuple[float, float] | None:
    """Where dy/dt = 0 on the Bezier (0 < t < 1), else None."""
    den = p0[1] - 2 * p1[1] + p2[1]
    if den == 0:
        return None
    t = (p0[1] - p1[1]) / den
    if not 0 < t < 1:
        return None
    x = (1 - t) ** 2 * p0[0] + 2 * t * (1 - t) * p1[0] + t * t * p2[0]
    y = (1 - t) ** 2 * p0[1] + 2 * t * (1 - t) * p1[1] + t * t * p2[1]
    return x, y


class RefCurve:
    """One vertical curve, built independently of the package."""

    def __init__(self, xv: float, yv: float, g1: float, g2: float, l1: float, l2: float):
        self.xv, self.yv, self.g1, self.g2, self.l1, self.l2 = xv, yv, g1, g2, l1, l2
        self.pvc = (xv - l1, yv - g1 * l1)
        self.pvt = (xv + l2, yv + g2 * l2)
        self.length = l1 + l2
        self.k = self.length / abs(100.0 * (g2 - g1))  # K = L / |A|, A in percent (references.md)
        self.symmetric = l1 == l2
        # Bezier construction: grade points l1/2 back and l2/2 ahead of the PVI,
        # the common tangent through them, its point at the PVI's station
        a = (xv - l1 / 2.0, yv - g1 * l1 / 2.0)
        b = (xv + l2 / 2.0, yv + g2 * l2 / 2.0)
        m = (xv, a[1] + (b[1] - a[1]) * (l1 / 2.0) / ((l1 + l2) / 2.0))
        self.segments = ((self.pvc, a, m), (m, b, self.pvt))
        self.at_pvi = m[1]
        # high or low point
        self.high_low: tuple[float, float, str] | None = None
        if g1 * g2 < 0:
            kind = "HP" if g1 > 0 else "LP"
            if self.symmetric:
                # handbook: x = g1 L / (g1 - g2) from the PVC (references.md)
                u = g1 * self.length / (g1 - g2)
                self.high_low = (self.pvc[0] + u, self.elevation(self.pvc[0] + u), kind)
            else:
                for seg in self.segments:
                    tp = _bezier_turning_point(*seg)
                    if tp is not None:
                        self.high_low = (tp[0], tp[1], kind)
                assert self.high_low is not None

    def covers(self, x: float) -> bool:
        return self.pvc[0] <= x <= self.pvt[0]

    def elevation(self, x: float) -> float:
        if self.symmetric:
            # route-surveying parabola y = y_PVC + g1 u + (g2 - g1) u^2 / (2L) (references.md)
            u = x - self.pvc[0]
            return self.pvc[1] + self.g1 * u + (self.g2 - self.g1) * u * u / (2.0 * self.length)
        # two quadratic Bezier segments (independent construction, see the module docstring)
        seg = self.segments[0] if x <= self.xv else self.segments[1]
        return _bezier(*seg, x)


class RefProfile:
    """A profile from (internal station, elevation, l1, l2) PVIs, built independently."""

    def __init__(self, pvis: list[tuple[float, float, float, float]]):
        self.xs = [p[0] for p in pvis]
        self.ys = [p[1] for p in pvis]
        self.grades = [(self.ys[i + 1] - self.ys[i]) / (self.xs[i + 1] - self.xs[i]) for i in range(len(pvis) - 1)]
        self.curves: list[RefCurve | None] = [None] * len(pvis)
        for i in range(1, len(pvis) - 1):
            if pvis[i][2] > 0:
                self.curves[i] = RefCurve(self.xs[i], self.ys[i], self.grades[i - 1], self.grades[i],
                                          pvis[i][2], pvis[i][3])

    def elevation(self, x: float) -> float:
        for c in self.curves:
            if c is not None and c.covers(x):
                return c.elevation(x)
        # on a grade: straight line between the PVIs either side
        i = max(0, min(len(self.xs) - 2, sum(1 for xv in self.xs if xv <= x) - 1))
        return self.ys[i] + self.grades[i] * (x - self.xs[i])


def _num(text: str) -> float | None:
    return None if text == "" else float(text)


def _pvis_of(job_text: str, internal: Callable[[str], float]) -> list[tuple[float, float, float, float]]:
    """(internal station, elevation, l1, l2) of every PVI in a job file's text."""
    doc = tomllib.loads(job_text)
    out = []
    for p in doc["profile"]["pvi"]:
        if "curve_length" in p:
            l1 = l2 = p["curve_length"] / 2.0
        else:
            l1, l2 = p.get("curve_length_back", 0.0), p.get("curve_length_ahead", 0.0)
        out.append((internal(p["station"]), float(p["elevation"]), float(l1), float(l2)))
    return out


def _plain_station(text: str) -> float:
    """'1+200' or '12+00.00' -> 1200.0 (no equations)."""
    return float(text.replace("+", ""))


def _drops(job_text: str) -> dict[str, float]:
    """Each offset line's elevation difference from the centreline, by code:
    dz, or cross_slope / 100 x |offset| (job-file.md: percent per unit of
    distance out from the centreline)."""
    doc = tomllib.loads(job_text)
    out = {}
    for o in doc["staking"]["offsets"]:
        if "dz" in o:
            out[o["code"]] = o["dz"]
        elif "cross_slope" in o:
            out[o["code"]] = o["cross_slope"] / 100.0 * abs(o["offset"])
        else:
            out[o["code"]] = 0.0
    return out


# ---- 1. FHWA Bridge Geometry Manual, Table 3.2, through a whole job ---------------------------

FHWA_JOB = """\
format = 1

[job]
name = "FHWA crest curve"
units = "us_ft"

[alignment]
name = "A"
start_station = "100+00"
[[alignment.pi]]
northing = 5000.0
easting = 5000.0
[[alignment.pi]]
northing = 5000.0
easting = 9000.0

[profile]
name = "FG"
[[profile.pvi]]
station = "100+00"
elevation = 100.00
[[profile.pvi]]
station = "%s"
elevation = %.2f
curve_length = %.1f
[[profile.pvi]]
station = "140+00"
elevation = 115.00

[staking]
interval = 160.0

[setup]
occupied = { id = "CP1", northing = 5100.0, easting = 7000.0, elevation = 120.0 }
backsight = { id = "CP2", northing = 5100.0, easting = 9000.0 }
instrument_height = 5.0
target_height = 6.5

[check]
horizontal_tolerance = 0.05
vertical_tolerance = 0.10
""" % (fhwa.PVI_STATION.printed, fhwa.PVI_ELEVATION.value, fhwa.CURVE_LENGTH.value)
# the end PVIs lie on the table's grades: 135 - 1.75 % x 2000 = 100, 135 - 1.00 % x 2000 = 115



@pytest.fixture(scope="module")
def fhwa_out(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("fhwa")
    return build_job(write_job(tmp, FHWA_JOB), tmp / "out")


def test_fhwa_table_3_2_stations_csv(fhwa_out):
    rows = read_rows(fhwa_out / "stations.csv")
    by_station = {round(float(r["station"]), 2): r for r in rows}
    for st, published in zip(fhwa.table_stations(), fhwa.ELEVATIONS.value):
        r = by_station[st]
        # FHWA Bridge Geometry Manual (HIF-22-034), Table 3.2 [published], printed to 0.01
        assert float(r["elevation"]) == pytest.approx(published, abs=fhwa.ELEVATIONS.tol), r["station_label"]
    assert by_station[fhwa.BVC_STATION.value]["feature"] == "PVC"
    assert by_station[fhwa.PVI_STATION.value]["feature"] == "PVI"
    assert by_station[fhwa.EVC_STATION.value]["feature"] == "PVT"
    # the stations are those of the table, in US survey feet: 112+00, 113+60, ... 128+00
    assert [by_station[fhwa.table_stations()[k]]["station_label"] for k in (0, 1, 10)] == \
        ["112+00.00", "113+60.00", "128+00.00"]


def test_fhwa_high_point_stake(fhwa_out):
    rows = read_rows(fhwa_out / "stations.csv")
    hp = [r for r in rows if r["feature"] == "HP"]
    assert len(hp) == 1
    # FHWA Table 3.2 curve, high point [computed] in references.md: 122+18.18, elev 129.909;
    # handbook x = g1 L / (g1 - g2) = 1.75 x 1600 / 2.75 from the BVC 112+00
    assert hp[0]["station_label"] == fhwa.HIGH_POINT_STATION.printed
    assert float(hp[0]["station"]) == pytest.approx(11200.0 + 1.75 * 1600.0 / 2.75, abs=1e-4)
    assert float(hp[0]["elevation"]) == fhwa.HIGH_POINT_ELEVATION.approx()


def test_fhwa_profile_csv(fhwa_out):
    rows = read_rows(fhwa_out / "profile.csv")
    assert [r["pvi"] for r in rows] == ["1", "2", "3"]
    r = rows[1]
    assert r["station_label"] == "120+00.00" and float(r["station"]) == 12000.0
    # FHWA Table 3.2 [published]: BVC 112+00 elev 121.00, EVC 128+00 elev 127.00, g1 +1.75 %, g2 -1.00 %
    # (exact on this job: the table's figures are whole cents of its inputs)
    assert float(r["pvc_station"]) == fhwa.BVC_STATION.approx(1e-4)
    assert float(r["pvc_elevation"]) == fhwa.BVC_ELEVATION.approx(1e-4)
    assert float(r["pvt_station"]) == fhwa.EVC_STATION.approx(1e-4)
    assert float(r["pvt_elevation"]) == fhwa.EVC_ELEVATION.approx(1e-4)
    assert float(r["grade_in"]) == pytest.approx(100 * fhwa.GRADE_IN.value, abs=1e-6)
    assert float(r["grade_out"]) == pytest.approx(100 * fhwa.GRADE_OUT.value, abs=1e-6)
    assert float(r["curve_length_back"]) == pytest.approx(800.0) and float(r["curve_length_ahead"]) == pytest.approx(800.0)
    # K = L / |A|, A in percent (references.md): 1600 / 2.75
    assert float(r["k_value"]) == pytest.approx(1600.0 / 2.75, abs=1e-4)
    # high point [computed] in references.md
    assert float(r["high_low_station"]) == fhwa.HIGH_POINT_STATION.approx()
    assert float(r["high_low_elevation"]) == fhwa.HIGH_POINT_ELEVATION.approx()
    # the ends: grades in percent, curve columns empty (outputs.md)
    assert rows[0]["grade_in"] == "" and float(rows[0]["grade_out"]) == pytest.approx(1.75, abs=1e-6)
    assert rows[2]["grade_out"] == "" and float(rows[2]["grade_in"]) == pytest.approx(-1.0, abs=1e-6)
    for end in (rows[0], rows[2]):
        for col in ("curve_length_back", "curve_length_ahead", "pvc_station", "pvc_elevation", "pvt_station",
                    "pvt_elevation", "k_value", "high_low_station", "high_low_elevation"):
            assert end[col] == "", col


def test_profile_csv_header_is_the_contract(fhwa_out):
    header = (fhwa_out / "profile.csv").read_text().splitlines()[0].split(",")
    # outputs.md: the contract's columns first, in this order
    assert header[:15] == ["pvi", "station", "station_label", "elevation", "grade_in", "grade_out",
                           "curve_length_back", "curve_length_ahead", "pvc_station", "pvc_elevation",
                           "pvt_station", "pvt_elevation", "k_value", "high_low_station", "high_low_elevation"]


# ---- 2. Hillside Lane: symmetric crest and unsymmetrical sag, independently ------------------------


@pytest.fixture(scope="module")
def hillside_out(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("hillside")
    return build_job(HILLSIDE, tmp / "out")


def _hillside_reference() -> RefProfile:
    return RefProfile(_pvis_of(HILLSIDE.read_text(), _plain_station))


def test_hillside_every_stake_against_independent_profile(hillside_out):
    text = HILLSIDE.read_text()
    ref = _hillside_reference()
    drops = _drops(text)
    rows = read_rows(hillside_out / "stations.csv")
    assert len(rows) > 100
    by_station: dict[str, dict[str, float]] = {}
    for r in rows:
        x = float(r["station"])  # no station equation: station = distance along the alignment
        cl = ref.elevation(x)  # handbook parabola (crest) / two Beziers (sag), see RefCurve
        # each offset line: CL + dz, or CL + cross_slope / 100 x |offset| (job-file.md)
        assert float(r["elevation"]) == pytest.approx(cl + drops[r["code"]], abs=0.001), (r["point"], r["code"])
        by_station.setdefault(r["station"], {})[r["code"]] = float(r["elevation"])
    # the offset lines against the centreline as printed: -2.5 % over 3.5 m, and the fixed drops
    for st, e in by_station.items():
        assert e["EPL"] - e["CL"] == pytest.approx(-0.025 * 3.5, abs=2e-4), st
        assert e["EPR"] - e["CL"] == pytest.approx(-0.025 * 3.5, abs=2e-4), st
        assert e["KBL"] - e["CL"] == pytest.approx(-0.2625, abs=2e-4), st
        assert e["KBR"] - e["CL"] == pytest.approx(-0.2375, abs=2e-4), st


def test_hillside_curves_cover_both_shapes():
    # the sample really has a symmetric crest and an unsymmetrical sag (guards the test above)
    ref = _hillside_reference()
    crest, sag = ref.curves[1], ref.curves[2]
    assert crest is not None and crest.symmetric and crest.g1 > crest.g2
    assert sag is not None and not sag.symmetric and sag.g1 < sag.g2


def test_hillside_middle_ordinates(hillside_out):
    ref = _hillside_reference()
    rows = {r["station"]: r for r in read_rows(hillside_out / "stations.csv") if r["code"] == "CL"}
    crest, sag = ref.curves[1], ref.curves[2]
    assert crest is not None and sag is not None
    # symmetric: middle ordinate A L / 800, A in percent (references.md)
    a = 100.0 * (crest.g2 - crest.g1)
    assert float(rows["380.0000"]["elevation"]) == pytest.approx(crest.yv + a * crest.length / 800.0, abs=1e-4)
    # unsymmetrical: e = (g2 - g1) l1 l2 / (2 (l1 + l2)) (references.md) ...
    e = (sag.g2 - sag.g1) * sag.l1 * sag.l2 / (2.0 * (sag.l1 + sag.l2))
    assert float(rows["820.0000"]["elevation"]) == pytest.approx(sag.yv + e, abs=1e-4)
    # ... which the Bezier construction reproduces (two independent sources agree)
    assert sag.at_pvi == pytest.approx(sag.yv + e, abs=1e-9)
    assert rows["820.0000"]["feature"] == "PVI"


def test_hillside_profile_csv_against_independent_profile(hillside_out):
    ref = _hillside_reference()
    rows = read_rows(hillside_out / "profile.csv")
    assert len(rows) == 4
    for i, r in enumerate(rows):
        assert float(r["station"]) == pytest.approx(ref.xs[i], abs=1e-4)
        assert float(r["elevation"]) == pytest.approx(ref.ys[i], abs=1e-4)
        if i > 0:
            assert float(r["grade_in"]) == pytest.approx(100.0 * ref.grades[i - 1], abs=1e-6)
        if i < 3:
            assert float(r["grade_out"]) == pytest.approx(100.0 * ref.grades[i], abs=1e-6)
        c = ref.curves[i]
        if c is None:
            assert r["pvc_station"] == "" and r["k_value"] == "" and r["high_low_station"] == ""
            continue
        assert float(r["curve_length_back"]) == pytest.approx(c.l1, abs=1e-4)
        assert float(r["curve_length_ahead"]) == pytest.approx(c.l2, abs=1e-4)
        assert float(r["pvc_station"]) == pytest.approx(c.pvc[0], abs=1e-4)
        assert float(r["pvc_elevation"]) == pytest.approx(c.pvc[1], abs=1e-4)
        assert float(r["pvt_station"]) == pytest.approx(c.pvt[0], abs=1e-4)
        assert float(r["pvt_elevation"]) == pytest.approx(c.pvt[1], abs=1e-4)
        assert float(r["k_value"]) == pytest.approx(c.k, abs=1e-4)  # K = L / |A| (references.md)
        assert c.high_low is not None
        assert float(r["high_low_station"]) == pytest.approx(c.high_low[0], abs=1e-4)
        assert float(r["high_low_elevation"]) == pytest.approx(c.high_low[1], abs=1e-4)
    assert [r["station_label"] for r in rows] == ["0+000.000", "0+380.000", "0+820.000", "1+200.000"]


UNSYM_CREST_JOB = """\
format = 1

[job]
name = "unsymmetrical crest"
units = "m"

[alignment]
name = "U"
start_station = "0+000"
[[alignment.pi]]
northing = 0.0
easting = 0.0
[[alignment.pi]]
northing = 700.0
easting = 700.0

[profile]
[[profile.pvi]]
station = "0+000"
elevation = 100.0
[[profile.pvi]]
station = "0+400"
elevation = 116.0
curve_length_back = 100.0
curve_length_ahead = 300.0
[[profile.pvi]]
station = "1+000"
elevation = 110.0

[staking]
interval = 25.0
offsets = [
  { offset = -5.0, code = "L", cross_slope = 3.0 },
  { offset = 0.0, code = "CL" },
  { offset = 6.0, code = "R", dz = 0.125 },
]
"""


def test_unsymmetrical_crest_with_high_point_past_the_pvi(tmp_path):
    # g1 = +4 %, g2 = -1 %, l1 = 100, l2 = 300: the common tangent at the PVI still
    # climbs (+0.25 %), so the high point lies on the second parabola
    out = build_job(write_job(tmp_path, UNSYM_CREST_JOB), tmp_path / "out")
    ref = RefProfile(_pvis_of(UNSYM_CREST_JOB, _plain_station))
    c = ref.curves[1]
    assert c is not None and c.high_low is not None and c.high_low[0] > c.xv
    drops = _drops(UNSYM_CREST_JOB)
    rows = read_rows(out / "stations.csv")
    for r in rows:
        # two quadratic Beziers (independent construction) + dz / cross slope
        want = ref.elevation(float(r["station"])) + drops[r["code"]]
        assert float(r["elevation"]) == pytest.approx(want, abs=0.001), (r["point"], r["code"])
    hp = [r for r in rows if r["feature"] == "HP" and r["code"] == "CL"]
    assert len(hp) == 1
    # Bezier turning point dy/dt = 0 (independent construction)
    assert float(hp[0]["station"]) == pytest.approx(c.high_low[0], abs=1e-4)
    assert float(hp[0]["elevation"]) == pytest.approx(c.high_low[1], abs=1e-4)
    prof = read_rows(out / "profile.csv")[1]
    assert prof["high_low"] == "HP"
    assert float(prof["high_low_station"]) == pytest.approx(c.high_low[0], abs=1e-4)
    assert float(prof["high_low_elevation"]) == pytest.approx(c.high_low[1], abs=1e-4)


EQUATION_JOB = """\
format = 1

[job]
name = "curve across an equation"
units = "ft"

[alignment]
name = "EQ"
start_station = "0+00"
[[alignment.pi]]
northing = 1000.0
easting = 1000.0
[[alignment.pi]]
northing = 3000.0
easting = 1000.0
[[alignment.station_equation]]
back = "10+00"
ahead = "12+00"

[profile]
[[profile.pvi]]
station = "0+00"
elevation = 100.0
[[profile.pvi]]
station = "13+00"
elevation = 121.0
curve_length = 400.0
[[profile.pvi]]
station = "22+00"
elevation = 112.0

[staking]
interval = 50.0
offsets = [
  { offset = -10.0, code = "L", cross_slope = -2.0 },
  { offset = 0.0, code = "CL" },
  { offset = 10.0, code = "R", dz = -0.5 },
]
"""


def _eq_internal(station: float, region: int) -> float:
    """Distance along the alignment: the equation 10+00 back = 12+00 ahead skips 200 ft."""
    return station if region == 1 else station - 200.0


def test_vertical_curve_across_a_station_equation(tmp_path):
    # job-file.md: lengths and grades are true distances along the alignment, never
    # differences of station values across an equation.  PVI 13+00 lies 1100 ft along,
    # so g1 = 21 / 1100, g2 = -9 / 900 and the 400-ft curve runs from 900 to 1300 ft
    # along (stations 9+00 to 15+00), across the equation at 1000 ft.
    out = build_job(write_job(tmp_path, EQUATION_JOB), tmp_path / "out")
    ref = RefProfile([(0.0, 100.0, 0.0, 0.0), (1100.0, 121.0, 200.0, 200.0), (2000.0, 112.0, 0.0, 0.0)])
    drops = _drops(EQUATION_JOB)
    rows = read_rows(out / "stations.csv")
    regions = {r["region"] for r in rows}
    assert regions == {"1", "2"}
    on_curve = 0
    for r in rows:
        x = _eq_internal(float(r["station"]), int(r["region"]))
        on_curve += 900.0 < x < 1300.0
        # route-surveying parabola in distance along the alignment (references.md)
        want = ref.elevation(x) + drops[r["code"]]
        assert float(r["elevation"]) == pytest.approx(want, abs=0.001), (r["point"], r["station_label"])
    assert on_curve >= 3 * 5  # stakes on both sides of the equation inside the curve
    prof = read_rows(out / "profile.csv")
    c = ref.curves[1]
    assert c is not None and c.high_low is not None
    r = prof[1]
    assert float(r["grade_in"]) == pytest.approx(100.0 * 21.0 / 1100.0, abs=1e-6)
    assert float(r["grade_out"]) == pytest.approx(-1.0, abs=1e-6)
    # stations in force: 900 ft along is 9+00 (region 1), 1300 ft along is 15+00 (region 2)
    assert float(r["pvc_station"]) == pytest.approx(900.0, abs=1e-4)
    assert float(r["pvt_station"]) == pytest.approx(1500.0, abs=1e-4)
    assert float(r["k_value"]) == pytest.approx(c.k, abs=1e-4)
    assert float(r["high_low_station"]) == pytest.approx(c.high_low[0] + 200.0, abs=1e-4)
    assert float(r["high_low_elevation"]) == pytest.approx(c.high_low[1], abs=1e-4)


STEP_BACK_JOB = """\
format = 1

[job]
name = "unsymmetrical curve across a step-back equation"
units = "m"

[alignment]
name = "SB"
start_station = "0+000"
[[alignment.pi]]
northing = 1000.0
easting = 1000.0
[[alignment.pi]]
northing = 2000.0
easting = 1000.0
[[alignment.station_equation]]
back = "0+500"
ahead = "0+450"

[profile]
[[profile.pvi]]
station = "-0+100"
elevation = 100.0
[[profile.pvi]]
station = { station = "0+480", region = 2 }
elevation = 110.0
curve_length_back = 60.0
curve_length_ahead = 40.0
[[profile.pvi]]
station = "0+960"
elevation = 105.0

[staking]
interval = 20.0
"""


def test_unsymmetrical_curve_across_a_step_back_equation(tmp_path):
    # The equation 0+500 back = 0+450 ahead repeats 50 m of stationing; the PVI is the
    # second 0+480 (530 m along), so the curve runs 470 m to 570 m along: from 0+470
    # in region 1 across the equation to 0+520 in region 2.  The profile starts 100 m
    # before the alignment (allowed, job-file.md).
    out = build_job(write_job(tmp_path, STEP_BACK_JOB), tmp_path / "out")

    def internal(station: float, region: int) -> float:
        return station if region == 1 else station + 50.0

    ref = RefProfile([(-100.0, 100.0, 0.0, 0.0), (530.0, 110.0, 60.0, 40.0), (1010.0, 105.0, 0.0, 0.0)])
    rows = read_rows(out / "stations.csv")
    for r in rows:
        x = internal(float(r["station"]), int(r["region"]))
        # two quadratic Beziers (independent construction) in distance along the alignment
        assert float(r["elevation"]) == pytest.approx(ref.elevation(x), abs=0.001), (r["point"], r["station_label"])
    c = ref.curves[1]
    assert c is not None and c.high_low is not None
    feats = {(r["station"], r["region"]): r["feature"] for r in rows}
    assert feats[("470.0000", "1")] == "PVC"
    assert feats[("480.0000", "2")] == "PVI"
    assert feats[("520.0000", "2")] == "PVT"
    assert feats[("450.0000", "2")] == "EQ"
    hp = [r for r in rows if r["feature"] == "HP"]
    assert len(hp) == 1 and hp[0]["region"] == "2"
    assert internal(float(hp[0]["station"]), 2) == pytest.approx(c.high_low[0], abs=1e-4)
    prof = read_rows(out / "profile.csv")[1]
    assert float(prof["grade_in"]) == pytest.approx(100.0 * 10.0 / 630.0, abs=1e-6)
    assert float(prof["grade_out"]) == pytest.approx(100.0 * -5.0 / 480.0, abs=1e-6)
    assert float(prof["pvc_station"]) == pytest.approx(470.0, abs=1e-4)
    assert float(prof["pvt_station"]) == pytest.approx(520.0, abs=1e-4)
    assert float(prof["pvc_elevation"]) == pytest.approx(c.pvc[1], abs=1e-4)
    assert float(prof["pvt_elevation"]) == pytest.approx(c.pvt[1], abs=1e-4)
    assert float(prof["k_value"]) == pytest.approx(c.k, abs=1e-4)  # K = L / |A| (references.md)
    assert float(prof["high_low_elevation"]) == pytest.approx(c.high_low[1], abs=1e-4)


# ---- 3. profile points ---------------------------------------------------------------------------------

FEATURE_JOB = """\
format = 1

[job]
name = "profile points"
units = "ft"

[alignment]
name = "F"
start_station = "0+00"
[[alignment.pi]]
northing = 0.0
easting = 0.0
[[alignment.pi]]
northing = 1000.0
easting = 0.0
radius = 200.0
[[alignment.pi]]
northing = 1000.0
easting = 1000.0

[profile]
[[profile.pvi]]
station = "0+00"
elevation = 100.0
[[profile.pvi]]
station = "9+00"
elevation = 109.0
curve_length = 200.0
[[profile.pvi]]
station = "13+00"
elevation = 105.0
curve_length = 600.0
[[profile.pvi]]
station = "20+00"
elevation = 119.0

[staking]
interval = 100.0
"""

# A 90-degree right turn of radius 200 at the PI 1000 ft from the POB: T = R tan(45) = 200,
# so the PC is at 8+00, the arc is 100 pi long, PT 11+14.16, POE 19+14.16.
# Curve 1 (+1 % to -1 %, L 200): PVC 8+00 on the PC, high point x = g1 L / (g1 - g2) = 100
# (handbook, references.md) -> 9+00 on its PVI, PVT 10+00.  Curve 2 (-1 % to +2 %, L 600):
# PVC 10+00 on curve 1's PVT, low point 0.01 x 600 / 0.03 = 200 -> 12+00, PVT 16+00.
# The last PVI (20+00) lies past the alignment's end (allowed, job-file.md).


def _features(out: Path) -> dict[float, str]:
    return {round(float(r["station"]), 4): r["feature"] for r in read_rows(out / "stations.csv")}


def test_profile_points_staked_in_contract_order(tmp_path):
    out = build_job(write_job(tmp_path, FEATURE_JOB), tmp_path / "out")
    f = _features(out)
    pt = round(800.0 + 100.0 * math.pi, 4)
    # outputs.md: coinciding features listed in the order POB, AP, PT, ST, PC, ..., EQ, PVC, PVI, PVT, HP, LP, POE
    assert f[800.0] == "PC PVC"
    assert f[900.0] == "PVI HP"
    assert f[1000.0] == "PVC PVT"
    assert f[pt] == "PT"
    assert f[1200.0] == "LP"
    assert f[1300.0] == "PVI"
    assert f[1600.0] == "PVT"
    assert f[0.0] == "POB"  # the first PVI is where the profile starts: not staked as PVI
    assert f[round(pt + 800.0, 4)] == "POE"  # 800 ft of tangent after the PT
    # every profile point carries its independent design elevation (handbook parabola)
    ref = RefProfile(_pvis_of(FEATURE_JOB, _plain_station))
    for r in read_rows(out / "stations.csv"):
        assert float(r["elevation"]) == pytest.approx(ref.elevation(float(r["station"])), abs=0.001), r["point"]
    # only these stations carry profile features; nothing staked past the alignment's end
    profile_words = {"PVC", "PVI", "PVT", "HP", "LP"}
    with_profile = sorted(s for s, v in f.items() if profile_words & set(v.split()))
    assert with_profile == [800.0, 900.0, 1000.0, 1200.0, 1300.0, 1600.0]
    assert max(f) == pytest.approx(1914.1593, abs=1e-4)


def test_profile_points_off(tmp_path):
    on = build_job(write_job(tmp_path, FEATURE_JOB, "on.toml"), tmp_path / "on")
    off_job = FEATURE_JOB.replace("interval = 100.0\n", "interval = 100.0\nprofile_points = false\n")
    off = build_job(write_job(tmp_path, off_job, "off.toml"), tmp_path / "off")
    f_on, f_off = _features(on), _features(off)
    words = {"PVC", "PVI", "PVT", "HP", "LP"}
    assert not any(words & set(v.split()) for v in f_off.values())
    assert f_off[800.0] == "PC"
    # the same stakes without the profile points: here they all fall on interval stations,
    # so the set of stations is unchanged and only the features differ
    assert set(f_off) == set(f_on)
    # with an interval that misses them, the profile points are extra stakes
    on2 = build_job(write_job(tmp_path, FEATURE_JOB.replace("interval = 100.0", "interval = 300.0"), "on2.toml"),
                    tmp_path / "on2")
    off2 = build_job(write_job(tmp_path, off_job.replace("interval = 100.0", "interval = 300.0"), "off2.toml"),
                     tmp_path / "off2")
    extra = sorted(set(_features(on2)) - set(_features(off2)))
    # 8+00 is the PC and 9+00, 12+00 are multiples of 300: staked either way
    assert extra == [1000.0, 1300.0, 1600.0]
    assert _features(on2)[900.0] == "PVI HP" and _features(off2)[900.0] == ""


# ---- 4. setout sheet and setout.csv with design elevations ----------------------------------------


def test_setout_sheet_shows_design_elevations(hillside_out):
    stations = {r["point"]: r for r in read_rows(hillside_out / "stations.csv")}
    ref = _hillside_reference()
    drops = _drops(HILLSIDE.read_text())
    text = (hillside_out / "setout.txt").read_text()
    assert re.search(r"grnd dist\s+design el\s+zenith\s+slope dist", text)
    seen = 0
    for line in sheet_records(text):  # a stake's zenith and slope dist run on to a second line
        tok = line.split()
        if tok and tok[0] in stations:
            s = stations[tok[0]]
            # the last three columns: design el (3 decimals), zenith, slope dist; the
            # elevation from the independent profile (handbook parabola / Beziers)
            want = ref.elevation(float(s["station"])) + drops[s["code"]]
            assert re.fullmatch(r"-?\d+\.\d{3}", tok[-3]), line
            assert abs(float(tok[-3]) - want) <= 0.0005 + 1e-9, line
            seen += 1
    assert seen == len(stations)


def test_setout_zenith_from_design_elevations(hillside_out):
    job = tomllib.loads(HILLSIDE.read_text())
    occ = job["setup"]["occupied"]
    hi, ht = job["setup"]["instrument_height"], job["setup"]["target_height"]
    ref = _hillside_reference()
    drops = _drops(HILLSIDE.read_text())
    stations = {r["point"]: r for r in read_rows(hillside_out / "stations.csv")}
    rows = read_rows(hillside_out / "setout.csv")
    assert len(rows) == len(stations)
    for r in rows:
        s = stations[r["point"]]
        # the design elevation computed here, independently of the package
        elev = ref.elevation(float(s["station"])) + drops[s["code"]]
        horiz = math.hypot(float(s["northing"]) - occ["northing"], float(s["easting"]) - occ["easting"])
        assert float(r["ground_distance"]) == pytest.approx(horiz, abs=1e-4)  # no [scale]: factor 1
        dz = (elev + ht) - (occ["elevation"] + hi)
        # zenith = atan2(horizontal, height difference), 90 = level (plane trigonometry, common practice)
        assert float(r["zenith_deg"]) == pytest.approx(math.degrees(math.atan2(horiz, dz)), abs=2e-6), r["point"]
        assert float(r["slope_distance"]) == pytest.approx(math.hypot(horiz, dz), abs=2e-4), r["point"]
    # one worked by hand: the high point stake on the centreline
    hp = next(s for s in stations.values() if s["feature"] == "HP" and s["code"] == "CL")
    so = next(r for r in rows if r["point"] == hp["point"])
    crest = ref.curves[1]
    assert crest is not None and crest.high_low is not None
    d = math.hypot(float(hp["northing"]) - 10450.0, float(hp["easting"]) - 20330.0)
    z = 90.0 - math.degrees(math.atan(((crest.high_low[1] + 1.800) - (50.125 + 1.550)) / d))
    assert float(so["zenith_deg"]) == pytest.approx(z, abs=2e-6)


def test_points_csv_carries_design_elevations(hillside_out):
    stations = {r["point"]: r["elevation"] for r in read_rows(hillside_out / "stations.csv")}
    with open(hillside_out / "points.csv", newline="") as fh:
        rows = list(csv.reader(fh))
    assert rows[0] == ["point", "northing", "easting", "elevation", "description"]
    assert {r[0]: r[3] for r in rows[1:]} == stations


# ---- 5. stakeout check: cut and fill ---------------------------------------------------------------


def test_check_cut_fill_and_which_tolerance(fhwa_out, tmp_path):
    job = write_job(tmp_path, FHWA_JOB)  # horizontal tolerance 0.05 ft, vertical 0.10 ft
    rows = {round(float(r["station"]), 2): r for r in read_rows(fhwa_out / "stations.csv")}
    ref = RefProfile([(10000.0, 100.0, 0.0, 0.0), (12000.0, 135.0, 800.0, 800.0), (14000.0, 115.0, 0.0, 0.0)])

    def shot(st: float, dn: float, de: float, dz: float) -> tuple[str, str]:
        r = rows[st]
        # the shot's elevation from the handbook parabola, not from the package
        return r["point"], (f"{r['point']},{float(r['northing']) + dn:.4f},{float(r['easting']) + de:.4f},"
                            f"{ref.elevation(st) + dz:.4f},STK")

    cases = [  # station, d north, d east, d elev, mark, status
        (11200.0, 0.0, 0.0, 0.42, "C 0.42", "out (vertical)"),      # 0.42 above design: cut
        (12800.0, 0.0, 0.0, -0.17, "F 0.17", "out (vertical)"),     # 0.17 below design: fill
        (12000.0, 0.20, 0.0, 0.0, None, "out (horizontal)"),
        (12160.0, 0.0, 0.20, 0.30, "C 0.30", "out (both)"),
        (11520.0, 0.0, 0.0, 0.03, "C 0.03", "ok"),
        (12480.0, 0.0, 0.03, -0.06, "F 0.06", "ok"),
    ]
    ids, lines = [], []
    for st, dn, de, dz, _, _ in cases:
        pid, line = shot(st, dn, de, dz)
        ids.append(pid)
        lines.append(line)
    staked = tmp_path / "staked.csv"
    staked.write_text("\n".join(lines) + "\n")
    out = tmp_path / "chk"
    r = runner.invoke(app, ["check", str(job), str(staked), "--out", str(out)])
    assert r.exit_code == 1, r.output  # shots out of tolerance
    got = read_rows(out / "check.csv")
    assert [g["point"] for g in got] == ids
    for g, (st, dn, de, dz, _, status) in zip(got, cases):
        assert float(g["d_elevation"]) == pytest.approx(dz, abs=1e-4), g
        assert float(g["horizontal_error"]) == pytest.approx(math.hypot(dn, de), abs=1e-4)
        assert g["status"] == ("ok" if status == "ok" else "out")
    txt = (out / "check.txt").read_text()
    assert "vertical 0.1000" in txt
    for pid, (st, dn, de, dz, mark, status) in zip(ids, cases):
        line, got_status, _ = check_row(txt, pid, pid)
        assert got_status == status, line
        if mark is not None:
            # outputs.md: "C 0.42" where the shot is above design, "F 0.17" below (2 decimals in feet)
            assert f" {mark} " in line + " ", line
    assert "C where the shot is above design, F below" in txt


# ---- 6. messages that name the key the user wrote -------------------------------------------------

SYM_BASE = """\
format = 1

[job]
name = "names"
units = "ft"

[alignment]
name = "A"
start_station = "0+00"
[[alignment.pi]]
northing = 1000.0
easting = 1000.0
[[alignment.pi]]
northing = 1000.0
easting = 2000.0

[staking]
interval = 100.0

[profile]
"""


@pytest.mark.parametrize("pvis, key", [
    # a symmetric curve on the first PVI
    ([("0+00", 100.0, "curve_length = 200.0"), ("5+00", 110.0, ""), ("10+00", 100.0, "")],
     "profile.pvi[0].curve_length = 200.0"),
    # overlapping symmetric curves: the first ends at 5+50, the second begins at 5+00
    ([("0+00", 100.0, ""), ("4+00", 110.0, "curve_length = 300.0"), ("7+00", 100.0, "curve_length = 400.0"),
      ("10+00", 104.0, "")], "profile.pvi[2].curve_length = 400.0"),
    # an unsymmetrical curve whose AHEAD length (300) reaches past the profile's end (8+00 + 300 > 10+00)
    ([("0+00", 100.0, ""), ("8+00", 110.0, "curve_length_back = 100.0\ncurve_length_ahead = 300.0"),
      ("10+00", 100.0, "")], "profile.pvi[1].curve_length_ahead = 300.0"),
])
def test_curve_errors_name_the_key_given(tmp_path, pvis, key):
    # common.md: a message names the key and the value as the job file gives them;
    # a job that says `curve_length = 400.0` must not be told about `curve_length_back = 200.0`
    text = SYM_BASE + "".join(
        f'[[profile.pvi]]\nstation = "{st}"\nelevation = {el}\n{extra}\n' for st, el, extra in pvis)
    job = write_job(tmp_path, text)
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "out")])
    assert r.exit_code == 2, r.output
    assert key in r.output, r.output
