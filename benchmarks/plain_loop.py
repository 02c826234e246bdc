"""The same CSV outputs as `stakeout build --only points,stations,setout`,
computed the plain way: one point at a time in pure Python.  Only for the
benchmark's side-by-side ratio; not used by stakeout.

usage: python plain_loop.py JOB.toml OUTDIR
"""

from __future__ import annotations

import math
import sys
import tomllib
from pathlib import Path


def main(job_path: str, out: str) -> None:
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
    step = job["staking"]["interval"]
    offsets = job["staking"]["offsets"]
    occ = job["setup"]["occupied"]
    bs = job["setup"]["backsight_azimuth"]

    def dms(x: float) -> str:
        t = round(x * 36000) % (360 * 36000)
        return f"{t // 36000}-{t // 600 % 60:02d}-{t % 600 // 10:02d}.{t % 10}"

    def label(s: float) -> str:
        t = round(s * 1000)
        return f"{t // 1000000}+{t % 1000000 // 1000:03d}.{t % 1000:03d}"

    pts = ["point,northing,easting,elevation,description"]
    sts = ["point,station,station_label,offset,northing,easting,elevation,feature,code"]
    sos = ["point,station,offset,azimuth_deg,azimuth_dms,angle_right_deg,angle_right_dms,grid_distance,ground_distance"]
    number = 1
    i = 0
    while i * step <= end + 1e-9:
        s = i * step
        i += 1
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
        for off in offsets:
            o = off["offset"]
            pn, pe = cn - o * math.sin(t), ce + o * math.cos(t)
            lab = label(s)
            pts.append(f"{number},{pn:.4f},{pe:.4f},,{off['code']} {lab} {o:.3f}")
            sts.append(f"{number},{s:.4f},{lab},{o:.4f},{pn:.4f},{pe:.4f},,,{off['code']}")
            azp = math.degrees(math.atan2(pe - occ["easting"], pn - occ["northing"])) % 360
            ar = (azp - bs) % 360
            dist = math.hypot(pn - occ["northing"], pe - occ["easting"])
            sos.append(f"{number},{s:.4f},{o:.4f},{azp:.8f},{dms(azp)},{ar:.8f},{dms(ar)},{dist:.4f},{dist:.4f}")
            number += 1
    Path(out).mkdir(parents=True, exist_ok=True)
    for name, lines in (("points.csv", pts), ("stations.csv", sts), ("setout.csv", sos)):
        Path(out, name).write_text("\n".join(lines) + "\n")


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
