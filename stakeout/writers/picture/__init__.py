"""``plan.svg``: the plan picture, and the residual picture of a check, as SVG
written directly (no drawing library: the same design gives the same bytes).

The sheet is :data:`SHEET_WIDTH` x :data:`SHEET_HEIGHT` SVG units (the
proportions of an ISO A sheet in landscape; printed across A4 or US Letter
one unit is about 0.19 mm): the drawing on the left, north up, and a
panel on the right with the legend, the curve data, notes and the title
block.  Canvas ``x`` runs east and ``y`` runs south (SVG's), so a survey
azimuth ``az`` (degrees clockwise from grid north) points along
``(sin az, -cos az)`` on the canvas.

Text never overprints: every label goes through :class:`Labeller`, a
greedy placement on a grid of occupied cells; a label with no free place
is left out and the title block says how many were.

The package is split by what it draws: :mod:`.canvas` (sheet, view, colours), :mod:`.frame` (frame,
north arrow, scale bar, panel, title block), :mod:`.lines` (the alignment and its offset lines),
:mod:`.labels` (the greedy label placement), :mod:`.stakes` (stakes, key points, point numbers),
:mod:`.control` (control points, setups and backsights), :mod:`.plan` (``plan.svg``: the view,
tangents and PIs, station ticks and equations, the panel, in the order the labels are placed) and
:mod:`.residuals` (the residual picture of a check).
"""

from __future__ import annotations

from .canvas import (AREA, LABEL_MAX_STAKES, SHEET_HEIGHT, SHEET_WIDTH, STATION_LABEL_GAP, STATUS_COLOURS,
                     TICK_MAX_STATIONS, View, nice_length, station_spacing)
from .labels import Labeller
from .lines import CHORD_TOLERANCE
from .plan import plan_svg, plan_svg_element
from .residuals import exaggeration, residual_svg_element

__all__ = [
    "SHEET_WIDTH", "SHEET_HEIGHT", "LABEL_MAX_STAKES", "TICK_MAX_STATIONS", "STATUS_COLOURS", "View", "Labeller",
    "nice_length", "station_spacing", "plan_svg", "plan_svg_element", "residual_svg_element", "exaggeration",
    "AREA", "STATION_LABEL_GAP", "CHORD_TOLERANCE",
]
