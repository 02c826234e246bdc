"""stakeout benchmark: prints a table and JSON of the figures DEVELOPERS.md records.

    python benchmarks/run.py [--quick]

It generates its own invented corridor jobs in a temporary folder and
measures, on this machine:

- engine throughput: station/offset -> N, E, azimuth (points/s), for 1M
  points in station order (as staking asks for them) and, for comparison, in
  random order (slower: every lookup and gather misses the cache);
- inverse throughput: shots -> station, offset against a 200-element alignment (shots/s);
- whole-process `stakeout build --only points,stations,setout` at 25k and
  250k points (microseconds a point, and how cost grows), beside a plain
  per-point Python program writing the same files (benchmarks/plain_loop.py);
- DXF: stakeout's plan.dxf against ezdxf's own time to add and save the same entities;
- CLI start-up: `stakeout --help` against `python -c "import numpy"`;
- latency of a small job: a default build of sample_jobs/loop_ramp_usft.toml (every
  default output, plan.svg and report.html included) against `python -c "import numpy,
  pyproj, ezdxf"`, medians of five alternating runs;
- peak memory of a 1,000,000-point CSV build;
- `stakeout check` of 1,000,000 invented shots of a corridor (``--check-shots N`` for another
  size; 100,000 with ``--quick``): the whole process (time, peak memory), and in one process
  the time of each step (reading the shots, the design, matching) and of each output with its
  bytes, and the whole check against matching plus check.csv.

    python benchmarks/run.py --quick --only check --check-shots 1000000

``--only`` runs some parts: engine, spiral, build, dxf, startup, latency, memory, check.

Nothing here is a test: speed is measured, never asserted.
"""

from __future__ import annotations

import io
import json
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))
sys.path.insert(0, str(HERE))

from corridor import corridor_job, staked_shots  # noqa: E402

PY = sys.executable
STAKEOUT = [PY, "-m", "stakeout.cli"]


def _run(cmd: list[str], ok: tuple[int, ...] = (0,)) -> tuple[float, int]:
    """Wall time (s) and peak RSS (KiB) of one child process (``ok``: its exit codes that are no failure)."""
    t = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    _, status, usage = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t
    if os.waitstatus_to_exitcode(status) not in ok:
        raise SystemExit(f"benchmark command failed: {' '.join(cmd)}")
    return wall, int(usage.ru_maxrss)


def _best(cmd: list[str], repeat: int) -> tuple[float, int]:
    runs = [_run(cmd) for _ in range(repeat)]
    return min(r[0] for r in runs), max(r[1] for r in runs)


def engine_and_inverse(tmp: Path) -> dict[str, float]:
    from stakeout.alignment import build_alignment
    from stakeout.jobfile import load_job

    a = build_alignment(load_job(corridor_job(tmp / "eng.toml", 250_000)).alignment)
    rng = np.random.default_rng(1)
    s = rng.uniform(a.start_station, a.end_station, 1_000_000)
    o = rng.uniform(-10, 10, s.size)
    a.evaluate(s[:1000], o[:1000])
    t = time.perf_counter()
    n, e, _ = a.evaluate(s, o)
    eng_random = s.size / (time.perf_counter() - t)
    order = np.argsort(s)  # station order, as the staking plan asks
    s_sorted, o_sorted = s[order], o[order]
    t = time.perf_counter()
    a.evaluate(s_sorted, o_sorted)
    eng = s.size / (time.perf_counter() - t)
    shots = 500_000
    a.locate(n[:100], e[:100])  # builds the element grid once
    t = time.perf_counter()
    a.locate(n[:shots], e[:shots])
    inv = shots / (time.perf_counter() - t)
    return {"engine_points_per_s": eng, "engine_random_order_points_per_s": eng_random,
            "inverse_shots_per_s": inv, "inverse_elements": len(a.elements)}


def spiral_engine_and_inverse() -> dict[str, float]:
    """Engine and inverse on an alignment with spirals: 100 spiral-curve-spirals
    (800 m arcs, 120 m clothoids) between tangents, 397 elements."""
    from stakeout.alignment import PIListSpec, PISpec, build_alignment

    pis = [PISpec(0.0, 0.0, where="pob")]
    n = e = 0.0
    for i in range(1, 101):
        n += 1200.0
        e += 600.0 if i % 2 else -600.0
        pis.append(PISpec(n, e, (800.0,), (None,), f"pi{i}", (120.0, 120.0)))
    pis[-1] = PISpec(n, e, where="poe")
    a = build_alignment(PIListSpec("SPIRALS", 0.0, tuple(pis)))
    rng = np.random.default_rng(3)
    s = np.sort(rng.uniform(a.start_station, a.end_station, 1_000_000))
    o = rng.uniform(-10, 10, s.size)
    a.evaluate(s[:1000], o[:1000])
    t = time.perf_counter()
    n_, e_, _ = a.evaluate(s, o)
    eng = s.size / (time.perf_counter() - t)
    pick = rng.permutation(s.size)[:500_000]
    a.locate(n_[:100], e_[:100])
    t = time.perf_counter()
    a.locate(n_[pick], e_[pick])
    inv = pick.size / (time.perf_counter() - t)
    return {"spiral_engine_points_per_s": eng, "spiral_inverse_shots_per_s": inv,
            "spiral_alignment_elements": len(a.elements)}


def whole_process(tmp: Path, repeat: int) -> dict[str, float]:
    out: dict[str, float] = {}
    for pts in (25_000, 250_000):
        job = corridor_job(tmp / f"c{pts}.toml", pts)
        from stakeout.pipeline import compute

        real = len(compute(job).stakes)
        wall, _ = _best([*STAKEOUT, "build", str(job), "--out", str(tmp / f"o{pts}"), "--force",
                         "--only", "points,stations,setout"], repeat)
        out[f"build_{pts // 1000}k_us_per_point"] = wall / real * 1e6
        out[f"build_{pts // 1000}k_points"] = real
        if pts == 250_000:
            plain, _ = _best([PY, str(HERE / "plain_loop.py"), str(job), str(tmp / "plain")], 1)
            out["plain_python_250k_us_per_point"] = plain / real * 1e6
            out["speedup_vs_plain_python"] = plain / wall
    out["growth_25k_to_250k"] = out["build_250k_us_per_point"] / out["build_25k_us_per_point"]
    return out


def dxf(tmp: Path) -> dict[str, float]:
    import ezdxf

    from stakeout.pipeline import compute
    from stakeout.writers.dxf import plan_dxf

    c = compute(corridor_job(tmp / "dxf.toml", 20_000, interval=2.0))
    t = time.perf_counter()
    data = plan_dxf(c)
    ours = time.perf_counter() - t
    src = ezdxf.read(io.StringIO(data.decode()))
    ents = list(src.modelspace())
    t = time.perf_counter()
    doc = ezdxf.new("R2013", setup=False)
    msp = doc.modelspace()
    for en in ents:  # the same entities, added with ezdxf's own calls
        kind = en.dxftype()
        if kind == "LINE":
            msp.add_line(en.dxf.start, en.dxf.end)
        elif kind == "ARC":
            msp.add_arc(en.dxf.center, en.dxf.radius, en.dxf.start_angle, en.dxf.end_angle)
        elif kind == "CIRCLE":
            msp.add_circle(en.dxf.center, en.dxf.radius)
        elif kind == "POINT":
            msp.add_point(en.dxf.location)
        elif kind == "TEXT":
            msp.add_text(en.dxf.text, height=en.dxf.height, rotation=en.dxf.rotation).set_placement(en.dxf.insert)
    doc.write(io.StringIO())
    raw = time.perf_counter() - t
    return {"dxf_entities": len(ents), "dxf_stakeout_s": ours, "dxf_ezdxf_own_s": raw, "dxf_ratio": ours / raw}


def startup(repeat: int) -> dict[str, float]:
    def med(cmd):
        return statistics.median(_run(cmd)[0] for _ in range(repeat))

    helpt = med([*STAKEOUT, "--help"])
    nump = med([PY, "-c", "import numpy"])
    return {"help_s": helpt, "import_numpy_s": nump, "help_minus_numpy_s": helpt - nump}


def latency(tmp: Path, repeat: int = 5) -> dict[str, float]:
    """A default build of the loop-ramp sample against importing its three big libraries,
    run alternately so that both see the same machine (medians)."""
    job = HERE.parent / "sample_jobs" / "loop_ramp_usft.toml"
    build = [*STAKEOUT, "build", str(job), "--out", str(tmp / "latency"), "--force"]
    imports = [PY, "-c", "import numpy, pyproj, ezdxf"]
    # byte-code caches as an installed package has them (even under PYTHONDONTWRITEBYTECODE)
    subprocess.run([PY, "-m", "compileall", "-q", str(HERE.parent / "stakeout")], check=True,
                   stdout=subprocess.DEVNULL)
    _run(build)
    b, i = [], []
    for _ in range(repeat):
        i.append(_run(imports)[0])
        b.append(_run(build)[0])
    mb, mi = statistics.median(b), statistics.median(i)
    return {"default_build_s": mb, "import_numpy_pyproj_ezdxf_s": mi, "default_build_ratio": mb / mi}


def memory(tmp: Path) -> dict[str, float]:
    job = corridor_job(tmp / "c1m.toml", 1_000_000)
    wall, rss = _run([*STAKEOUT, "build", str(job), "--out", str(tmp / "o1m"), "--force",
                      "--only", "points,stations,setout"])
    return {"build_1m_s": wall, "build_1m_peak_mib": rss / 1024}


def check(tmp: Path, shots: int) -> dict[str, float]:
    """``stakeout check`` of ``shots`` invented shots of a corridor of as many stakes: the whole
    process, then each step and output in one process (as ``pipeline.run_check`` does them)."""
    from stakeout.check import check_column_order, check_shots, job_control_points
    from stakeout.design import build_design
    from stakeout.jobfile import load_job
    from stakeout.pipeline import check_design, stake_factors
    from stakeout.shots import parse_columns, read_shots
    from stakeout.writers.checkreport import check_csv, check_txt
    from stakeout.writers.html import check_html
    from stakeout.writers.picture import residual_svg_element
    from stakeout.writers.tables import restake_csv

    job_path = corridor_job(tmp / "chk.toml", shots)
    staked = staked_shots(job_path, tmp / "shots.csv", shots)
    wall, rss = _run([*STAKEOUT, "check", str(job_path), str(staked), "--out", str(tmp / "ochk"), "--force"],
                     ok=(0, 1))
    out: dict[str, float] = {"check_shots": shots, "check_process_s": wall, "check_peak_mib": rss / 1024}
    t = time.perf_counter()

    def lap(name: str) -> None:
        nonlocal t
        now = time.perf_counter()
        out[f"check_{name}_s"] = now - t
        t = now

    job = load_job(job_path)
    spec = job.check
    assert spec is not None and spec.horizontal_tolerance is not None
    sh = read_shots(staked, parse_columns(None), "auto", columns_given=False)
    lap("read_shots")
    d = build_design(job)
    check_design(d)
    lap("design")
    control = job_control_points(job)
    radius = 10.0 * spec.horizontal_tolerance
    check_column_order(d.stakes.northing, d.stakes.easting, control, sh, radius, str(staked))
    r = check_shots(d.alignment, d.stakes, d.design_elevation, sh, spec.horizontal_tolerance,
                    spec.vertical_tolerance, radius, control, stake_factors(d), spec.ground_codes)
    lap("matching")
    sizes = {}
    sizes["csv"] = len(check_csv(d, sh, r))
    lap("csv")
    sizes["txt"] = len(check_txt(d, str(staked), sh, r))
    lap("txt")
    residuals = residual_svg_element(d, sh, r, staked.name)
    lap("residual_svg")
    sizes["html"] = len(check_html(d, str(staked), sh, r, residuals))
    lap("html")
    sizes["restake"] = len(restake_csv(d, r))
    lap("restake")
    for k, v in sizes.items():
        out[f"check_{k}_mib"] = v / 2**20
    steps = [k for k in out if k.endswith("_s") and k != "check_process_s"]
    total = sum(out[k] for k in steps)
    out["check_in_process_s"] = total
    out["check_vs_matching_and_csv"] = total / (out["check_matching_s"] + out["check_csv_s"])
    out["check_process_vs_matching_and_csv"] = wall / (out["check_matching_s"] + out["check_csv_s"])
    out["check_vs_matching"] = total / out["check_matching_s"]
    return out


TARGETS = {
    "engine_points_per_s": (">=", 2e6),
    "inverse_shots_per_s": (">=", 5e5),
    "build_250k_us_per_point": ("<=", 6.0),
    "speedup_vs_plain_python": (">=", 3.0),
    "growth_25k_to_250k": ("<=", 1.0),
    "dxf_ratio": ("<=", 1.3),
    "help_minus_numpy_s": ("<=", 0.3),
    "default_build_ratio": ("<=", 1.6),
    "build_1m_peak_mib": ("<=", 1024),
    "spiral_engine_points_per_s": (">=", 2e6),
    "spiral_inverse_shots_per_s": (">=", 5e5),
    "check_vs_matching_and_csv": ("<=", 3.0),
    "check_process_vs_matching_and_csv": ("<=", 3.0),
}


def _option(name: str, default: str) -> str:
    """The value after ``name`` on the command line, or ``default``."""
    args = sys.argv[1:]
    return args[args.index(name) + 1] if name in args and args.index(name) + 1 < len(args) else default


def main() -> None:
    quick = "--quick" in sys.argv
    repeat = 1 if quick else 3
    only = set(_option("--only", "engine,spiral,build,dxf,startup,latency,memory,check").split(","))
    shots = int(_option("--check-shots", "100000" if quick else "1000000"))
    with tempfile.TemporaryDirectory(prefix="stakeout-bench-") as d:
        tmp = Path(d)
        res: dict[str, float] = {}
        parts = {"engine": lambda: engine_and_inverse(tmp), "spiral": spiral_engine_and_inverse,
                 "build": lambda: whole_process(tmp, repeat), "dxf": lambda: dxf(tmp),
                 "startup": lambda: startup(3 if quick else 7), "latency": lambda: latency(tmp),
                 "memory": lambda: {} if quick else memory(tmp), "check": lambda: check(tmp, shots)}
        unknown = only - parts.keys()
        if unknown:
            raise SystemExit(f"--only: unknown part(s) {', '.join(sorted(unknown))}; use {', '.join(parts)}")
        for name, part in parts.items():
            if name in only:
                res.update(part())
    print(f"machine: {platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}, "
          f"numpy {np.__version__}")
    print(f"{'figure':<34} {'value':>14}  target")
    for k, v in res.items():
        tgt = TARGETS.get(k)
        mark = ""
        if tgt:
            ok = v >= tgt[1] if tgt[0] == ">=" else v <= tgt[1]
            mark = f"{tgt[0]} {tgt[1]:g}  {'met' if ok else 'NOT MET'}"
        print(f"{k:<34} {v:>14.4g}  {mark}")
    print(json.dumps({"machine": platform.machine(), "cores": os.cpu_count(), "results": res}, indent=2))


if __name__ == "__main__":
    main()
