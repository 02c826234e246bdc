"""plan.dxf's stakes and control points written in bulk (numpy), checked against the same
entities drawn by ezdxf itself and read back with ezdxf; the control points' size rule in
plan.dxf and plan.svg.
"""

import io
import re
import shutil
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from stakeout.design import build_design
from stakeout.jobfile import load_job
from stakeout.writers import dxf
from stakeout.writers.picture import control as picture_control

from .helpers import SAMPLES, build_job, read_rows


class _EzdxfBulk(dxf.Bulk):
    """The reference: every reserved entity drawn by ezdxf's own add_* calls, where the
    bulk writer would put it (the way plan.dxf was drawn before the bulk writer)."""

    def reserve(self, msp, count, entities):
        n, ents = entities()
        assert n * len(ents) == count
        for i in range(n):
            for ent in ents:
                tags = {code: _value(v, i) for code, v in ent.tags}
                attribs = {"layer": ent.layer}
                if ent.dxftype == "POINT":
                    msp.add_point((float(tags[10]), float(tags[20]), float(tags[30])), dxfattribs=attribs)
                elif ent.dxftype == "LINE":
                    msp.add_line((float(tags[10]), float(tags[20])), (float(tags[11]), float(tags[21])),
                                 dxfattribs=attribs)
                elif ent.dxftype == "CIRCLE":
                    msp.add_circle((float(tags[10]), float(tags[20])), float(tags[40]), dxfattribs=attribs)
                else:
                    assert ent.dxftype == "TEXT"
                    t = msp.add_text(tags[1], height=float(tags[40]), rotation=0.0,
                                     dxfattribs={**attribs, "style": tags[7]})
                    t.set_placement((float(tags[10]), float(tags[20])),
                                    align=ezdxf.enums.TextEntityAlignment.LEFT)

    def reserve_polyline(self, msp, layer, x, y):
        msp.add_lwpolyline(list(zip(x.tolist(), y.tolist())), dxfattribs={"layer": layer})

    def pieces(self, data, owner):
        yield data


def _value(v, i):
    """Row ``i`` of a bulk tag's value (a field made a block at a time: that block of one row)."""
    if isinstance(v, str):
        return v
    if callable(v):
        return bytes(v(slice(i, i + 1))[0]).replace(b"\0", b"").decode("ascii")
    return v[i]


def _with_control(tmp_path: Path, count: int, spread: float, seed: int = 3) -> Path:
    """The site road sample with ``count`` invented control points (a [control] file) around it."""
    for name in ("site_road_metric.toml",):
        shutil.copy(SAMPLES / name, tmp_path / name)
    rng = np.random.default_rng(seed)
    n = 5012345.0 + rng.uniform(-spread, spread, count)
    e = 512345.0 + rng.uniform(-spread, spread, count)
    lines = ["point,northing,easting,elevation,description"]
    lines += [f"C{i},{a:.3f},{b:.3f},,pin" for i, (a, b) in enumerate(zip(n.tolist(), e.tolist()))]
    (tmp_path / "ctrl.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    job = tmp_path / "site_road_metric.toml"
    job.write_text(job.read_text(encoding="utf-8") + '\n[control]\nfile = "ctrl.csv"\n', encoding="utf-8")
    return job


def _read(data: bytes):
    doc = ezdxf.read(io.StringIO(data.decode("utf-8")))
    assert not doc.audit().has_errors
    return doc


def _compare(d, monkeypatch) -> bytes:
    """plan.dxf of ``d`` written in bulk, asserted byte for byte equal to the ezdxf-drawn one."""
    got = dxf.plan_dxf(d)
    with monkeypatch.context() as m:
        m.setattr(dxf, "Bulk", _EzdxfBulk)
        want = dxf.plan_dxf(d)
    assert got == want
    return got


@pytest.mark.parametrize("sample", ["loop_ramp_usft.toml", "harrow_fen_bypass_control_m.toml",
                                    "orchard_vale_interchange_m.toml", "kestrel_rise_superelevation_m.toml"])
def test_bulk_entities_are_the_bytes_ezdxf_writes(sample, monkeypatch):
    # reference library: ezdxf drawing the same POINT, LINE, CIRCLE, TEXT and LWPOLYLINE entities itself
    # (one alignment, several, a widened line)
    _compare(build_design(load_job(SAMPLES / sample)), monkeypatch)


def test_bulk_control_points_are_the_bytes_ezdxf_writes(tmp_path, monkeypatch):
    # with rings (up to CONTROL_RING_MAX) and without (over it): the same bytes as ezdxf's own entities
    d = build_design(load_job(_with_control(tmp_path, 40, 300.0)))
    doc = _read(_compare(d, monkeypatch))
    msp = doc.modelspace()
    pts = msp.query('POINT[layer=="SO-CONTROL"]')
    assert len(msp.query('CIRCLE[layer=="SO-CONTROL"]')) == 40  # the occupied point is a triangle
    assert len(pts) == 40 + 1
    monkeypatch.setattr(dxf, "CONTROL_RING_MAX", 10)
    doc = _read(_compare(d, monkeypatch))
    assert len(doc.modelspace().query('CIRCLE[layer=="SO-CONTROL"]')) == 0
    assert any("40 other control points" in t.dxf.text for t in doc.modelspace().query("TEXT"))


def test_readback_of_stake_numbers(monkeypatch):
    # ezdxf reading back (a reference library): one POINT and one TEXT per stake, the number beside its
    # stake at 2/3 of its height up and right (the layout of _text as drawn before), handles unique
    d = build_design(load_job(SAMPLES / "loop_ramp_usft.toml"))
    doc = _read(dxf.plan_dxf(d))
    msp = doc.modelspace()
    pts, nums = msp.query('POINT[layer=="SO-STAKE"]'), msp.query('TEXT[layer=="SO-STAKE-NO"]')
    assert len(pts) == len(nums) == len(d.stakes)
    assert [t.dxf.text for t in nums] == d.stakes.point
    xy = np.array([(p.dxf.location.x, p.dxf.location.y) for p in pts])
    assert np.array_equal(xy, np.column_stack([d.stakes.easting, d.stakes.northing]))
    height = {t.dxf.height for t in nums}
    assert len(height) == 1
    h = height.pop() / 0.6
    ins = np.array([(t.dxf.insert.x, t.dxf.insert.y) for t in nums])
    assert np.allclose(ins - xy, 0.4 * h, rtol=0, atol=1e-9)
    assert {t.dxf.style for t in nums} == {dxf.TEXT_STYLE}
    handles = [e.dxf.handle for e in msp]
    assert len(set(handles)) == len(handles)
    assert max(int(x, 16) for x in handles) < int(doc.header["$HANDSEED"], 16)


def test_dxf_numbers_were_dropped_over_20000_stakes(tmp_path):
    """Regression: above 20,000 stakes (the old DETAIL_MAX_STAKES) the stakes were written as bare
    POINTs, their numbers and the ticks at unlabelled staked stations left out; every stake now has
    its number and every staked station its tick at any size (read back with ezdxf)."""
    import sys

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
    from corridor import corridor_job

    d = build_design(load_job(corridor_job(tmp_path / "big.toml", 21_000, elements=10, setup=False,
                                           sections=False)))
    assert len(d.stakes) > 20_000
    doc = _read(dxf.plan_dxf(d))
    msp = doc.modelspace()
    assert [t.dxf.text for t in msp.query('TEXT[layer=="SO-STAKE-NO"]')] == d.stakes.point
    assert len(msp.query('POINT[layer=="SO-STAKE"]')) == len(d.stakes)
    assert len(msp.query('LINE[layer=="SO-STATION"]')) >= np.unique(d.stakes.stations).size  # and labelled ones
    handles = [e.dxf.handle for e in msp]
    assert len(set(handles)) == len(handles)


@pytest.mark.slow
def test_control_of_50000_points_is_drawn_in_bulk_and_thinned(tmp_path):
    # 50,000 control points (a design file's survey points: 215,000 in one real file) over 4 km
    # around a 700 m road: plan.dxf holds every one (a POINT and its id, no rings over
    # CONTROL_RING_MAX), read back with ezdxf; plan.svg draws those in the view thinned, without ids,
    # and stays under 2 MB
    job = _with_control(tmp_path, 50_000, 2000.0)
    out = build_job(job, tmp_path / "out", "--only", "dxf,picture,control")
    doc = ezdxf.readfile(out / "plan.dxf")
    assert not doc.audit().has_errors
    msp = doc.modelspace()
    pts = msp.query('POINT[layer=="SO-CONTROL"]')
    assert len(pts) == 50_000 + 1  # and the setup's occupied point
    assert len(msp.query('CIRCLE[layer=="SO-CONTROL"]')) == 0
    ids = [t.dxf.text for t in msp.query('TEXT[layer=="SO-CONTROL"]')]
    assert [r["point"] for r in read_rows(out / "control.csv")] <= ["C%d" % i for i in range(50_000)] + ["BM7"]
    assert {f"C{i}" for i in range(50_000)} <= set(ids)
    svg = (out / "plan.svg").read_text(encoding="utf-8")
    assert len(svg.encode("utf-8")) < 2_000_000
    rings = re.search(r'<path class="so-control" d="([^"]*)"', svg)
    assert rings is not None
    drawn = rings.group(1).count("M")
    note = re.search(r"other control points: ([\d,]+) rings for ([\d,]+) in", svg)  # the panel wraps lines
    assert ">the view (thinned, over 200), no ids;" in svg
    assert note is not None and int(note.group(1).replace(",", "")) == drawn
    assert 0 < drawn < int(note.group(2).replace(",", "")) < 50_000
    assert ">C1<" not in svg and ">C17<" not in svg  # no ids once thinned


def test_few_other_control_points_are_drawn_and_labelled(tmp_path):
    # up to CONTROL_LABEL_MAX in the view: each ring drawn, ids placed where there is room, counted in a note
    out = build_job(_with_control(tmp_path, 12, 150.0), tmp_path / "out", "--only", "picture")
    svg = (out / "plan.svg").read_text(encoding="utf-8")
    rings = re.search(r'<path class="so-control" d="([^"]*)"', svg)
    assert rings is not None
    note = re.search(r"other control points: (\d+) drawn, (all ids shown|ids (\d+) of \d+)", svg)
    assert note is not None and int(note.group(1)) == rings.group(1).count("M") > 0
    shown = int(note.group(1)) if note.group(3) is None else int(note.group(3))
    assert sum(f">C{i}<" in svg for i in range(12)) == shown > 0
    assert picture_control.CONTROL_LABEL_MAX >= 12


@pytest.mark.parametrize("widened", [False, True])
def test_rounded_bulk_numbers_read_back_as_the_exact_drawing(widened, tmp_path, monkeypatch):
    # above EXACT_MAX_ENTITIES the numbers are written to 4 decimals: read back with ezdxf (a reference
    # library), the same entities in the same order with the same handles, layers, texts and heights,
    # every coordinate within half a unit of the fourth decimal of the exactly written drawing
    job = SAMPLES / "kestrel_rise_superelevation_m.toml" if widened else _with_control(tmp_path, 30, 300.0)
    d = build_design(load_job(job))
    exact = _read(dxf.plan_dxf(d)).modelspace()
    monkeypatch.setattr(dxf, "EXACT_MAX_ENTITIES", 0)
    rounded = _read(dxf.plan_dxf(d)).modelspace()
    assert len(exact) == len(rounded)
    attrs = ("location", "insert", "align_point", "start", "end", "center")
    for a, b in zip(exact, rounded):
        assert (a.dxftype(), a.dxf.handle, a.dxf.layer) == (b.dxftype(), b.dxf.handle, b.dxf.layer)
        if a.dxftype() == "TEXT":
            assert (a.dxf.text, a.dxf.height, a.dxf.rotation) == (b.dxf.text, b.dxf.height, b.dxf.rotation)
        if a.dxftype() == "LWPOLYLINE":
            assert np.allclose(a.get_points("xy"), b.get_points("xy"), rtol=0, atol=0.5e-4 + 1e-9)
        for name in attrs:
            if a.dxf.hasattr(name):
                assert np.allclose(tuple(a.dxf.get(name)), tuple(b.dxf.get(name)), rtol=0, atol=0.5e-4 + 1e-9)


def test_control_points_all_outside_the_view_are_counted(tmp_path):
    # control points far from the job (the view is the job's): none drawn, the note says so
    job = _with_control(tmp_path, 5, 10.0)
    text = (tmp_path / "ctrl.csv").read_text(encoding="utf-8").replace(",5012", ",5912")  # 900 km north
    (tmp_path / "ctrl.csv").write_text(text, encoding="utf-8")
    svg = (build_job(job, tmp_path / "out", "--only", "picture") / "plan.svg").read_text(encoding="utf-8")
    assert 'class="so-control"' not in svg
    assert "none of the 5 in the view" in svg
