"""The benchmark's generated jobs, at tiny sizes: they stay valid job files as stakeout grows, and the
plain loop's two element lookups agree. Only small sizes here; speed is never asserted."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np

BENCH = Path(__file__).resolve().parent.parent / "benchmarks"
sys.path.insert(0, str(BENCH))

from corridor import corridor_job, landxml_job, several_job  # noqa: E402

from stakeout.pipeline import compute  # noqa: E402


def test_rich_corridor_has_spirals_slope_stakes_and_profile_elevations(tmp_path):
    d = compute(corridor_job(tmp_path / "rich.toml", 3000, elements=20, spirals=True, profile=True, ground=True))
    assert d.profile is not None and d.earthwork is not None and d.earthwork.slopes is not None
    assert d.presentation.has_spirals
    kinds = set((tmp_path / "rich.toml").read_text().split("kind = ")[1:])
    assert any(k.startswith('"spiral"') for k in kinds)
    codes = set(d.stakes.code)
    assert {"L2-C", "R2-C", "L2-R", "R2-R"} <= codes  # catch and reference stakes on both sides
    assert d.presentation.catch_gaps[0] <= 2  # the ground covers the corridor (its ends lie on the TIN's edge)
    cl = np.asarray(d.stakes.code) == "CL"
    assert cl.any() and np.isfinite(d.stakes.elevation[cl]).all()


def test_several_alignments_each_carry_their_structures(tmp_path):
    d = compute(several_job(tmp_path / "sev.toml", 6000, alignments=3, elements=10))
    assert d.parts is not None and len(d.parts) == 3
    for p in d.parts:
        assert "CULV" in set(p.stakes.code)


def test_landxml_design_is_read_with_the_scipy_geometry(tmp_path):
    # the end of the last element as the test suite's independent maker computes it (scipy's Fresnel
    # integrals, tests/landxml_data.py), against stakeout's alignment built from the file
    from tests.landxml_data import build

    job = landxml_job(tmp_path / "design.toml", elements=40, cgpoints=200, pvis=10, interval=100.0)
    d = compute(job)
    assert len(d.job.control) == 200 and len(d.alignment.elements) == 40
    plan = [[("line", "T", 200.0), ("spiral", "SI", 80.0, None, 1500.0, t), ("arc", "C", 1500.0, 2.0, t),
             ("spiral", "SO", 80.0, 1500.0, None, t)] for t in (1, -1) * 5]
    end = build(5_000_000.0, 500_000.0, 45.0, [step for unit in plan for step in unit])[-1].end
    n, e, _ = d.alignment.evaluate(np.array([d.alignment.end_station]), np.array([0.0]))
    assert abs(n[0] - end[0]) < 1e-6 and abs(e[0] - end[1]) < 1e-6


def test_plain_loop_scan_and_bisect_write_the_same_files(tmp_path):
    job = corridor_job(tmp_path / "c.toml", 4000, elements=30)
    for out, extra in (("scan", []), ("bisect", ["--bisect"])):
        subprocess.run([sys.executable, str(BENCH / "plain_loop.py"), str(job), str(tmp_path / out), *extra],
                       check=True)
    for name in ("points.csv", "stations.csv", "setout.csv"):
        assert (tmp_path / "scan" / name).read_bytes() == (tmp_path / "bisect" / name).read_bytes()
