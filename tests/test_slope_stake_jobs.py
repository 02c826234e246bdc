"""Whole jobs on grounds whose answers are exact: stations.csv, slopestakes.csv, volumes.csv.

A new user's job file and ground file are written into a temporary folder,
``stakeout build`` is run, and the output CSVs are compared with values
computed here, independently of stakeout's geometry:

* the road is a tangent at azimuth 60 degrees (and, in one job, a tangent
  into a circular arc): a point at station s and offset o is the start point
  plus s along the direction and o along its right normal (plane geometry);
  on the arc, the point at arc length L lies on the circle about the centre,
  turned by L / R, and the section square to the curve is the radius line
  (common practice);
* the ground is planar, or two planes on each side meeting along fold lines
  parallel to the road (a valley left, a ridge right), written in the road's
  own frame, so along a section square to the tangent it is a polyline with
  a vertex at each fold; the design line from the hinge (fill slope; or
  foreslope, ditch, cut slope) is a polyline too, and the catch point is the
  first crossing of the two: line-line intersections on the pieces between
  their merged vertices, written out below (closed form);
* the same grounds are given as a LandXML 1.2 <Surface> (<Pnts>, <Faces>,
  invisible faces ``i="1"`` as holes; written here by hand after the schema's
  layout) and as a ground-point CSV (triangulated by Delaunay in stakeout);
  the points form a regular grid in the road's frame with the folds on grid
  lines, and every Delaunay triangle of a regular grid lies in one grid
  square (checked here with scipy's Delaunay; bar slivers along the grid's
  outer edges, which no section reaches), so either TIN is exactly the
  folded ground; under the curve the ground is one plane, given as points
  on a grid in northing and easting (any triangulation of them is exact);
* cut and fill areas between the design section (catch to catch) and the
  ground section are shapely polygon differences; volumes between
  consecutive stations with both catch points are average end areas,
  V = L (A1 + A2) / 2 (Wikibooks, "Fundamentals of Transportation/Earthwork"),
  with L the distance along the alignment between them.

Tolerances: catch and reference points and ground elevations to 0.0005 job
units, areas and volumes to 0.01 % (issue 23).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

from .helpers import read_rows

TOL = 5e-4  # job units: catch and reference points, ground elevations
REL = 1e-4  # 0.01 %: areas and volumes

# ---- the road: a tangent from (N0, E0) at azimuth 60 degrees, stations 0+000 to 0+100 every 20 m
N0, E0 = 5000.0, 3000.0
AZ = math.radians(60.0)
T = np.array([math.cos(AZ), math.sin(AZ)])  # (dN, dE) ahead
R = np.array([-math.sin(AZ), math.cos(AZ)])  # (dN, dE) to the right (azimuth + 90 degrees)
STATIONS = [0.0, 20.0, 40.0, 60.0, 80.0, 100.0]
GRADE = -0.005  # the profile: 51.000 at 0+000, falling 0.5 %
Z_CL0 = 51.0
CROSS = -0.02  # the shoulders' cross slope: -2 % out from the centreline
#: the staked offset lines (code, offset, cross slope applied)
LINES = (("SHL", -6.0, True), ("CL", 0.0, False), ("SHR", 6.0, True), ("ROW", 45.0, False))
LEFT = {"hinge": "SHL", "fill_slope": 2.0, "cut_slope": 2.0}
RIGHT = {"hinge": "SHR", "fill_slope": 2.0, "cut_slope": 2.0, "foreslope": 4.0, "ditch_depth": 1.0,
         "ditch_width": 2.0}
REF_OFFSET = 5.0

# ---- the ground, in the road's frame (u along from the start, v offset, right positive)
#: z = 50 + 0.005 u + 0.3 v, and where folded: flatter (0.15) left of the valley line v = -12,
#: flatter (0.2) right of the ridge line v = +14
FOLD_L, FOLD_R = -12.0, 14.0
#: the grid of ground points: u = -9, -7, ..., 111 (stations fall mid-square), v = -50, -48, ..., 50
#: (the folds and the hinges on grid lines)
GRID_U = np.arange(-9.0, 111.5, 2.0)
GRID_V = np.arange(-50.0, 50.5, 2.0)


def ground_z(u, v, folded: bool):
    """The invented ground, closed form."""
    u, v = np.asarray(u, dtype=float), np.asarray(v, dtype=float)
    z = 50.0 + 0.005 * u + 0.3 * v
    if folded:
        z = z + 0.15 * np.maximum(FOLD_L - v, 0.0) - 0.1 * np.maximum(v - FOLD_R, 0.0)
    return z


def to_ne(u, v):
    """Northing and easting of the point u along, v right of the tangent (plane geometry)."""
    u, v = np.asarray(u, dtype=float), np.asarray(v, dtype=float)
    return N0 + u * T[0] + v * R[0], E0 + u * T[1] + v * R[1]


# ---- the curved road: from the same start a 20 m tangent at azimuth 30 degrees, then an arc of
# radius 150 m turning right for 80 m; the ground a plane rising 0.3 towards azimuth 135 degrees
AZ_C, PC, RADIUS = math.radians(30.0), 20.0, 150.0
CURVE_ALIGNMENT = """azimuth = "30-00-00"
[[alignment.element]]
kind = "line"
length = 20.0
[[alignment.element]]
kind = "arc"
radius = 150.0
length = 80.0
turn = "right"
"""
G_N, G_E = 0.3 * math.cos(math.radians(135.0)), 0.3 * math.sin(math.radians(135.0))


def right_of(az: float) -> np.ndarray:
    return np.array([-math.sin(az), math.cos(az)])


def curve_ne(s, v):
    """The point at station s, offset v of the curved road: on the tangent, s along it; on the
    arc, the PC turned by (s - PC) / R about the centre (R to the right of the PC), the offset
    along the radius, square to the curve (plane geometry)."""
    s = float(s)
    a = AZ_C + max(s - PC, 0.0) / RADIUS
    tangent = np.array([N0, E0]) + min(s, PC) * np.array([math.cos(AZ_C), math.sin(AZ_C)])  # s, or the PC
    centre = tangent + RADIUS * right_of(AZ_C)
    on = centre - RADIUS * right_of(a) if s > PC else tangent
    p = on + v * right_of(a)
    return p[0], p[1]


def plane_z(n, e):
    return 52.0 + G_N * (np.asarray(n) - N0) + G_E * (np.asarray(e) - E0)


def curve_gz(s, v):
    return plane_z(*curve_ne(s, v))


def z_cl(s):
    return Z_CL0 + GRADE * np.asarray(s, dtype=float)


def design_z(s, code: str):
    off, cross = next((o, c) for k, o, c in LINES if k == code)
    return z_cl(s) + (CROSS * abs(off) if cross else 0.0)


# ---- ground files


def grid_points(folded: bool, grid_v=GRID_V):
    """The ground points: row-major over GRID_U, v fastest; (n, e, z, u, v)."""
    u, v = np.meshgrid(GRID_U, grid_v, indexing="ij")
    u, v = u.ravel(), v.ravel()
    n, e = to_ne(u, v)
    return n, e, ground_z(u, v, folded), u, v


def grid_faces(hidden_squares=()):
    """Two faces a grid square, 1-based point numbers, and which are invisible (holes)."""
    nu, nv = len(GRID_U), len(GRID_V)
    faces, hidden = [], []
    for i in range(nu - 1):
        for j in range(nv - 1):
            a = i * nv + j + 1
            b, c, d = a + 1, a + nv, a + nv + 1
            hole = (i, j) in hidden_squares
            faces += [(a, b, d), (a, d, c)]
            hidden += [hole, hole]
    return faces, hidden


def square_of(u: float, v: float, below: bool = False):
    """The grid square holding (u, v); on a grid line of v, the square below it with ``below``."""
    i = int(np.searchsorted(GRID_U, u, side="right")) - 1
    j = int(np.searchsorted(GRID_V, v, side="left" if below else "right")) - 1
    return i, j


#: the holes of the LandXML ground: under the ROW stake at 0+040 (a stake inside a hole) and
#: around the left hinge at 0+060 (the hinge on v = -6 is a grid line: both squares beside it)
HOLES = (square_of(40.0, 45.0), square_of(60.0, -6.0), square_of(60.0, -6.0, below=True))


def write_landxml(path: Path, folded: bool, holes=HOLES) -> None:
    """A LandXML 1.2 <Surface> after the schema's layout: <P id> "northing easting elevation",
    <F> three point ids, i="1" an invisible face."""
    n, e, z, _, _ = grid_points(folded)
    pts = "".join(f'<P id="{k + 1}">{n[k]:.9f} {e[k]:.9f} {z[k]:.9f}</P>' for k in range(len(n)))
    faces, hidden = grid_faces(holes)
    inv = ' i="1"'
    fs = "".join(f"<F{inv if h else ''}>{a} {b} {c}</F>" for (a, b, c), h in zip(faces, hidden))
    path.write_text(
        '<?xml version="1.0" encoding="UTF-8"?>\n'
        '<LandXML xmlns="http://www.landxml.org/schema/LandXML-1.2" version="1.2">'
        '<Units><Metric linearUnit="meter" areaUnit="squareMeter" volumeUnit="cubicMeter"/></Units>'
        '<Surfaces><Surface name="EG"><Definition surfType="TIN">'
        f"<Pnts>{pts}</Pnts><Faces>{fs}</Faces></Definition></Surface></Surfaces></LandXML>\n",
        encoding="utf-8")


def write_ground_csv(path: Path, n, e, z) -> None:
    rows = "".join(f"G{k + 1},{n[k]:.9f},{e[k]:.9f},{z[k]:.9f},ground\n" for k in range(len(n)))
    path.write_text("point,northing,easting,elevation,description\n" + rows, encoding="utf-8")


def assert_delaunay_in_squares(n, e, u_of, v_of, step: float) -> None:
    """Every Delaunay triangle (scipy) of the points lies in one grid square of the road's frame,
    so a ground planar on each square (a fold on a grid line) is exact on the TIN; or it is a
    sliver with all three corners on one edge of the grid (the rotated grid's edges are
    collinear only to the coordinates' rounding), which no section of the jobs reaches."""
    from scipy.spatial import Delaunay

    tri = Delaunay(np.column_stack((e - e.mean(), n - n.mean()))).simplices
    u, v = u_of[tri], v_of[tri]
    inside = (np.ptp(u, axis=1) <= step + 1e-6) & (np.ptp(v, axis=1) <= step + 1e-6)
    assert inside.sum() == 2 * (len(np.unique(u_of)) - 1) * (len(np.unique(v_of)) - 1)  # two a square
    edge = np.zeros(len(tri), dtype=bool)
    for w, ends in ((u, (u_of.min(), u_of.max())), (v, (v_of.min(), v_of.max()))):
        for x in ends:
            edge |= np.all(w == x, axis=1)
    assert np.all(inside | edge)


# ---- the job file


TANGENT = """azimuth = "60-00-00"
[[alignment.element]]
kind = "line"
length = 100.0
"""


def job_text(ground: str, max_width: float, extra: str = "", alignment: str = TANGENT, left: dict = LEFT) -> str:
    offsets = ", ".join(f'{{ offset = {o}, code = "{c}"' + (f", cross_slope = {CROSS * 100}" if x else "") + " }"
                        for c, o, x in LINES)

    def side(d):
        return "{ " + ", ".join(f"{k} = {v!r}" if isinstance(v, str) else f"{k} = {v}" for k, v in d.items()) + " }"

    side_txt = {k: side(d).replace("'", '"') for k, d in (("left", left), ("right", RIGHT))}
    return f"""format = 1
[job]
name = "Slope stake test road"
units = "m"
[alignment]
name = "SS"
start = {{ station = "0+000", northing = {N0}, easting = {E0} }}
{alignment}[profile]
[[profile.pvi]]
station = -10.0
elevation = {Z_CL0 - 10 * GRADE}
[[profile.pvi]]
station = 110.0
elevation = {Z_CL0 + 110 * GRADE}
[staking]
interval = 20.0
offsets = [{offsets}]
[ground]
{ground}
[slope_stakes]
left = {side_txt["left"]}
right = {side_txt["right"]}
reference_offset = {REF_OFFSET}
max_width = {max_width}
{extra}"""


# ---- the independent answer


def first_crossing(ts, f):
    """First t where the piecewise-linear f (values at the increasing vertices ts) reaches 0 from
    its side at ts[0]: the line-line intersection on the first piece whose ends straddle it."""
    s = 1.0 if f[0] >= 0 else -1.0
    for k in range(len(ts)):
        if s * f[k] <= 0.0:
            if k == 0:
                return ts[0]
            return ts[k - 1] + (ts[k] - ts[k - 1]) * f[k - 1] / (f[k - 1] - f[k])
    return None


@dataclass
class Side:
    kind: str
    t: float | None  # catch distance from the hinge
    catch_z: float | None
    t1: float  # end of the foreslope (ditch bottom), inf in fill
    t2: float  # start of the cut slope, inf in fill


def design_line(zh: float, cut: bool, spec: dict):
    """The design line from the hinge: D(t), and its vertices (t1, t2) (the job-file contract)."""
    if not cut:
        return (lambda t: zh - t / spec["fill_slope"]), math.inf, math.inf
    if "ditch_depth" in spec:
        t1 = spec["foreslope"] * spec["ditch_depth"]
        t2 = t1 + spec["ditch_width"]
        return (lambda t: zh - min(t, t1) / spec["foreslope"] + max(t - t2, 0.0) / spec["cut_slope"]), t1, t2
    return (lambda t: zh + t / spec["cut_slope"]), 0.0, 0.0


def solve_side(gz, zh: float, vh: float, sign: float, spec: dict, folds, max_width: float) -> Side:
    """Catch point of one section: ground ``gz(v)`` (a polyline in the offset v with vertices at
    ``folds``), hinge at offset ``vh`` with design elevation ``zh``, outward ``sign``."""
    g0 = float(gz(vh))
    cut = g0 > zh  # ground at or below the hinge is fill
    d, t1, t2 = design_line(zh, cut, spec)
    ts = {0.0, max_width} | {t for t in (t1, t2) if 0 < t < max_width}
    ts |= {sign * (f - vh) for f in folds if 0 < sign * (f - vh) < max_width}
    ts = sorted(ts)
    f = [d(t) - float(gz(vh + sign * t)) for t in ts]
    t = first_crossing(ts, f)
    return Side("cut" if cut else "fill", t, None if t is None else d(t), t1, t2)


@dataclass(frozen=True)
class Road:
    """Where a job's stakes lie and its ground: ``ne(s, v)`` the point at station s, offset v
    (on the section square to the alignment), ``gz(s, v)`` the ground there, ``folds`` the
    offsets of its fold lines, ``off_ground`` the (station, side) hinges over a hole."""

    ne: Callable
    gz: Callable
    folds: tuple[float, ...] = ()
    off_ground: frozenset = frozenset()


def tangent_road(folded: bool, holes: bool) -> Road:
    return Road(to_ne, lambda s, v: ground_z(s, v, folded), (FOLD_L, FOLD_R) if folded else (),
                frozenset({(60.0, "left")}) if holes else frozenset())


def expected_rows(road: Road, max_width: float, left: dict = LEFT):
    """One expected slopestakes row per station and side (dicts of floats or None), left first."""
    out = []
    for s in STATIONS:
        for side, code, spec, sign in (("left", "SHL", left, -1.0), ("right", "SHR", RIGHT, 1.0)):
            vh = -6.0 if side == "left" else 6.0
            zh = float(design_z(s, code))
            row = {"station": s, "side": side, "hinge_offset": vh, "hinge_elevation": zh,
                   "ground_at_hinge": float(road.gz(s, vh))}
            if (s, side) in road.off_ground:
                row.update(ground_at_hinge=None, kind="", t=None, note="outside the ground surface")
                out.append(row)
                continue
            res = solve_side(lambda v: road.gz(s, v), zh, vh, sign, spec, road.folds, max_width)
            row.update(kind=res.kind, t=res.t, t1=res.t1, t2=res.t2,
                       note="" if res.t is not None else "no catch within max_width")
            if res.t is not None:
                vc, vr = vh + sign * res.t, vh + sign * (res.t + REF_OFFSET)
                cn, ce = road.ne(s, vc)
                rn, re_ = road.ne(s, vr)
                rg = float(road.gz(s, vr))
                row.update(catch_offset=vc, catch_northing=float(cn), catch_easting=float(ce),
                           catch_elevation=res.catch_z, catch_cut_fill=zh - res.catch_z,
                           reference_offset=vr, reference_northing=float(rn), reference_easting=float(re_),
                           reference_ground=rg, hd_to_hinge=res.t + REF_OFFSET, vd_to_hinge=zh - rg)
            out.append(row)
    return out


def design_section(s: float, left: dict, right: dict):
    """The design section catch to catch, (offset, elevation) vertices: the left slope's vertices,
    the template (the stakes between the hinges, straight between them), the right slope's."""
    pts = []
    for row, sign in ((left, -1.0), (right, 1.0)):
        d, _, _ = design_line(row["hinge_elevation"], row["kind"] == "cut", LEFT if sign < 0 else RIGHT)
        ts = [t for t in (row["t1"], row["t2"]) if 0 < t < row["t"]] + [row["t"]]
        side = [(row["hinge_offset"] + sign * t, d(t)) for t in ts]
        pts.append(side[::-1] if sign < 0 else side)
    template = [(o, float(design_z(s, c))) for c, o, _ in LINES if -6.0 <= o <= 6.0]
    return pts[0] + template + pts[1]


def ground_section(road: Road, s: float, a: float, b: float):
    """The ground section from offset a to b: straight between the folds (closed form)."""
    vs = [a] + [f for f in road.folds if a < f < b] + [b]
    return [(v, float(road.gz(s, v))) for v in vs]


def cut_fill_areas(design, ground):
    """Cut (ground above design) and fill (design above ground) areas between two polylines over
    the same offsets, as shapely polygon differences of the regions below each line."""
    from shapely.geometry import Polygon

    low = min(z for _, z in design + ground) - 10.0

    def below(line):
        return Polygon(line + [(line[-1][0], low), (line[0][0], low)])

    bd, bg = below(design), below(ground)
    assert bd.is_valid and bg.is_valid
    return bg.difference(bd).area, bd.difference(bg).area


def expected_volumes(rows, road: Road):
    """Per station with both catch points: areas, then average-end-area volumes
    V = L (A1 + A2) / 2 (Wikibooks, "Fundamentals of Transportation/Earthwork") and running totals."""
    out, prev = [], None
    cum_c = cum_f = 0.0
    for s in STATIONS:
        left, right = (r for r in rows if r["station"] == s)
        if left["t"] is None or right["t"] is None:
            continue
        design = design_section(s, left, right)
        cut, fill = cut_fill_areas(design, ground_section(road, s, design[0][0], design[-1][0]))
        vc = vf = 0.0
        if prev is not None:
            length = s - prev[0]
            vc, vf = length * (prev[1] + cut) / 2, length * (prev[2] + fill) / 2
        cum_c, cum_f = cum_c + vc, cum_f + vf
        out.append({"station": s, "cut_area": cut, "fill_area": fill, "cut_volume": vc, "fill_volume": vf,
                    "cumulative_cut": cum_c, "cumulative_fill": cum_f})
        prev = (s, cut, fill)
    return out


# ---- the builds: planar and folded grounds under the tangent, each as a LandXML surface (with
# holes) and as points; a planar ground under the curve as points

#: max_width: on the tangent just short of the right catch at 0+100 and beyond every other (see
#: test_scenario_folds_lie_between_hinge_and_catch); on the curve beyond every catch
MAX_WIDTH = {"planar": 29.0, "folded": 22.0, "curve": 40.0}
CASES = [("landxml", "planar"), ("landxml", "folded"), ("csv", "planar"), ("csv", "folded"), ("csv", "curve")]


@dataclass
class Built:
    form: str
    ground: str
    folder: Path
    output: str

    @property
    def holes(self) -> bool:
        return self.form == "landxml"

    def rows(self, name: str) -> list[dict]:
        return read_rows(self.folder / "out" / name)

    @property
    def road(self) -> Road:
        if self.ground == "curve":
            return Road(curve_ne, curve_gz)
        return tangent_road(self.ground == "folded", self.holes)

    def expected(self):
        return expected_rows(self.road, MAX_WIDTH[self.ground])


def curve_ground_points():
    """A regular 4 m grid in northing and easting around the curved road (any triangulation of
    points on one plane is that plane)."""
    ext = np.array([curve_ne(s, v) for s in STATIONS for v in (-60.0, 60.0)])
    lo, hi = np.floor(ext.min(axis=0) / 4) * 4, np.ceil(ext.max(axis=0) / 4) * 4
    n, e = np.meshgrid(np.arange(lo[0], hi[0] + 1, 4.0), np.arange(lo[1], hi[1] + 1, 4.0), indexing="ij")
    n, e = n.ravel(), e.ravel()
    return n, e, plane_z(n, e)


def write_case(folder: Path, form: str, ground: str, extra: str = "") -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    if form == "landxml":
        write_landxml(folder / "eg.xml", ground == "folded")
        text = 'landxml = "eg.xml"\nname = "EG"'
    else:
        n, e, z = curve_ground_points() if ground == "curve" else grid_points(ground == "folded")[:3]
        write_ground_csv(folder / "ground.csv", n, e, z)
        text = 'file = "ground.csv"'
    job = folder / "job.toml"
    job.write_text(job_text(text, MAX_WIDTH[ground], extra, CURVE_ALIGNMENT if ground == "curve" else TANGENT),
                   encoding="utf-8")
    return job


def run(*args: str):
    from typer.testing import CliRunner

    from stakeout.cli import app

    return CliRunner().invoke(app, list(args))


@pytest.fixture(scope="module", params=CASES, ids=[f"{f}-{g}" for f, g in CASES])
def built(request, tmp_path_factory) -> Built:
    form, ground = request.param
    folder = tmp_path_factory.mktemp(f"{form}-{ground}")
    job = write_case(folder, form, ground)
    r = run("build", str(job), "--out", str(folder / "out"), "--only", "points,stations,slopestakes,volumes")
    assert r.exit_code == 0, r.output
    return Built(form, ground, folder, r.output)


def close(got: str, want: float | None, tol: float = TOL) -> bool:
    return (got == "") if want is None else (got != "" and abs(float(got) - want) <= tol)


# ---- the tests


def test_the_point_csv_ground_is_exact_on_its_delaunay():
    # scipy's Delaunay of the ground points as written: each triangle inside one grid square,
    # so the folds (on grid lines) are edges of the TIN and every face lies on one plane
    for folded in (False, True):
        n, e, _, u, v = grid_points(folded)
        assert_delaunay_in_squares(np.round(n, 9), np.round(e, 9), u, v, 2.0)


def test_scenario_folds_lie_between_hinge_and_catch():
    # the folded grounds are built so the catch lands on the second plane on both sides
    for r in expected_rows(tangent_road(True, False), MAX_WIDTH["folded"]):
        if r["t"] is not None:
            fold = FOLD_L if r["side"] == "left" else FOLD_R
            assert abs(r["hinge_offset"]) < abs(fold) < abs(r["catch_offset"])
    # and max_width leaves exactly the right catch at 0+100 out, by a margin
    for ground in ("planar", "folded", "curve"):
        road = Road(curve_ne, curve_gz) if ground == "curve" else tangent_road(ground == "folded", False)
        far = expected_rows(road, 1000.0)
        beyond = [(r["station"], r["side"]) for r in far if r["t"] > MAX_WIDTH[ground]]
        assert beyond == ([] if ground == "curve" else [(100.0, "right")])
        assert min(abs(r["t"] - MAX_WIDTH[ground]) for r in far) > 0.2


def test_stations_csv_positions_design_ground_and_cut_fill(built):
    rows = [r for r in built.rows("stations.csv") if r["feature"] not in ("CATCH", "REF")]
    assert [(float(r["station"]), r["code"]) for r in rows] == [(s, c) for s in STATIONS for c, _, _ in LINES]
    holes = {(40.0, "ROW"), (60.0, "SHL")} if built.holes else set()
    for r in rows:
        s, code = float(r["station"]), r["code"]
        off = next(o for c, o, _ in LINES if c == code)
        n, e = built.road.ne(s, off)
        assert float(r["offset"]) == off
        assert close(r["northing"], float(n)) and close(r["easting"], float(e))
        z = float(design_z(s, code))
        assert close(r["elevation"], z)
        if (s, code) in holes:  # a stake over an invisible face: no ground there
            assert r["ground_elevation"] == "" and r["cut_fill"] == "", r
            continue
        g = float(built.road.gz(s, off))
        assert close(r["ground_elevation"], g), r
        assert close(r["cut_fill"], z - g), r  # design - ground: positive is fill


def test_slopestakes_csv_against_the_closed_form(built):
    got = built.rows("slopestakes.csv")
    want = built.expected()
    assert [(float(r["station"]), r["side"]) for r in got] == [(w["station"], w["side"]) for w in want]
    hinge_ids = {(float(r["station"]), r["code"]): r["point"] for r in built.rows("stations.csv")}
    cols = ("catch_offset", "catch_northing", "catch_easting", "catch_elevation", "catch_cut_fill",
            "reference_offset", "reference_northing", "reference_easting", "reference_ground", "hd_to_hinge",
            "vd_to_hinge")
    for g, w in zip(got, want):
        where = (w["station"], w["side"])
        assert g["alignment"] == "SS"
        assert g["hinge_point"] == hinge_ids[(w["station"], "SHL" if w["side"] == "left" else "SHR")]
        assert close(g["hinge_offset"], w["hinge_offset"]) and close(g["hinge_elevation"], w["hinge_elevation"])
        assert close(g["ground_at_hinge"], w["ground_at_hinge"]), where
        assert (g["kind"], g["note"]) == (w["kind"], w["note"]), where
        for c in cols:
            assert close(g[c], w.get(c)), (where, c, g[c], w.get(c))
        assert (g["catch_point"] == "") == (g["reference_point"] == "") == (w["t"] is None)


def test_catch_and_reference_stakes_in_stations_and_points(built):
    sts = {r["point"]: r for r in built.rows("stations.csv")}
    pts = {r["point"]: r for r in built.rows("points.csv")}
    assert set(sts) == set(pts)
    slope = [r for r in built.rows("slopestakes.csv") if r["catch_point"]]
    assert len(slope) == len([w for w in built.expected() if w["t"] is not None])
    assert sum(r["feature"] == "CATCH" for r in sts.values()) == sum(r["feature"] == "REF" for r in sts.values()) \
        == len(slope)
    for r in slope:
        hinge = "SHL" if r["side"] == "left" else "SHR"
        c, ref = sts[r["catch_point"]], sts[r["reference_point"]]
        # job-file contract: features CATCH / REF, codes <hinge code>-C / -R
        assert (c["feature"], c["code"], ref["feature"], ref["code"]) == ("CATCH", hinge + "-C", "REF", hinge + "-R")
        for stake, pre in ((c, "catch"), (ref, "reference")):
            assert stake["station"] == r["station"] and stake["offset"] == r[pre + "_offset"]
            assert stake["northing"] == r[pre + "_northing"] and stake["easting"] == r[pre + "_easting"]
            p = pts[stake["point"]]
            assert (p["northing"], p["easting"], p["elevation"]) == (stake["northing"], stake["easting"],
                                                                     stake["elevation"])
        # a catch stake's elevation is its ground elevation (cut/fill 0)
        assert c["elevation"] == c["ground_elevation"] == r["catch_elevation"] and float(c["cut_fill"]) == 0.0
        # a reference stake has no design elevation; its ground elevation filled, its cut/fill empty
        assert ref["elevation"] == "" and ref["cut_fill"] == "" and ref["ground_elevation"] == r["reference_ground"]
        s = float(r["station"])
        assert close(ref["ground_elevation"], float(built.road.gz(s, float(r["reference_offset"]))))
        assert close(c["ground_elevation"], float(built.road.gz(s, float(r["catch_offset"]))))


def test_volumes_csv_against_shapely_and_average_end_areas(built):
    got = built.rows("volumes.csv")
    want = expected_volumes(built.expected(), built.road)
    # stations with both catch points only: on the tangent 0+100 has no right catch, 0+060 no left
    # one over the hole
    assert [float(r["station"]) for r in got] == [w["station"] for w in want]
    assert len(want) == (6 if built.ground == "curve" else 4 if built.holes else 5)
    for g, w in zip(got, want):
        assert g["alignment"] == "SS"
        for c in ("cut_area", "fill_area", "cut_volume", "fill_volume", "cumulative_cut", "cumulative_fill"):
            assert float(g[c]) == pytest.approx(w[c], rel=REL, abs=1e-12), (w["station"], c)


def test_stations_without_a_catch_are_reported(built):
    # one right side beyond max_width (0+100), and over the hole the left hinge at 0+060 is off the ground
    rows = built.rows("slopestakes.csv")
    if built.ground == "curve":  # every catch within max_width
        assert "without a catch point" not in built.output and all(r["catch_point"] for r in rows)
        return
    if built.holes:
        assert ("slope stakes: 2 of 12 station side(s) without a catch point (1 no catch within max_width, "
                "1 outside the ground surface)") in built.output
    else:
        assert "slope stakes: 1 of 12 station side(s) without a catch point (1 no catch within max_width)" \
            in built.output
    far = next(r for r in rows if float(r["station"]) == 100.0 and r["side"] == "right")
    assert far["kind"] == "cut" and far["note"] == "no catch within max_width"
    assert far["ground_at_hinge"] != "" and far["hinge_point"] != ""
    # the station's other stakes are still staked: its four stakes and the left catch and reference
    at = [r for r in built.rows("stations.csv") if float(r["station"]) == 100.0]
    assert sorted(r["code"] for r in at) == sorted(["SHL", "CL", "SHR", "ROW", "SHL-C", "SHL-R"])


def test_a_hole_drops_that_station_from_the_volumes(built):
    rows = {float(r["station"]): r for r in built.rows("volumes.csv")}
    assert (100.0 in rows) is (built.ground == "curve")
    # the volume at 0+080 runs from the previous station with both catch points: over the hole
    # (LandXML) 0+060 has none, so from 0+040 over 40 m; a point CSV's TIN has no holes: 20 m
    prev = 40.0 if built.holes else 60.0
    assert (60.0 in rows) is not built.holes
    for kind in ("cut", "fill"):
        # average end areas (Wikibooks, "Fundamentals of Transportation/Earthwork")
        v = (80.0 - prev) * (float(rows[prev][kind + "_area"]) + float(rows[80.0][kind + "_area"])) / 2
        assert float(rows[80.0][kind + "_volume"]) == pytest.approx(v, rel=REL)
    right60 = next(r for r in built.rows("slopestakes.csv") if float(r["station"]) == 60.0 and r["side"] == "right")
    assert right60["kind"] == "cut" and right60["catch_point"] != ""  # the other side is still staked


def contract_order(rows):
    """(station, code) of every stake in the contract's point order: each station's stakes
    left to right, then its slope stakes: left REF, left CATCH, right CATCH, right REF."""
    order = []
    for s in STATIONS:
        order += [(s, c) for c, _, _ in LINES]
        left, right = (r for r in rows if r["station"] == s)
        if left["t"] is not None:
            order += [(s, "SHL-R"), (s, "SHL-C")]
        if right["t"] is not None:
            order += [(s, "SHR-C"), (s, "SHR-R")]
    return order


def test_slope_stakes_numbered_after_their_station_s_stakes(built):
    want = contract_order(built.expected())
    sts = built.rows("stations.csv")
    # rows in point order, numbered from first_point (1) without gaps, station by station
    assert [r["point"] for r in sts] == [str(k) for k in range(1, len(want) + 1)]
    assert [(float(r["station"]), r["code"]) for r in sts] == want
    assert [r["point"] for r in built.rows("points.csv")] == [r["point"] for r in sts]
    ids = {(float(r["station"]), r["code"]): r["point"] for r in sts}
    for r in built.rows("slopestakes.csv"):
        if r["catch_point"]:
            h = "SHL" if r["side"] == "left" else "SHR"
            s = float(r["station"])
            assert (r["catch_point"], r["reference_point"]) == (ids[(s, h + "-C")], ids[(s, h + "-R")])


# ---- a job with a setup and a check: slope stakes are stakes like the others

SETUP = """[setup]
occupied = { id = "CP1", northing = 4990.0, easting = 3060.0 }
backsight = { id = "CP2", northing = 5100.0, easting = 3000.0 }
[check]
horizontal_tolerance = 0.02
"""


@pytest.fixture(scope="module")
def with_setup(tmp_path_factory):
    folder = tmp_path_factory.mktemp("setup")
    job = write_case(folder, "csv", "planar", SETUP)
    r = run("build", str(job), "--out", str(folder / "out"), "--only", "points,stations,setout")
    assert r.exit_code == 0, r.output
    return job, folder


def test_slope_stakes_in_the_setout(with_setup):
    _, folder = with_setup
    pts = read_rows(folder / "out" / "points.csv")
    setout = read_rows(folder / "out" / "setout.csv")
    # every stake of the point file, catch and reference stakes included, in point order
    assert [r["point"] for r in setout] == [r["point"] for r in pts]
    for p, s in zip(pts, setout):
        dn, de = float(p["northing"]) - 4990.0, float(p["easting"]) - 3060.0
        # grid distance and azimuth from the occupied point (plane geometry), to the 4 decimals
        # of the point file's coordinates
        dist = math.hypot(dn, de)
        assert float(s["grid_distance"]) == pytest.approx(dist, abs=TOL)
        assert float(s["azimuth_deg"]) == pytest.approx(math.degrees(math.atan2(de, dn)) % 360.0,
                                                        abs=math.degrees(1e-4 / dist))


def test_a_shot_on_a_catch_stake_is_matched(with_setup):
    job, folder = with_setup
    pts = read_rows(folder / "out" / "points.csv")
    stakes = [next(p for p in pts if " CATCH " in p["description"]), next(p for p in pts if " REF " in p["description"]),
              next(p for p in pts if p["point"] == "2")]
    shots = folder / "shots.csv"
    shots.write_text("".join(f"{p['point']},{p['northing']},{p['easting']},,STK\n" for p in stakes), encoding="utf-8")
    r = run("check", str(job), str(shots), "--out", str(folder / "chk"))
    rows = read_rows(folder / "chk" / "check.csv")
    assert [(c["point"], c["design_point"], c["status"]) for c in rows] == [(p["point"], p["point"], "ok")
                                                                           for p in stakes]
    assert r.exit_code == 0, r.output


def test_catch_on_grazing_ground_within_tolerance(tmp_path):
    """Regression: the slope stakes started from the hinge stake's coordinates rounded to the point
    file's 4 decimals, so on grazing ground the catch moved 5-6e-4 from where it lies."""
    # a 3:1 fill slope over ground falling 0.3 outward: the two lines meet at a shallow angle
    # (1/3 - 0.3 = 1/30), the catch 50 to 80 m out; the plane as points on a regular grid in
    # northing and easting (any triangulation of points on one plane is that plane)
    left = dict(LEFT, fill_slope=3.0)
    road = tangent_road(False, False)
    ext = np.array([to_ne(s, v) for s in STATIONS for v in (-130.0, 50.0)])
    lo, hi = np.floor(ext.min(axis=0) / 4) * 4 - 8, np.ceil(ext.max(axis=0) / 4) * 4 + 8
    n, e = np.meshgrid(np.arange(lo[0], hi[0] + 1, 4.0), np.arange(lo[1], hi[1] + 1, 4.0), indexing="ij")
    n, e = n.ravel(), e.ravel()
    u, v = (n - N0) * T[0] + (e - E0) * T[1], (n - N0) * R[0] + (e - E0) * R[1]
    write_ground_csv(tmp_path / "ground.csv", n, e, ground_z(u, v, False))
    job = tmp_path / "job.toml"
    job.write_text(job_text('file = "ground.csv"', 110.0, left=left), encoding="utf-8")
    r = run("build", str(job), "--out", str(tmp_path / "out"), "--only", "slopestakes")
    assert r.exit_code == 0, r.output
    got = [g for g in read_rows(tmp_path / "out" / "slopestakes.csv") if g["side"] == "left"]
    want = [w for w in expected_rows(road, 110.0, left) if w["side"] == "left"]
    assert all(50.0 < w["t"] < 81.0 for w in want)
    for g, w in zip(got, want):
        for c in ("catch_offset", "catch_northing", "catch_easting", "catch_elevation", "reference_ground"):
            assert close(g[c], w[c]), (w["station"], c, g[c], w[c])


def test_sections_leaving_the_ground(tmp_path):
    # the planar ground only from 22 m left to 30 m right of the road: every right section leaves
    # it before its catch (30.6 to 35.6 m right); left, the reference stakes 22.4 m out and
    # farther lie off it while their catches lie on it
    n, e, z, _, _ = grid_points(False, np.arange(-22.0, 30.5, 2.0))
    write_ground_csv(tmp_path / "ground.csv", n, e, z)
    job = tmp_path / "job.toml"
    job.write_text(job_text('file = "ground.csv"', 100.0), encoding="utf-8")
    r = run("build", str(job), "--out", str(tmp_path / "out"), "--only", "stations,slopestakes,volumes")
    assert r.exit_code == 0, r.output
    assert "6 of 12 station side(s) without a catch point (6 outside the ground surface)" in r.output
    want = expected_rows(tangent_road(False, False), 100.0)
    sts = {x["point"]: x for x in read_rows(tmp_path / "out" / "stations.csv")}
    for g, w in zip(read_rows(tmp_path / "out" / "slopestakes.csv"), want):
        if w["side"] == "right":
            # the hinge lies on the ground (kind by the ground there), the section leaves it first
            assert (g["kind"], g["note"], g["catch_point"], g["catch_offset"]) == ("cut", "outside the ground surface",
                                                                                   "", "")
            assert close(g["ground_at_hinge"], w["ground_at_hinge"])
            continue
        for c in ("catch_offset", "catch_northing", "catch_easting", "catch_elevation", "reference_offset",
                  "reference_northing", "reference_easting", "hd_to_hinge"):
            assert close(g[c], w[c]), (w["station"], c)
        off = w["reference_offset"] < -22.0
        # a reference stake off the ground is still staked; its ground and vertical distance unknown
        assert close(g["reference_ground"], None if off else w["reference_ground"])
        assert close(g["vd_to_hinge"], None if off else w["vd_to_hinge"])
        assert sts[g["reference_point"]]["feature"] == "REF"
    assert sum(w["reference_offset"] < -22.0 for w in want if w["side"] == "left") == 3
    assert read_rows(tmp_path / "out" / "volumes.csv") == []  # no station has both catch points
