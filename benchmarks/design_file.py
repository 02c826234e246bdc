"""A real-sized invented LandXML design and the job that builds it, for measuring work done per element.

    python benchmarks/design_file.py [--elements 20000] [--stakes 100000] [--profile]

writes, in a temporary folder, one LandXML 1.2 file holding an alignment of ``--elements``
elements (tangents, clothoids and arcs: tangent, spiral in, arc, spiral out, repeated; radii
250-1500 m, turns both ways), its profile (one PVI about every 4.5 elements, 5,000 at 20,000
elements, most with a parabolic vertical curve) and ten control points per element as
``<CgPoints>`` (200,000 at 20,000 elements, in pairs 40-90 m either side of the line); and a job
reading alignment, profile and control from that one file, staked on three lines at the
interval that gives about ``--stakes`` stakes, set out from automatic setups.  It then times a
default ``stakeout build`` of it as one process (wall time and peak memory), or with
``--profile`` runs the build under cProfile and prints the 40 costliest calls by cumulative
time.  ``--keep DIR`` writes the files into DIR and keeps them.

The geometry is built by stakeout's own alignment engine (a chain of elements) and written
with its LandXML writer: the file is exactly consistent, so the reader's closure checks pass.
Nothing here is a test: speed is measured, never asserted.
"""

from __future__ import annotations

import cProfile
import io
import os
import pstats
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

PY = sys.executable

#: The staked lines of the job.
OFFSETS = ((-6.0, "EPL"), (0.0, "CL"), (6.0, "EPR"))


def design_xml(path: Path, elements: int = 20_000, seed: int = 11) -> tuple[Path, float]:
    """Write the invented design of ``elements`` elements (a multiple of four is kept exactly)
    to ``path``; returns the path and the alignment's length (m).
    """
    from stakeout.alignment import ArcSpec, ChainSpec, LineSpec, SpiralSpec, build_alignment
    from stakeout.exported import landxml_elements
    from stakeout.landxml import XPVI, XPoints, write_landxml

    rng = np.random.default_rng(seed)
    groups = max(1, elements // 4)
    specs: list[LineSpec | ArcSpec | SpiralSpec] = []
    turn = 1
    for g in range(groups):
        radius = float(rng.uniform(250.0, 1500.0))
        ls_in, ls_out = (float(v) for v in rng.uniform(20.0, 60.0, 2))
        turn = -turn if rng.random() < 0.7 else turn  # mostly alternating: the line wanders, never coils
        specs.append(LineSpec(float(rng.uniform(30.0, 120.0)), where=f"t{g}"))
        specs.append(SpiralSpec(ls_in, turn, None, radius, where=f"si{g}"))
        specs.append(ArcSpec(radius, turn, length=float(rng.uniform(30.0, 150.0)), where=f"c{g}"))
        specs.append(SpiralSpec(ls_out, turn, radius, None, where=f"so{g}"))
    a = build_alignment(ChainSpec("DESIGN", 0.0, 5_000_000.0, 500_000.0, 45.0, tuple(specs)))
    length = a.end_station - a.start_station
    # the profile: PVIs about every 4.5 elements, grades within +-4 %, parabolic curves inside the spacing
    count = max(2, round(elements / 4.0))
    st = np.linspace(a.start_station - 10.0, a.end_station + 10.0, count)
    st[1:-1] += rng.uniform(-0.2, 0.2, count - 2) * (st[1] - st[0])
    grades = rng.uniform(-0.04, 0.04, count - 1)
    el = 100.0 + np.concatenate([[0.0], np.cumsum(grades * np.diff(st))])
    gap = np.diff(st).min()
    pvis = [XPVI(float(st[0]), float(el[0]))]
    for k in range(1, count - 1):
        curve = float(rng.uniform(0.2, 0.8) * gap)
        pvis.append(XPVI(float(st[k]), float(el[k]), "para", curve, curve / 2.0, curve / 2.0)
                    if rng.random() < 0.8 else XPVI(float(st[k]), float(el[k])))
    pvis.append(XPVI(float(st[-1]), float(el[-1])))
    # control: ten points an element, in pairs either side of the line
    pairs = 5 * len(a.elements)
    cs = np.sort(rng.uniform(a.start_station, a.end_station, pairs))
    side = rng.uniform(40.0, 90.0, pairs)
    cn, ce, _ = a.evaluate(np.repeat(cs, 2), np.column_stack([-side, side]).ravel())
    names = [f"CP{i}" for i in range(1, cn.size + 1)]
    control = XPoints(names, cn, ce, 100.0 + rng.uniform(-5.0, 5.0, cn.size), ["CTRL"] * cn.size)
    data = write_landxml("m", "DESIGN", a.start_station, landxml_elements(a.elements), (), pvis, control,
                         "stakeout benchmark", "invented real-sized design", profile_name="DESIGN FG")
    path.write_bytes(data)
    return path, length


def design_job(folder: Path, elements: int = 20_000, stakes: int = 100_000) -> Path:
    """The design file and a job reading alignment, profile and control from it, staked at about
    ``stakes`` stakes on three lines from automatic setups; returns the job's path."""
    xml, length = design_xml(folder / "design.xml", elements)
    interval = max(1.0, round(length * len(OFFSETS) / stakes, 1))
    offs = ", ".join(f'{{offset = {o}, code = "{c}"}}' for o, c in OFFSETS)
    job = folder / "design_job.toml"
    job.write_text(f'''format = 1
[job]
name = "real-sized design, {elements} elements"
units = "m"
[control]
landxml = "{xml.name}"
[alignment]
landxml = "{xml.name}"
name = "DESIGN"
[profile]
landxml = "{xml.name}"
[staking]
interval = {interval}
offsets = [{offs}]
[setup]
occupied = "auto"
max_distance = 250.0
''', encoding="utf-8")
    return job


def _option(name: str, default: str) -> str:
    args = sys.argv[1:]
    return args[args.index(name) + 1] if name in args and args.index(name) + 1 < len(args) else default


def main() -> None:
    elements = int(_option("--elements", "20000"))
    stakes = int(_option("--stakes", "100000"))
    keep = _option("--keep", "")
    with tempfile.TemporaryDirectory(prefix="stakeout-design-") as d:
        folder = Path(keep) if keep else Path(d)
        folder.mkdir(parents=True, exist_ok=True)
        t = time.perf_counter()
        job = design_job(folder, elements, stakes)
        size = (folder / "design.xml").stat().st_size
        print(f"generated {elements} elements, {size / 2**20:.1f} MiB in {time.perf_counter() - t:.1f} s: {job}")
        out = folder / "out"
        if "--profile" in sys.argv:
            from stakeout.cli import app

            prof = cProfile.Profile()
            t = time.perf_counter()
            prof.enable()
            try:
                app(["build", str(job), "--out", str(out), "--force"], standalone_mode=False)
            finally:
                prof.disable()
            print(f"build under cProfile: {time.perf_counter() - t:.1f} s")
            s = io.StringIO()
            pstats.Stats(prof, stream=s).sort_stats("cumulative").print_stats(40)
            print(s.getvalue())
            return
        t = time.perf_counter()
        p = subprocess.Popen([PY, "-m", "stakeout.cli", "build", str(job), "--out", str(out), "--force"],
                             cwd=HERE.parent)
        _, status, usage = os.wait4(p.pid, 0)
        wall = time.perf_counter() - t
        print(f"default build: {wall:.1f} s wall, {usage.ru_utime + usage.ru_stime:.1f} s CPU, "
              f"peak {usage.ru_maxrss / 1024:.0f} MiB, exit {os.waitstatus_to_exitcode(status)}")


if __name__ == "__main__":
    main()
