"""plan.dxf read back with ezdxf and checked against the engine and an
independent construction."""

import math
from pathlib import Path

import ezdxf
import numpy as np
import pytest
from typer.testing import CliRunner

from stakeout.alignment import Arc, Line
from stakeout.cli import app
from stakeout.jobfile import load_job
from stakeout.design import build_design as compute
from stakeout.writers.dxf import dxf_angle, plan_dxf

from .helpers import SAMPLES, arc_end_by_rotation
from .reference import dxf_insunits

runner = CliRunner()


def _read(data: bytes):
    import io

    doc = ezdxf.read(io.StringIO(data.decode("utf-8")))
    auditor = doc.audit()
    assert not auditor.has_errors, [str(e) for e in auditor.errors]
    return doc


@pytest.mark.parametrize("sample, units", [("loop_ramp_usft.toml", "us_ft"), ("site_road_metric.toml", "m"),
                                           ("pi_list_local_ft.toml", "ft"), ("curve_table_ramp.toml", "us_ft")])
def test_readback(sample, units, tmp_path):
    # ezdxf reading back; DXF reference: $INSUNITS 2 feet, 6 metres, 21 US survey feet
    # (tests/reference/dxf_insunits.py)
    insunits = dxf_insunits.BY_UNIT[units].value
    assert load_job(SAMPLES / sample).info.unit.key == units
    # ezdxf's own table of unit names agrees (a reference library)
    assert ezdxf.units.unit_name(insunits) == {"ft": "Feet", "m": "Meters", "us_ft": "USSurveyFeet"}[units]
    out = tmp_path / "o"
    assert runner.invoke(app, ["build", str(SAMPLES / sample), "--out", str(out), "--only", "dxf"]).exit_code == 0
    doc = ezdxf.readfile(out / "plan.dxf")
    assert not doc.audit().has_errors
    assert doc.header["$INSUNITS"] == insunits
    assert doc.dxfversion >= "AC1027"  # R2013 or later
    c = compute(load_job(SAMPLES / sample))
    msp = doc.modelspace()
    arcs = msp.query('ARC[layer=="SO-CL"]')
    engine_arcs = [el for el in c.alignment.elements if isinstance(el, Arc)]
    assert len(arcs) == len(engine_arcs)
    for a, el in zip(arcs, engine_arcs):
        assert a.dxf.radius == pytest.approx(el.radius, abs=1e-9)
        # independent centre: rotate about the centre built from the start tangent
        _, _, cn, ce = arc_end_by_rotation(el.start_northing, el.start_easting, el.start_azimuth,
                                           el.radius, el.delta, el.turn)
        assert (a.dxf.center.x, a.dxf.center.y) == pytest.approx((ce, cn), abs=1e-6)
    lines = msp.query('LINE[layer=="SO-CL"]')
    assert len(lines) == sum(isinstance(el, Line) for el in c.alignment.elements)
    pts = msp.query('POINT[layer=="SO-STAKE"]')
    assert len(pts) == len(c.stakes)
    got = np.array([(p.dxf.location.x, p.dxf.location.y) for p in pts])
    assert np.allclose(got, np.column_stack([c.stakes.easting, c.stakes.northing]), atol=1e-9)
    labels = [t.dxf.text for t in msp.query('TEXT[layer=="SO-STAKE-NO"]')]
    assert labels == c.stakes.point
    keys = " ".join(t.dxf.text for t in msp.query('TEXT[layer=="SO-KEYPOINT"]'))
    for f in ("POB", "POE"):
        assert f in keys
    if c.job.setup is not None:
        occ = c.job.setup.occupied
        bl = list(msp.query('LINE[layer=="SO-BACKSIGHT"]'))
        assert len(bl) == 1
        assert (bl[0].dxf.start.x, bl[0].dxf.start.y) == pytest.approx((occ.easting, occ.northing), abs=1e-9)
        az = math.degrees(math.atan2(bl[0].dxf.end.x - occ.easting, bl[0].dxf.end.y - occ.northing)) % 360
        assert az == pytest.approx(c.setup.backsight_azimuth, abs=1e-9)
        radials = msp.query('LINE[layer=="SO-RADIAL"]')
        assert len(radials) == len(c.stakes)
        ends = np.array([(ln.dxf.end.x, ln.dxf.end.y) for ln in radials])
        assert np.allclose(ends, np.column_stack([c.stakes.easting, c.stakes.northing]), atol=1e-9)
        if c.job.setup.backsight is not None:
            assert (bl[0].dxf.end.x, bl[0].dxf.end.y) == pytest.approx(
                (c.job.setup.backsight.easting, c.job.setup.backsight.northing), abs=1e-9)
    text = " ".join(t.dxf.text for t in msp.query('TEXT[layer=="SO-TABLE"]'))
    assert "CURVE DATA" in text and c.job.info.name in text


@pytest.mark.parametrize("az0", [45.0, 135.0, 225.0, 315.0])
@pytest.mark.parametrize("turn", [1, -1])
def test_arc_angle_conventions(az0, turn):
    # Survey azimuth (clockwise from north) vs DXF angle (counter-clockwise from east):
    # the DXF arc swept counter-clockwise from start_angle to end_angle must pass through
    # the engine's arc midpoint and end on the element's ends, in every quadrant.
    from stakeout.jobfile import parse_job

    job = parse_job(f"""
format = 1
[job]
units = "m"
[alignment]
start = {{station = 0, northing = 1000.0, easting = 2000.0}}
azimuth = {az0}
[[alignment.element]]
kind = "line"
length = 10
[[alignment.element]]
kind = "arc"
radius = 50
delta = 70
turn = "{'right' if turn > 0 else 'left'}"
[staking]
interval = 10
""".encode())
    c = compute(job)
    doc = _read(plan_dxf(c))
    (arc,) = doc.modelspace().query('ARC[layer=="SO-CL"]')
    el = c.alignment.elements[1]
    ends = {tuple(np.round(p, 6)) for p in ((el.start_easting, el.start_northing), (el.end_easting, el.end_northing))}
    got = {tuple(np.round((p.x, p.y), 6)) for p in (arc.start_point, arc.end_point)}
    assert got == ends
    sweep = (arc.dxf.end_angle - arc.dxf.start_angle) % 360
    assert sweep == pytest.approx(70.0)
    mid_ang = math.radians(arc.dxf.start_angle + sweep / 2)
    mid = (arc.dxf.center.x + 50 * math.cos(mid_ang), arc.dxf.center.y + 50 * math.sin(mid_ang))
    n, e, _ = c.alignment.evaluate(np.array([el.start + el.length / 2]))
    assert mid == pytest.approx((float(e[0]), float(n[0])), abs=1e-6)
    assert dxf_angle(0.0) == 90.0 and dxf_angle(90.0) == 0.0 and dxf_angle(180.0) == 270.0


def test_offset_arcs_concentric():
    c = compute(load_job(SAMPLES / "site_road_metric.toml"))
    doc = _read(plan_dxf(c))
    offs = doc.modelspace().query('ARC[layer=="SO-OFFSET"]')
    arcs = [el for el in c.alignment.elements if isinstance(el, Arc)]
    assert len(offs) == 2 * len(arcs)
    radii = sorted(round(a.dxf.radius, 6) for a in offs)
    want = sorted(round(el.radius + s * 3.5, 6) for el in arcs for s in (-1, 1))
    assert radii == want


@pytest.mark.slow
def test_png_preview(tmp_path):
    # matplotlib is in the [test] extra: without it the build fails and so does this test
    out = tmp_path / "o"
    assert runner.invoke(app, ["build", str(SAMPLES / "site_road_metric.toml"), "--out", str(out),
                               "--only", "preview"]).exit_code == 0
    assert (out / "plan.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def _has_avx512() -> bool:
    try:
        from numpy._core._multiarray_umath import __cpu_features__
    except ImportError:  # pragma: no cover - older numpy
        return False
    return bool(__cpu_features__.get("AVX512_SKX"))


@pytest.mark.skipif(not _has_avx512(), reason="needs a processor with AVX-512 to compare numpy's two trig kernels")
def test_plan_dxf_same_bytes_whichever_trig_kernel_numpy_picks(tmp_path):
    """Regression: plan.dxf of the loop ramp differed between two machines.

    numpy picks its vectorised sine/arctangent kernels by processor (AVX-512 or
    not) and they differ in the last bits; label rotations written in full
    carried that noise into the file.  Build with numpy's AVX-512 kernels
    switched off (NPY_DISABLE_CPU_FEATURES, numpy's own switch) and compare.
    """
    import os
    import subprocess
    import sys

    job = Path(__file__).resolve().parent.parent / "sample_jobs" / "loop_ramp_usft.toml"
    outs = []
    for disabled in ("", "X86_V4"):
        env = dict(os.environ, NPY_DISABLE_CPU_FEATURES=disabled)
        out = tmp_path / (disabled or "all")
        r = subprocess.run([sys.executable, "-m", "stakeout.cli", "build", str(job), "--out", str(out), "--only", "dxf"],
                           env=env, capture_output=True, text=True)
        assert r.returncode == 0, r.stderr
        outs.append((out / "plan.dxf").read_bytes())
    assert outs[0] == outs[1]
