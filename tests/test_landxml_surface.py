"""A LandXML 1.2 TIN ``<Surface>`` as the ground.

References: the LandXML 1.2 schema's Surface/Definition/Pnts/Faces layout
(``<P id>`` "northing easting elevation", ``<F>`` three point ids, ``i="1"``
an invisible face), written here by hand; the ground read from it is checked
against the plane the points lie on and against shapely's point-in-polygon
of the visible faces (the holes).
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from stakeout.errors import JobFileError
from stakeout.jobfile.ground import read_ground
from stakeout.jobfile.reader import Table
from stakeout.landxml.surface import parse_surface

from .ground_data import E0, N0, grid_faces, plane

NS = "http://www.landxml.org/schema/LandXML-1.2"
ZF = plane(30.0, 0.04, -0.02)


def _surface_xml(nx=8, ny=6, spacing=2.0, hidden=(), name="EG", surf_type="TIN", units='<Metric linearUnit="meter"/>',
                 extra_surface="", p_override=None, f_override=None):
    gx, gy = np.meshgrid(np.arange(nx, dtype=float), np.arange(ny, dtype=float))
    e, n = E0 + spacing * gx.ravel(), N0 + spacing * gy.ravel()
    z = ZF(n, e)
    pts = "".join(f'<P id="{k + 1}">{float(n[k])!r} {float(e[k])!r} {float(z[k])!r}</P>' for k in range(len(n)))
    faces = grid_faces(nx, ny) + 1
    inv = ' i="1"'
    fs = "".join(f'<F{inv if k in hidden else ""}>{a} {b} {c}</F>' for k, (a, b, c) in enumerate(faces))
    if p_override is not None:
        pts = p_override
    if f_override is not None:
        fs = f_override
    return (f'<?xml version="1.0" encoding="UTF-8"?><LandXML xmlns="{NS}" version="1.2"><Units>{units}</Units>'
            f'<Surfaces><Surface name="{name}"><Definition surfType="{surf_type}"><Pnts>{pts}</Pnts>'
            f'<Faces>{fs}</Faces></Definition></Surface>{extra_surface}</Surfaces></LandXML>').encode()


def test_surface_reads_points_faces_and_holes():
    hidden = {3, 10, 40}
    s = parse_surface(_surface_xml(hidden=hidden), None, "m", "ground.landxml = 'eg.xml'")
    assert s.name == "EG" and s.invisible == 3 and len(s.faces) == 2 * 7 * 5 - 3 and len(s.n) == 48


def test_ground_from_a_surface_file_with_holes(tmp_path):
    hidden = {3, 10, 40}
    (tmp_path / "eg.xml").write_bytes(_surface_xml(hidden=hidden))
    g, rec = read_ground(Table({"ground": {"landxml": "eg.xml", "name": "EG"}}, "", ("ground",)), tmp_path, "m")
    assert rec.role == "ground" and rec.chosen == "EG"
    rng = np.random.default_rng(5)
    qn, qe = N0 + rng.uniform(-1, 11, 5000), E0 + rng.uniform(-1, 15, 5000)
    z = g.elevation(qn, qe)
    # reference: shapely, the union of the visible faces (holes excluded); away from their borders
    all_f = grid_faces(8, 6)
    vis = np.delete(all_f, sorted(hidden), axis=0)
    gx, gy = np.meshgrid(np.arange(8, dtype=float), np.arange(6, dtype=float))
    pe, pn = E0 + 2 * gx.ravel(), N0 + 2 * gy.ravel()
    union = shapely.union_all(shapely.polygons(np.stack((pe[vis], pn[vis]), axis=-1)))
    pts = shapely.points(qe, qn)
    near = shapely.distance(shapely.boundary(union), pts) < 1e-7
    assert np.array_equal(~np.isnan(z)[~near], shapely.covers(union, pts)[~near])
    assert np.nanmax(np.abs(z - ZF(qn, qe))) < 1e-9


@pytest.mark.parametrize("kwargs, name, unit, expect", [
    ({}, None, "us_ft", "the file's units are <Metric linearUnit=\"meter\"> (metres) but the job's units = 'us_ft'"),
    ({"units": '<Imperial linearUnit="inch"/>'}, None, "ft", "<Imperial linearUnit='inch'>"),
    ({}, "OG", "m", "no <Surface name='OG'>; the file has 'EG'"),
    ({"extra_surface": '<Surface name="FG"><Definition surfType="TIN"><Pnts/><Faces/></Definition></Surface>'}, None,
     "m", "2 surfaces ('EG', 'FG'); say which with `name = ...`"),
    ({"surf_type": "grid"}, None, "m", "surfType = 'grid'; only a TIN surface"),
    ({"p_override": '<P id="1">1 2</P>'}, None, "m", "<P id='1'> = '1 2': expected 'northing easting elevation'"),
    ({"p_override": '<P id="1">1 2 3</P><P id="1">4 5 6</P>'}, None, "m", "<P id='1'> given twice"),
    ({"p_override": '<P id="1">1e12 2 3</P>'}, None, "m", "out of range"),
    ({"f_override": "<F>1 2 999</F>"}, None, "m", "<F> 1 = '1 2 999': expected the ids of three <P>"),
    ({"f_override": '<F i="1">1 2 3</F>'}, None, "m", "no visible <F> faces"),
])
def test_bad_surfaces_are_refused_by_name(kwargs, name, unit, expect):
    with pytest.raises(JobFileError) as info:
        parse_surface(_surface_xml(**kwargs), name, unit, "ground.landxml = 'eg.xml'")
    assert str(info.value).startswith("ground.landxml = 'eg.xml': ")
    assert expect in str(info.value)


def test_dtd_and_malformed_xml_are_refused():
    bomb = b'<?xml version="1.0"?><!DOCTYPE x [<!ENTITY a "aaaa">]><LandXML>&a;</LandXML>'
    with pytest.raises(JobFileError, match="refused"):
        parse_surface(bomb, None, "m", "k")
    with pytest.raises(JobFileError, match="malformed XML at line 1"):
        parse_surface(b"<LandXML><Units>", None, "m", "k")
    with pytest.raises(JobFileError, match="root element 'Foo' is not <LandXML>"):
        parse_surface(b"<Foo/>", None, "m", "k")


def test_many_points_stream_out_of_the_tree():
    # more than 4096 points and faces: the rows are taken as they end (the tree is pruned on the way)
    s = parse_surface(_surface_xml(nx=80, ny=70, spacing=1.0), "EG", "m", "k")
    assert len(s.n) == 5600 and len(s.faces) == 2 * 79 * 69
    assert np.array_equal(s.faces, grid_faces(80, 70))
