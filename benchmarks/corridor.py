"""Generate invented corridor jobs of a chosen size for the benchmarks."""

from __future__ import annotations

from pathlib import Path

OFFSETS = ((-7.5, "L2"), (-3.5, "L1"), (0.0, "CL"), (3.5, "R1"), (7.5, "R2"))


def corridor_job(path: Path, points: int, elements: int = 200, interval: float = 1.0, setup: bool = True) -> Path:
    """Write a metric corridor of ``elements`` alternating tangents and 800 m arcs,
    staked every ``interval`` on five offset lines, long enough for ``points`` stakes."""
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
    parts.append(f"[staking]\ninterval = {interval}\noffsets = [{offs}]\n")
    if setup:
        parts.append('[setup]\noccupied = { id = "CP1", northing = 5000100.0, easting = 500100.0 }\n'
                     "backsight_azimuth = 10.0\n")
    path.write_text("".join(parts), encoding="utf-8")
    return path
