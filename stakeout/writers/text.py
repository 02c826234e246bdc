"""One text toolkit for the sheets, the reports and the DXF's text.

Fixed-width numbers, turn words, the job header block, the curve-data of
every curve (T_A / T_B named by the side they lie on), page width and
paging, and the cautions printed at the foot of every sheet and report.
Nothing here is time-dependent, so the same design gives the same bytes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from numpy.typing import ArrayLike

from ..alignment import Alignment, Arc, Curve, Element, Spiral
from ..angles import format_dms
from ..design import Design
from ..stations import Stationing

__all__ = [
    "CAUTION_LINES", "SIGN_OFF_LINES", "WIDTH", "PAGE_LINES", "rounded", "fixed", "fixed_or_empty", "finite_or_empty",
    "turn_word", "side_text", "clip", "wrap_lines", "header_lines", "CurveText", "curve_texts", "curve_lines",
    "paged", "paged_parts", "SheetPart", "spiral_line", "end_radii",
]

#: The cautions printed at the foot of every sheet and report.
CAUTION_LINES = (
    "CAUTION: computed by stakeout from the job file named above. Check every",
    "value independently (closures, a second computation, field checks on known",
    "control) before staking. Local codes and the judgement of a licensed surveyor",
    "govern; this sheet does not replace them.",
)

#: The sign-off block of every printed sheet and report.
SIGN_OFF_LINES = (
    "Prepared by ______________________________   date ______________",
    "Checked by  ______________________________   date ______________",
)

#: Widest line of a printed sheet (characters).
WIDTH = 100
#: Lines on one printed page at most (a common printer default fits 60 to 66).
PAGE_LINES = 60


# ---- numbers ---------------------------------------------------------------------------
def rounded(values: ArrayLike, decimals: int) -> list[float]:
    """Round to ``decimals`` and clear negative zeros; a plain list of floats."""
    return (np.round(np.asarray(values, dtype=float), decimals) + 0.0).tolist()


def fixed(values: ArrayLike, decimals: int) -> list[str]:
    """Format numbers with a fixed number of decimals (never ``-0.000``)."""
    fmt = f"%.{decimals}f"
    return [fmt % v for v in rounded(values, decimals)]


def fixed_or_empty(value: float | None, decimals: int) -> str:
    """Format one number, or an empty field for ``None``."""
    if value is None:
        return ""
    return fixed([value], decimals)[0]


def finite_or_empty(value: float, decimals: int) -> str:
    """Format one number, or an empty field for NaN and infinities."""
    if not math.isfinite(value):
        return ""
    return f"{round(value, decimals) + 0.0:.{decimals}f}"


def clip(text: str, width: int = WIDTH) -> str:
    """``text`` cut to ``width`` characters, ending in ``...`` where it was cut."""
    return text if len(text) <= width else text[: max(0, width - 3)] + "..."


def wrap_lines(lines: list[str], width: int = WIDTH) -> list[str]:
    """Lines over ``width`` broken at spaces, continued with an indent (nothing is lost)."""
    import textwrap

    out: list[str] = []
    for line in lines:
        if len(line) <= width:
            out.append(line)
            continue
        indent = " " * min(10, len(line) - len(line.lstrip()) + 4)
        out.extend(textwrap.wrap(line, width, subsequent_indent=indent, break_long_words=True,
                                 break_on_hyphens=False, drop_whitespace=True))
    return out


def side_text(offsets: ArrayLike, decimals: int) -> list[str]:
    """Offsets as a crew reads them: ``16.00 LT``, ``12.00 RT``, ``0.00`` on the line.

    Parameters
    ----------
    offsets : array
        Offsets (job units), negative left and positive right looking up-station.
    decimals : int
        Decimals printed.

    Returns
    -------
    list of str
        The size with its side; an offset that rounds to zero has no side.
    """
    r = rounded(offsets, decimals)
    fmt = f"%.{decimals}f"
    return [fmt % abs(v) + (" LT" if v < 0 else " RT" if v > 0 else "") for v in r]


def turn_word(turn: int) -> str:
    """``right``, ``left``, or empty for a straight element."""
    return "right" if turn > 0 else ("left" if turn < 0 else "")


# ---- the job header ------------------------------------------------------------------------
def header_lines(title: str, d: Design) -> list[str]:
    """The header block every sheet opens with: job, file and hash, alignment, units, CRS."""
    job = d.job
    out = [
        clip(f"{title}   {job.info.name}".rstrip()),
        clip(f"job file  {Path(job.path).name}"),
        f"          sha256 {job.sha256}",
    ]
    for f in job.design_files:
        out.append(clip(f"{f.role} from {Path(f.path).name}"))
        out.append(f"          sha256 {f.sha256}")
    out += [
        clip(f"alignment {d.alignment.name}   units {job.info.unit.label}"),
        clip(f"CRS       {d.crs_label or 'none: local grid'}"),
    ]
    return out


# ---- curve data ------------------------------------------------------------------------------
@dataclass(frozen=True)
class CurveText:
    """A curve's data as text pieces, shared by the sheets, the report and the plan.

    ``back_side``/``ahead_side`` name the two-centred tangents:
    ``("T_A", "R1", radius)`` on the larger-radius side, ``("T_B", "R2",
    radius)`` on the smaller; ``None`` for other curves.
    """

    curve: Curve
    turn: str
    delta: str
    pi_label: str
    back_side: tuple[str, str, float] | None
    ahead_side: tuple[str, str, float] | None
    arcs: tuple[tuple[Arc, str, str], ...]  # (arc, start label, end label)
    spirals: tuple[tuple[Spiral, str, str], ...] = ()  # (spiral, start label, end label)
    external: float | None = None  # PI to the nearest point of a curve with spirals

    @property
    def kind(self) -> str:
        """``simple curve``, ``compound curve, 2 arcs``, ``curve with spirals, 1 arc, 2 spirals``."""
        a, s = len(self.arcs), len(self.spirals)
        if not s:
            return "simple curve" if a == 1 else f"compound curve, {a} arcs"
        return f"curve with spirals, {a} arc{'s' if a != 1 else ''}, {s} spiral{'s' if s != 1 else ''}"


def end_radii(el: Element) -> tuple[str, str]:
    """An element's radius at its start and its end as text (``inf`` where infinite)."""
    r0, r1 = (f"{r:.4f}" if r is not None else "inf" for r in (el.radius_start, el.radius_end))
    return r0, r1


def spiral_line(sp: Spiral, a0: str, a1: str) -> str:
    """One line of a spiral's data: stations, length, radii, central angle."""
    r0, r1 = end_radii(sp)
    return f"{a0} to {a1}  L {sp.length:.4f}  R {r0} to {r1}  theta {format_dms(sp.central_angle, 1)}"


def curve_texts(alignment: Alignment, stationing: Stationing) -> list[CurveText]:
    """Text pieces of every curve of the alignment."""
    out = []
    for c in alignment.curves:
        arcs = [alignment.elements[i] for i in c.elements]
        radii = [a.radius for a in arcs if isinstance(a, Arc)]
        back = ahead = None
        t = c.tangents
        if t is not None and t.t_a_side is not None:
            big, small = ("T_A", "R1", max(radii)), ("T_B", "R2", min(radii))
            back, ahead = (big, small) if t.t_a_side == "back" else (small, big)
        spirals = tuple((a, stationing.label(a.start), stationing.label(a.end)) for a in arcs
                        if isinstance(a, Spiral))
        external = None
        if spirals and c.pi_northing is not None and c.pi_easting is not None:
            external = _external(arcs, c.pi_northing, c.pi_easting)
        out.append(CurveText(
            c, turn_word(c.turn), str(format_dms(c.delta, 1)), stationing.label(c.pi_station), back, ahead,
            tuple((a, stationing.label(a.start), stationing.label(a.end)) for a in arcs if isinstance(a, Arc)),
            spirals, external,
        ))
    return out


def _external(run: list[Element], pi_n: float, pi_e: float) -> float:
    """Distance from the PI to the nearest point of a curve (dense samples refined on the elements)."""
    from ..alignment import Alignment

    part = Alignment.from_elements("", list(run), (), ())
    return float(part.locate(pi_n, pi_e).distance)


def curve_lines(d: Design) -> list[str]:
    """Curve data for the foot of a sheet: per curve its PI and whole tangents
    (T_A / T_B named by side for two-centred curves), then one line per arc.
    """
    out = ["CURVE DATA"]
    if not d.alignment.curves:
        out.append("  (no curves)")
    for ct in curve_texts(d.alignment, d.stationing):
        c, t = ct.curve, ct.curve.tangents
        head = f"  curve {c.number}  {ct.turn}  I {ct.delta}"
        if c.pi_station is None or t is None:
            out.append(head + "  (I of 180 deg or more: no PI)")
        else:
            out.append(head + f"  PI {ct.pi_label}  N {c.pi_northing:.4f}  E {c.pi_easting:.4f}")
            side_b = f" = {ct.back_side[0]} ({ct.back_side[1]} {ct.back_side[2]:.4f} side)" if ct.back_side else ""
            side_a = f" = {ct.ahead_side[0]} ({ct.ahead_side[1]} {ct.ahead_side[2]:.4f} side)" if ct.ahead_side else ""
            out.append(f"    tangent PI to start (back)  {t.back:.4f}{side_b}")
            out.append(f"    tangent PI to end (ahead)   {t.ahead:.4f}{side_a}")
        for k, (arc, a0, a1) in enumerate(ct.arcs, start=1):
            p = arc.props
            assert p is not None
            out.append(f"    arc {k}  {a0} to {a1}  R {p.radius:.4f}  "
                       f"delta {format_dms(p.delta, 1)}  L {p.length:.4f}  chord {p.chord:.4f}")
        for k, (sp, a0, a1) in enumerate(ct.spirals, start=1):
            out.append(f"    spiral {k}  {spiral_line(sp, a0, a1)}")
        if ct.external is not None:
            out.append(f"    external (PI to the curve)  {ct.external:.4f}")
    return out


# ---- pages -------------------------------------------------------------------------------------
@dataclass(frozen=True)
class SheetPart:
    """One part of a printed sheet: the lines above its table, the table's
    column header and rows, and the line that opens its continuation pages.
    Every part after the first starts on a new page.
    """

    head: list[str]
    columns: list[str]
    rows: list[str]
    continued: str = ""


def paged(head: list[str], columns: list[str], rows: list[str], title: str, foot: list[str],
          width: int = WIDTH) -> str:
    """A printable sheet: the header, then pages of at most :data:`PAGE_LINES` lines
    with the column header repeated (pages split by a form feed), the foot
    and the cautions; no line over ``width`` characters (:data:`WIDTH`, wider
    only where the table's own columns need it).
    """
    return paged_parts(head, [SheetPart([], columns, rows)], title, foot, width)


def paged_parts(head: list[str], parts: list[SheetPart], title: str, foot: list[str], width: int = WIDTH) -> str:
    """A printable sheet of several tables (:class:`SheetPart`), each starting on a new page.

    The first page opens with ``head`` and the first part's head; every
    later part opens a page with its own head; a part's rows run on over
    pages opened by its ``continued`` line, the column header repeated on
    each.  No page holds more than :data:`PAGE_LINES` lines; pages are
    numbered through the whole sheet and split by a form feed; the foot and
    the cautions close it (on a page of their own when the last is full).
    The tables are as wide as their data; header and foot lines wider than
    that (or than ``width``) are wrapped, the page titles cut.
    """
    width = max(width, *(len(c) for p in parts for c in p.columns), *(len(r) for p in parts for r in p.rows))
    head = wrap_lines(head, width)
    closing = [""] + wrap_lines(foot, width) + [""] + list(SIGN_OFF_LINES) + [""] + list(CAUTION_LINES)
    pages: list[list[str]] = []
    for k, part in enumerate(parts):
        rule = "-" * max(len(c) for c in part.columns)
        columns = [c.rstrip() for c in part.columns]
        rows = part.rows
        first = True
        while first or rows:
            if k == 0 and first:
                opening = head + wrap_lines(part.head, width) + ["page {page} of {pages}"]
            elif first:
                opening = ["{title}", ""] + wrap_lines(part.head, width)
            else:
                opening = ["{title}", part.continued]
            room = max(5, PAGE_LINES - len(opening) - len(columns) - 3)
            pages.append(opening + [rule] + columns + [rule] + rows[:room] + [rule])
            rows = rows[room:]
            first = False
    if len(pages[-1]) + len(closing) > PAGE_LINES:
        pages.append(["{title}"] + closing)
    else:
        pages[-1].extend(closing)
    total = len(pages)
    out: list[str] = []
    for n, lines in enumerate(pages, start=1):
        for i, line in enumerate(lines):
            if line == "{title}":
                line = ("\f" if i == 0 else "") + clip(f"{title}   page {n} of {total}", width)
            elif line == "page {page} of {pages}":
                line = f"page {n} of {total}"
            out.append(line)
    return "\n".join(out) + "\n"
