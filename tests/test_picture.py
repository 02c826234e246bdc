"""plan.svg and the residual picture: where things are drawn, that text never overprints,
and how large jobs are thinned.

Outside references:
- lxml parses the SVG (well-formed XML, the SVG namespace);
- the stake marks are checked against the job's own coordinates through a
  similarity fitted by least squares (numpy.linalg.lstsq): one scale, north up;
- shapely measures how far the chords drawn for a spiral stray from the true
  clothoid (points from the alignment) and whether text boxes intersect;
- the text boxes use the advance width and cap height read from the DejaVu Sans
  Mono font file with fontTools (the font the picture asks for first), or the
  font's published metrics, advance 1233/2048 em and cap height 0.729 em, from
  memory, where the file is not installed.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from lxml import etree
from shapely.geometry import LineString, Point, box
from shapely.strtree import STRtree

from stakeout.pipeline import compute
from stakeout.writers import picture
from stakeout.writers.picture import Labeller, nice_length, plan_svg, station_spacing

from .helpers import SAMPLES, build_job, write_job
from .reference import nhdot_spiral_curve as nh
from .reference import recalled_figures as recalled

SVG = "{http://www.w3.org/2000/svg}"
NUM = r"-?\d+(?:\.\d+)?"


def _font_metrics() -> tuple[float, float]:
    """(advance, cap height) of DejaVu Sans Mono in em."""
    path = Path("/usr/share/fonts/truetype/dejavu/DejaVuSansMono.ttf")
    try:
        from fontTools.ttLib import TTFont

        font = TTFont(str(path))
        upm = font["head"].unitsPerEm
        return font["hmtx"]["zero"][0] / upm, font["OS/2"].sCapHeight / upm
    except Exception:  # noqa: BLE001 - no font file or no fontTools: the published figures
        return recalled.MONO_ADVANCE.value, recalled.MONO_CAP_HEIGHT.value  # from memory


ADVANCE, CAP = _font_metrics()
DESCENDERS = set("gjpqy,()")


@pytest.fixture(scope="module")
def loop():
    d = compute(SAMPLES / "loop_ramp_usft.toml")
    return d, plan_svg(d)


def _root(data: bytes):
    return etree.fromstring(data)


def _font_sizes(root) -> dict[str, float]:
    css = "".join(root.find(f"{SVG}style").itertext())
    return {m.group(1): float(m.group(2)) for m in re.finditer(r"\.(so-\w+) text\{[^}]*font-size:(" + NUM + ")px", css)}


def _circle_centres(d: str) -> np.ndarray:
    """Centres of the circles of a path written as 'M x-r,y a r,r 0 1,0 2r,0 a ...'."""
    m = re.findall(rf"M({NUM}),({NUM})a({NUM}),", d)
    return np.array([(float(x) + float(r), float(y)) for x, y, r in m]).reshape(-1, 2)


def _fit(d, root) -> tuple[float, float, float, float]:
    """Least-squares x = a + s E, y = b - s N over every stake mark; returns (a, b, s, worst residual)."""
    paths = [p for p in root.iter(f"{SVG}path") if p.get("class") == "so-stake"]
    sp = d.stakes
    m = sp.offsets.size
    xs, ys, es, ns = [], [], [], []
    for j, p in enumerate(paths):
        c = _circle_centres(p.get("d"))
        xs.append(c[:, 0])
        ys.append(c[:, 1])
        es.append(sp.easting[j::m])
        ns.append(sp.northing[j::m])
    x, y, e, n = (np.concatenate(v) for v in (xs, ys, es, ns))
    assert x.size == len(sp)
    # unknowns a, b, s: x = a + s e ; y = b - s n
    A = np.zeros((2 * x.size, 3))
    A[: x.size, 0] = 1.0
    A[: x.size, 2] = e - e.mean()
    A[x.size:, 1] = 1.0
    A[x.size:, 2] = -(n - n.mean())
    rhs = np.concatenate([x, y])
    sol, *_ = np.linalg.lstsq(A, rhs, rcond=None)
    worst = float(np.abs(A @ sol - rhs).max())
    return float(sol[0] - sol[2] * e.mean()), float(sol[1] + sol[2] * n.mean()), float(sol[2]), worst


def test_svg_is_well_formed_and_deterministic(loop):
    d, data = loop
    root = _root(data)
    assert root.tag == f"{SVG}svg" and root.get("viewBox") == "0 0 1400 990"
    assert plan_svg(d) == data
    assert b"<script" not in data and b"href" not in data  # nothing to fetch, nothing to run


def test_stakes_are_drawn_where_they_are(loop):
    # the stake marks and the job's coordinates agree through one scale, north up, to the
    # 0.01 units the picture is written with
    d, data = loop
    _, _, s, worst = _fit(d, _root(data))
    assert s > 0 and worst < 0.011


def test_arcs_keep_their_radius(loop):
    d, data = loop
    root = _root(data)
    _, _, s, _ = _fit(d, root)
    cl = next(p for p in root.iter(f"{SVG}path") if p.get("class") == "so-cl").get("d")
    radii = sorted(float(r) / s for r in re.findall(rf"A({NUM}),", cl))
    # the loop ramp's two arcs (its job file: radii 300 and 700)
    assert radii == pytest.approx([300.0, 700.0], abs=0.02)


def test_spirals_are_drawn_within_the_chord_tolerance(tmp_path):
    # the chords drawn for each spiral stay within CHORD_TOLERANCE (0.25 units of the sheet) of
    # the clothoid: shapely's distance from dense points of the true curve to the drawn polyline
    from stakeout.alignment import Spiral

    d = compute(write_job(tmp_path, nh.JOB))  # the NH DOT spiralled curve as a job
    root = _root(plan_svg(d))
    a0, b0, s, _ = _fit(d, root)
    cl = next(p for p in root.iter(f"{SVG}path") if p.get("class") == "so-cl").get("d")
    verts = np.array([(float(x), float(y)) for x, y in re.findall(rf"[ML ]({NUM}),({NUM})", cl)])
    e_v, n_v = (verts[:, 0] - a0) / s, (b0 - verts[:, 1]) / s
    station = d.alignment.locate(n_v, e_v).station
    spirals = [el for el in d.alignment.elements if isinstance(el, Spiral)]
    assert len(spirals) == 2
    for el in spirals:
        on = (station >= el.start - 0.05) & (station <= el.end + 0.05)  # vertices are rounded to 0.01 units
        order = np.argsort(station[on])
        line = LineString(verts[on][order])
        true_s = np.linspace(el.start, el.end, 400)
        n, e, _ = d.alignment.evaluate(true_s, 0.0)
        worst = max(line.distance(Point(a0 + s * ee, b0 - s * nn)) for ee, nn in zip(e, n))
        assert worst <= picture.CHORD_TOLERANCE + 0.011


def _text_boxes(root) -> list[tuple[str, object]]:
    sizes = _font_sizes(root)
    out = []
    for g in root.iter(f"{SVG}g"):
        cls = g.get("class")
        if cls not in ("so-num", "so-lab", "so-grid"):
            continue
        size = sizes[cls]
        for t in g.iter(f"{SVG}text"):
            text = t.text or ""
            x, y = float(t.get("x")), float(t.get("y"))
            w = len(text) * ADVANCE * size
            anchor = t.get("text-anchor", "start")  # SVG's initial value
            x0 = {"start": x, "middle": x - w / 2, "end": x - w}[anchor]
            down = 0.24 * size if DESCENDERS & set(text) else 0.0
            out.append((text, box(x0, y - CAP * size, x0 + w, y + down)))
    return out


@pytest.mark.parametrize("job", ["loop_ramp_usft.toml", "site_road_metric.toml", "hillside_lane_profile_m.toml",
                                 "pi_list_local_ft.toml", "curve_table_ramp.toml"])
def test_text_never_overprints(job):
    d = compute(SAMPLES / job)
    root = _root(plan_svg(d))
    a0, b0, s, _ = _fit(d, root)
    boxes = _text_boxes(root)
    assert boxes
    shapes = [b for _, b in boxes]
    tree = STRtree(shapes)
    for i, (text, b) in enumerate(boxes):
        hits = [j for j in tree.query(b, predicate="intersects") if j != i]
        assert not hits, f"{text!r} overprints {[boxes[j][0] for j in hits]}"
    # nor does any text cover a stake
    marks = [Point(a0 + s * e, b0 - s * n) for e, n in zip(d.stakes.easting, d.stakes.northing)]
    for text, b in boxes:
        assert not any(b.contains(p) for p in marks), f"{text!r} covers a stake"
    # and text stays inside the frame
    x0, y0, x1, y1 = picture.AREA
    frame = box(x0, y0, x1, y1)
    assert all(frame.contains(b) for _, b in boxes)


def test_the_notes_count_the_numbers_shown(loop):
    d, data = loop
    root = _root(data)
    shown = sum(1 for g in root.iter(f"{SVG}g") if g.get("class") == "so-num" for _ in g.iter(f"{SVG}text"))
    texts = " ".join(root.itertext())
    m = re.search(r"point numbers: (\d+) of (\d+) shown", texts)
    assert m and int(m.group(1)) == shown and int(m.group(2)) == len(d.stakes) and shown > 0
    # every number drawn is a stake's own, once
    nums = [t.text for g in root.iter(f"{SVG}g") if g.get("class") == "so-num" for t in g.iter(f"{SVG}text")]
    assert len(set(nums)) == len(nums) and set(nums) <= set(d.stakes.point)


def test_title_block_and_furniture(loop):
    d, data = loop
    texts = " ".join(_root(data).itertext())
    assert d.job.sha256[:16] in texts and d.job.info.name in texts
    assert "US survey foot" in texts and "EPSG:2229" in texts
    assert "labels every 100 sft" in texts  # the loop ramp: 100 ft stations (common practice)
    assert "N" in texts and "200 sft" in texts  # north arrow letter and the scale bar's end
    assert "PI 1" in texts and "CF101 occupied" in texts and "CF102 backsight" in texts
    for label in ("11+00", "15+00", "PC 14+11.02", "PT 23+02.05"):
        assert label in texts


def test_large_job_is_thinned_and_says_so(tmp_path):
    import sys

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
    from corridor import corridor_job

    d = compute(corridor_job(tmp_path / "big.toml", 30_000))
    data = plan_svg(d)
    root = _root(data)
    assert len(data) < 1_500_000
    assert not [t for g in root.iter(f"{SVG}g") if g.get("class") == "so-num" for t in g.iter(f"{SVG}text")]
    texts = " ".join(root.itertext())
    assert "drawn thinned" in texts and "point numbers are not drawn" in texts
    assert "(thinned), no point numbers" in texts  # said in the title block too
    marks = sum(len(_circle_centres(p.get("d"))) for p in root.iter(f"{SVG}path") if p.get("class") == "so-stake")
    assert 0 < marks < len(d.stakes)


def test_station_spacing():
    # every 100 units by default; coarser as the sheet's scale shrinks; finer on short alignments
    assert station_spacing(1500.0, 0.8) == 100.0
    assert station_spacing(50_000.0, 0.02) == 5000.0
    assert station_spacing(120.0, 8.0) == 20.0
    for length, scale in ((1e3, 1.0), (1e5, 0.01), (300.0, 3.0), (1e6, 0.001)):
        s = station_spacing(length, scale)
        assert s * scale >= picture.STATION_LABEL_GAP
        mant = s / 10 ** math.floor(math.log10(s))
        assert round(mant, 9) in (1.0, 2.0, 5.0)


@given(st.floats(min_value=1e-6, max_value=1e9, allow_nan=False))
def test_nice_length_is_round_and_close(x):
    v = nice_length(x)
    assert v <= x * (1 + 1e-9) and v > x / 2.5 * (1 - 1e-9)
    mant = v / 10 ** math.floor(math.log10(v) + 1e-12)
    assert any(abs(mant - m) < 1e-6 for m in (1.0, 2.0, 5.0))


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.floats(0, 900), st.floats(0, 900), st.floats(1, 80), st.floats(1, 30)),
                min_size=1, max_size=60))
def test_labeller_never_overlaps(rects):
    # shapely: boxes the labeller accepted have no area in common
    lab = Labeller((0.0, 0.0, 1000.0, 1000.0))
    placed = []
    for x, y, w, h in rects:
        cands = np.array([[x, y, x + w, y + h], [x + w + 3, y, x + 2 * w + 3, y + h]])
        k = lab.place(cands)
        if k >= 0:
            placed.append(box(*cands[k]))
    for i, a in enumerate(placed):
        for b in placed[i + 1:]:
            assert a.intersection(b).area == 0.0


def test_residual_picture(tmp_path):
    # each matched shot: an arrow from its design point, the residual drawn `factor` times
    from stakeout.check import check_shots
    from stakeout.shots import parse_columns, read_shots
    from stakeout.writers.picture import residual_svg_element

    job = SAMPLES / "loop_ramp_usft.toml"
    d = compute(job)
    shots = read_shots(SAMPLES / "staked" / "loop_ramp_shots.csv", parse_columns(None), "auto", columns_given=False)
    spec = d.job.check
    r = check_shots(d.alignment, d.stakes, d.design_elevation, shots, spec.horizontal_tolerance,
                    spec.vertical_tolerance, spec.search_radius)
    svg, factor = residual_svg_element(d, shots, r, "shots.csv")
    root = etree.fromstring(svg.encode())
    texts = " ".join(root.itertext())
    assert f"x{factor:g}" in texts and "tolerance 0.05 sft" in texts
    mant = factor / 10 ** math.floor(math.log10(factor))
    assert round(mant, 9) in (1.0, 2.0, 5.0)
    # arrows run in file order within each status (the picture's docstring): the k-th arrow of a
    # status is the k-th shot of that status; its length over the shot's horizontal error is the
    # exaggeration times the picture's scale, one constant for every arrow not cut short
    ratios = []
    for path in root.iter(f"{SVG}path"):
        cls = path.get("class") or ""
        if not cls.startswith("so-arrow"):
            continue
        status = cls.split("so-status-")[1]
        segs = [tuple(map(float, g)) for g in re.findall(rf"M({NUM}),({NUM})L({NUM}),({NUM})", path.get("d"))]
        ks = [k for k in range(len(shots)) if r.status[k] == status and np.isfinite(r.horizontal_error[k])]
        assert len(segs) == len(ks)
        for (x0, y0, x1, y1), k in zip(segs, ks):
            err = float(r.horizontal_error[k])
            if err < 0.005:
                continue
            ln = math.hypot(x1 - x0, y1 - y0)
            # direction: east residual to the right, north residual up the sheet
            assert (x1 - x0) * r.d_easting[k] >= 0 and (y0 - y1) * r.d_northing[k] >= 0
            ratios.append(ln / err)
    assert len(ratios) >= 5
    ratios.sort()
    uncut = [q for q in ratios if q <= ratios[0] * 1.05]
    assert len(uncut) >= len(ratios) - 1  # at most the blunder is cut short
    assert max(uncut) / min(uncut) < 1.02


def test_plan_svg_in_a_default_build(tmp_path):
    out = build_job(SAMPLES / "loop_ramp_usft.toml", tmp_path / "out")
    assert (out / "plan.svg").read_bytes().startswith(b'<?xml version="1.0" encoding="UTF-8"?>\n<svg')
    assert not (out / "plan.png").exists()  # the matplotlib preview is asked for by name only


def test_station_equations_are_marked(tmp_path):
    # a back and a forward equation (the job of test_equations): each marked and labelled back = ahead
    job = write_job(tmp_path, (Path(__file__).resolve().parent.parent / "sample_jobs" / "site_road_metric.toml")
                    .read_text(encoding="utf-8"))
    assert "EQ" not in " ".join(_root(plan_svg(compute(job))).itertext()).split()
    from .test_equations import BACKWARD, BASE, FORWARD

    d = compute(write_job(tmp_path, BASE.format(equations=BACKWARD + FORWARD, extra=""), "eq.toml"))
    texts = " ".join(_root(plan_svg(d)).itertext())
    assert "EQ 1+105.000 BK = 1+100.000 AH" in texts and "EQ 1+300.000 BK = 2+000.000 AH" in texts


def test_control_points_labelled_once_with_their_roles():
    # the Harrow Fen sample sets out from several control points; a point occupied in one setup and
    # sighted from another gets one label naming both roles
    d = compute(SAMPLES / "harrow_fen_bypass_control_m.toml")
    texts = [t.text for t in _root(plan_svg(d)).iter(f"{SVG}text") if t.text]
    ids = {o.occupied.id for o in d.setup.occupations} | {o.backsight.id for o in d.setup.occupations
                                                         if o.backsight is not None}
    for pid in ids:
        mine = [t for t in texts if t.split()[0] == pid and ("occupied" in t or "backsight" in t)]
        assert len(mine) <= 1, mine
    both = {o.occupied.id for o in d.setup.occupations} & {o.backsight.id for o in d.setup.occupations
                                                           if o.backsight is not None}
    assert both and all(any(t.startswith(pid) and "occupied" in t and "backsight" in t for t in texts)
                        for pid in both)
