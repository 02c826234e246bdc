"""Staked shots against design (numpy, no I/O).

Matching (outputs contract): shots are taken in file order, first by point
number, then, for numbers no design point has, by the nearest design point
within the search radius.  A shot whose design point is already matched is
a ``duplicate`` (reported with its residuals); one with no design point
within reach is ``unmatched``.  Nothing is dropped.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .alignment import Alignment
from .shots import Shots
from .staking import StakePoints

__all__ = ["CheckResult", "check_shots", "STATUSES"]

STATUSES = ("ok", "out", "duplicate", "unmatched")


@dataclass(frozen=True)
class CheckResult:
    """Per-shot results in file order; residuals are NaN where not defined."""

    design_index: NDArray[np.int64]  # -1 when unmatched
    matched_by: list[str]  # "number", "nearest" or ""
    station: NDArray[np.float64]
    offset: NDArray[np.float64]
    d_northing: NDArray[np.float64]
    d_easting: NDArray[np.float64]
    horizontal_error: NDArray[np.float64]
    d_station: NDArray[np.float64]
    d_offset: NDArray[np.float64]
    d_elevation: NDArray[np.float64]
    status: list[str]
    not_staked: list[int]  # design indices that no shot matched
    horizontal_tolerance: float
    vertical_tolerance: float | None
    search_radius: float

    def counts(self) -> dict[str, int]:
        """Number of shots per status."""
        return {s: self.status.count(s) for s in STATUSES}

    @property
    def all_ok(self) -> bool:
        """True when every shot is within tolerance (exit code 0)."""
        return all(s == "ok" for s in self.status)


def _nearest(design_n, design_e, n, e) -> tuple[NDArray[np.int64], NDArray[np.float64]]:
    out_i = np.empty(n.size, dtype=np.int64)
    out_d = np.empty(n.size)
    step = max(1, 2_000_000 // max(1, design_n.size))
    for k in range(0, n.size, step):  # chunks bound memory; each is vectorised
        d = np.hypot(n[k:k + step, None] - design_n[None, :], e[k:k + step, None] - design_e[None, :])
        i = np.argmin(d, axis=1)
        out_i[k:k + step] = i
        out_d[k:k + step] = d[np.arange(i.size), i]
    return out_i, out_d


def check_shots(alignment: Alignment, design: StakePoints, design_elevation: NDArray[np.float64] | None,
                shots: Shots, horizontal_tolerance: float, vertical_tolerance: float | None,
                search_radius: float | None = None) -> CheckResult:
    """Match shots to design points and compute residuals and status.

    Parameters
    ----------
    alignment, design : the built alignment and its stake points.
    design_elevation : design elevations per design point, or None.
    shots : the staked shots, file order.
    horizontal_tolerance, vertical_tolerance : job units.
    search_radius : job units; default 10 x the horizontal tolerance.
    """
    radius = 10.0 * horizontal_tolerance if search_radius is None else search_radius
    m = len(shots)
    by_id = {p: i for i, p in enumerate(design.point)}
    idx = np.full(m, -1, dtype=np.int64)
    how = [""] * m
    taken = np.zeros(len(design), dtype=bool)
    dup = np.zeros(m, dtype=bool)
    for k, pid in enumerate(shots.point):  # pass 1: by point number, in file order
        i = by_id.get(pid)
        if i is None:
            continue
        idx[k], how[k] = i, "number"
        dup[k] = taken[i]
        taken[i] = True
    rest = np.where(idx < 0)[0]
    if rest.size:
        near, dist = _nearest(design.northing, design.easting, shots.northing[rest], shots.easting[rest])
        for k, i, d in zip(rest.tolist(), near.tolist(), dist.tolist()):  # pass 2: nearest, in file order
            if d <= radius:
                idx[k], how[k] = i, "nearest"
                dup[k] = taken[i]
                taken[i] = True
    matched = idx >= 0
    safe = np.where(matched, idx, 0)
    st, off, _ = alignment.locate(shots.northing, shots.easting)
    dst, doff, _ = alignment.locate(design.northing[safe], design.easting[safe])
    nan = np.full(m, np.nan)
    dn = np.where(matched, shots.northing - design.northing[safe], nan)
    de = np.where(matched, shots.easting - design.easting[safe], nan)
    hz = np.hypot(dn, de)
    if design_elevation is not None:
        dz = np.where(matched, shots.elevation - design_elevation[safe], nan)
    else:
        dz = nan
    with np.errstate(invalid="ignore"):
        bad = hz > horizontal_tolerance
        if vertical_tolerance is not None:
            bad |= np.isfinite(dz) & (np.abs(dz) > vertical_tolerance)
    status = np.where(~matched, "unmatched", np.where(dup, "duplicate", np.where(bad, "out", "ok"))).tolist()
    return CheckResult(
        design_index=idx, matched_by=how, station=st, offset=off, d_northing=dn, d_easting=de,
        horizontal_error=hz, d_station=np.where(matched, st - dst, nan), d_offset=np.where(matched, off - doff, nan),
        d_elevation=dz, status=status, not_staked=np.where(~taken)[0].tolist(),
        horizontal_tolerance=horizontal_tolerance, vertical_tolerance=vertical_tolerance, search_radius=radius,
    )
