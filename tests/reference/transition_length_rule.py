"""The length of a superelevation transition from its rate of change (L = N b e),
a worked example published on curioustab.com: "a 7 m wide road requires a
maximum super-elevation of 1 in 15, and the rate of change of super-elevation
is 1 in 150. What is the maximum transition length?" (metres)."""

from __future__ import annotations

from . import Figure

SOURCE = "curioustab.com, 'Length of transition required for super-elevation development' (L = N b e)"

WIDTH = Figure("road width b (m)", 7.0, SOURCE, "published")
SUPERELEVATION = Figure("e (1 in 15)", 1.0 / 15.0, SOURCE, "published")
RATE = Figure("rate of change N (1 in 150)", 150.0, SOURCE, "published")
LENGTH = Figure("transition length L (m)", 70.0, SOURCE, "published", 0.5)
