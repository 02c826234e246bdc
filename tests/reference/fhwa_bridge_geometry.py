"""FHWA Bridge Geometry Manual (HIF-22-034, April 2022), Table 3.2: a crest
vertical curve tabulated every 160 ft from the BVC (US survey feet)."""

from __future__ import annotations

from . import Figure

SOURCE = "FHWA Bridge Geometry Manual (HIF-22-034, April 2022), Table 3.2"
#: the high point is not in the table; references.md works it out from the table's inputs
COMPUTED = "references.md 'Vertical curves', from the inputs of " + SOURCE

PVI_STATION = Figure("PVI station", 12000.0, SOURCE, "published", 0.005, "120+00")
PVI_ELEVATION = Figure("PVI elevation", 135.00, SOURCE, "published", 0.005)
GRADE_IN = Figure("g1 (fraction)", 0.0175, SOURCE, "published", 0.00005, "+1.75 %")
GRADE_OUT = Figure("g2 (fraction)", -0.0100, SOURCE, "published", 0.00005, "-1.00 %")
CURVE_LENGTH = Figure("L", 1600.0, SOURCE, "published", 0.5)
BVC_STATION = Figure("BVC station", 11200.0, SOURCE, "published", 0.005, "112+00")
BVC_ELEVATION = Figure("BVC elevation", 121.00, SOURCE, "published", 0.005)
EVC_STATION = Figure("EVC station", 12800.0, SOURCE, "published", 0.005, "128+00")
EVC_ELEVATION = Figure("EVC elevation", 127.00, SOURCE, "published", 0.005)
STEP = Figure("station step of the table", 160.0, SOURCE, "published", 0.0)
ELEVATIONS = Figure(
    "elevations every 160 ft from the BVC",
    (121.00, 123.58, 125.72, 127.42, 128.68, 129.50, 129.88, 129.82, 129.32, 128.38, 127.00),
    SOURCE, "published", 0.005,
)
HIGH_POINT_STATION = Figure("high point station", 12218.18, COMPUTED, "computed", 0.005, "122+18.18")
HIGH_POINT_ELEVATION = Figure("high point elevation", 129.909, COMPUTED, "computed", 0.0005)


def table_stations() -> list[float]:
    """The stations of the table's rows: the BVC and every 160 ft after it."""
    return [BVC_STATION.value + STEP.value * k for k in range(len(ELEVATIONS.value))]
