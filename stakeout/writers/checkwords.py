"""The words of a staked-point check, shared by ``check.txt`` and ``check.html`` (a toolkit):
which design point a shot was matched to, the cut or fill to mark, the status in words and
what the crew does about a shot.
"""

from __future__ import annotations

import math

import numpy as np

from ..check import CheckResult
from ..design import Design
from ..shots import Shots

__all__ = ["target_id", "design_point_id", "shot_stations", "shot_label", "shot_alignments",
           "cut_fill", "status_text", "move_decimals", "move_text", "what_to_do", "listed_shots",
           "LISTED_SHOTS", "NOT_STAKED_LISTED"]


def design_point_id(d: Design, i: int) -> str:
    """The id of design point ``i`` (with several alignments, counted over all of them in job order)."""
    for p in d.parts or (d,):
        if i < len(p.stakes):
            return p.stakes.point_id(i)
        i -= len(p.stakes)
    raise IndexError(i)


def _part_of(d: Design, r: CheckResult) -> list[tuple[Design, np.ndarray]]:
    """Each alignment with the shots located on it (one alignment: every shot)."""
    if r.located_on is None or not d.parts:
        return [(d, np.ones(r.station.size, dtype=bool))]
    return [(p, r.located_on == k) for k, p in enumerate(d.parts)]


def shot_stations(d: Design, r: CheckResult) -> np.ndarray:
    """The station in force at each shot's internal station, on the alignment it is located on."""
    out = np.array(r.station, dtype=np.float64, copy=True)
    for p, sel in _part_of(d, r):
        out[sel] = p.stationing.station(r.station[sel])
    return out


def shot_label(d: Design, r: CheckResult, k: int) -> str:
    """The station label of shot ``k`` on the alignment it is located on."""
    p = d if r.located_on is None or not d.parts else d.parts[int(r.located_on[k])]
    return p.stationing.label(float(r.station[k]))


def shot_alignments(d: Design, r: CheckResult) -> list[str]:
    """The alignment of the design point each shot matched, '' for control and unmatched shots."""
    names = [p.alignment.name for p in (d.parts or (d,))]
    on = r.located_on if r.located_on is not None else np.zeros(r.station.size, dtype=np.int64)
    return [names[int(j)] if i >= 0 else "" for i, j in zip(r.design_index.tolist(), on.tolist())]


def target_id(d: Design, r: CheckResult, k: int) -> str:
    """The id of the design or control point shot ``k`` was matched to, or empty."""
    i, c = int(r.design_index[k]), int(r.control_index[k])
    if i >= 0:
        return design_point_id(d, i)
    return r.control_ids[c] if c >= 0 else ""


def cut_fill(d_elevation: np.ndarray, decimals: int) -> list[str]:
    """Cut or fill to mark on each stake: ``C 0.42`` where the shot is above
    design (cut down to grade), ``F 0.17`` below; empty where unknown.
    """
    out = []
    for v in d_elevation.tolist():
        if not math.isfinite(v):
            out.append("")
            continue
        t = f"{abs(v):.{decimals}f}"
        out.append(f"C {t}" if v > 0 and float(t) > 0 else (f"F {t}" if v < 0 and float(t) > 0 else f"0 {t}"))
    return out


def status_text(r: CheckResult, k: int) -> str:
    """The shot's status, and for ``out`` (or a control shot beyond tolerance)
    which tolerance it fails: ``out (horizontal)``, ``control out (both)``.
    """
    s, f = r.status[k], r.fails[k]
    if s == "out":
        return f"out ({f})"
    if s == "control" and f:
        return f"control out ({f})"
    return s


def move_decimals(is_feet: bool, horizontal_tolerance: float) -> int:
    """Decimals of a correction: 2 in feet, 3 in metres, more when the
    tolerance is finer than five units of the last one (at most 4).
    """
    dec = 2 if is_feet else 3
    while dec < 4 and 10.0**-dec > horizontal_tolerance / 5:
        dec += 1
    return dec


def move_text(d_along: float, d_across: float, d_elevation: float, horizontal: bool, vertical: bool,
              decimals: int) -> str:
    """The correction of a stake in the crew's terms, looking up-station.

    The stake moves from where it was shot to design, by ground distances
    along and square to the alignment's direction at the stake (never
    station differences, which differ on an offset line of a curve):
    ``ahead`` or ``back``, ``right`` or ``left``, and, for a vertical
    failure, its top ``down`` (shot above design) or ``up``.  Components
    that round to zero are left out.

    Parameters
    ----------
    d_along, d_across, d_elevation : float
        Shot minus design: along and square to the alignment at the stake
        (ground distances, positive ahead and right) and elevation, job units.
    horizontal, vertical : bool
        Which tolerances the shot fails: only those parts are given.
    decimals : int
        Decimals of the distances.
    """
    parts = []
    if horizontal:
        for v, plus, minus in ((-d_along, "ahead", "back"), (-d_across, "right", "left")):
            if math.isfinite(v) and round(abs(v), decimals) > 0:
                parts.append(f"{abs(v):.{decimals}f} {plus if v > 0 else minus}")
    if vertical and math.isfinite(d_elevation) and round(abs(d_elevation), decimals) > 0:
        parts.append(f"{abs(d_elevation):.{decimals}f} {'down' if d_elevation > 0 else 'up'}")
    return "move " + ", ".join(parts) if parts else ""


def what_to_do(d: Design, shots: Shots, r: CheckResult, k: int) -> str:
    """What the crew does about shot ``k``, for ``check.txt`` and ``check.html``:
    the move for one out of tolerance, which shot governs for a duplicate or
    a superseded one, what to check for an unmatched shot or a control point
    that is off; empty for a shot within tolerance.
    """
    s = r.status[k]
    by_position = " (matched by position)" if r.matched_by[k] == "nearest" else ""
    g = int(r.related[k])
    governor = f"shot {shots.point[g]} on line {shots.line[g]}" if g >= 0 else "another shot"
    if s == "out":
        f = r.fails[k]
        what = move_text(r.ground_along[k], r.ground_across[k], r.d_elevation[k], f in ("horizontal", "both"),
                         f in ("vertical", "both"), move_decimals(d.unit.is_feet, r.horizontal_tolerance))
        return f"{what or 'reset it'}{by_position}"
    if s == "misnumbered":
        assert r.stored_as is not None
        stored = design_point_id(d, int(r.stored_as[k]))
        return (f"stored as {stored} but lies on {target_id(d, r, k)} (within tolerance): confirm which stake it "
                f"is and correct the number; {stored} is still to set")
    if s == "duplicate":
        return f"design point {target_id(d, r, k)} already has {governor}{by_position}; find which stake is the point"
    if s == "unmatched":
        return f"no design or control point within {r.search_radius:.4f}; check the point number and the shot"
    if s == "superseded":
        return f"superseded by {governor} ({r.status[g]})"
    if s == "control" and r.fails[k]:
        return (f"control point {target_id(d, r, k)} is off{by_position}; check the setup (occupied point, "
                "backsight, heights) before staking on")
    return ""


#: Ids of design points not staked listed in ``check.txt`` (all are in ``restake.csv``).
NOT_STAKED_LISTED = 400


#: Above this many shots, check.txt and check.html list only the shots that need attention, at
#: most this many of them, and give the counts of the rest (check.csv lists every shot).
LISTED_SHOTS = 5000


def listed_shots(r: CheckResult) -> tuple[list[int], list[int], list[int], str]:
    """The shots check.txt and check.html list: needing attention, within tolerance, superseded
    (file order), and a note of what is left out (empty when everything is listed).
    """
    m = len(r.status)
    attention = np.flatnonzero(r.attention).tolist()
    if m <= LISTED_SHOTS:
        fine = np.flatnonzero(r.within).tolist()
        superseded = [k for k in range(m) if r.status[k] == "superseded"]
        return attention, fine, superseded, ""
    more = len(attention) - LISTED_SHOTS
    note = (f"{m:,} shots, more than {LISTED_SHOTS:,}: only the shots needing attention are listed"
            + (f" (the first {LISTED_SHOTS:,}; {more:,} more)" if more > 0 else "")
            + "; every shot is in check.csv")
    return attention[:LISTED_SHOTS], [], [], note
