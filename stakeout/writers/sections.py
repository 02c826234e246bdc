"""Cross-section pieces the writers share (a toolkit): the transitions listed by ``stakeout
curve``, the slope column of the wide setout sheet and the report, the superelevation table of
the report, and widened lines traced as polylines for the drawings.  The superelevation
diagram itself is :mod:`.superelevation`.
"""

from __future__ import annotations

import math

import numpy as np

from ..crosssection import section
from ..design import Design
from .text import Column

__all__ = ["transition_lines", "slope_column", "slope_texts", "superelevation_table",
           "uses_sections", "widened_traces", "TRACE_TOLERANCE"]

#: Largest distance (job units) between a drawn widened line and its chords.
TRACE_TOLERANCE = 0.0005
_MAX_TRACE_POINTS = 100_000



def _slopes(d: Design) -> list[str] | None:
    sl = d.stakes.slope
    if sl is None or not np.isfinite(sl).any():
        return None
    return ["" if math.isnan(v) else f"{round(v, 2) + 0.0:.2f}" for v in sl.tolist()]


def uses_sections(d: Design) -> bool:
    """True when the job has a superelevation table or a template line (``from``,
    ``"superelevation"``, ``steepen_with_inner``, ``rollover``, widening).
    """
    plan = d.sections
    return plan is not None and (plan.has_table or any(ol.template for ol in plan.lines))


def slope_column(d: Design) -> Column | None:
    """``slope %``: the cross slope applied to each stake (empty for the centreline and
    ``dz`` lines); None when no stake has one.
    """
    texts = _slopes(d)
    return None if texts is None else Column("slope %", texts)


def slope_texts(d: Design) -> list[str] | None:
    """The slope of each stake (percent, 2 decimals) for the report of a job that uses
    cross-sections; None otherwise (other jobs' reports are unchanged).
    """
    return _slopes(d) if uses_sections(d) else None


def superelevation_table(d: Design) -> list[list[str]]:
    """The superelevation rows: station, left and right slope (percent, 4 decimals)."""
    plan = d.sections
    if plan is None or not plan.has_table:
        return []
    return [[d.stationing.label(s), f"{left:.4f}", f"{right:.4f}"]
            for s, left, right in zip(plan.se_stations.tolist(), plan.se_left.tolist(), plan.se_right.tolist())]


def widened_traces(d: Design) -> list[tuple[str, np.ndarray, np.ndarray]]:
    """Each widened line as a polyline: (code, northing, easting) through every widening row's
    station, every element end and enough stations between for chords within
    :data:`TRACE_TOLERANCE` of the line (the offset is linear between rows).
    """
    plan, a = d.sections, d.alignment
    if plan is None or not plan.widened:
        return []
    k = max([abs(el.curvature_start) for el in a.elements] + [abs(el.curvature_end) for el in a.elements])
    wide = max(abs(o) for off in plan.widen_offsets if off is not None for o in off.tolist())
    k = k / max(1e-9, 1.0 - k * wide)
    step = math.sqrt(8.0 * TRACE_TOLERANCE / k) if k > 0 else a.length
    count = int(min(_MAX_TRACE_POINTS, max(2, math.ceil(a.length / max(step, 1e-12)) + 1)))
    lo, hi = a.start_station, a.end_station
    rows = np.concatenate([s for s in plan.widen_stations if s is not None])
    s = np.unique(np.concatenate([np.linspace(lo, hi, count), [el.start for el in a.elements], [hi],
                                  rows[(rows > lo) & (rows < hi)]]))
    offsets = section(plan, s, None).offset
    out = []
    for j, ol in enumerate(plan.lines):
        if plan.widen_stations[j] is None:
            continue
        n, e, _ = a.evaluate(s, offsets[:, j], miter=False)
        out.append((ol.code, n, e))
    return out


def transition_lines(d: Design) -> list[str]:
    """The superelevation rows and the widening rows, for ``stakeout curve``."""
    plan = d.sections
    if plan is None:
        return []
    label = d.stationing.label
    out: list[str] = []
    if plan.has_table:
        out += ["", "SUPERELEVATION (cross slopes in percent, negative falls away from the centreline)",
                f"{'station':>12}  {'left':>8}  {'right':>8}  transition"]
        prev = None
        for s, left, right in zip(plan.se_stations.tolist(), plan.se_left.tolist(), plan.se_right.tolist()):
            note = ""
            if prev is not None:
                length = s - prev[0]
                change = max(abs(left - prev[1]), abs(right - prev[2]))
                note = f"over {length:.4f} {d.unit.symbol} from the row before"
                if change > 0.0:
                    note += f", {change / length:.5f} % per {d.unit.symbol}"
            out.append(f"{label(s):>12}  {left:8.4f}  {right:8.4f}  {note}".rstrip())
            prev = (s, left, right)
    for ol, st, off in zip(plan.lines, plan.widen_stations, plan.widen_offsets):
        if st is None or off is None:
            continue
        out += ["", f"WIDENING {ol.code} (offset, negative left)", f"{'station':>12}  {'offset':>10}"]
        out += [f"{label(s):>12}  {o:10.4f}" for s, o in zip(st.tolist(), off.tolist())]
    return out
