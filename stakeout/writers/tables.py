"""The CSV files of the outputs contract: points, stations, curves.

RFC 4180, UTF-8, ``\\n`` line ends, header first.  Point ids and codes are
restricted to a safe character set by the job-file reader, so no field
needs quoting; :func:`csv_field` quotes anything else per RFC 4180.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

import numpy as np

from ..alignment import Alignment, degree_of_curve_arc
from ..angles import format_azimuth_dms, format_dms
from ..setout import Setout
from ..staking import StakePoints
from ..stations import format_station
from ..units import Unit
from .numbers import fixed, fixed_or_empty, rounded

__all__ = [
    "POINTS_COLUMNS", "STATIONS_COLUMNS", "CURVES_COLUMNS",
    "SETOUT_COLUMNS", "csv_field", "csv_text", "points_csv", "stations_csv", "curves_csv", "setout_csv",
    "descriptions",
]

POINTS_COLUMNS = ("point", "northing", "easting", "elevation", "description")
STATIONS_COLUMNS = ("point", "station", "station_label", "offset", "northing", "easting",
                    "elevation", "feature", "code")
CURVES_COLUMNS = ("curve", "pi_station", "pc_station", "pt_station", "radius", "delta_deg", "delta_dms",
                  "length", "tangent_back", "tangent_ahead", "chord", "external", "middle_ordinate", "turn",
                  # added columns (allowed after the contract's)
                  "arc", "center_northing", "center_easting", "degree_of_curve")

DECIMALS = 4  # coordinates, stations, offsets and distances in CSV


def csv_field(value: str) -> str:
    """Quote a field per RFC 4180 when it holds a comma, quote or line break."""
    if any(c in value for c in ',"\r\n'):
        return '"' + value.replace('"', '""') + '"'
    return value


def csv_text(header: Sequence[str], lines: Iterable[str]) -> str:
    """Join a header and already formatted lines into CSV text."""
    body = "\n".join(lines)
    return ",".join(header) + "\n" + (body + "\n" if body else "")


def descriptions(sp: StakePoints, unit: Unit) -> list[str]:
    """``CODE STATION OFFSET`` per point, e.g. ``CL 12+50.00 0.00``."""
    offs = fixed(sp.offset, unit.station_decimals)
    return [f"{c} {s} {o}" for c, s, o in zip(sp.code, sp.station_label, offs)]


def _elevation(sp: StakePoints) -> str:
    return "" if sp.elevation is None else fixed([sp.elevation], DECIMALS)[0]


def points_csv(sp: StakePoints, unit: Unit) -> str:
    """``points.csv``: the file a crew loads onto a data collector."""
    elev = _elevation(sp)
    fmt = f"%s,%.{DECIMALS}f,%.{DECIMALS}f,{elev},%s"
    rows = map(fmt.__mod__, zip(sp.point, rounded(sp.northing, DECIMALS), rounded(sp.easting, DECIMALS),
                                descriptions(sp, unit)))
    return csv_text(POINTS_COLUMNS, rows)


def stations_csv(sp: StakePoints) -> str:
    """``stations.csv``: every staked point with where it sits on the alignment."""
    elev = _elevation(sp)
    d = DECIMALS
    fmt = f"%s,%.{d}f,%s,%.{d}f,%.{d}f,%.{d}f,{elev},%s,%s"
    rows = map(fmt.__mod__, zip(sp.point, rounded(sp.station, d), sp.station_label, rounded(sp.offset, d),
                                rounded(sp.northing, d), rounded(sp.easting, d), sp.feature, sp.code))
    return csv_text(STATIONS_COLUMNS, rows)


def curves_csv(alignment: Alignment, unit: Unit) -> str:
    """``curves.csv``: one row per arc; a compound curve has a row per arc.

    ``pc_station``/``pt_station`` are the arc's own start and end (PC or
    PCC/PRC, PCC/PRC or PT); ``pi_station`` is the PI of the whole curve.
    """
    rows = []
    d = DECIMALS
    for curve in alignment.curves:
        for arc_no, i in enumerate(curve.elements, start=1):
            el = alignment.elements[i]
            assert el.arc is not None and el.delta is not None and el.radius is not None
            p = el.arc
            fields = [
                str(curve.number),
                fixed_or_empty(curve.pi_station, d),
                fixed_or_empty(el.start_station, d),
                fixed_or_empty(el.end_station, d),
                fixed_or_empty(p.radius, d),
                f"{el.delta:.8f}",
                str(format_dms(el.delta, 1)),
                fixed_or_empty(p.length, d),
                fixed_or_empty(p.tangent, d),
                fixed_or_empty(p.tangent, d),
                fixed_or_empty(p.chord, d),
                fixed_or_empty(p.external, d),
                fixed_or_empty(p.middle_ordinate, d),
                "right" if el.turn > 0 else "left",
                str(arc_no),
                fixed_or_empty(el.center_northing, d),
                fixed_or_empty(el.center_easting, d),
                f"{degree_of_curve_arc(p.radius):.8f}" if unit.is_feet else "",
            ]
            rows.append(",".join(fields))
    return csv_text(CURVES_COLUMNS, rows)


def station_labels(values: np.ndarray, station_length: int, unit: Unit) -> list[str]:
    """Station labels with the unit's decimals."""
    out = format_station(values, station_length, unit.station_decimals)
    return out if isinstance(out, list) else [out]


SETOUT_COLUMNS = ("point", "station", "offset", "azimuth_deg", "azimuth_dms", "angle_right_deg",
                  "angle_right_dms", "grid_distance", "ground_distance")


def setout_csv(sp: StakePoints, so: Setout) -> str:
    """``setout.csv``: angle and distance from the occupied point to every point.

    With instrument and target heights and elevations, ``zenith_deg`` and
    ``slope_distance`` follow as added columns.
    """
    d = DECIMALS
    cols = [sp.point, rounded(sp.station, d), rounded(sp.offset, d), rounded(so.azimuth, 8),
            format_azimuth_dms(so.azimuth, 1), rounded(so.angle_right, 8), format_azimuth_dms(so.angle_right, 1),
            rounded(so.grid_distance, d), rounded(so.ground_distance, d)]
    header = list(SETOUT_COLUMNS)
    fmt = f"%s,%.{d}f,%.{d}f,%.8f,%s,%.8f,%s,%.{d}f,%.{d}f"
    if so.zenith is not None and so.slope_distance is not None:
        header += ["zenith_deg", "slope_distance"]
        cols += [rounded(so.zenith, 8), rounded(so.slope_distance, d)]
        fmt += f",%.8f,%.{d}f"
    return csv_text(header, map(fmt.__mod__, zip(*cols)))
