"""``control.csv``: the control points of the job, for the data collector.

Every control point the job lists or uses, once each, in the job's order
(:meth:`stakeout.job.Job.control_points`), in the ``points.csv`` layout with
the description ``control``, so the crew loads control and stakes from the
same build instead of keying occupied and backsight coordinates from a sheet.
"""

from __future__ import annotations

from ..design import Design
from .csvtext import DECIMALS, POINTS_COLUMNS, csv_field, csv_text

__all__ = ["control_csv", "DESCRIPTION"]

#: The description every control row carries (the points.csv ``description`` column).
DESCRIPTION = "control"


def control_csv(design: Design) -> bytes:
    """``control.csv``: ``point,northing,easting,elevation,description``, one row per control point."""
    d = DECIMALS
    lines = [",".join((csv_field(cp.id), f"{cp.northing:.{d}f}", f"{cp.easting:.{d}f}",
                       "" if cp.elevation is None else f"{cp.elevation:.{d}f}", DESCRIPTION))
             for cp in design.job.control_points()]
    return csv_text(POINTS_COLUMNS, lines).encode("utf-8")
