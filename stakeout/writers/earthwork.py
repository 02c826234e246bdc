"""``slopestakes.csv`` and ``volumes.csv``: the slope stakes and earthwork volumes of a job with ``[slope_stakes]``.

Both read the design's :class:`~stakeout.earthwork.Earthwork` (one row per
staked station and side; one row per station with both catch points) and
the presentation's catch and reference ids; numbers with 4 decimals, empty
where there is none (NaN).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from ..design import Design
from ..numbers import fixed_strings
from .csvtext import DECIMALS, csv_field, csv_guard, csv_text, csv_text_field

__all__ = ["SLOPESTAKES_COLUMNS", "VOLUMES_COLUMNS", "slopestakes_csv", "volumes_csv"]

SLOPESTAKES_COLUMNS = ("alignment", "station", "station_label", "side", "hinge_point", "hinge_offset",
                       "hinge_elevation", "ground_at_hinge", "kind", "catch_point", "catch_offset", "catch_northing",
                       "catch_easting", "catch_elevation", "catch_cut_fill", "reference_point", "reference_offset",
                       "reference_northing", "reference_easting", "reference_ground", "hd_to_hinge", "vd_to_hinge",
                       "note")
VOLUMES_COLUMNS = ("alignment", "station", "station_label", "cut_area", "fill_area", "cut_volume", "fill_volume",
                   "cumulative_cut", "cumulative_fill")


def _numbers(values: NDArray[np.float64], decimals: int = DECIMALS) -> list[str]:
    """Numbers with ``decimals`` decimals, empty where NaN."""
    v = np.asarray(values, dtype=np.float64)
    none = np.isnan(v)
    return ["" if e else t for t, e in zip(fixed_strings(np.where(none, 0.0, v), decimals), none.tolist())]


def slopestakes_csv(design: Design) -> bytes:
    """``slopestakes.csv``: one row per staked station and side, station order, left before right."""
    ew = design.earthwork
    assert ew is not None and ew.slopes is not None
    r, sp = ew.slopes, design.stakes
    res = r.result
    name = csv_text_field(design.alignment.name)
    labels = sp.labels
    catch_ids, ref_ids = design.presentation.slope_stake_ids
    cols = [
        _numbers(sp.station_values[r.station]),
        [csv_field(csv_guard(labels[i])) for i in r.station.tolist()],
        list(r.side),
        [csv_field(f"{sp.prefix}{k}") for k in sp.number[r.hinge].tolist()],
        _numbers(r.hinge_offset),
        _numbers(res.lines.z),
        _numbers(res.ground_at_hinge),
        [str(k) for k in res.kind.tolist()],
        [csv_field(c) for c in catch_ids],
        _numbers(r.catch_offset),
        _numbers(res.catch_n),
        _numbers(res.catch_e),
        _numbers(res.catch_z),
        _numbers(res.catch_cut_fill),
        [csv_field(c) for c in ref_ids],
        _numbers(r.reference_offset),
        _numbers(res.ref_n),
        _numbers(res.ref_e),
        _numbers(res.ref_ground),
        _numbers(res.ref_dist),
        _numbers(res.vd_to_hinge),
        [csv_field(str(t)) for t in res.note.tolist()],
    ]
    lines = (",".join((name, *row)) for row in zip(*cols))
    return csv_text(SLOPESTAKES_COLUMNS, lines).encode("utf-8")


def volumes_csv(design: Design) -> bytes:
    """``volumes.csv``: areas at every station with both catch points, average-end-area volumes between them."""
    ew = design.earthwork
    assert ew is not None
    sp = design.stakes
    name = csv_text_field(design.alignment.name)
    st = ew.volume_stations
    if ew.sections is None or ew.volumes is None or st.size == 0:
        return csv_text(VOLUMES_COLUMNS, []).encode("utf-8")
    labels = sp.labels
    v = ew.volumes
    cols = [
        _numbers(sp.station_values[st]),
        [csv_field(csv_guard(labels[i])) for i in st.tolist()],
        _numbers(ew.sections.cut_area[st]),
        _numbers(ew.sections.fill_area[st]),
        _numbers(v.cut),
        _numbers(v.fill),
        _numbers(v.cumulative_cut),
        _numbers(v.cumulative_fill),
    ]
    lines = (",".join((name, *row)) for row in zip(*cols))
    return csv_text(VOLUMES_COLUMNS, lines).encode("utf-8")
