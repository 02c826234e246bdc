"""J. Mahun, Open Access Surveying Library: chapters "Ground to Grid
Conversion" and "Reduction Example: SPC / UTM" (metres)."""

from __future__ import annotations

from . import Figure, dms

SOURCE = "J. Mahun, Open Access Surveying Library, 'Reduction Example: SPC / UTM'"
#: the same inputs worked by hand with a stated Earth radius (references.md "Grid and ground")
COMPUTED = "references.md 'Grid and ground', from the inputs of " + SOURCE

ORTHOMETRIC_HEIGHT = Figure("H", 358.6, SOURCE, "published", 0.05)
GEOID_HEIGHT = Figure("N", -33.902, SOURCE, "published", 0.0005)
SCALE_FACTOR = Figure("UTM k", 1.00021177, SOURCE, "published", 5e-9)
COMBINED_FACTOR = Figure("CF", 1.00016082, SOURCE, "published", 5e-9)
EARTH_RADIUS = Figure("R of the hand computation", 6_372_200.0, COMPUTED, "computed", 0.0)
COMBINED_FACTOR_R = Figure("CF with R = 6,372,200 m", 1.00016081, COMPUTED, "computed", 5e-9)
# Lambert conformal convergence, EPSG:32154 (Wisconsin South) at longitude 89-43-53.76413 W
LAMBERT_LONGITUDE = Figure("longitude (west negative)", -dms("89-43-53.76413"), SOURCE, "published", 0.0)
LAMBERT_CONVERGENCE = Figure("gamma", dms("0-11-03.9"), SOURCE, "published", 0.05 / 3600, "+0-11-03.9")
