"""stakeout benchmark: prints a table and JSON of the figures DEVELOPERS.md records.

    python benchmarks/run.py [--quick] [--runs N] [--only PART,...] [size options]

It generates its own invented jobs in a temporary folder (benchmarks/corridor.py) and
measures, on this machine. Two programs compared as whole processes run alternately,
round after round (``--runs N``, default 5, 3 with ``--quick``), so both see the same
machine; the figures are the median of each and the median of the pairwise ratios.

- engine throughput: station/offset -> N, E, azimuth (points/s), for 1M points in station
  order (as staking asks for them) and, for comparison, in random order;
- inverse throughput: shots -> station, offset against a 200-element alignment (shots/s);
  the same two on an alignment with spirals (part ``spiral``);
- ``build``: ``stakeout build --only points,stations,setout`` (the CSV path) at 25k and 250k
  stakes against a plain per-point Python program writing the same files
  (benchmarks/plain_loop.py), both plain programs: the one that scans the elements for each
  point and the one that finds them by binary search;
- ``corridor``: the default build of a rich corridor (spirals, a profile, superelevation, a
  taper, a ground TIN with slope stakes) against its CSV path, and its peak memory, at
  ``--stakes`` (1,000,000; 100,000 with ``--quick``); ``--corridor-without-ground``: the same
  corridor without the ground and slope stakes;
- ``outputs``: the same corridor built in one child process per size with every output's
  writer timed (``Output.chunks`` wrapped from here; stakeout's code is not changed) with
  its bytes and the growth of its peak memory, at ``--sizes`` (100000,1000000;
  10000,100000 with ``--quick``), and each output's scaling exponent between the sizes
  (time ~ stakes^k: 1 is linear); an output rendered in another process (were the build to hand
  outputs to one) is not seen by the wrapper and shows in the ``rest`` figure;
- ``several``: a job of three alignments (``[[alignment]]``) each with a structures list
  (``staking.points``), default build against CSV path, at ``--several-stakes`` (100,000;
  30,000 with ``--quick``);
- ``landxml``: a generated design file (``--landxml-elements`` elements, 20,000 by default,
  2,000 with ``--quick``; ten CgPoints and a quarter of a PVI an element: 200,000 CgPoints
  and 5,000 PVIs at full size) used for alignment, profile and control, staked every 50 m on
  three lines: loading the job, the default build (time, peak memory) against the CSV path;
- ``dxf``: stakeout's plan.dxf against ezdxf's own time to add and save the same entities;
- ``startup``: `stakeout --help` against `python -c "import numpy"`;
- ``latency``: a default build of sample_jobs/loop_ramp_usft.toml (every default output)
  against `python -c "import numpy, pyproj, ezdxf"`;
- ``memory``: peak memory of a 1,000,000-point CSV build (not with ``--quick``);
- ``huge``: the default build of the rich corridor without its ground (with ``--huge-ground``:
  with it) at ``--huge-stakes`` (5,000,000): time and peak memory, one run (with ``--quick``
  only when ``--huge-stakes`` is given);
- ``check``: `stakeout check` of 1,000,000 invented shots of a corridor (``--check-shots N``;
  100,000 with ``--quick``): the whole process (time, peak memory), and in one process
  the time of each step and output with its bytes, and the whole check against matching
  plus check.csv.

    python benchmarks/run.py --quick --only check --check-shots 1000000

``--only`` runs some parts: engine, spiral, build, corridor, outputs, several, landxml, dxf,
startup, latency, memory, huge, check.

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

from corridor import corridor_job, landxml_job, several_job, staked_shots  # noqa: E402

PY = sys.executable
STAKEOUT = [PY, "-m", "stakeout.cli"]
CSV_PATH = ["--only", "points,stations,setout"]


def _run(cmd: list[str], ok: tuple[int, ...] = (0,)) -> tuple[float, int]:
    """Wall time (s) and peak RSS (KiB) of one child process (``ok``: its exit codes that are no failure)."""
    t = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    _, status, usage = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t
    if os.waitstatus_to_exitcode(status) not in ok:
        raise SystemExit(f"benchmark command failed: {' '.join(cmd)}")
    return wall, int(usage.ru_maxrss)


def _alternate(cmds: dict[str, list[str]], runs: int, warm: bool = True) -> dict[str, list[tuple[float, int]]]:
    """Run the programs in turn, round after round, ``runs`` rounds (first one round not counted
    when ``warm``: caches and byte code); each program's (wall s, peak KiB) per round."""
    if warm:
        for cmd in cmds.values():
            _run(cmd)
    res: dict[str, list[tuple[float, int]]] = {k: [] for k in cmds}
    for _ in range(runs):
        for k, cmd in cmds.items():
            res[k].append(_run(cmd))
    return res


def _medians(res: dict[str, list[tuple[float, int]]], prefix: str, base: str) -> dict[str, float]:
    """Each program's median time and largest peak, and the median over the rounds of its time over
    ``base``'s time in the same round (``<prefix>_<name>_vs_<base>``)."""
    out: dict[str, float] = {}
    for k, runs in res.items():
        out[f"{prefix}_{k}_s"] = statistics.median(r[0] for r in runs)
        out[f"{prefix}_{k}_peak_mib"] = max(r[1] for r in runs) / 1024
        if k != base:
            out[f"{prefix}_{k}_vs_{base}"] = statistics.median(a[0] / b[0] for a, b in zip(runs, res[base]))
    return out


def _build(job: Path, out: Path, *only: str) -> list[str]:
    return [*STAKEOUT, "build", str(job), "--out", str(out), "--force", *only]


def _stakes(job: Path) -> int:
    from stakeout.pipeline import compute

    d = compute(job)
    return sum(len(p.stakes) for p in d.parts or (d,))


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


def whole_process(tmp: Path, runs: int) -> dict[str, float]:
    """The CSV path against both plain programs, alternating; the speed-ups are medians of the
    pairwise ratios (plain time over stakeout's time in the same round)."""
    out: dict[str, float] = {}
    for pts in (25_000, 250_000):
        job = corridor_job(tmp / f"c{pts}.toml", pts)
        real = _stakes(job)
        k = f"{pts // 1000}k"
        res = _alternate({"csv": _build(job, tmp / f"o{pts}", *CSV_PATH),
                          "plain_scan": [PY, str(HERE / "plain_loop.py"), str(job), str(tmp / "plain")],
                          "plain_bisect": [PY, str(HERE / "plain_loop.py"), str(job), str(tmp / "plainb"), "--bisect"]},
                         runs, warm=pts < 100_000)
        med = _medians(res, f"build_{k}", "csv")
        out[f"build_{k}_points"] = real
        out[f"build_{k}_us_per_point"] = med[f"build_{k}_csv_s"] / real * 1e6
        out[f"plain_scan_{k}_us_per_point"] = med[f"build_{k}_plain_scan_s"] / real * 1e6
        out[f"plain_bisect_{k}_us_per_point"] = med[f"build_{k}_plain_bisect_s"] / real * 1e6
        out[f"speedup_{k}_vs_plain_scan"] = med[f"build_{k}_plain_scan_vs_csv"]
        out[f"speedup_{k}_vs_plain_bisect"] = med[f"build_{k}_plain_bisect_vs_csv"]
    out["growth_25k_to_250k"] = out["build_250k_us_per_point"] / out["build_25k_us_per_point"]
    return out


def _default_against_csv(job: Path, tmp: Path, name: str, runs: int) -> dict[str, float]:
    """A default build of ``job`` against its CSV path, alternating."""
    res = _alternate({"default": _build(job, tmp / f"o_{name}"), "csv": _build(job, tmp / f"o_{name}_csv", *CSV_PATH)},
                     runs, warm=False)
    out = {f"{name}_stakes": float(_stakes(job))}
    out.update(_medians(res, name, "csv"))
    return out


def corridor(tmp: Path, stakes: int, runs: int) -> dict[str, float]:
    """The rich corridor (spirals, profile, superelevation, taper, ground TIN, slope stakes):
    default build against its CSV path."""
    ground = "--corridor-without-ground" not in sys.argv
    job = corridor_job(tmp / "rich.toml", stakes, spirals=True, profile=True, ground=ground)
    return {"corridor_with_ground": float(ground), **_default_against_csv(job, tmp, "corridor", runs)}


def several(tmp: Path, stakes: int, runs: int) -> dict[str, float]:
    """Three alignments, each with a structures list: default build against its CSV path."""
    return _default_against_csv(several_job(tmp / "several.toml", stakes), tmp, "several", runs)


def landxml(tmp: Path, elements: int, runs: int) -> dict[str, float]:
    """The generated design file: loading the job (in a child process) and the default build against the CSV path."""
    job = landxml_job(tmp / "design.toml", elements, cgpoints=10 * elements, pvis=max(2, elements // 4))
    load = [PY, "-c", f"import sys; sys.path.insert(0, {str(HERE.parent)!r}); from stakeout.jobfile import load_job; "
            f"load_job({str(job)!r})"]
    imports = [PY, "-c", f"import sys; sys.path.insert(0, {str(HERE.parent)!r}); import stakeout.jobfile"]
    out = {"landxml_elements": float(elements), "landxml_mib": job.with_suffix(".xml").stat().st_size / 2**20}
    res = _alternate({"load": load, "imports": imports}, runs)
    out["landxml_load_job_s"] = statistics.median(a[0] - b[0] for a, b in zip(res["load"], res["imports"]))
    out.update(_default_against_csv(job, tmp, "landxml", runs))
    return out


def huge(tmp: Path, stakes: int) -> dict[str, float]:
    """The rich corridor at ``stakes`` without its ground (``--huge-ground``: with it): one default build,
    time and peak memory. Without the ground because the ground's locator grid grows with the square of
    a corridor's length (DEVELOPERS.md, "Performance"): 1M stakes with it already take 8 GiB."""
    job = corridor_job(tmp / "huge.toml", stakes, spirals=True, profile=True, ground="--huge-ground" in sys.argv)
    wall, rss = _run(_build(job, tmp / "o_huge"))
    return {"huge_stakes": float(_stakes(job)), "huge_default_s": wall, "huge_default_peak_mib": rss / 1024}


def _profile_build(job: str, out: str) -> None:
    """(Child process.) ``pipeline.run_build`` of ``job`` with each output's writer timed: prints JSON of
    the load, the design, and each output's seconds, bytes and growth of the peak resident memory."""
    import resource

    from stakeout import outputs, pipeline

    rec: dict[str, dict[str, float]] = {}
    hwm = Path("/proc/self/clear_refs")
    top = [0.0]  # the peak over every step (each step resets the kernel's)

    def peak() -> float:
        return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024

    def reset() -> float:  # the peak so far forgotten (Linux): each step's own peak is measured
        try:
            hwm.write_text("5")
            for line in Path("/proc/self/status").read_text().splitlines():
                if line.startswith("VmRSS:"):
                    return int(line.split()[1]) / 1024
        except OSError:
            pass
        return peak()

    def vmhwm() -> float:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024
        return peak()

    def timed(name: str, fn):
        def wrapper(*args, **kwargs):
            before = reset()
            t = time.perf_counter()
            value = fn(*args, **kwargs)
            r = rec.setdefault(name, {"s": 0.0, "bytes": 0.0, "mib_over": 0.0})
            r["s"] += time.perf_counter() - t
            high = vmhwm()
            top[0] = max(top[0], high)
            r["mib_over"] = max(r["mib_over"], high - before)
            if isinstance(value, bytes):
                r["bytes"] += len(value)
            return value
        return wrapper

    def timed_pieces(fn):  # an output's pieces: the time spent making each (not writing it), their bytes
        def wrapper(self, d, done):
            before = reset()
            r = rec.setdefault(self.filename, {"s": 0.0, "bytes": 0.0, "mib_over": 0.0})
            it = iter(fn(self, d, done))
            while True:
                t = time.perf_counter()
                try:
                    c = next(it)
                except StopIteration:
                    r["s"] += time.perf_counter() - t
                    break
                r["s"] += time.perf_counter() - t
                r["bytes"] += len(c)
                yield c
            high = vmhwm()
            top[0] = max(top[0], high)
            r["mib_over"] = max(r["mib_over"], high - before)
        return wrapper

    outputs.Output.chunks = timed_pieces(outputs.Output.chunks)  # type: ignore[method-assign]
    from stakeout import beside

    beside.MIN_STAKES = 10**12  # every output timed here, in this one process
    pipeline.load_job = timed("(load job)", pipeline.load_job)
    pipeline.build_design = timed("(design)", pipeline.build_design)
    t = time.perf_counter()
    pipeline.run_build(job, out, None, True)
    total = time.perf_counter() - t
    print(json.dumps({"total_s": total, "cpu_s": time.process_time(), "peak_mib": max(top[0], vmhwm()), "steps": rec}))


def per_output(tmp: Path, sizes: list[int]) -> dict[str, float]:
    """Each output's time and bytes in a default build of the rich corridor at each size (one child
    process a size), and the scaling exponents between the first and the last size."""
    out: dict[str, float] = {}
    got = {}
    for size in sizes:
        job = corridor_job(tmp / f"out{size}.toml", size, spirals=True, profile=True, ground=True)
        stakes = _stakes(job)
        p = subprocess.run([PY, __file__, "--profile-build", str(job), str(tmp / f"out{size}")], check=True,
                           capture_output=True, text=True)
        r = json.loads(p.stdout.strip().splitlines()[-1])
        got[size] = (stakes, r)
        k = _size(size)
        out[f"outputs_{k}_stakes"] = stakes
        out[f"outputs_{k}_total_s"] = r["total_s"]
        out[f"outputs_{k}_cpu_s"] = r["cpu_s"]
        out[f"outputs_{k}_peak_mib"] = r["peak_mib"]
        for name, v in r["steps"].items():
            out[f"out_{k}_{name}_s"] = v["s"]
            out[f"out_{k}_{name}_mib"] = v["bytes"] / 2**20
            out[f"out_{k}_{name}_peak_over_mib"] = v["mib_over"]
        out[f"outputs_{k}_rest_s"] = r["total_s"] - sum(v["s"] for v in r["steps"].values())
    if len(sizes) > 1:
        (n0, r0), (n1, r1) = got[sizes[0]], got[sizes[-1]]
        span = np.log(n1 / n0)
        for name in r1["steps"]:
            a, b = r0["steps"].get(name), r1["steps"][name]
            if a and a["s"] > 0 and b["s"] > 0:
                out[f"exp_{name}_time"] = float(np.log(b["s"] / a["s"]) / span)
            if a and a["bytes"] > 0 and b["bytes"] > 0:
                out[f"exp_{name}_bytes"] = float(np.log(b["bytes"] / a["bytes"]) / span)
        out["exp_total_time"] = float(np.log(r1["total_s"] / r0["total_s"]) / span)
        out["exp_peak_memory"] = float(np.log(r1["peak_mib"] / r0["peak_mib"]) / span)
    return out


def _size(n: int) -> str:
    return f"{n // 1_000_000}m" if n % 1_000_000 == 0 else f"{n // 1000}k"


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


def startup(runs: int) -> dict[str, float]:
    res = _alternate({"help": [*STAKEOUT, "--help"], "numpy": [PY, "-c", "import numpy"]}, runs)
    out = _medians(res, "startup", "numpy")
    return {"help_s": out["startup_help_s"], "import_numpy_s": out["startup_numpy_s"],
            "help_minus_numpy_s": statistics.median(a[0] - b[0] for a, b in zip(res["help"], res["numpy"]))}


def latency(tmp: Path, runs: int) -> dict[str, float]:
    """A default build of the loop-ramp sample against importing its three big libraries,
    run alternately so that both see the same machine (medians)."""
    job = HERE.parent / "sample_jobs" / "loop_ramp_usft.toml"
    # byte-code caches as an installed package has them (even under PYTHONDONTWRITEBYTECODE)
    subprocess.run([PY, "-m", "compileall", "-q", str(HERE.parent / "stakeout")], check=True,
                   stdout=subprocess.DEVNULL)
    res = _alternate({"build": _build(job, tmp / "latency"), "imports": [PY, "-c", "import numpy, pyproj, ezdxf"]},
                     runs)
    out = _medians(res, "latency", "imports")
    return {"default_build_s": out["latency_build_s"], "import_numpy_pyproj_ezdxf_s": out["latency_imports_s"],
            "default_build_ratio": out["latency_build_vs_imports"]}


def memory(tmp: Path) -> dict[str, float]:
    job = corridor_job(tmp / "c1m.toml", 1_000_000)
    wall, rss = _run(_build(job, tmp / "o1m", *CSV_PATH))
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
    "speedup_250k_vs_plain_scan": (">=", 5.0),
    "speedup_250k_vs_plain_bisect": (">=", 5.0),
    "growth_25k_to_250k": ("<=", 1.0),
    "corridor_default_vs_csv": ("<=", 3.0),
    "corridor_default_peak_mib": ("<=", 1024),
    "landxml_default_s": ("<=", 60.0),
    "dxf_ratio": ("<=", 1.3),
    "help_minus_numpy_s": ("<=", 0.3),
    "default_build_ratio": ("<=", 1.6),
    "build_1m_peak_mib": ("<=", 1024),
    "huge_default_peak_mib": ("<=", 1024),
    "spiral_engine_points_per_s": (">=", 2e6),
    "spiral_inverse_shots_per_s": (">=", 5e5),
    "check_vs_matching_and_csv": ("<=", 3.0),
    "check_process_vs_matching_and_csv": ("<=", 3.0),
}


def _option(name: str, default: str) -> str:
    """The value after ``name`` on the command line, or ``default``."""
    args = sys.argv[1:]
    return args[args.index(name) + 1] if name in args and args.index(name) + 1 < len(args) else default


def _output_table(res: dict[str, float], sizes: list[int]) -> None:
    """Each output's seconds and MiB at each size, and its scaling exponents, one row an output."""
    ks = [_size(n) for n in sizes]
    names = list(dict.fromkeys(k[len(f"out_{ks[-1]}_"):-2] for k in res
                               if k.startswith(f"out_{ks[-1]}_") and k.endswith("_s")))
    head = "".join(f"{'s ' + k:>9}{'MiB ' + k:>10}{'+peak ' + k:>12}" for k in ks)
    print(f"{'output':<22}{head}{'k time':>8}{'k bytes':>8}")
    for name in names:
        row = "".join(f"{res.get(f'out_{k}_{name}_s', float('nan')):>9.3f}{res.get(f'out_{k}_{name}_mib', float('nan')):>10.2f}"
                      f"{res.get(f'out_{k}_{name}_peak_over_mib', float('nan')):>12.1f}" for k in ks)
        print(f"{name:<22}{row}{res.get(f'exp_{name}_time', float('nan')):>8.2f}"
              f"{res.get(f'exp_{name}_bytes', float('nan')):>8.2f}")


def main() -> None:
    if "--profile-build" in sys.argv:
        _profile_build(_option("--profile-build", ""), sys.argv[sys.argv.index("--profile-build") + 2])
        return
    quick = "--quick" in sys.argv
    runs = int(_option("--runs", "3" if quick else "5"))
    only = set(_option("--only", "engine,spiral,build,corridor,outputs,several,landxml,dxf,startup,latency,memory,"
                                 "huge,check").split(","))
    shots = int(_option("--check-shots", "100000" if quick else "1000000"))
    stakes = int(_option("--stakes", "100000" if quick else "1000000"))
    sizes = [int(v) for v in _option("--sizes", "10000,100000" if quick else "100000,1000000").split(",")]
    several_stakes = int(_option("--several-stakes", "30000" if quick else "100000"))
    elements = int(_option("--landxml-elements", "2000" if quick else "20000"))
    huge_stakes = int(_option("--huge-stakes", "5000000"))
    with tempfile.TemporaryDirectory(prefix="stakeout-bench-") as d:
        tmp = Path(d)
        res: dict[str, float] = {}
        parts = {"engine": lambda: engine_and_inverse(tmp), "spiral": spiral_engine_and_inverse,
                 "build": lambda: whole_process(tmp, runs), "corridor": lambda: corridor(tmp, stakes, runs),
                 "outputs": lambda: per_output(tmp, sizes), "several": lambda: several(tmp, several_stakes, runs),
                 "landxml": lambda: landxml(tmp, elements, runs), "dxf": lambda: dxf(tmp),
                 "startup": lambda: startup(runs), "latency": lambda: latency(tmp, runs),
                 "memory": lambda: {} if quick else memory(tmp),
                 "huge": lambda: {} if quick and "--huge-stakes" not in sys.argv else huge(tmp, huge_stakes),
                 "check": lambda: check(tmp, shots)}
        unknown = only - parts.keys()
        if unknown:
            raise SystemExit(f"--only: unknown part(s) {', '.join(sorted(unknown))}; use {', '.join(parts)}")
        for name, part in parts.items():
            if name in only:
                t = time.perf_counter()
                res.update(part())
                print(f"# {name}: {time.perf_counter() - t:.1f} s", file=sys.stderr, flush=True)
    print(f"machine: {platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}, "
          f"numpy {np.__version__}, load average {os.getloadavg()[0]:.2f} (1 min), runs {runs}")
    print(f"{'figure':<44} {'value':>14}  target")
    for k, v in res.items():
        if k.startswith(("out_", "exp_")):
            continue
        tgt = TARGETS.get(k)
        mark = ""
        if tgt:
            ok = v >= tgt[1] if tgt[0] == ">=" else v <= tgt[1]
            mark = f"{tgt[0]} {tgt[1]:g}  {'met' if ok else 'NOT MET'}"
        print(f"{k:<44} {v:>14.4g}  {mark}")
    if "outputs" in only:
        _output_table(res, sizes)
    print(json.dumps({"machine": platform.machine(), "cores": os.cpu_count(), "runs": runs, "results": res}, indent=2))


if __name__ == "__main__":
    main()
