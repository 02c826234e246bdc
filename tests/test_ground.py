"""The ground TIN: elevations and ray sections against outside references.

References: scipy.spatial.Delaunay (``find_simplex``) and
scipy.interpolate.LinearNDInterpolator (linear interpolation on the same
Delaunay triangles) for the locator; shapely polygons (the faces' union,
holes included) for point-in-TIN and for where a ray leaves the ground;
shapely line intersections with the faces' edges for the section's
breakpoints.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from scipy.interpolate import LinearNDInterpolator
from scipy.spatial import Delaunay

from stakeout.errors import JobFileError
from stakeout.ground import Ground, read_ground_csv

from .ground_data import E0, N0, grid_tin, jittered, plane


def _faces_union(g: Ground):
    polys = shapely.polygons(np.stack((g.e[g.faces], g.n[g.faces]), axis=-1))
    return shapely.union_all(polys)


def test_locator_matches_scipy_delaunay_and_linear_interpolation():
    rng = np.random.default_rng(7)
    m = 400
    e = E0 + rng.uniform(0, 100, m)
    n = N0 + rng.uniform(0, 100, m)
    z = 50 + 5 * np.sin(e / 7.0) + rng.uniform(-1, 1, m)
    g = Ground.from_points(n, e, z)
    qe = E0 + rng.uniform(-10, 110, 20000)
    qn = N0 + rng.uniform(-10, 110, 20000)
    got = g.elevation(qn, qe)
    # reference: scipy's own Delaunay of the same (centred) points and its linear interpolator
    xy = np.c_[e - e.mean(), n - n.mean()]
    tri = Delaunay(xy)
    q = np.c_[qe - e.mean(), qn - n.mean()]
    inside = tri.find_simplex(q) >= 0
    ref = LinearNDInterpolator(tri, z)(q)
    assert np.array_equal(~np.isnan(got), inside)
    assert np.nanmax(np.abs(got - ref)) < 1e-9


def test_locator_matches_shapely_point_in_polygon_with_holes():
    rng = np.random.default_rng(11)
    drop = rng.choice(2 * 29 * 29, 200, replace=False)
    g = grid_tin(30, 30, 3.0, plane(10.0, 0.02, -0.01), drop=drop)
    union = _faces_union(g)
    qe = E0 + rng.uniform(-5, 95, 30000)
    qn = N0 + rng.uniform(-5, 95, 30000)
    pts = shapely.points(qe, qn)
    # reference: shapely point-in-polygon on the union of the visible faces; points within 1e-7 of
    # a boundary are left out (the locator counts a point on an edge as inside, as shapely's covers does)
    near = shapely.distance(shapely.boundary(union), pts) < 1e-7
    ref = shapely.covers(union, pts)
    got = ~np.isnan(g.elevation(qn, qe))
    assert np.array_equal(got[~near], ref[~near])
    assert np.nanmax(np.abs(g.elevation(qn, qe) - plane(10.0, 0.02, -0.01)(qn, qe))) < 1e-9


def test_elevation_on_vertices_and_edges_is_exact():
    zf = plane(100.0, 0.1, 0.05)
    g = jittered(20, 5.0, lambda n, e: zf(n, e) + np.sin(e - E0))  # not planar: the face matters
    used = np.unique(g.faces)
    assert np.array_equal(g.elevation(g.n[used], g.e[used]), g.z[used])  # every vertex, exactly
    a, b = g.faces[:, 0], g.faces[:, 1]
    mid = g.elevation(0.5 * (g.n[a] + g.n[b]), 0.5 * (g.e[a] + g.e[b]))
    assert np.max(np.abs(mid - 0.5 * (g.z[a] + g.z[b]))) < 1e-9  # midpoints of edges: the edge's mean


def test_elevation_keeps_the_shape_and_is_nan_off_the_ground():
    g = grid_tin(5, 5, 1.0, plane(1.0, 0.0, 0.0))
    z = g.elevation(np.array([[N0 + 1, N0 - 1], [np.nan, N0 + 2]]), np.array([[E0 + 1, E0], [E0, E0 + 9]]))
    assert z.shape == (2, 2)
    assert z[0, 0] == 1.0 and np.isnan(z[0, 1]) and np.isnan(z[1, 0]) and np.isnan(z[1, 1])


def _shapely_breakpoints(g: Ground, n0, e0, dn, de, length):
    """Distances where the ray crosses a face edge, by shapely (reference)."""
    ray = shapely.LineString([(e0, n0), (e0 + de * length, n0 + dn * length)])
    polys = shapely.polygons(np.stack((g.e[g.faces], g.n[g.faces]), axis=-1))
    hits = shapely.intersection(shapely.boundary(polys), ray)
    pts = shapely.get_coordinates(hits)
    return np.unique(np.round(np.hypot(pts[:, 0] - e0, pts[:, 1] - n0), 7))


def test_section_breakpoints_are_the_edge_crossings_shapely_finds():
    zf = lambda n, e: 20 + 0.3 * np.cos((e - E0) / 9.0) * (n - N0) / 10.0
    g = jittered(30, 2.0, zf, seed=5)
    rng = np.random.default_rng(3)
    for _ in range(20):
        n0, e0 = N0 + rng.uniform(15, 45), E0 + rng.uniform(15, 45)
        a = rng.uniform(0, 2 * np.pi)
        s = g.section(n0, e0, np.cos(a), np.sin(a), 200.0)
        assert s.left_tin  # the ground is 60 units across: every ray leaves it
        ref = _shapely_breakpoints(g, n0, e0, np.cos(a), np.sin(a), s.end + 1e-6)
        got = s.dist[s.dist > 1e-7]
        assert np.allclose(got, ref[(ref > 1e-7) & (ref < s.end + 1e-7)], atol=1e-6)
        # the section's elevations are the TIN's at those points
        zz = g.elevation(n0 + s.dist[:-1] * np.cos(a), e0 + s.dist[:-1] * np.sin(a))
        assert np.max(np.abs(zz - s.z[:-1])) < 1e-9
        # reference for where it leaves: shapely, the part of the ray inside the faces' union
        inside = shapely.intersection(_faces_union(g), shapely.LineString(
            [(e0, n0), (e0 + 200 * np.sin(a), n0 + 200 * np.cos(a))]))
        parts = getattr(inside, "geoms", [inside])
        first = min(parts, key=lambda p: shapely.distance(p, shapely.Point(e0, n0)))
        far = max(np.hypot(x - e0, y - n0) for x, y in np.asarray(first.coords))
        assert abs(s.end - far) < 1e-7


def test_section_stops_at_a_hole_and_at_its_length():
    g = grid_tin(11, 11, 1.0, plane(5.0, 0.1, 0.0), drop=[5 * 10 + 7, 100 + 5 * 10 + 7])
    # the hole is the square from e = 7 to 8 in row n = 5..6
    s = g.section(N0 + 5.5, E0 + 1.0, 0.0, 1.0, 100.0)
    assert s.left_tin and abs(s.end - 6.0) < 1e-9
    assert np.allclose(s.dist, np.arange(0, 6.5, 0.5)) or np.allclose(s.dist[[0, -1]], [0, 6])
    s2 = g.section(N0 + 5.5, E0 + 1.0, 0.0, 1.0, 3.25)
    assert not s2.left_tin and s2.end == 3.25 and s2.dist[-1] == 3.25
    s3 = g.section(N0 - 1.0, E0 + 1.0, 1.0, 0.0, 5.0)  # starts off the ground
    assert s3.left_tin and s3.end == 0.0 and len(s3.dist) == 0


def test_section_along_an_edge_and_through_vertices():
    g = grid_tin(11, 11, 1.0, lambda n, e: 3.0 + 0.5 * np.abs(e - E0 - 5.0))  # a valley folded on e = 5
    s = g.section(N0 + 2.0, E0, 0.0, 1.0, 10.0)  # along grid line n = 2: every crossing a vertex
    assert not s.left_tin and s.end == 10.0
    assert np.allclose(s.z, 3.0 + 0.5 * np.abs(s.dist - 5.0), atol=1e-12)
    assert 5.0 in np.round(s.dist, 12)
    d = g.section(N0, E0, np.sqrt(0.5), np.sqrt(0.5), 20.0)  # the diagonal: along face edges
    assert abs(d.end - 10.0 * np.sqrt(2)) < 1e-9 and d.left_tin


def test_duplicate_and_degenerate_points_are_refused():
    n = np.array([0.0, 0.0, 1.0, 0.0])
    e = np.array([0.0, 1.0, 0.0, 1.0])
    with pytest.raises(JobFileError, match="point 'b' .*same northing and easting as point 'd'|point 'd'.*same"):
        Ground.from_points(n, e, np.zeros(4), "g.csv", ids=["a", "b", "c", "d"], lines=[1, 2, 3, 4])
    with pytest.raises(JobFileError, match="do not span an area"):
        Ground.from_points(np.arange(5.0), np.arange(5.0), np.zeros(5), "g.csv")
    with pytest.raises(JobFileError, match="at least three"):
        Ground.from_points(np.arange(2.0), np.arange(2.0), np.zeros(2), "g.csv")
    with pytest.raises(JobFileError, match="face 1 names point index"):
        Ground.from_faces(n, e, np.zeros(4), np.array([[0, 1, 9]]), "s.xml")
    with pytest.raises(JobFileError, match="zero area"):
        Ground.from_faces(np.arange(3.0), np.arange(3.0), np.zeros(3), np.array([[0, 1, 2]]), "s.xml")


def test_read_ground_csv_with_and_without_header(tmp_path):
    rows = "\n".join(f"{i},{N0 + (i // 5) * 10.0},{E0 + (i % 5) * 10.0},{100 + i * 0.5},GS" for i in range(25))
    p = tmp_path / "g.csv"
    p.write_text(rows + "\n", encoding="utf-8")
    g1 = read_ground_csv(p)
    p2 = tmp_path / "h.csv"
    p2.write_text("Point,Northing,Easting,Elevation,Description\n" + rows + "\n", encoding="utf-8")
    g2 = read_ground_csv(p2)
    assert g1.face_count == g2.face_count == 32
    assert g1.elevation(N0 + 10.0, E0 + 10.0) == 103.0


@pytest.mark.parametrize("text, expect", [
    ("1,100,200,5\n2,100,210\n3,110,200,5\n", "line 2: point '2' has no elevation"),
    ("1,100,200,5\n2,100,x,5\n3,110,200,5\n", "line 2: easting 'x' is not a number"),
    ("1,100,200,5\n2,100,210,5\n3,1e10,200,5\n", "line 3: northing 10000000000.0 is out of range"),
    ("1,100,200,5\n2,100,200,6\n3,110,200,5\n", "point '2' \\(line 2\\) lies at the same northing and easting"),
    ("1,100,200,5\n2,100,210,5e6\n3,110,200,5\n", "line 2: elevation '5e6' is out of range"),
    ("", "empty"),
    ("id,X,Y,Z\n1,100,200,5\n", "line 1: the header names 'X' and 'Y', .* name the columns in the header instead"),
])
def test_read_ground_csv_errors_name_the_key_and_line(tmp_path, text, expect):
    p = tmp_path / "g.csv"
    p.write_text(text, encoding="utf-8")
    with pytest.raises(JobFileError, match=expect) as info:
        read_ground_csv(p)
    assert str(info.value).startswith(f"ground.file = {str(p)!r}")
    assert "staked" not in str(info.value) and "shots" not in str(info.value) and "--columns" not in str(info.value)


def test_facts():
    g = grid_tin(3, 4, 2.0, plane(7.0, 1.0, 0.0))
    assert g.extent() == (N0, E0, N0 + 6.0, E0 + 4.0)
    assert g.elevation_range() == (7.0, 11.0)
    assert g.face_count == 12


def test_walk_and_grid_sections_agree_through_vertices_and_along_edges():
    # the walk (face to face) against the grid clipping of every nearby face: the same polylines,
    # on a regular grid whose rays along rows, columns and diagonals pass through vertices
    g = grid_tin(21, 21, 1.0, lambda n, e: 3.0 + np.sin(e - E0) + 0.1 * (n - N0), drop=[55, 255, 300])
    rng = np.random.default_rng(17)
    m = 300
    n0 = N0 + np.r_[rng.integers(0, 21, m // 2).astype(float), rng.uniform(0, 20, m // 2)]
    e0 = E0 + np.r_[rng.integers(0, 21, m // 2).astype(float), rng.uniform(0, 20, m // 2)]
    ang = np.r_[rng.integers(0, 8, m // 2) * np.pi / 4, rng.uniform(0, 2 * np.pi, m // 2)]
    dn, de = np.cos(ang), np.sin(ang)
    length = rng.uniform(1, 30, m)
    a = g.sections(n0, e0, dn, de, length)
    b = g._sections_grid(n0, e0, dn, de, length)
    assert np.allclose(a.end, b.end, atol=1e-9) and np.array_equal(a.left_tin, b.left_tin)
    assert np.array_equal(a.first, b.first)
    assert np.allclose(a.dist, b.dist, atol=1e-9) and np.allclose(a.z, b.z, atol=1e-9)


def test_walk_and_grid_sections_agree_on_a_random_tin_with_holes():
    # the same comparison on a Delaunay TIN of random points with random elevations (slivers on the hull)
    rng = np.random.default_rng(23)
    m = 800
    n, e = N0 + rng.uniform(0, 100, m), E0 + rng.uniform(0, 100, m)
    full = Ground.from_points(n, e, rng.uniform(0, 5, m))
    drop = rng.choice(full.face_count, full.face_count // 20, replace=False)
    g = Ground.from_faces(n, e, full.z, np.delete(full.faces, drop, axis=0))
    r = 1500
    on, oe, a = N0 + rng.uniform(0, 100, r), E0 + rng.uniform(0, 100, r), rng.uniform(0, 2 * np.pi, r)
    length = rng.uniform(0, 60, r)
    w = g.sections(on, oe, np.cos(a), np.sin(a), length)
    b = g._sections_grid(on, oe, np.cos(a), np.sin(a), length)
    assert np.array_equal(w.first, b.first) and np.array_equal(w.left_tin, b.left_tin)
    assert np.allclose(w.end, b.end, atol=1e-8) and np.allclose(w.dist, b.dist, atol=1e-8)
    assert np.max(np.abs(w.z - b.z)) < 1e-7


def test_ground_lookup_grew_with_the_square_of_a_corridor_length():
    """Regression: the grid over a long narrow TIN (a corridor's ground, diagonal to the grid) took
    its cell size from the bounding box, so each point met more candidate faces the longer the
    corridor (a 1M-stake corridor's design step took 117 s). Only the cells faces reach are kept now:
    candidates per point stay the same as the corridor grows. Checked against the plane the points
    lie on (closed form)."""
    from stakeout.ground import Ground

    per_point = []
    for length in (2000.0, 20000.0):
        u, v = np.meshgrid(np.arange(0.0, length, 10.0), np.arange(-60.0, 61.0, 10.0))
        u, v = u.ravel(), v.ravel()
        c, s = np.cos(np.radians(37.0)), np.sin(np.radians(37.0))
        g = Ground.from_points(1e5 + u * c - v * s, 2e5 + u * s + v * c, 50.0 + 0.01 * u + 0.05 * v)
        rng = np.random.default_rng(3)
        qu, qv = rng.uniform(0.0, length - 10.0, 5000), rng.uniform(-59.0, 59.0, 5000)
        qn, qe = 1e5 + qu * c - qv * s, 2e5 + qu * s + qv * c
        owner, _ = g._candidates(g._grids[0], g._cell(g._grids[0], qn, qe))
        per_point.append(owner.size / qn.size)
        assert np.allclose(g.elevation(qn, qe), 50.0 + 0.01 * qu + 0.05 * qv, atol=1e-9)
    assert per_point[1] < 1.5 * per_point[0] and per_point[1] < 40.0


def test_long_faces_across_a_bend_made_every_lookup_test_dozens_of_faces():
    """Regression: Delaunay of a corridor's ground points that bends fills the inside of the bend
    (and the hull) with faces hundreds of times the surveyed ones. In one grid they set the cell
    size (the mean face box), so every lookup on the corridor tested dozens of faces: a 1M-stake
    corridor's design took 65 s and 8.4 GB. The faces now go in grids by size. Checked: the points
    lie on one plane, so any face holding a point gives the plane's elevation (closed form); a
    point in a long face is found too; the candidates a corridor point meets in the finest grid
    stay few."""
    from stakeout.ground import Ground

    # a band 120 m wide along a half-circle of radius 1,500 m and its two 3 km tangents (a U):
    # the inside of the U is 2.9 km across, filled by long faces
    s = np.arange(0.0, 3000.0 + np.pi * 1500.0 + 3000.0, 20.0)
    v = np.arange(-60.0, 61.0, 10.0)
    ss, vv = (a.ravel() for a in np.meshgrid(s, v))

    def place(s: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        a = np.clip((s - 3000.0) / 1500.0, 0.0, np.pi)  # angle turned
        cn = np.where(s < 3000.0, s, np.where(a < np.pi, 3000.0 + 1500.0 * np.sin(a),
                                               3000.0 - (s - 3000.0 - np.pi * 1500.0)))
        ce = np.where(s < 3000.0, 0.0, 1500.0 - 1500.0 * np.cos(a))
        dn, de = np.cos(a), np.sin(a)  # heading north, turning right through east to south
        return 6e6 + cn + v * de, 4e5 + ce - v * dn

    n, e = place(ss, vv)
    z = 120.0 + 0.004 * (n - 6e6) - 0.002 * (e - 4e5)
    g = Ground.from_points(n, e, z)
    rng = np.random.default_rng(11)
    qs, qv = rng.uniform(0.0, s[-1], 20000), rng.uniform(-59.0, 59.0, 20000)
    qn, qe = place(qs, qv)
    fine = g._grids[0]
    owner, _ = g._candidates(fine, g._cell(fine, qn, qe))
    assert owner.size / qn.size < 20.0  # 86 before
    want = 120.0 + 0.004 * (qn - 6e6) - 0.002 * (qe - 4e5)
    assert np.allclose(g.elevation(qn, qe), want, atol=1e-9)
    # inside the U, 700 m from the band: only long faces hold it
    mid_n, mid_e = np.array([6e6 + 3000.0]), np.array([4e5 + 1500.0])
    assert g.face_at(mid_n, mid_e)[0] >= 0
    assert np.allclose(g.elevation(mid_n, mid_e), 120.0 + 0.004 * 3000.0 - 0.002 * 1500.0, atol=1e-9)
