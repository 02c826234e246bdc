"""Benchmark of the ground work: slope stakes and volumes at 10,000 stations on a 1,000,000-triangle TIN.

    python benchmarks/ground.py [--quick]

An invented hilly site: a jittered grid of about 500,000 points (707 x 707,
1 unit apart) triangulated by Delaunay into about 1,000,000 triangles; a
straight alignment across it staked at 10,000 stations, a template 12 units
wide with hinges at -6 and +6, its grade wandering 0-5 units above and below
the ground so that both cut (with a ditch) and fill occur.  Measured, each
step on its own: the triangulation, the locator's grid, the ground
elevation at every stake (3 a station), the slope stakes of both sides
(20,000 rays), the cross sections and their areas, the volumes; the peak
resident memory of the process; then the same TIN written as a LandXML
``<Surface>`` and read back (:mod:`stakeout.landxml.surface`).  ``--quick`` runs a 100,000-triangle
ground and 1,000 stations.  Nothing here is a test: speed is measured,
never asserted.
"""

from __future__ import annotations

import json
import platform
import resource
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from stakeout.ground import Ground  # noqa: E402
from stakeout.slopestakes import slope_stakes  # noqa: E402
from stakeout.volumes import average_end_volumes, cross_sections  # noqa: E402

N0, E0 = 1_840_000.0, 6_485_000.0


def _hills(n, e):
    x, y = np.asarray(e) - E0, np.asarray(n) - N0
    return 100.0 + 6.0 * np.sin(x / 53.0) * np.cos(y / 71.0) + 0.02 * x + 2.0 * np.sin((x + y) / 17.0)


def _rss_mib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def run(side: int = 707, stations: int = 10_000, seed: int = 1, landxml: bool = True) -> dict[str, float]:
    """Time each step; return the figures (seconds, counts, MiB)."""
    out: dict[str, float] = {"rss_start_mib": _rss_mib()}
    rng = np.random.default_rng(seed)
    gx, gy = np.meshgrid(np.arange(side, dtype=float), np.arange(side, dtype=float))
    e = E0 + (gx + rng.uniform(-0.3, 0.3, gx.shape)).ravel()
    n = N0 + (gy + rng.uniform(-0.3, 0.3, gy.shape)).ravel()
    z = _hills(n, e)
    del gx, gy
    t = time.perf_counter()
    g = Ground.from_points(n, e, z, "benchmark ground")
    out["triangulate_and_index_s"] = time.perf_counter() - t
    out["triangles"] = g.face_count
    out["points"] = len(n)
    out["rss_after_ground_mib"] = _rss_mib()
    # a straight alignment across the site, diagonal, staked at even spacing
    az = np.radians(30.0)
    tn, te = np.cos(az), np.sin(az)  # along
    rn, re = -te, tn  # square to the line: positive offsets this way, negative the other
    length = side * 0.8
    s = np.linspace(0.0, length, stations)
    cn = N0 + side * 0.1 + s * tn * 0.85
    ce = E0 + side * 0.1 + s * te * 0.85
    t = time.perf_counter()
    gcl = g.elevation(cn, ce)
    out["elevation_cl_s"] = time.perf_counter() - t
    grade = gcl + 4.0 * np.sin(s / 37.0) + 1.0
    offs = np.array([-6.0, 0.0, 6.0])
    pn = (cn[:, None] + offs[None, :] * rn).ravel()
    pe = (ce[:, None] + offs[None, :] * re).ravel()
    pz = (grade[:, None] - np.abs(offs)[None, :] * 0.02).ravel()
    t = time.perf_counter()
    gstake = g.elevation(pn, pe)
    out["elevation_stakes_s"] = time.perf_counter() - t
    out["stakes"] = len(pn)
    cut_fill = pz - gstake
    assert np.isfinite(cut_fill).all()
    hz = grade - 0.12
    t = time.perf_counter()
    left = slope_stakes(g, cn - 6.0 * rn, ce - 6.0 * re, hz, -rn, -re, 3.0, 2.0, 4.0, 0.6, 1.0, 300.0, 10.0)
    right = slope_stakes(g, cn + 6.0 * rn, ce + 6.0 * re, hz, rn, re, 3.0, 2.0, 4.0, 0.6, 1.0, 300.0, 10.0)
    out["slope_stakes_s"] = time.perf_counter() - t
    out["rays"] = 2 * stations
    out["catches"] = int(np.count_nonzero(~np.isnan(left.catch_dist)) + np.count_nonzero(~np.isnan(right.catch_dist)))
    t = time.perf_counter()
    k = stations
    cs = cross_sections(g, np.repeat(np.arange(k), 3), np.tile(offs, k), pz, left, np.full(k, -6.0), right,
                        np.full(k, 6.0))
    out["cross_sections_s"] = time.perf_counter() - t
    t = time.perf_counter()
    v = average_end_volumes(s[cs.ok], cs.cut_area[cs.ok], cs.fill_area[cs.ok])
    out["volumes_s"] = time.perf_counter() - t
    out["sections_with_area"] = int(cs.ok.sum())
    out["total_cut"] = float(v.cumulative_cut[-1]) if len(v.cut) else 0.0
    out["total_fill"] = float(v.cumulative_fill[-1]) if len(v.fill) else 0.0
    out["work_after_ground_s"] = (out["elevation_stakes_s"] + out["slope_stakes_s"] + out["cross_sections_s"]
                                  + out["volumes_s"])
    out["peak_rss_mib"] = _rss_mib()
    if landxml:
        out.update(_landxml_round(g))
    return out


def _landxml_round(g: Ground) -> dict[str, float]:
    """Write the TIN as a LandXML <Surface> (plain text, here) and time reading it back."""
    import tempfile

    from stakeout.landxml.surface import read_surface

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "eg.xml"
        with open(path, "w", encoding="utf-8") as fh:
            fh.write('<?xml version="1.0" encoding="UTF-8"?>\n<LandXML xmlns="http://www.landxml.org/schema/'
                     'LandXML-1.2" version="1.2"><Units><Metric linearUnit="meter"/></Units><Surfaces>'
                     '<Surface name="EG"><Definition surfType="TIN"><Pnts>\n')
            for k in range(0, len(g.n), 100_000):
                sl = slice(k, k + 100_000)
                fh.writelines(f'<P id="{i + 1}">{a:.4f} {b:.4f} {c:.4f}</P>\n' for i, a, b, c in zip(
                    range(k, k + len(g.n[sl])), g.n[sl].tolist(), g.e[sl].tolist(), g.z[sl].tolist()))
            fh.write("</Pnts><Faces>\n")
            f1 = g.faces + 1
            for k in range(0, len(f1), 100_000):
                fh.writelines(f"<F>{a} {b} {c}</F>\n" for a, b, c in f1[k:k + 100_000].tolist())
            fh.write("</Faces></Definition></Surface></Surfaces></LandXML>\n")
        size = path.stat().st_size
        t = time.perf_counter()
        surf = read_surface(path, "EG", "m", "benchmark")
        read_s = time.perf_counter() - t
        t = time.perf_counter()
        Ground.from_faces(surf.n, surf.e, surf.z, surf.faces, "benchmark surface")
        build_s = time.perf_counter() - t
    return {"landxml_mib": size / 2**20, "landxml_read_s": read_s, "landxml_ground_s": build_s,
            "peak_rss_after_landxml_mib": _rss_mib()}


def main() -> None:
    quick = "--quick" in sys.argv[1:]
    res = run(side=224 if quick else 707, stations=1_000 if quick else 10_000)
    print(f"# ground benchmark ({platform.machine()}, Python {platform.python_version()}, numpy {np.__version__})")
    for key, val in res.items():
        print(f"{key:28s} {val:,.3f}" if isinstance(val, float) else f"{key:28s} {val:,}")
    print(json.dumps(res))


if __name__ == "__main__":
    main()
