"""The canvas of the pictures: sheet size, fonts and colours, the world-to-canvas
:class:`View`, and small helpers (numbers as SVG text, text widths, round lengths, extents).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..stationmarks import SHEET_AREA, SHEET_PAD, STATION_LABEL_GAP, nice_length, sheet_scale, station_spacing


__all__ = [
    "SHEET_WIDTH", "SHEET_HEIGHT", "MARGIN", "PANEL_WIDTH", "AREA", "PAD", "LABEL_MAX_STAKES", "TICK_MAX_STATIONS",
    "THIN_CELL", "STATION_LABEL_GAP", "FONT_STAKE", "FONT_LABEL", "FONT_PANEL", "CHAR_EM", "MONO", "SANS",
    "CODE_COLOURS", "CL_COLOUR", "OFFSET_COLOUR", "TANGENT_COLOUR", "CONTROL_COLOUR", "STATUS_COLOURS",
    "nice_length", "station_spacing", "View", "num", "fmt_short", "text_width", "wrap_text", "round_label",
    "circles_path", "thin", "right_normal", "extent", "grow_extent", "inside_frame", "to_frame", "short_hash",
]


F = NDArray[np.float64]


#: Sheet size in SVG units.
SHEET_WIDTH = 1400.0


SHEET_HEIGHT = 990.0


MARGIN = 14.0


PANEL_WIDTH = 330.0


#: The drawing area (x0, y0, x1, y1) left of the panel.
AREA = (MARGIN, MARGIN, SHEET_WIDTH - PANEL_WIDTH - MARGIN, SHEET_HEIGHT - MARGIN)
assert AREA == SHEET_AREA  # the sheet the station-label rule (writers/stationmarks) assumes


#: Room kept free inside the drawing area around the job, for labels.
PAD = SHEET_PAD


#: Over this many stakes the point numbers are not drawn and the stakes are thinned to one mark a cell.
LABEL_MAX_STAKES = 5000


#: Over this many staked stations only the labelled stations get a tick.
TICK_MAX_STATIONS = 2000


#: Thinned stakes: one mark per cell of this size (SVG units).
THIN_CELL = 2.0




#: Font sizes (SVG units) and the advance of one character of a monospaced font (em).
FONT_STAKE = 8.5


FONT_LABEL = 9.5


FONT_PANEL = 9.5


CHAR_EM = 0.61


MONO = "'DejaVu Sans Mono','Liberation Mono',Menlo,Consolas,monospace"


SANS = "'DejaVu Sans','Liberation Sans',Arial,Helvetica,sans-serif"


#: One colour per offset line, in the job's order (the centreline's stakes are drawn black).
CODE_COLOURS = ("#1f77b4", "#d95f02", "#2ca02c", "#9467bd", "#8c564b", "#e377c2", "#17becf", "#bcbd22")


CL_COLOUR = "#b2182b"


OFFSET_COLOUR = "#7a7a7a"


TANGENT_COLOUR = "#2166ac"


CONTROL_COLOUR = "#8e24aa"


#: Colours of the check statuses (any other status is drawn black).
STATUS_COLOURS = {"ok": "#1a9850", "out": "#d73027", "duplicate": "#f46d43", "unmatched": "#7b3294",
                  "superseded": "#969696", "control": "#2166ac"}


def num(v: float) -> str:
    """One coordinate on the canvas: two decimals, never ``-0.00``."""
    t = f"{v:.2f}"
    return "0.00" if t == "-0.00" else t


def text_width(text: str, size: float) -> float:
    """Width of ``text`` set in the monospaced font at ``size`` (SVG units)."""
    return len(text) * CHAR_EM * size


def wrap_text(text: str, chars: int) -> list[str]:
    """``text`` broken at spaces into lines of at most ``chars`` characters."""
    import textwrap

    return textwrap.wrap(text, chars, break_long_words=True, break_on_hyphens=False) or [""]


def round_label(label: str) -> str:
    """A station label at a round station without its zero decimals (``15+00.00`` -> ``15+00``)."""
    head, dot, tail = label.partition(".")
    return head if dot and set(tail) <= {"0"} else label


@dataclass(frozen=True)
class View:
    """World (easting, northing; job units) to canvas (x, y; SVG units), north up.

    Attributes
    ----------
    e0, n0 : float
        The world point drawn at (cx, cy).
    cx, cy : float
        Canvas centre of the drawing.
    scale : float
        Canvas units per job unit.
    """

    e0: float
    n0: float
    cx: float
    cy: float
    scale: float

    @classmethod
    def fit(cls, emin: float, nmin: float, emax: float, nmax: float,
            box: tuple[float, float, float, float] = AREA, pad: float = PAD) -> "View":
        """The largest view showing the world box inside the canvas box with ``pad`` around it."""
        x0, y0, x1, y1 = box
        scale = sheet_scale(emax - emin, nmax - nmin, box, pad)
        return cls((emin + emax) / 2, (nmin + nmax) / 2, (x0 + x1) / 2, (y0 + y1) / 2, scale)

    def x(self, e: Any) -> F:
        """Canvas x of eastings."""
        return self.cx + (np.asarray(e, dtype=float) - self.e0) * self.scale

    def y(self, n: Any) -> F:
        """Canvas y of northings."""
        return self.cy - (np.asarray(n, dtype=float) - self.n0) * self.scale

    def xy1(self, e: float, n: float) -> tuple[float, float]:
        """One point on the canvas."""
        return float(self.x(e)), float(self.y(n))


def fmt_short(v: float) -> str:
    """A round length without needless decimals (``2.5``, ``100``)."""
    t = f"{v:.6f}".rstrip("0").rstrip(".")
    return t or "0"


def circles_path(x: F, y: F, r: float) -> str:
    """Path data of small circles (one subpath each)."""
    d = 2 * r
    return "".join(f"M{num(p - r)},{num(q)}a{num(r)},{num(r)} 0 1,0 {num(d)},0a{num(r)},{num(r)} 0 1,0 {num(-d)},0"
                   for p, q in zip(x.tolist(), y.tolist()))


def thin(x: F, y: F, cell: float) -> NDArray[np.int64]:
    """Indices of the first point in each canvas cell (vectorised), in input order."""
    key = np.floor(x / cell).astype(np.int64) * 1_000_003 + np.floor(y / cell).astype(np.int64)
    _, first = np.unique(key, return_index=True)
    return np.sort(first)


def right_normal(az: F) -> tuple[F, F]:
    """Canvas direction square to the right of azimuths (degrees)."""
    r = np.radians(az)
    return np.cos(r), np.sin(r)


def extent(points_e: list[F], points_n: list[F]) -> tuple[float, float, float, float]:
    e = np.concatenate([np.asarray(p, dtype=float).ravel() for p in points_e])
    n = np.concatenate([np.asarray(p, dtype=float).ravel() for p in points_n])
    e, n = e[np.isfinite(e)], n[np.isfinite(n)]
    if e.size == 0:
        return 0.0, 0.0, 1.0, 1.0
    return float(e.min()), float(n.min()), float(e.max()), float(n.max())


def grow_extent(ext: tuple[float, float, float, float], e: F, n: F, reach: float) -> tuple[float, float, float, float]:
    """The extent grown to take in points lying within ``reach`` (a fraction of its size) of it."""
    emin, nmin, emax, nmax = ext
    size = max(emax - emin, nmax - nmin, 1e-9)
    near = ((e >= emin - reach * size) & (e <= emax + reach * size) & (n >= nmin - reach * size)
            & (n <= nmax + reach * size))
    if near.any():
        return (min(emin, float(e[near].min())), min(nmin, float(n[near].min())),
                max(emax, float(e[near].max())), max(nmax, float(n[near].max())))
    return ext


def short_hash(sha: str) -> str:
    return sha[:16]


def inside_frame(x: float, y: float, inset: float) -> bool:
    x0, y0, x1, y1 = AREA
    return x0 + inset <= x <= x1 - inset and y0 + inset <= y <= y1 - inset


def to_frame(x: float, y: float, x2: float, y2: float, inset: float) -> tuple[float, float]:
    """Where the segment from (x, y) inside the drawing toward (x2, y2) meets the frame (inset)."""
    x0, y0, x1, y1 = AREA
    t = 1.0
    dx, dy = x2 - x, y2 - y
    for lo, hi, p, dp in ((x0 + inset, x1 - inset, x, dx), (y0 + inset, y1 - inset, y, dy)):
        if dp > 0:
            t = min(t, (hi - p) / dp)
        elif dp < 0:
            t = min(t, (lo - p) / dp)
    t = max(t, 0.0)
    return x + t * dx, y + t * dy
