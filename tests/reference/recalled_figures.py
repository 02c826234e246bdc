"""Figures the tests recall rather than read from a source at hand: each is
marked "from memory" (the house rule) and says where it would be checked."""

from __future__ import annotations

from . import Figure

SOURCE = "recalled figures (from memory), each naming where it is printed"
LEVELLING = "the textbook combined curvature-and-refraction figure of surveying texts"
DEJAVU = "DejaVu Sans Mono's font tables (hmtx 'zero' advance, OS/2 sCapHeight; unitsPerEm 2048)"

# (1 - k) D^2 / (2 R) with k = 0.14 and R = 6,371 km at D = 1 km
REFRACTION_COEFFICIENT = Figure("k of the textbook figure", 0.14, LEVELLING, "from memory")
EARTH_RADIUS = Figure("R of the textbook figure, metres", 6_371_000.0, LEVELLING, "from memory")
CURVATURE_REFRACTION_1KM = Figure("combined correction at 1 km, metres", 0.0675, LEVELLING, "from memory", 1e-4)

MONO_ADVANCE = Figure("advance width of a digit, em", 1233 / 2048, DEJAVU, "from memory")
MONO_CAP_HEIGHT = Figure("cap height, em", 0.729, DEJAVU, "from memory")
