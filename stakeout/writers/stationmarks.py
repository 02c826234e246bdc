"""Which stations a drawing labels (a toolkit shared by the plan picture and ``plan.dxf``).

The rule: every 100 units (100 ft, or 100 m), coarser (200, 500, 1000, ...)
where labels would come closer than :data:`STATION_LABEL_GAP` on the plan
picture's sheet, finer (50, 20, 10) on an alignment too short for three labels;
the labelled stations are the whole multiples of that spacing in each region's
own stationing (past an equation, of the stationing in force there).  A
drawing without a sheet of its own (``plan.dxf``) takes the scale the plan
picture would draw the same extent at (:func:`sheet_scale`).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from ..design import Design

__all__ = ["STATION_LABEL_GAP", "SHEET_AREA", "SHEET_PAD", "nice_length", "station_spacing", "sheet_scale",
           "labelled_stations"]

#: Smallest gap between two station labels along the centreline (SVG units of the plan picture).
STATION_LABEL_GAP = 60.0

#: The plan picture's drawing area (x0, y0, x1, y1; SVG units) and the room kept free inside it.
SHEET_AREA = (14.0, 14.0, 1400.0 - 330.0 - 14.0, 990.0 - 14.0)
SHEET_PAD = 36.0


def nice_length(target: float) -> float:
    """The largest 1, 2 or 5 times a power of ten not above ``target`` (> 0)."""
    if not target > 0 or not math.isfinite(target):
        return 1.0
    p = 10.0 ** math.floor(math.log10(target))
    for m in (5.0, 2.0, 1.0):
        if m * p <= target * (1 + 1e-12):
            return m * p
    return p


def station_spacing(length: float, scale: float) -> float:
    """Spacing of station labels (job units) on a drawing.

    Every 100 units (100 ft, or 100 m), coarser (200, 500, 1000, ...) where
    labels would come closer than :data:`STATION_LABEL_GAP` on the canvas,
    finer (50, 20, 10) on an alignment too short for three labels.

    Parameters
    ----------
    length : float
        Length of the alignment, job units.
    scale : float
        Canvas units per job unit.
    """
    s = 100.0
    while length < 3 * s and s > 10.0 and nice_length(s / 1.99) * scale >= STATION_LABEL_GAP:
        s = nice_length(s / 1.99)  # 100 -> 50 -> 20 -> 10
    while s * scale < STATION_LABEL_GAP:
        s = nice_length(s * 2.5 * (1 + 1e-9))  # 100 -> 200 -> 500 -> 1000
    return s


def sheet_scale(width: float, height: float, box: tuple[float, float, float, float] = SHEET_AREA,
                pad: float = SHEET_PAD) -> float:
    """Canvas units per job unit of the largest view showing a ``width`` by ``height`` world
    box (job units) inside ``box`` with ``pad`` around it (1 where that is not finite).
    """
    x0, y0, x1, y1 = box
    w, h = max(x1 - x0 - 2 * pad, 1.0), max(y1 - y0 - 2 * pad, 1.0)
    scale = min(w / max(width, 1e-9), h / max(height, 1e-9))
    return scale if math.isfinite(scale) and scale > 0 else 1.0


def labelled_stations(d: Design, spacing: float) -> NDArray[np.float64]:
    """Internal stations of the whole multiples of ``spacing`` in each region's stationing,
    from the alignment's start to its end.
    """
    a, stn = d.alignment, d.stationing
    if stn.equations:
        labelled = stn.interval_stations(spacing)
    else:
        k0 = math.ceil(a.start_station / spacing - 1e-9)
        k1 = math.floor(a.end_station / spacing + 1e-9)
        labelled = np.arange(k0, k1 + 1, dtype=float) * spacing
    out: NDArray[np.float64] = labelled[(labelled >= a.start_station - 1e-9) & (labelled <= a.end_station + 1e-9)]
    return out
