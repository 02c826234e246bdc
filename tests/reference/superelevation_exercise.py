"""A superelevation transition exercise (route design, centreline rotation), as
published on transtutors.com: "Using centerline rotation find the elevations of
the inside pavement edge, the centerline, and the outside pavement edge for
stations 117+50, 118+50, and 121+50" (US feet).  The exercise prints its
inputs; the edge elevations are worked out by hand from them."""

from __future__ import annotations

from . import Figure

SOURCE = ("transtutors.com, question 2706796: 'Using centerline rotation find the elevations of the inside "
          "pavement edge, the centerline, and the outside pavement edge ...'")
COMPUTED = "worked by hand from the inputs of " + SOURCE + " (edge = centreline + slope x lane width)"

LANE_WIDTH = Figure("lane width (ft), one lane each way", 10.0, SOURCE, "published")
NORMAL_CROWN = Figure("normal crown (%)", 1.0, SOURCE, "published")
PC_STATION = Figure("PC station", 12000.0, SOURCE, "published", 0.005, "120+00")
PC_ELEVATION = Figure("PC elevation (ft)", 600.00, SOURCE, "published", 0.005)
GRADE = Figure("centreline grade (%)", 4.0, SOURCE, "published")
SUPERELEVATION = Figure("e (%)", 3.0, SOURCE, "published")
RUNOFF = Figure("superelevation runoff (ft)", 300.0, SOURCE, "published")
RUNOUT_START = Figure("tangent runout starts", 11700.0, SOURCE, "published", 0.005, "117+00")
RUNOFF_START = Figure("tangent runout complete, runoff starts", 11800.0, SOURCE, "published", 0.005, "118+00")
HINGE = Figure("'hinge' station (reverse crown)", 11900.0, SOURCE, "published", 0.005, "119+00")
RUNOFF_END = Figure("runoff complete", 12100.0, SOURCE, "published", 0.005, "121+00")

#: (outside edge, centreline, inside edge) elevations, ft
AT_117_50 = Figure("elevations at 117+50", (589.95, 590.00, 589.90), COMPUTED, "computed", 0.005, "117+50.00")
AT_118_50 = Figure("elevations at 118+50", (594.05, 594.00, 593.90), COMPUTED, "computed", 0.005, "118+50.00")
AT_121_50 = Figure("elevations at 121+50", (606.30, 606.00, 605.70), COMPUTED, "computed", 0.005, "121+50.00")
