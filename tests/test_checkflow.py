"""The check workflow of a crew, named after each case: X and Y headers
(the refusal and its --columns readings are checked by reading the
file back through the CLI); the nearest-point index against brute force
(numpy argmin) and scipy's KD-tree as a reference library.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.spatial import cKDTree
from typer.testing import CliRunner

from stakeout.check import nearest_within
from stakeout.cli import app
from stakeout.design import build_design
from stakeout.jobfile import load_job

from .helpers import SAMPLES

runner = CliRunner()
LOOP = SAMPLES / "loop_ramp_usft.toml"  # US ft, tolerances 0.05 / 0.03, control CF101 and CF102
HILL = SAMPLES / "hillside_lane_profile_m.toml"  # metres, profile, tolerances 0.015 / 0.010, HL-CP3 and HL-CP4


def _design(job: Path = LOOP):
    return build_design(load_job(job))


def _xy(d, pid: str) -> tuple[float, float]:
    i = d.stakes.point.index(pid)
    return float(d.stakes.northing[i]), float(d.stakes.easting[i])


def _write(path: Path, rows, header=None) -> Path:
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh, lineterminator="\n")
        if header:
            w.writerow(header)
        w.writerows(rows)
    return path


def _check(tmp_path: Path, rows, job: Path = LOOP, *extra: str, header=None):
    staked = _write(tmp_path / "s.csv", rows, header)
    out = tmp_path / "chk"
    r = runner.invoke(app, ["check", str(job), str(staked), "--out", str(out), *extra])
    got = list(csv.DictReader(open(out / "check.csv"))) if out.exists() else None
    return r, got, out


def _shot(pid: str, n: float, e: float, z: float | str = "", desc: str = "") -> list[str]:
    return [pid, f"{n:.4f}", f"{e:.4f}", z if isinstance(z, str) else f"{z:.4f}", desc]


def _restake_ids(out: Path) -> list[str]:
    return [r["point"] for r in csv.DictReader(open(out / "restake.csv"))]


# ---- 10. X and Y headers -------------------------------------------------------------------------------------
@pytest.mark.parametrize("header", [["PT", "X", "Y", "Z", "CODE"], ["pt", "y", "x", "z", "code"],
                                    ["point", "northing", "x"]])
def test_xy_header_is_ambiguous_and_needs_columns(tmp_path, header):
    d = _design()
    n, e = _xy(d, "1000")
    row = [["1000", f"{e:.4f}", f"{n:.4f}", "", ""][: len(header)]]
    r, got, out = _check(tmp_path, row, header=header)
    assert r.exit_code == 2 and not out.exists()
    msg = r.output.replace("\n", " ")
    assert "--columns" in msg and "easting" in msg and "northing" in msg and "line 1" in msg
    if header[1] == "X":
        assert "--columns point,easting,northing,elevation,description if X is the easting" in msg


def test_xy_header_with_columns_given_is_skipped(tmp_path):
    d = _design()
    n, e = _xy(d, "1000")
    r, got, _ = _check(tmp_path, [["1000", f"{e:.4f}", f"{n:.4f}", "", ""]], LOOP, "--columns",
                       "point,easting,northing,elevation,description", header=["PT", "X", "Y", "Z", "CODE"])
    assert r.exit_code == 0, r.output
    assert len(got) == 1 and got[0]["status"] == "ok"


# ---- the nearest-point index (issue 17 item 15) -------------------------------------------------------------------
def _brute(pn, pe, qn, qe, radius):
    """Reference: every pair (numpy argmin: the lowest index among equal distances)."""
    idx = np.full(qn.size, -1)
    dist = np.full(qn.size, np.nan)
    for k in range(qn.size):
        d = np.hypot(qn[k] - pn, qe[k] - pe)
        if d.size:
            j = int(np.argmin(d))
            if d[j] <= radius:
                idx[k], dist[k] = j, d[j]
    return idx, dist


coords = st.integers(-400, 400)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(pts=st.lists(st.tuples(coords, coords), max_size=120), qs=st.lists(st.tuples(coords, coords), max_size=60),
       unit=st.sampled_from([0.001, 0.25, 1.0, 37.5]), origin=st.sampled_from([(0.0, 0.0), (1840000.0, 6485000.0)]),
       radius=st.floats(0.01, 2000.0), sort=st.booleans())
def test_nearest_within_equals_brute_force(pts, qs, unit, origin, radius, sort):
    # Integer lattices make many exact ties (equal distances): the lowest index must win, as argmin.
    p = np.array(pts, dtype=float).reshape(-1, 2) * unit
    if sort:
        p = p[np.lexsort((p[:, 1], p[:, 0]))]
    q = np.array(qs, dtype=float).reshape(-1, 2) * unit / 2
    pn, pe = p[:, 0] + origin[0], p[:, 1] + origin[1]
    qn, qe = q[:, 0] + origin[0], q[:, 1] + origin[1]
    r = radius * unit
    got_i, got_d = nearest_within(pn, pe, qn, qe, r)
    ref_i, ref_d = _brute(pn, pe, qn, qe, r)
    assert got_i.tolist() == ref_i.tolist()
    assert np.array_equal(got_d, ref_d, equal_nan=True)


def test_nearest_within_against_scipy_kdtree_on_a_corridor():
    # Reference library: scipy's KD-tree (distance_upper_bound) on 200k corridor points, 5000 shots
    # near them, strays and far-off shots, with a small and a large search radius.
    d = np.arange(200_000) // 5 * 0.7
    off = (np.arange(200_000) % 5 - 2) * 3.5
    az = np.radians(60.0 + d / 500.0)
    pn = 5_000_000.0 + np.cumsum(np.cos(az)) * 0.7 / 5 - off * np.sin(az)
    pe = 500_000.0 + np.cumsum(np.sin(az)) * 0.7 / 5 + off * np.cos(az)
    rng = np.random.default_rng(7)
    k = rng.choice(pn.size, 5000, replace=False)
    qn = np.r_[pn[k] + rng.normal(0, 0.3, k.size), rng.uniform(pn.min() - 500, pn.max() + 500, 500)]
    qe = np.r_[pe[k] + rng.normal(0, 0.3, k.size), rng.uniform(pe.min() - 500, pe.max() + 500, 500)]
    tree = cKDTree(np.column_stack([pn, pe]))
    for radius in (0.5, 250.0):
        got_i, got_d = nearest_within(pn, pe, qn, qe, radius)
        ref_d, ref_i = tree.query(np.column_stack([qn, qe]), distance_upper_bound=radius)
        found = np.isfinite(ref_d)
        assert np.array_equal(got_i >= 0, found)
        np.testing.assert_allclose(got_d[found], ref_d[found], rtol=0, atol=1e-9)
