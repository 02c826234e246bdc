"""The same CSV outputs as `stakeout build --only points,stations,setout`,
computed the plain way: one point at a time in pure Python.  Only for the
benchmark's side-by-side ratio; not used by stakeout.

usage: python plain_loop.py JOB.toml OUTDIR [--bisect]

By default each point finds its element by scanning the elements from the first
(the plainest program); ``--bisect`` finds it by binary search
(``bisect.bisect_left`` on the elements' start stations), as a careful plain
program would.
"""

from __future__ import annotations

import bisect
import math
import sys
import tomllib
from pathlib import Path


def main(job_path: str, out: str, by_bisect: bool = False) -> None:
    job = tomllib.loads(Path(job_path).read_text())
    al = job["alignment"]
    st0 = float(al["start"]["station"])
    n, e, az = al["start"]["northing"], al["start"]["easting"], float(al["azimuth"])
    elements = []  # (start station, length, n0, e0, az0, curvature)
    station = st0
    for el in al["element"]:
        length = el["length"]
        k = 0.0 if el["kind"] == "line" else (1.0 if el["turn"] == "right" else -1.0) / el["radius"]
        elements.append((station, length, n, e, az, k))
        d = k * length
        chord = length if k == 0 else 2 * math.sin(d / 2) / k
        mid = math.radians(az) + d / 2
        n, e = n + chord * math.cos(mid), e + chord * math.sin(mid)
        az += math.degrees(d)
        station += length
    end = station
    starts = [el[0] for el in elements]
    step = job["staking"]["interval"]
    offsets = job["staking"]["offsets"]
    centre_z = job["staking"].get("elevation")
    se_rows = [(float(r["station"]), r["left"], r["right"]) for r in job.get("superelevation", [])]
    by_code = {off["code"]: off for off in offsets}

    def interp(s: float, rows: list[tuple[float, ...]], k: int) -> float:
        if s <= rows[0][0]:  # per point: scan the rows
            return rows[0][k]
        for a, b in zip(rows, rows[1:]):
            if s <= b[0]:
                return a[k] + (b[k] - a[k]) * (s - a[0]) / (b[0] - a[0])
        return rows[-1][k]

    def offset_at(off: dict, s: float) -> float:
        o = off["offset"]
        if isinstance(o, list):
            return interp(s, [(float(r["station"]), r["offset"]) for r in o], 1)
        return o

    def line_at(off: dict, s: float) -> tuple[float, float | None, float]:
        """(offset, slope, elevation) of a line at station s, its inner line first."""
        o = offset_at(off, s)
        if "from" in off:
            o_in, s_in, z_in = line_at(by_code[off["from"]], s)
        else:
            o_in, s_in, z_in = 0.0, None, centre_z
        cs = off.get("cross_slope")
        if o == 0.0 or cs is None:
            return o, None, z_in + off.get("dz", 0.0)
        own = interp(s, se_rows, 1 if o < 0 else 2) if cs == "superelevation" else cs
        if s_in is not None:
            if off.get("steepen_with_inner") and s_in < own:
                own = s_in
            r = off.get("rollover")
            if r is not None and abs(own - s_in) > r:
                own = s_in + math.copysign(r, own - s_in)
        return o, own, z_in + (abs(o) - abs(o_in)) * own / 100.0
    occ = job["setup"]["occupied"]
    bs = job["setup"]["backsight_azimuth"]

    def dms(x: float) -> str:
        t = round(x * 36000) % (360 * 36000)
        return f"{t // 36000}-{t // 600 % 60:02d}-{t % 600 // 10:02d}.{t % 10}"

    def label(s: float) -> str:
        t = round(s * 1000)
        return f"{t // 1000000}+{t % 1000000 // 1000:03d}.{t % 1000:03d}"

    pts = ["point,northing,easting,elevation,description"]
    sts = ["point,station,station_label,offset,northing,easting,elevation,feature,code,region,alignment,cross_slope,"
           "ground_elevation,cut_fill"]
    sos = ["point,station,offset,azimuth_deg,azimuth_dms,angle_right_deg,angle_right_dms,grid_distance,ground_distance"]
    number = 1
    i = 0
    while i * step <= end + 1e-9:
        s = i * step
        i += 1
        if by_bisect:  # per point: find the element by binary search
            el = elements[max(0, bisect.bisect_left(starts, s - 1e-9) - 1)]  # the element the scan finds
        else:
            for el in elements:  # per point: find the element by a scan
                if el[0] <= s <= el[0] + el[1] + 1e-9:
                    break
        s0, _, n0, e0, a0, k = el
        ds = s - s0
        d = k * ds
        chord = ds if k == 0 else 2 * math.sin(d / 2) / k
        mid = math.radians(a0) + d / 2
        cn, ce = n0 + chord * math.cos(mid), e0 + chord * math.sin(mid)
        t = math.radians(a0) + d
        for off in sorted(offsets, key=lambda f: offset_at(f, s)):
            if centre_z is None:
                o, slope, z = offset_at(off, s), None, None
            else:
                o, slope, z = line_at(off, s)
            pn, pe = cn - o * math.sin(t), ce + o * math.cos(t)
            lab = label(s)
            zt = "" if z is None else f"{z:.4f}"
            st = "" if slope is None else f"{slope:.4f}"
            pts.append(f"{number},{pn:.4f},{pe:.4f},{zt},{off['code']} {lab} {o:.3f}")
            sts.append(f"{number},{s:.4f},{lab},{o:.4f},{pn:.4f},{pe:.4f},{zt},,{off['code']},1,CORR,{st},,")
            azp = math.degrees(math.atan2(pe - occ["easting"], pn - occ["northing"])) % 360
            ar = (azp - bs) % 360
            dist = math.hypot(pn - occ["northing"], pe - occ["easting"])
            sos.append(f"{number},{s:.4f},{o:.4f},{azp:.8f},{dms(azp)},{ar:.8f},{dms(ar)},{dist:.4f},{dist:.4f}")
            number += 1
    Path(out).mkdir(parents=True, exist_ok=True)
    for name, lines in (("points.csv", pts), ("stations.csv", sts), ("setout.csv", sos)):
        Path(out, name).write_text("\n".join(lines) + "\n")


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2], "--bisect" in sys.argv[3:])
