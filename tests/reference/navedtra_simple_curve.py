"""NAVEDTRA 14070 "Engineering Aid Basic", section "Solving a Simple Curve":
a circular curve staked by deflections at 50-ft stations (feet)."""

from __future__ import annotations

from . import Figure, dms

SOURCE = 'NAVEDTRA 14070 "Engineering Aid Basic", "Solving a Simple Curve"'
#: worked out from the source's inputs (references.md "Curves")
COMPUTED = "references.md 'Curves', from the inputs of " + SOURCE
HALF_SEC = 0.5 / 3600.0

PC_STATION = Figure("PC station", 1807.80, SOURCE, "published", 0.005, "18+07.80")
DEGREE_OF_CURVE = Figure("D (arc definition)", 15.0, SOURCE, "published", 0.0)
STATION_INTERVAL = Figure("station interval", 50.0, SOURCE, "published", 0.0)
DEFLECTION_PER_STATION = Figure("deflection per full 50-ft station", 3.75, SOURCE, "published", 0.0, "3-45")
DELTA = Figure("I", 75.0, COMPUTED, "computed", 0.0)
RADIUS = Figure("R", 381.97, COMPUTED, "computed", 0.005)
TANGENT = Figure("T", 293.10, COMPUTED, "computed", 0.005)
LENGTH = Figure("L", 500.00, COMPUTED, "computed", 0.005)
PT_STATION = Figure("PT station", 2307.80, COMPUTED, "computed", 0.005, "23+07.80")
#: deflection from the tangent at the PC, by station (degrees, to the second)
DEFLECTIONS = Figure(
    "deflections by station",
    {1850.0: dms("3-09-54"), 1900.0: dms("6-54-54"), 2300.0: dms("36-54-54"), 2307.80: dms("37-30-00")},
    COMPUTED, "computed", HALF_SEC,
)
