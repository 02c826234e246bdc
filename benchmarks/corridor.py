"""Generate invented corridor jobs of a chosen size for the benchmarks."""

from __future__ import annotations

import sys
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


def _elements(per: float, elements: int, spirals: bool) -> str:
    """Alternating tangents and 800 m curves, each ``per`` long; with ``spirals`` each curve a
    clothoid in, an arc and a clothoid out over the same stations (so the superelevation rows fit)."""
    parts = []
    for i in range(elements):
        if i % 2 == 0:
            parts.append(f'[[alignment.element]]\nkind = "line"\nlength = {per:.6f}\n')
            continue
        turn = "right" if (i // 2) % 2 == 0 else "left"
        if not spirals:
            parts.append(f'[[alignment.element]]\nkind = "arc"\nradius = 800.0\nlength = {per:.6f}\nturn = "{turn}"\n')
            continue
        ls = min(per / 4.0, 60.0)
        parts.append(f'[[alignment.element]]\nkind = "spiral"\nlength = {ls:.6f}\nradius_end = 800.0\nturn = "{turn}"\n'
                     f'[[alignment.element]]\nkind = "arc"\nradius = 800.0\nlength = {per - 2 * ls:.6f}\nturn = "{turn}"\n'
                     f'[[alignment.element]]\nkind = "spiral"\nlength = {ls:.6f}\nradius_start = 800.0\nturn = "{turn}"\n')
    return "".join(parts)


def _profile(length: float, prefix: str) -> str:
    """PVIs about every 500 m alternating 100 and 104 m, a parabolic curve half the spacing long at each inner one."""
    m = max(2, round(length / 500.0))
    d = (length + 1.0) / m  # a metre past the end: the stakes' stations are sums of element lengths
    rows = [f"[{prefix}profile]\n"]
    for k in range(m + 1):
        curve = f"curve_length = {d / 2:.6f}\n" if 0 < k < m else ""
        rows.append(f"[[{prefix}profile.pvi]]\nstation = {k * d:.6f}\nelevation = {100.0 + 4.0 * (k % 2):.1f}\n{curve}")
    return "".join(rows)


#: Slope stakes from the outer lines: a ditch on the left in cut, plain slopes on the right.
SLOPE_STAKES = ('left = { hinge = "L2", fill_slope = 4.0, cut_slope = 3.0, foreslope = 4.0, ditch_depth = 1.0, '
                'ditch_width = 2.0 }\nright = { hinge = "R2", fill_slope = 2.0, cut_slope = 2.0 }\n'
                "reference_offset = 5.0\nmax_width = 60.0\n")


def _alignment(points: int, elements: int, interval: float, sections: bool, spirals: bool, profile: bool,
               slopes: bool, prefix: str, name: str = "CORR", start: tuple[float, float] = (5000000.0, 500000.0),
               extra_staking: str = "", slope_section: bool = True) -> str:
    """One alignment's sections: its geometry, staking, superelevation, profile and slope stakes
    (with ``slopes``: the alignment sized for them; ``slope_section`` false leaves out the section);
    ``prefix`` is ``""`` for a job of one alignment and ``"alignment."`` inside ``[[alignment]]``."""
    per_station = len(OFFSETS) + (4 if slopes else 0)  # slope stakes: a catch and a reference each side
    length = points / per_station * interval - interval
    per = length / elements
    head = "[alignment]" if not prefix else "[[alignment]]"
    parts = [f"{head}\nname = \"{name}\"\nstart = {{ station = 0, northing = {start[0]:.1f}, easting = {start[1]:.1f} }}\n"
             "azimuth = 60.0\n", _elements(per, elements, spirals)]
    offs = ", ".join(f'{{offset = {o}, code = "{c}"}}' for o, c in OFFSETS)
    rows = ""
    if sections:
        offs, rows = _sections(per, elements)
        rows = rows.replace("[[superelevation]]", f"[[{prefix}superelevation]]")
    parts.append(f"[{prefix}staking]\ninterval = {interval}\noffsets = [{offs}]\n{extra_staking}")
    if sections and not profile:
        parts.append("elevation = 100.0\n")
    parts.append(rows)
    if profile:
        parts.append(_profile(length, prefix))
    if slopes and slope_section:
        parts.append(f"[{prefix}slope_stakes]\n{SLOPE_STAKES}")
    return "".join(parts)


_SETUP = ('[setup]\noccupied = { id = "CP1", northing = 5000100.0, easting = 500100.0 }\n'
          "backsight_azimuth = 10.0\n")


def corridor_job(path: Path, points: int, elements: int = 200, interval: float = 1.0, setup: bool = True,
                 sections: bool = True, spirals: bool = False, profile: bool = False, ground: bool = False) -> Path:
    """Write a metric corridor of ``elements`` alternating tangents and 800 m arcs,
    staked every ``interval`` on five offset lines, long enough for about ``points`` stakes;
    with ``sections`` a level centreline at 100.0, a superelevation table and a template
    with chained lines and a taper (the plain loop computes the same). Richer corridors (the
    plain loop does not compute them): ``spirals`` puts a clothoid at each end of each arc;
    ``profile`` a profile instead of the level centreline (PVIs about every 500 m); ``ground``
    (needs ``sections``) a ground TIN (``ground.csv`` beside the job: points every 20 m along and
    10 m across, to 80 m each side, triangulated by stakeout) with slope stakes from the
    outer lines, both cut and fill occurring.
    """
    head = f'''format = 1
[job]
name = "benchmark corridor, {points} points"
units = "m"
crs = "EPSG:32633"
'''
    slopes = ground and sections
    tail = _SETUP if setup else ""
    if slopes:  # the ground follows the alignment: written from the job without its slope stakes
        path.write_text(head + _alignment(points, elements, interval, sections, spirals, profile, True, "",
                                          slope_section=False), encoding="utf-8")
        ground_csv(path, path.with_name(path.stem + "_ground.csv"))
        tail += f'[ground]\nfile = "{path.stem}_ground.csv"\n'
    path.write_text(head + _alignment(points, elements, interval, sections, spirals, profile, slopes, "") + tail,
                    encoding="utf-8")
    return path


def ground_csv(job: Path, out: Path, along: float = 20.0, across: float = 10.0, reach: float = 80.0) -> Path:
    """Ground points along every alignment of ``job`` (built without a ground): every ``along`` along,
    every ``across`` across to ``reach`` each side, elevations wandering 96.5-104.5 m so that the
    corridor is in cut in places and in fill in others."""
    import numpy as np

    from stakeout.alignment import build_alignment
    from stakeout.jobfile import load_job

    job_ = load_job(job)
    rows = ["point,northing,easting,elevation"]
    k = 0
    for part in job_.parts or (job_,):
        a = build_alignment(part.alignment)
        s = np.arange(a.start_station, a.end_station + along, along).clip(max=a.end_station)
        o = np.arange(-reach, reach + across / 2, across)
        ss, oo = np.repeat(s, o.size), np.tile(o, s.size)
        n, e, _ = a.evaluate(ss, oo)
        z = 100.5 + 3.0 * np.sin(ss / 700.0) + 1.0 * np.cos(ss / 130.0) + 0.02 * oo * np.sin(ss / 450.0)
        rows += [f"G{k + i},{a_:.3f},{b_:.3f},{c_:.3f}" for i, (a_, b_, c_) in
                 enumerate(zip(n.tolist(), e.tolist(), z.tolist()))]
        k += ss.size
    out.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return out


def several_job(path: Path, points: int, alignments: int = 3, elements: int = 60, interval: float = 2.0,
                structure_every: float = 50.0) -> Path:
    """A job of ``alignments`` corridors (``[[alignment]]``; spirals, profile, superelevation, taper), about
    ``points`` stakes in all, numbered in ranges that never meet, each with a structures list
    (``staking.points``: a stake every ``structure_every`` along, alternately square and skewed,
    some with their own elevation), one setup serving all."""
    each = points // alignments
    parts = [f'format = 1\n[job]\nname = "benchmark, {alignments} alignments, {points} points"\nunits = "m"\n'
             'crs = "EPSG:32633"\n', _SETUP]
    for k in range(alignments):
        rows = ["station,offset,code,skew,elevation,description"]
        length = each / len(OFFSETS) * interval - interval
        for j, st in enumerate(range(int(structure_every), int(length), int(structure_every))):
            skew = "" if j % 2 == 0 else f"{(-1) ** (j // 2) * 15.0:g}"
            elev = f"{99.0 + j % 5:.1f}" if j % 3 == 0 else ""
            rows.append(f"{st:.3f},{(-1) ** j * 12.5:.1f},CULV,{skew},{elev},culvert {j}")
        csv = path.with_name(f"{path.stem}_structures_{k + 1}.csv")
        csv.write_text("\n".join(rows) + "\n", encoding="utf-8")
        parts.append(_alignment(each, elements, interval, True, True, True, False, "alignment.", name=f"AL{k + 1}",
                                start=(5000000.0 + 3000.0 * k, 500000.0 - 2000.0 * k),
                                extra_staking=f'first_point = {1 + k * 10_000_000}\npoints = "{csv.name}"\n'))
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


def landxml_job(path: Path, elements: int = 20_000, cgpoints: int = 200_000, pvis: int = 5_000,
                interval: float = 50.0) -> Path:
    """A real-sized design file and a job that builds from it: ``<name>.xml`` beside the job holding one
    ``<Alignment>`` of ``elements`` elements (tangent, clothoid, arc, clothoid, turning right and left in
    turn: 200 m tangents, 80 m spirals, R 1500 arcs of 2 degrees), its ``<ProfAlign>`` of ``pvis`` PVIs
    (parabolic curves of 200 m or less) and ``cgpoints`` ``<CgPoint>``s near the alignment, used as the
    job's control (alignment, profile and control all from the one file); staked every ``interval`` on
    three lines. The geometry is computed by the test suite's independent LandXML maker
    (``tests/landxml_data.py``: Fresnel integrals from scipy), not by stakeout.
    """
    import numpy as np

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
    from tests.landxml_data import alignment_xml, build, profile_xml, units_xml

    plan: list[tuple] = []
    for k in range(elements):
        unit, j = divmod(k, 4)
        turn = 1 if unit % 2 == 0 else -1
        plan.append([("line", f"T{unit}", 200.0), ("spiral", f"SI{unit}", 80.0, None, 1500.0, turn),
                     ("arc", f"C{unit}", 1500.0, 2.0, turn), ("spiral", f"SO{unit}", 80.0, 1500.0, None, turn)][j])
    segs = build(5_000_000.0, 500_000.0, 45.0, plan)
    total = sum(s.length for s in segs)
    spacing = total / (pvis - 1)
    curve = min(200.0, spacing / 2)
    pv = [("para" if 0 < k < pvis - 1 else "pvi", k * spacing if k < pvis - 1 else total + 1.0,
           100.0 + 6.0 * (k % 2), {"length": curve} if 0 < k < pvis - 1 else {}) for k in range(pvis)]
    rng = np.random.default_rng(5)
    starts = np.array([s.start for s in segs])
    at = starts[rng.integers(0, len(segs), cgpoints)] + rng.uniform(-40.0, 40.0, (cgpoints, 2))
    z = rng.uniform(95.0, 110.0, cgpoints)
    xml = path.with_suffix(".xml")
    with xml.open("w", encoding="utf-8") as f:
        f.write('<?xml version="1.0" encoding="UTF-8"?>\n<!-- Invented benchmark design; made by benchmarks/corridor.py -->\n'
                '<LandXML xmlns="http://www.landxml.org/schema/LandXML-1.2" date="2026-12-03" time="12:00:00" '
                f'version="1.2">\n{units_xml("m", None)}  <CgPoints name="control">\n')
        f.writelines(f'    <CgPoint name="CP{i + 1}" code="CTRL">{a:.3f} {b:.3f} {c:.3f}</CgPoint>\n'
                     for i, (a, b, c) in enumerate(zip(at[:, 0].tolist(), at[:, 1].tolist(), z.tolist())))
        f.write("  </CgPoints>\n  <Alignments>\n")
        body = alignment_xml("BIG", 0.0, segs, tail='      <Profile name="BIG">\n'
                             + profile_xml("BIG FG", pv, "        ") + "      </Profile>\n")
        f.write(body + "  </Alignments>\n</LandXML>\n")
    path.write_text(f'''format = 1
[job]
name = "benchmark design file, {elements} elements"
units = "m"
[alignment]
landxml = "{xml.name}"
[profile]
landxml = "{xml.name}"
[control]
landxml = "{xml.name}"
[staking]
interval = {interval}
offsets = [{{offset = -3.65, code = "EPL", cross_slope = -2.0}}, {{offset = 0.0, code = "CL"}},
  {{offset = 3.65, code = "EPR", cross_slope = -2.0}}]
[setup]
occupied = "CP1"
backsight = "CP2"
''', encoding="utf-8")
    return path
