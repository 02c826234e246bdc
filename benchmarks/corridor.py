"""Generate invented corridor jobs of a chosen size for the benchmarks."""

from __future__ import annotations

from pathlib import Path

OFFSETS = ((-7.5, "L2"), (-3.5, "L1"), (0.0, "CL"), (3.5, "R1"), (7.5, "R2"))

#: Normal crown and full superelevation of the corridor's curves, percent.
CROWN, FULL = -2.0, 6.0


def _sections(per: float, elements: int) -> tuple[str, str]:
    """The corridor's cross-section: offset lines (lanes from the superelevation table, shoulders
    measured from the lanes with a rollover and steepening, the right side widening over a 50 m
    taper on the first tangent) and a superelevation row at each end of each curve's transitions.
    """
    a, b = per * 0.25, per * 0.25 + 50.0
    offs = ('{offset = -7.5, code = "L2", from = "L1", cross_slope = -4.0, rollover = 8.0, steepen_with_inner = true}, '
            '{offset = -3.5, code = "L1", cross_slope = "superelevation"}, {offset = 0.0, code = "CL"}, '
            f'{{code = "R1", cross_slope = "superelevation", offset = [{{station = {a:.6f}, offset = 3.5}}, '
            f'{{station = {b:.6f}, offset = 7.0}}]}}, '
            f'{{code = "R2", from = "R1", cross_slope = -4.0, rollover = 8.0, steepen_with_inner = true, '
            f'offset = [{{station = {a:.6f}, offset = 7.5}}, {{station = {b:.6f}, offset = 11.0}}]}}')
    run = min(per / 4.0, 60.0)
    rows = []
    for i in range(1, elements, 2):  # the arcs
        right = (i // 2) % 2 == 0
        out_, in_ = (FULL, -FULL)
        full = (out_, in_) if right else (in_, out_)  # a right turn lifts the left side
        s0, s1 = i * per, (i + 1) * per
        for st, (left, rgt) in ((s0 - run, (CROWN, CROWN)), (s0 + run, full), (s1 - run, full),
                                (s1 + run, (CROWN, CROWN))):
            rows.append(f"[[superelevation]]\nstation = {st:.6f}\nleft = {left}\nright = {rgt}\n")
    return offs, "".join(rows)


def corridor_job(path: Path, points: int, elements: int = 200, interval: float = 1.0, setup: bool = True,
                 sections: bool = True) -> Path:
    """Write a metric corridor of ``elements`` alternating tangents and 800 m arcs,
    staked every ``interval`` on five offset lines, long enough for ``points`` stakes;
    with ``sections`` a level centreline at 100.0, a superelevation table and a template
    with chained lines and a taper (the plain loop computes the same)."""
    length = points / len(OFFSETS) * interval - interval
    per = length / elements
    parts = [f'''format = 1
[job]
name = "benchmark corridor, {points} points"
units = "m"
crs = "EPSG:32633"
[alignment]
name = "CORR"
start = {{ station = 0, northing = 5000000.0, easting = 500000.0 }}
azimuth = 60.0
''']
    for i in range(elements):
        if i % 2 == 0:
            parts.append(f'[[alignment.element]]\nkind = "line"\nlength = {per:.6f}\n')
        else:
            turn = "right" if (i // 2) % 2 == 0 else "left"
            parts.append(f'[[alignment.element]]\nkind = "arc"\nradius = 800.0\nlength = {per:.6f}\nturn = "{turn}"\n')
    offs = ", ".join(f'{{offset = {o}, code = "{c}"}}' for o, c in OFFSETS)
    rows = ""
    if sections:
        offs, rows = _sections(per, elements)
    parts.append(f"[staking]\ninterval = {interval}\noffsets = [{offs}]\n")
    if sections:
        parts.append("elevation = 100.0\n")
    parts.append(rows)
    if setup:
        parts.append('[setup]\noccupied = { id = "CP1", northing = 5000100.0, easting = 500100.0 }\n'
                     "backsight_azimuth = 10.0\n")
    path.write_text("".join(parts), encoding="utf-8")
    return path


def staked_shots(job: Path, path: Path, shots: int, seed: int = 7) -> Path:
    """Add ``[check]`` tolerances to a corridor job and write a staked file of ``shots`` invented
    shots of its stakes (the job must hold at least that many): most within tolerance, about 2 %
    out, 0.5 % renumbered (matched by position), 0.3 % shot twice, 0.1 % strays far from any stake (unmatched),
    every third stake without an elevation.
    """
    import numpy as np

    from stakeout.pipeline import compute

    with job.open("a", encoding="utf-8") as f:
        f.write("[check]\nhorizontal_tolerance = 0.05\nvertical_tolerance = 0.03\n")
    sp = compute(job).stakes
    rng = np.random.default_rng(seed)
    twice = shots * 3 // 1000
    pick = np.sort(rng.choice(len(sp), size=min(shots - twice, len(sp)), replace=False))
    n, e = sp.northing[pick].copy(), sp.easting[pick].copy()
    z = np.full(pick.size, np.nan) if sp.elevation is None else sp.elevation[pick].copy()
    spread = np.where(rng.random(pick.size) < 0.02, 0.2, 0.01)
    n += rng.normal(0.0, spread)
    e += rng.normal(0.0, spread)
    z += rng.normal(0.0, spread)
    z[::3] = np.nan
    ids = [str(sp.first_point + int(i)) for i in pick]
    for k in np.flatnonzero(rng.random(pick.size) < 0.005).tolist():
        ids[k] = f"R{k}"
    stray = rng.random(pick.size) < 0.001
    n[stray] += 500.0
    for k in np.flatnonzero(stray).tolist():
        ids[k] = f"S{k}"
    lines = [f"{p},{a:.3f},{b:.3f},{'' if c != c else f'{c:.3f}'},STK" for p, a, b, c in zip(ids, n, e, z)]
    again = rng.choice(pick.size, size=min(twice, pick.size), replace=False)
    lines += [f"{ids[k]},{n[k] + 0.004:.3f},{e[k]:.3f},,STK again" for k in again.tolist()]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path
