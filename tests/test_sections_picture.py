"""Cross-section pictures: sections.svg and the report's Earthwork pictures.

Outside references: lxml's strict XML parser (every SVG, and each SVG embedded
in report.html, parsed on its own; its HTML parser for the report); shapely
for every area (the shaded polygons' areas, and the region between two
polylines computed by polygon difference, independently of
stakeout.volumes); that cut is where the ground lies above the design and
fill where it lies below is common practice.
"""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path

import numpy as np
import pytest
from lxml import etree
from lxml import html as lhtml
from shapely.geometry import LineString, Point, Polygon

from stakeout.design import build_design
from stakeout.jobfile import load_job
from stakeout.volumes import CrossSections, area_outlines, areas_between
from stakeout.writers.html import REPORT_MAX_SECTIONS
from stakeout.writers.sections_picture import CUT_COLOUR, FILL_COLOUR, MAX_DRAWN_SECTIONS

from .ground_data import rolling_ground_csv
from .helpers import build_job
from .test_ground_wiring import JOB, SLOPES

SVG = "{http://www.w3.org/2000/svg}"


def _rolling_job(tmp_path: Path, length: float = 100.0, interval: float = 10.0, units: str = "m") -> Path:
    """A straight road over rolling ground (jittered points, Delaunay): cut on one side, fill on the other."""
    rolling_ground_csv(tmp_path / "ground.csv", 2000.0 + length + 51.0)
    text = (JOB.format(extra=SLOPES).replace("length = 100.0", f"length = {length}")
            .replace("interval = 20.0", f"interval = {interval}").replace('units = "m"', f'units = "{units}"'))
    if units != "m":
        text = text.replace('station = "0+000"', 'station = "0+00"')
    p = tmp_path / "job.toml"
    p.write_text(text, encoding="utf-8")
    return p


def _floats(text: str) -> np.ndarray:
    return np.array([float(v) for v in re.split(r"[ ,]+", text.strip())]).reshape(-1, 2)


def _sections(root) -> list:
    return root.findall(f"{SVG}g[@class='section']")


def test_shaded_areas_are_the_volumes_areas(tmp_path):
    job = _rolling_job(tmp_path)
    out = build_job(job, tmp_path / "out", "--only", "sections-picture,volumes")
    root = etree.fromstring((out / "sections.svg").read_bytes())  # lxml, strict XML
    d = build_design(load_job(job))
    ew = d.earthwork
    assert ew is not None and ew.sections is not None
    cs, st = ew.sections, ew.volume_stations
    rows = list(csv.DictReader(io.StringIO((out / "volumes.csv").read_text(encoding="utf-8"))))
    panels = _sections(root)
    assert len(panels) == st.size == len(rows) == 11
    kinds = set()
    for g, i, row in zip(panels, st.tolist(), rows):
        assert g.find(f"{SVG}text/{SVG}tspan").text == row["station_label"]
        areas = {"cut": 0.0, "fill": 0.0}
        drawn = g.find(f"{SVG}g[@class='areas']")
        for poly in drawn.findall(f"{SVG}polygon"):
            kind = poly.get("class")
            assert poly.get("fill") == (CUT_COLOUR if kind == "cut" else FILL_COLOUR)
            pts = _floats(poly.get("points"))  # drawn in job units: offset, elevation
            shape = Polygon(pts)
            assert shape.is_valid and shape.area > 0  # shapely: a simple polygon
            areas[kind] += shape.area
            kinds.add(kind)
            # common practice: cut where the ground lies above the design, fill where below
            x, _ = shape.representative_point().coords[0]
            gs, ds = slice(cs.ground_first[i], cs.ground_first[i + 1]), slice(cs.design_first[i], cs.design_first[i + 1])
            above = np.interp(x, cs.ground_offset[gs], cs.ground_z[gs]) - np.interp(x, cs.design_offset[ds], cs.design_z[ds])
            assert (above > 0) == (kind == "cut")
        # shapely's areas of the drawn polygons (coordinates printed to 4 decimals) against the
        # sections' areas, and against volumes.csv (2 decimals)
        assert areas["cut"] == pytest.approx(cs.cut_area[i], abs=2e-3)
        assert areas["fill"] == pytest.approx(cs.fill_area[i], abs=2e-3)
        assert areas["cut"] == pytest.approx(float(row["cut_area"]), abs=2e-3)
        assert areas["fill"] == pytest.approx(float(row["fill_area"]), abs=2e-3)
        words = "".join(g.find(f"{SVG}text").itertext())  # the areas written, 2 decimals, square metres
        assert f"cut {cs.cut_area[i]:.2f} m\u00b2" in words and f"fill {cs.fill_area[i]:.2f} m\u00b2" in words
        # the polygons' transform puts the catch points where the ground line is drawn
        a, b, c, dd, e, f = (float(v) for v in re.findall(r"[-0-9.]+", drawn.get("transform")))
        ground = _floats(g.findall(f"{SVG}polyline")[0].get("points"))
        for k in (gs.start, gs.stop - 1):
            px = a * cs.ground_offset[k] + c * cs.ground_z[k] + e
            py = b * cs.ground_offset[k] + dd * cs.ground_z[k] + f
            assert min(np.hypot(*(ground - [px, py]).T)) < 0.02
        assert len(g.findall(f"{SVG}circle[@class='catch']")) == 2
        assert len(g.findall(f"{SVG}circle[@class='reference']")) == 2
        assert len(g.findall(f"{SVG}rect[@class='hinge']")) == 2
        assert len(g.findall(f"{SVG}polyline[@class='beyond']")) == 2  # the ground out to each reference stake
    assert kinds == {"cut", "fill"}


def test_legend_names_each_shade(tmp_path):
    out = build_job(_rolling_job(tmp_path), tmp_path / "out", "--only", "sections-picture")
    root = etree.fromstring((out / "sections.svg").read_bytes())  # lxml, strict XML
    legend = root.find(f"{SVG}g[@class='legend']")
    words = {}
    for item in legend:  # each item: its mark, then its words
        mark, text = item.find(f"{SVG}rect"), item.find(f"{SVG}text")
        if mark is not None and mark.get("fill") in (CUT_COLOUR, FILL_COLOUR):
            words[mark.get("fill")] = text.text
    assert words[CUT_COLOUR].startswith("cut") and words[FILL_COLOUR].startswith("fill")
    assert CUT_COLOUR != FILL_COLOUR


def test_area_units_follow_the_job(tmp_path):
    out = build_job(_rolling_job(tmp_path, units="ft"), tmp_path / "out", "--only", "sections-picture")
    text = (out / "sections.svg").read_text(encoding="utf-8")
    assert "ft\u00b2" in text and "m\u00b2" not in text and "international feet" in text


def _lines(seed: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Design and ground polylines over one width, meeting at both ends as at two catch points."""
    if seed < 0:  # by hand: a flat design; the ground touches it at 0, crosses it at a vertex at 7
        return (np.array([-10.0, 10.0]), np.array([2.0, 2.0]), np.array([-10.0, -5.0, 0.0, 5.0, 7.0, 8.0, 10.0]),
                np.array([2.0, 4.0, 2.0, 3.0, 2.0, 1.0, 2.0]))
    rng = np.random.default_rng(seed)
    xd = np.r_[-10.0, np.sort(rng.uniform(-9.0, 9.0, 4)), 10.0]
    zd = rng.integers(0, 4, xd.size).astype(float)
    xg = np.r_[-10.0, np.sort(rng.choice(np.arange(-9.0, 10.0), 8, replace=False)), 10.0]
    zg = np.round(rng.uniform(0.0, 4.0, xg.size) * 2) / 2
    zg[0], zg[-1] = zd[0], zd[-1]
    return xd, zd, xg, zg


@pytest.mark.parametrize("seed", range(-1, 12))
def test_area_outlines_against_shapely_difference(seed):
    # design and ground polylines (random ones, and one whose ground touches the design and
    # crosses it at a vertex); shapely: the region below each line down to a common base,
    # cut = ground's region minus design's, fill = design's minus ground's
    xd, zd, xg, zg = _lines(seed)
    cs = CrossSections(np.array([True]), np.array([np.nan]), np.array([np.nan]), np.array([0, xd.size]), xd, zd,
                       np.array([0, xg.size]), xg, zg)
    cut, fill = areas_between(cs.design_first, xd, zd, cs.ground_first, xg, zg)
    base = -10.0

    def below(x, z):
        return Polygon([(x[0], base), *zip(x, z), (x[-1], base)])

    g_region, d_region = below(xg, zg), below(xd, zd)
    want_cut, want_fill = g_region.difference(d_region), d_region.difference(g_region)
    assert cut[0] == pytest.approx(want_cut.area, abs=1e-9)
    assert fill[0] == pytest.approx(want_fill.area, abs=1e-9)
    o = area_outlines(cs, np.array([0]))
    polys = [(bool(o.cut[p]), Polygon(np.c_[o.offset[o.first[p]:o.first[p + 1]], o.z[o.first[p]:o.first[p + 1]]]))
             for p in range(o.section.size)]
    assert all(p.is_valid and p.area > 0 for _, p in polys)
    drawn_cut = sum(p.area for k, p in polys if k)
    drawn_fill = sum(p.area for k, p in polys if not k)
    assert drawn_cut == pytest.approx(want_cut.area, abs=1e-9) and drawn_fill == pytest.approx(want_fill.area, abs=1e-9)
    # the same regions, not only the same areas (shapely: nothing left over either way)
    from shapely.ops import unary_union

    got_cut = unary_union([p for k, p in polys if k] or [Polygon()])
    assert got_cut.symmetric_difference(want_cut).area < 1e-9
    # each polygon's vertices lie on the ground line or the design line
    lines = LineString(np.c_[xg, zg]), LineString(np.c_[xd, zd])
    for _, p in polys:
        for v in p.exterior.coords:
            assert min(line.distance(Point(v)) for line in lines) < 1e-9


def test_the_cap_holds_on_a_long_job(tmp_path):
    job = _rolling_job(tmp_path, length=1000.0, interval=0.1)
    out = build_job(job, tmp_path / "out", "--only", "sections-picture,volumes,report")
    data = (out / "sections.svg").read_bytes()
    root = etree.fromstring(data)  # lxml, strict XML
    assert len(_sections(root)) == MAX_DRAWN_SECTIONS
    n = len(list(csv.DictReader(io.StringIO((out / "volumes.csv").read_text(encoding="utf-8")))))
    assert n == 10_001
    head = "".join(root.findall(f"{SVG}text")[1].itertext())
    assert f"{n} of {n} staked stations" in head and f"the other {n - MAX_DRAWN_SECTIONS} sections" in head
    assert "volumes.csv" in head and "slopestakes.csv" in head
    assert len(data) < 500_000  # bounded: 100 panels, whatever the length of the job
    # the report links to it, draws none inline
    report = (out / "report.html").read_text(encoding="utf-8")
    doc = lhtml.document_fromstring(report)
    assert [a.get("href") for a in doc.iter("a")] == ["sections.svg"]
    assert not doc.find_class("xsec")


def test_same_job_same_bytes(tmp_path):
    job = _rolling_job(tmp_path, length=300.0, interval=2.0)
    a = (build_job(job, tmp_path / "a", "--only", "sections-picture,report") / "sections.svg").read_bytes()
    b = (build_job(job, tmp_path / "b", "--only", "sections-picture,report") / "sections.svg").read_bytes()
    assert a == b and len(_sections(etree.fromstring(a))) == MAX_DRAWN_SECTIONS


def _embedded(report: str) -> list:
    return [etree.fromstring(s.encode("utf-8")) for s in re.findall(r"<svg\b.*?</svg>", report, flags=re.S)]


@pytest.mark.parametrize("only", [None, "report"])
def test_report_embeds_a_short_jobs_sections(tmp_path, only):
    job = _rolling_job(tmp_path)
    out = build_job(job, tmp_path / "out", *(("--only", only) if only else ()))
    report = (out / "report.html").read_text(encoding="utf-8")
    doc = lhtml.document_fromstring(report)  # lxml's HTML parser
    (xsec,) = doc.find_class("xsec")
    svgs = [e for e in xsec if e.tag == "svg"]
    assert len(svgs) == 1 + 11 and svgs[0].get("class") == "legend"
    for svg in _embedded(report):  # each embedded SVG well-formed on its own (lxml, strict XML)
        assert svg.tag == f"{SVG}svg"
    panels = [s for s in _embedded(report) if s.find(f"{SVG}g[@class='areas']") is not None]
    assert len(panels) == 11 <= REPORT_MAX_SECTIONS
    # the same areas as sections.svg's panels (shapely areas of the drawn polygons)
    cut = [sum(Polygon(_floats(p.get("points"))).area for p in s.iter(f"{SVG}polygon") if p.get("class") == "cut")
           for s in panels]
    d = build_design(load_job(job))
    assert d.earthwork is not None and d.earthwork.sections is not None
    assert cut == pytest.approx(d.earthwork.sections.cut_area[d.earthwork.volume_stations], abs=2e-3)
    links = [a.get("href") for a in doc.iter("a")]
    if only is None:
        assert (out / "sections.svg").exists() and links == ["sections.svg"]
    else:
        assert not (out / "sections.svg").exists() and links == []


def test_report_of_a_long_job_built_without_sections_svg_links_nothing(tmp_path):
    job = _rolling_job(tmp_path, length=2.0 * REPORT_MAX_SECTIONS, interval=1.0)
    out = build_job(job, tmp_path / "out", "--only", "report")
    report = (out / "report.html").read_text(encoding="utf-8")
    doc = lhtml.document_fromstring(report)
    assert not (out / "sections.svg").exists()
    assert [a.get("href") for a in doc.iter("a")] == [] and not doc.find_class("xsec")
    assert f"{2 * REPORT_MAX_SECTIONS + 1} cross-sections are not drawn: this build does not write sections.svg" in report
    out2 = build_job(job, tmp_path / "out2", "--only", "report,sections-picture")
    doc2 = lhtml.document_fromstring((out2 / "report.html").read_text(encoding="utf-8"))
    assert [a.get("href") for a in doc2.iter("a")] == ["sections.svg"] and (out2 / "sections.svg").exists()


def test_ground_beyond_the_catch_against_scipy(tmp_path):
    from scipy.interpolate import LinearNDInterpolator

    from stakeout.earthwork import ground_beyond_catch

    n, e, z = rolling_ground_csv(tmp_path / "ground.csv")
    (tmp_path / "job.toml").write_text(JOB.format(extra=SLOPES), encoding="utf-8")
    d = build_design(load_job(tmp_path / "job.toml"))
    ew = d.earthwork
    assert ew is not None and ew.slopes is not None and d.job.ground is not None
    r = ew.slopes
    rows = np.arange(len(r.side), dtype=np.int64)
    first, off, gz = ground_beyond_catch(d.job.ground, r, rows)
    # scipy's LinearNDInterpolator is linear on the same Delaunay triangulation of the points
    # (as in test_ground_wiring's rolling-ground test): the ground at each drawn vertex
    f = LinearNDInterpolator(np.c_[np.round(n, 4), np.round(e, 4)], np.round(z, 4))
    drawn = 0
    for i in rows.tolist():
        a, b = int(first[i]), int(first[i + 1])
        if np.isnan(r.catch_offset[i]):
            assert a == b
            continue
        drawn += 1
        # the road runs due east from (1000, 2000) at station 0: left (negative offset) is north
        east = 2000.0 + float(d.stakes.stations[r.station[i]])
        assert gz[a:b] == pytest.approx(f(1000.0 - off[a:b], np.full(b - a, east)), abs=5e-4)
        assert off[a] == pytest.approx(r.catch_offset[i], abs=1e-9)
        assert off[b - 1] == pytest.approx(r.reference_offset[i], abs=1e-9)
        assert gz[b - 1] == pytest.approx(r.result.ref_ground[i], abs=1e-9)
    assert drawn > 6
