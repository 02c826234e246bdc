"""New Hampshire DOT, "Spiral Curve Data" (CADD help page): a curve with equal
entry and exit spirals (US survey feet; printed to 0.01 ft and 0.1 second)."""

from __future__ import annotations

from . import Figure, dms

SOURCE = 'New Hampshire DOT, "Spiral Curve Data" (CADD help page)'
#: the key-point stations are not printed; references.md works them out (PI - Ts, + Ls, + Lc, + Ls)
COMPUTED = "references.md 'Spiral curves', from " + SOURCE
SEC = 0.05 / 3600.0  # half of the printed 0.1 second, in degrees

PI_STATION = Figure("PI station", 2396.20, SOURCE, "published", 0.005, "23+96.20")
PI_NORTHING = Figure("PI northing", 405083.92, SOURCE, "published", 0.005)
PI_EASTING = Figure("PI easting", 964724.93, SOURCE, "published", 0.005)
DELTA = Figure("Delta (right)", dms("77-47-44.8"), SOURCE, "published", SEC, "77-47-44.8")
RADIUS = Figure("Rc", 300.00, SOURCE, "published", 0.005)
SPIRAL_LENGTH = Figure("Ls", 200.00, SOURCE, "published", 0.005)
THETA_S = Figure("theta_s", dms("19-05-54.9"), SOURCE, "published", SEC, "19-05-54.9")
DELTA_C = Figure("Delta_c", dms("39-35-54.9"), SOURCE, "published", SEC, "39-35-54.9")
TS = Figure("Ts", 346.15, SOURCE, "published", 0.005)
ES = Figure("Es", 92.58, SOURCE, "published", 0.005)
LC = Figure("Lc", 207.34, SOURCE, "published", 0.005)
LT = Figure("LT", 134.12, SOURCE, "published", 0.005)
ST = Figure("ST", 67.38, SOURCE, "published", 0.005)
P = Figure("p", 5.53, SOURCE, "published", 0.005)
K = Figure("k", 99.63, SOURCE, "published", 0.005)
XC = Figure("Xc", 197.79, SOURCE, "published", 0.005)
YC = Figure("Yc", 22.05, SOURCE, "published", 0.005)
# sums of rounded figures: a hundredth either way
TS_STATION = Figure("TS station", 2050.05, COMPUTED, "computed", 0.005, "20+50.05")
SC_STATION = Figure("SC station", 2250.05, COMPUTED, "computed", 0.005, "22+50.05")
CS_STATION = Figure("CS station", 2457.39, COMPUTED, "computed", 0.01, "24+57.39")
ST_STATION = Figure("ST station", 2657.39, COMPUTED, "computed", 0.01, "26+57.39")

#: The source gives Delta only; the tangents are invented (back 40-00-00, ahead 40-00-00 + Delta).
AHEAD_AZIMUTH = "117-47-44.8"
assert abs(dms(AHEAD_AZIMUTH) - 40.0 - DELTA.value) < 1e-9

#: The example as a job file: the source's PI, Delta, Rc and Ls; the tangents, the lead-in and
#: lead-out and the staking are invented.
JOB = """format = 1
[job]
name = "NH DOT spiral curve data"
units = "us_ft"
[alignment]
name = "NH"
[alignment.at_pi]
station = "%s"
northing = %.2f
easting = %.2f
back_tangent_azimuth = "40-00-00"
ahead_tangent_azimuth = "%s"   # back + Delta %s RT
radius = %.1f
spirals = [%.1f, %.1f]
lead_in = 50
lead_out = 50
[staking]
interval = 50
offsets = [{ offset = -12.0, code = "EPL" }, { offset = 0.0, code = "CL" }, { offset = 12.0, code = "EPR" }]
""" % (PI_STATION.printed, PI_NORTHING.value, PI_EASTING.value, AHEAD_AZIMUTH, DELTA.printed,
       RADIUS.value, SPIRAL_LENGTH.value, SPIRAL_LENGTH.value)
