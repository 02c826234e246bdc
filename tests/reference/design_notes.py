"""Worked examples of the project's design notes (references.md), each
[computed] from stated inputs and checked there by independent means."""

from __future__ import annotations

from . import Figure, dms

SOURCE = "references.md, the project's design notes (worked examples, [computed])"
SETOUT = "references.md 'Setout' [computed]"
UTM = "references.md 'Convergence and azimuths' [computed, pyproj], EPSG:32633 at 16E 45N"
LAMBERT = "references.md 'Convergence and azimuths' [computed], EPSG:32154 (gamma = n (lambda - lambda0))"

# occupy N 5000 E 5000, backsight N 5300 E 5000, target N 5100 E 5173.205
OCCUPIED = Figure("occupied point (N, E)", (5000.0, 5000.0), SETOUT, "computed")
BACKSIGHT = Figure("backsight (N, E)", (5300.0, 5000.0), SETOUT, "computed")
TARGET = Figure("target (N, E)", (5100.0, 5173.205), SETOUT, "computed")
ANGLE_RIGHT = Figure("angle right", 60.0, SETOUT, "computed", 1 / 3600, "60-00-00")
DISTANCE = Figure("distance", 200.000, SETOUT, "computed", 0.0005)

UTM_POINT = Figure("longitude, latitude", (16.0, 45.0), UTM, "computed")
UTM_CONVERGENCE = Figure("gamma", 0.707143, UTM, "computed", 5e-7)
UTM_GRID_AZIMUTH_OF_NORTH = Figure("grid azimuth of geodetic north", 359.292857, UTM, "computed", 5e-7)

LAMBERT_CONVERGENCE = Figure("gamma", dms("0-11-03.904"), LAMBERT, "computed", 0.001 / 3600, "+0-11-03.904")
