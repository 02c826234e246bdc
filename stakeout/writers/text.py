"""One text toolkit for the sheets, the reports and the DXF's text.

Fixed-width numbers, turn words, the job header block, the curve-data of
every curve (T_A / T_B named by the side they lie on), page width and
paging, and the cautions printed at the foot of every sheet and report.
Nothing here is time-dependent, so the same design gives the same bytes.
"""

from __future__ import annotations

import bisect
import math
from array import array
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, replace
from functools import cached_property
from pathlib import Path
from typing import TYPE_CHECKING, Any, Protocol, TypeVar

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..angles import format_azimuth_dms, format_dms
from ..design import Design
from ..numbers import fixed_string, fixed_strings, round_to
from ..presentation import AT_INSTRUMENT_NOTE, FLAG, CurveView, DeflectionTable, Element, PerKind
from . import rows

if TYPE_CHECKING:
    from ..stations import Stationing

__all__ = [
    "CAUTION_LINES", "SIGN_OFF_LINES", "WIDTH", "PAGE_LINES", "rounded", "fixed", "fixed_or_empty", "finite_or_empty",
    "turn_word", "offset_side", "side_text", "clip", "wrap_lines", "header_lines", "CurveText", "curve_texts",
    "curve_lines", "warning_lines", "paged", "paged_parts", "setout_cells", "deflection_title", "deflection_origin",
    "texts_of", "SheetPart", "spiral_line", "end_radii", "WIDE", "Column", "table_lines", "row_lines",
    # tables from whole columns (long tables: the setout and deflection sheets)
    "Cells", "Texts", "Coded", "Formatted", "Joined", "Same", "Stacked", "station_labels", "FieldColumn",
    "FieldTable", "Block", "Records", "TableRecords", "table_records", "paged_bytes", "paged_pieces",
    "PIECE_LINES", "fixed_format", "dms_format", "setout_fields", "number_cells",
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

#: Widest line of a printed sheet by default (characters): fits A4 and US Letter portrait at 10 pitch.
WIDTH = 80
#: Widest line of a sheet printed with ``--wide`` (landscape, or a wide carriage at 10 pitch); its
#: tables keep one line per record even where that is wider.
WIDE = 132
#: Lines on one printed page at most (a common printer default fits 60 to 66).
PAGE_LINES = 60


# ---- numbers ---------------------------------------------------------------------------
def rounded(values: ArrayLike, decimals: int) -> list[float]:
    """Round to ``decimals`` by the printing rule and clear negative zeros; a plain list of floats."""
    out: list[float] = round_to(values, decimals).tolist()
    return out


def fixed(values: ArrayLike, decimals: int) -> list[str]:
    """Format numbers with a fixed number of decimals (never ``-0.000``; NaN as ``nan``)."""
    return fixed_strings(values, decimals)


def fixed_or_empty(value: float | None, decimals: int) -> str:
    """Format one number, or an empty field for ``None``."""
    if value is None:
        return ""
    return fixed([value], decimals)[0]


def finite_or_empty(value: float, decimals: int) -> str:
    """Format one number, or an empty field for NaN and infinities."""
    if not math.isfinite(value):
        return ""
    return fixed_string(value, decimals)


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


def offset_side(offset: float) -> str:
    """An offset line's size and side in its title, ``3.50 LT`` (two decimals, never on the line)."""
    return f"{abs(offset):.2f} {'LT' if offset < 0 else 'RT'}"


def turn_word(turn: int) -> str:
    """``right``, ``left``, or empty for a straight element."""
    return "right" if turn > 0 else ("left" if turn < 0 else "")


# ---- the job header ------------------------------------------------------------------------
def vertical_note(d: Design) -> str | None:
    """What the zenith angles and slope distances allow for; None where none are computed."""
    if d.setup is None or d.setup.setout.zenith is None:
        return None
    k = d.setup.setup.refraction
    if k is None:
        return "zenith and slope distance: no curvature or refraction correction (short sights)"
    return f"zenith and slope distance: corrected for curvature and refraction (k {k:.2f})"


def header_lines(title: str, d: Design) -> list[str]:
    """The header block every sheet opens with: job, file and hash, alignment, units, CRS."""
    job = d.job
    out = [
        clip(f"{title}   {job.info.name}".rstrip()),
        clip(f"job file  {Path(job.path).name}"),
        f"  sha256 {job.sha256}",
    ]
    for f in job.design_files:
        out.append(clip(f"{f.role} from {Path(f.path).name}"))
        out.append(f"  sha256 {f.sha256}")
    out += [
        clip(f"alignment {d.alignment.name}   units {job.info.unit.label}"),
        clip(f"CRS       {d.crs_label or 'none: local grid'}"),
    ]
    return out


def warning_lines(d: Design) -> list[str]:
    """Every warning of the build (``Design.warnings``: a design file's superelevation the job
    does not apply, a setup serving no stake, ...), one ``WARNING`` line each, for a sheet's
    first page; none without warnings.
    """
    return [f"WARNING   {w}" for w in d.warnings]


# ---- curve data ------------------------------------------------------------------------------
@dataclass(frozen=True)
class CurveText:
    """A curve's data (:class:`~stakeout.presentation.CurveView`) with its words and station
    labels, shared by the sheets, the reports and the drawings.

    ``back_side``/``ahead_side`` name the two-centred tangents:
    ``("T_A", "R1", radius)`` on the larger-radius side, ``("T_B", "R2",
    radius)`` on the smaller; ``None`` for other curves.
    """

    view: CurveView
    turn: str
    delta: str
    pi_label: str
    arcs: tuple[tuple[Any, str, str], ...]  # (arc, start label, end label)
    spirals: tuple[tuple[Any, str, str], ...] = ()  # (spiral, start label, end label)

    @property
    def curve(self) -> Any:
        """The alignment's curve."""
        return self.view.curve

    @property
    def back_side(self) -> tuple[str, str, float] | None:
        """The back tangent's name and side on a two-centred curve."""
        return self.view.back_side

    @property
    def ahead_side(self) -> tuple[str, str, float] | None:
        """The ahead tangent's name and side on a two-centred curve."""
        return self.view.ahead_side

    @property
    def external(self) -> float | None:
        """PI to the nearest point of a curve with spirals."""
        return self.view.external

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


def spiral_line(sp: Element, a0: str, a1: str) -> str:
    """One line of a spiral's data: stations, length, radii, central angle."""
    r0, r1 = end_radii(sp)
    return f"{a0} to {a1}  L {sp.length:.4f}  R {r0} to {r1}  theta {format_dms(sp.central_angle, 1)}"


def curve_texts(d: Design) -> list[CurveText]:
    """Words and station labels of every curve's data (:attr:`Presentation.curves`)."""
    label = d.stationing.label
    return [CurveText(cv, turn_word(cv.curve.turn), str(format_dms(cv.curve.delta, 1)), label(cv.curve.pi_station),
                      tuple((a, label(a.start), label(a.end)) for _, a in cv.arcs),
                      tuple((sp, label(sp.start), label(sp.end)) for _, sp in cv.spirals))
            for cv in d.presentation.curves]


def curve_lines(d: Design) -> list[str]:
    """Curve data for the foot of a sheet: per curve its PI and whole tangents
    (T_A / T_B named by side for two-centred curves), then one line per arc.
    """
    out = ["CURVE DATA"]
    if not d.alignment.curves:
        out.append("  (no curves)")
    for ct in curve_texts(d):
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
            out.append(f"    arc {k}  {a0} to {a1}  R {p.radius:.4f}")
            out.append(f"           delta {format_dms(p.delta, 1)}  L {p.length:.4f}  chord {p.chord:.4f}")
        for k, (sp, a0, a1) in enumerate(ct.spirals, start=1):
            r0, r1 = end_radii(sp)
            out.append(f"    spiral {k}  {a0} to {a1}  L {sp.length:.4f}")
            out.append(f"              R {r0} to {r1}  theta {format_dms(sp.central_angle, 1)}")
        if ct.external is not None:
            out.append(f"    external (PI to the curve)  {ct.external:.4f}")
    return out


# ---- deflection tables ---------------------------------------------------------------------------
def deflection_title(t: DeflectionTable, curve: str, start: str) -> str:
    """The line that opens an element's deflections: ``curve`` (the word, as the output
    capitalises it), the element's kind and data, ``start`` (its start feature and station).
    """
    return _DEFLECTION_TITLES[t.element](t, curve, start)


def _arc_title(t: DeflectionTable, curve: str, start: str) -> str:
    el: Any = t.element
    return (f"{curve} {t.curve}, arc from {start}: R {el.radius:.4f}, delta {format_dms(el.delta, 1)}, "
            f"deflect {turn_word(el.turn)}")


def _spiral_title(t: DeflectionTable, curve: str, start: str) -> str:
    el = t.element
    r0, r1 = end_radii(el)
    title = (f"{curve} {t.curve}, spiral from {start}: L {el.length:.4f}, R {r0} to {r1}, "
             f"theta {format_dms(el.central_angle, 1)}, {turn_word(el.turn)}")
    if t.from_end:  # an exit spiral run from the ST: say so, and which way to deflect looking back
        title += f"; run from its end looking back, deflect {turn_word(t.deflect_turn)}"
    return title


def deflection_origin(t: DeflectionTable, label: Callable[[float], str]) -> str:
    """Where an element's deflections are run from: its feature and station (``TS 3+26.65``;
    an exit spiral run from its end: ``ST 5+82.46``).
    """
    el = t.element
    return f"{t.start_feature} {label(el.end if t.from_end else el.start)}"


#: The title of an element's deflections (a line is never part of a curve; it would read as a spiral).
_DEFLECTION_TITLES: PerKind[Callable[[DeflectionTable, str, str], str]] = PerKind("deflection title",
                                           {"line": _spiral_title, "arc": _arc_title, "spiral": _spiral_title})


# ---- the setout table ---------------------------------------------------------------------------
def setout_cells(d: Design, sided: bool) -> list[tuple[Any, list[str]]]:
    """The setout table's columns (:attr:`Presentation.setout_columns`) as text, for
    ``report.html`` (``setout.txt`` lays out the same from whole columns,
    :func:`setout_fields`): angles in D-M-S to the second (none at the instrument), offsets
    with their side (``sided``) or signed, numbers to their decimals.
    """
    assert d.setup is not None
    at = d.setup.setout.at_instrument
    out: list[tuple[Any, list[str]]] = []
    for c in d.presentation.setout_columns:
        if c.decimals is None:
            texts = list(c.values)
        elif c.key == "angle_right":
            angles = texts_of(format_azimuth_dms(c.values, 0))
            texts = ["" if at[i] else angles[i] for i in range(len(angles))]
        elif c.key == "zenith":
            v = np.asarray(c.values, dtype=float)
            texts = texts_of(format_dms(np.nan_to_num(v, nan=90.0), 0))
            texts = ["" if bad else t for t, bad in zip(texts, np.isnan(v).tolist())]  # no height, no zenith
        elif c.key == "offset" and sided:
            texts = side_text(c.values, c.decimals)
        else:
            v = np.asarray(c.values, dtype=float)
            texts = fixed(c.values, c.decimals)
            if np.isnan(v).any():  # a stake without the number (a reference stake has no design elevation)
                texts = ["" if bad else t for t, bad in zip(texts, np.isnan(v).tolist())]
        out.append((c, texts))
    return out


def texts_of(formatted: str | list[str]) -> list[str]:
    """The texts of an array formatted by :mod:`stakeout.angles` (always a list)."""
    return [formatted] if isinstance(formatted, str) else formatted


# ---- tables ----------------------------------------------------------------------------------
@dataclass(frozen=True)
class Column:
    """One column of a printed table: its header, its values as text, and
    its alignment (``"<"`` left, ``">"`` right).  It is as wide as its
    widest entry.
    """

    header: str
    values: list[str]
    align: str = ">"
    with_previous: bool = False  # printed on the same line as the column before it (a group)

    @cached_property
    def width(self) -> int:
        """Characters the column needs: its header or its widest value (measured once)."""
        return max([len(self.header)] + [len(v) for v in self.values])

    def cell(self, text: str) -> str:
        """``text`` padded to the column's width."""
        return f"{text:{self.align}{self.width}}"


#: Widest first column whose run-on lines start under the second column.
_INDENT_MAX = 20


class _Packed(Protocol):
    """What packing needs of a column (:class:`Column`, :class:`FieldColumn`)."""

    @property
    def width(self) -> int:
        """Characters the column needs."""

    @property
    def with_previous(self) -> bool:
        """Printed on the same line as the column before it."""


_C = TypeVar("_C", bound=_Packed)


def _indent(columns: Sequence[_Packed]) -> int:
    """Where a record's run-on lines start (see :func:`_pack`)."""
    return columns[0].width + 1 if columns[0].width <= _INDENT_MAX else 4


def _pack(columns: list[_C], width: int | None) -> list[list[_C]]:
    """Columns packed in order onto lines of at most ``width`` characters.

    The first line starts at the margin; every further line starts under
    the second column (four characters in where the first column is wider
    than :data:`_INDENT_MAX`), so that a record's first column alone marks
    where it starts.  A group (columns marked ``with_previous``) stays on one
    line; each line takes at least one group.  ``None``: one line.
    """
    if width is None or not columns:
        return [columns]
    groups: list[list[_C]] = []
    for c in columns:
        if c.with_previous and groups:
            groups[-1].append(c)
        else:
            groups.append([c])
    indent = _indent(columns)
    lines: list[list[_C]] = [[]]
    used = -1
    for g in groups:
        need = sum(c.width + 1 for c in g)
        if lines[-1] and used + need > width:
            lines.append([])
            used = indent - 1
        lines[-1].extend(g)
        used += need
    return lines


def table_lines(columns: list[Column], width: int | None = WIDTH) -> tuple[list[str], list[str]]:
    """A table's header lines and its records, no line over ``width`` characters.

    The columns keep their order.  Those that fit on one line of ``width``
    characters make the record's first line; the rest run on to further
    lines, indented under the second column, each with its own header line
    (``None``: one line per record, however wide).

    Returns
    -------
    (header lines, records)
        One record per row of the columns; a record of several lines is
        one string with ``\n`` between them (:func:`paged_parts` keeps it
        on one page).
    """
    lines = _pack(columns, width)
    if not columns:
        return [], []
    indent = " " * _indent(columns)
    n = len(columns[0].values)

    def render(k: int, cells: list[str]) -> str:
        return ((indent if k else "") + " ".join(cells)).rstrip()

    heads = [render(k, [c.cell(c.header) for c in cols]) for k, cols in enumerate(lines)]
    records = ["\n".join(render(k, [c.cell(c.values[i]) for c in cols]) for k, cols in enumerate(lines)).rstrip()
               for i in range(n)]
    return heads, records


def row_lines(row: str) -> list[str]:
    """The printed lines of one record (see :func:`table_lines`)."""
    return row.split("\n")


# ---- pages -------------------------------------------------------------------------------------
@dataclass(frozen=True)
class SheetPart:
    """One part of a printed sheet: the lines above its table, the table's
    column header and records, and the line that opens its continuation
    pages.  A part starts on a new page unless ``new_page`` is False and the
    page in hand has room for its head, its column header and a few records.
    A record may hold several lines (``\n`` between them); it is never
    split across pages.
    """

    head: list[str]
    columns: list[str]
    rows: list[str] | Records | TableRecords
    continued: str = ""
    new_page: bool = True


def paged(head: list[str], columns: list[str], rows: list[str], title: str, foot: list[str],
          width: int = WIDTH) -> str:
    """A printable sheet: the header, then pages of at most :data:`PAGE_LINES` lines
    with the column header repeated (pages split by a form feed), the foot
    and the cautions; no line over ``width`` characters (:data:`WIDTH`, wider
    only where the table's own columns need it).
    """
    return paged_parts(head, [SheetPart([], columns, rows)], title, foot, width)


#: Records a part opened on a page in hand must have room for (else it starts a new page).
_MIN_RECORDS = 3


def paged_parts(head: list[str], parts: list[SheetPart], title: str, foot: list[str], width: int = WIDTH) -> str:
    """A printable sheet of several tables (:class:`SheetPart`), as text: :func:`paged_bytes`."""
    return paged_bytes(head, parts, title, foot, width).decode("utf-8")


def paged_bytes(head: list[str], parts: list[SheetPart], title: str, foot: list[str], width: int = WIDTH) -> bytes:
    """A printable sheet of several tables (:class:`SheetPart`), as UTF-8: :func:`paged_pieces` joined."""
    return b"".join(paged_pieces(head, parts, title, foot, width))


#: Lines of a sheet given at once by :func:`paged_pieces` (whole pages; about 1 to 2 MiB).
PIECE_LINES = 16384


def paged_pieces(head: list[str], parts: list[SheetPart], title: str, foot: list[str],
                 width: int = WIDTH) -> Iterator[bytes]:
    """A printable sheet of several tables (:class:`SheetPart`), as UTF-8, a run of pages
    (about :data:`PIECE_LINES` lines) at a time.

    The first page opens with ``head`` and the first part's head; every
    later part opens a page with its own head (or follows on the page in
    hand, see :class:`SheetPart`); a part's records run on over pages opened
    by its ``continued`` line, the column header repeated on each.  No page
    holds more than :data:`PAGE_LINES` lines and no record is split; pages
    are numbered through the whole sheet ("page k of N") and split by a form
    feed; the foot and the cautions close it (on a page of their own when the
    last is full).  Head and foot lines wider than ``width`` (or the widest
    table line, where wider) are wrapped, the page titles cut.  Every page is
    laid out first from each record's count of lines (and the widest line);
    the records' text (a part's :class:`Records`, or its
    :class:`TableRecords` laid out only now) is joined a run of pages at a time.
    """
    recs = [p.rows if isinstance(p.rows, (Records, TableRecords)) else Records.of_texts(p.rows) for p in parts]
    table = [len(line) for p in parts for line in p.columns] + [int(r.widest.max()) for r in recs if r.widest.size]
    width = max([width] + table)
    head = wrap_lines(head, width)
    closing = [""] + wrap_lines(foot, width) + [""] + list(SIGN_OFF_LINES) + [""] + list(CAUTION_LINES)
    # a page: its lines of text and its runs of records (part, first, stop); and its count of lines
    pages: list[list[str | bytes | tuple[int, int, int]]] = []
    counts: list[int] = []
    for k, (part, rec) in enumerate(zip(parts, recs)):
        columns = [c.rstrip() for c in part.columns]
        part_head = wrap_lines(part.head, width)
        n = int(rec.lines.size)
        cum = _cumulative(rec.lines)  # lines before each record
        ruled = max([0] + [len(c) for c in columns] + ([int(rec.first.max())] if n else []))
        rules = ["-" * ruled] if columns else []  # as wide as the header and the rows; plain lines have none
        # a continuation page: its title, then these lines, its records and the closing rule
        again = "".join(f"{line}\n" for line in [clip(part.continued, width), *rules, *columns, *rules]).encode("utf-8")
        again_lines = 1 + 3 * len(rules) + len(columns)
        closing_rule = "".join(f"{line}\n" for line in rules).encode("utf-8")
        first = True
        pos = 0  # records placed so far
        while first or pos < n:
            if not first:  # as many records as fit, at least one
                stop = min(n, max(bisect.bisect_right(cum, cum[pos] + PAGE_LINES - 1 - again_lines) - 1, pos + 1))
                pages.append(["{title}", again, (k, pos, stop), closing_rule])
                counts.append(1 + again_lines + cum[stop] - cum[pos])
                pos = stop
                continue
            if k == 0 and first:
                opening = head + ["page {page} of {pages}"] + part_head
            elif first and not part.new_page and pages:
                opening = [""] + part_head
                need = len(opening) + len(columns) + 3 * len(rules) + cum[min(n, _MIN_RECORDS)]
                if counts[-1] + need > PAGE_LINES:
                    opening = ["{title}", ""] + part_head
            elif first:
                opening = ["{title}", ""] + part_head
            else:
                opening = ["{title}", clip(part.continued, width)]
            on_new_page = opening[0] == "{title}" or not pages or (k == 0 and first)
            page: list[str | bytes | tuple[int, int, int]] = [*opening, *rules, *columns, *rules]
            lines = len(page) + len(rules)
            used = (0 if on_new_page else counts[-1]) + lines
            if pos < n:  # as many records as fit, at least one
                stop = min(n, max(bisect.bisect_right(cum, cum[pos] + PAGE_LINES - used) - 1, pos + 1))
                page.append((k, pos, stop))
                lines += cum[stop] - cum[pos]
                pos = stop
            page.extend(rules)
            if on_new_page:
                pages.append(page)
                counts.append(lines)
            else:
                pages[-1].extend(page)
                counts[-1] += lines
            first = False
    if counts[-1] + len(closing) <= PAGE_LINES:
        pages[-1].extend(closing)
    else:  # on pages of their own (a foot longer than a page runs on)
        for i in range(0, len(closing), PAGE_LINES - 1):
            pages.append(["{title}", *closing[i:i + PAGE_LINES - 1]])
            counts.append(len(pages[-1]))
    total = len(pages)
    out: list[bytes | memoryview | tuple[int, int, int]] = []
    held = 0  # lines in ``out``
    for n, items in enumerate(pages, start=1):
        for i, line in enumerate(items):
            if isinstance(line, (tuple, bytes)):
                out.append(line)
                continue
            if line == "{title}":
                line = ("\f" if i == 0 else "") + clip(f"{title}   page {n} of {total}", width)
            elif line == "page {page} of {pages}":
                line = f"page {n} of {total}"
            out.append(line.encode("utf-8") + b"\n")
        held += counts[n - 1]
        if held >= PIECE_LINES or n == total:
            yield _joined(out, recs)
            out, held = [], 0


def _cumulative(lines: NDArray[np.integer[Any]]) -> array[int]:
    """The lines before each record and after the last, for :func:`bisect.bisect_right` (summed in place)."""
    out = array("q", [0]) * (lines.size + 1)
    np.cumsum(lines, out=np.frombuffer(out, dtype=np.int64)[1:])
    return out


def _joined(out: list[bytes | memoryview | tuple[int, int, int]], recs: list[Records | TableRecords]) -> bytes:
    """Lines and runs of records (part, first, stop) as bytes: each part's records of the run laid out at once."""
    span: dict[int, tuple[int, int]] = {}
    for x in out:
        if isinstance(x, tuple):
            k, a, b = x
            lo, hi = span.get(k, (a, b))
            span[k] = (min(lo, a), max(hi, b))
    laid = {k: (a, recs[k].part(a, b)) for k, (a, b) in span.items()}
    return b"".join(laid[x[0]][1].text(x[1] - laid[x[0]][0], x[2] - laid[x[0]][0]) if isinstance(x, tuple) else x
                    for x in out)


# ---- tables from whole columns -------------------------------------------------------------
# A long table (a million stakes) is laid out by numpy a block of records at a time, never a
# Python string a cell: each column is a source of byte fields (writers/rows.py: NUL is
# padding), aligned to its width, joined into lines, and the lines of a record joined; the
# bytes are those of Column/table_lines (tests/test_sheets_fast.py holds them equal).

#: Records laid out at once (bounded temporaries, reused from cache).
_BLOCK = 8192


class Cells(Protocol):
    """A column's texts, any block of rows at a time as a field (NUL-padded UTF-8)."""

    @property
    def n(self) -> int:
        """Rows of the column."""

    @property
    def ascii(self) -> bool:
        """Whether every text is ASCII (one byte a character)."""

    @property
    def clean(self) -> bool:
        """Whether no text ends in a space."""

    def field(self, which: NDArray[np.intp]) -> rows.Field:
        """The texts of rows ``which`` (indices)."""

    def filled(self, which: NDArray[np.intp]) -> NDArray[np.bool_]:
        """Whether each of rows ``which`` has any text (found without laying the texts out)."""


@dataclass(frozen=True)
class Texts:
    """Texts given one a row (ids read from a file, a short list): :class:`rows.Strings`."""

    strings: rows.Strings

    @classmethod
    def of(cls, texts: Sequence[str]) -> Texts:
        """The column of ``texts``."""
        return cls(rows.Strings(texts))

    @property
    def n(self) -> int:
        """Rows of the column."""
        return self.strings.n

    @cached_property
    def ascii(self) -> bool:
        """Whether every text is ASCII."""
        return not self.strings.buf.size or int(self.strings.buf.max()) < 0x80

    @cached_property
    def clean(self) -> bool:
        """Whether no text ends in a space."""
        st = self.strings
        full = st.lens > 0
        return not bool((st.buf[(st.starts + st.lens - 1)[full]] == 32).any())

    def field(self, which: NDArray[np.intp]) -> rows.Field:
        """The texts of rows ``which``."""
        return self.strings.field(which)

    def filled(self, which: NDArray[np.intp]) -> NDArray[np.bool_]:
        """Whether each of rows ``which`` has any text."""
        out: NDArray[np.bool_] = self.strings.lens[which] > 0
        return out


@dataclass(frozen=True)
class Coded:
    """A column of few distinct texts: each row an index into ``words``."""

    words: Cells
    codes: NDArray[np.intp]

    @property
    def n(self) -> int:
        """Rows of the column."""
        return int(self.codes.size)

    @property
    def ascii(self) -> bool:
        """Whether every text is ASCII."""
        return self.words.ascii

    @property
    def clean(self) -> bool:
        """Whether no text ends in a space."""
        return self.words.clean

    def field(self, which: NDArray[np.intp]) -> rows.Field:
        """The texts of rows ``which``."""
        return self.words.field(self.codes[which])

    def filled(self, which: NDArray[np.intp]) -> NDArray[np.bool_]:
        """Whether each of rows ``which`` has any text."""
        return self.words.filled(self.codes[which])


@dataclass(frozen=True)
class Formatted:
    """Numbers formatted a block at a time by ``format`` (a :mod:`rows` formatter of finite
    values, giving each some text), empty where ``empty``; a non-finite value not empty prints
    as Python prints it (``nan``), as :func:`fixed` does.
    """

    values: NDArray[np.float64]
    format: Callable[[NDArray[np.float64]], rows.Field]
    empty: NDArray[np.bool_] | None = None

    @property
    def n(self) -> int:
        """Rows of the column."""
        return int(self.values.size)

    @property
    def ascii(self) -> bool:
        """Numbers are ASCII."""
        return True

    @property
    def clean(self) -> bool:
        """Numbers end in a digit (or ``nan``, ``)``)."""
        return True

    def field(self, which: NDArray[np.intp]) -> rows.Field:
        """The texts of rows ``which``."""
        v = self.values[which]
        bad = ~np.isfinite(v)
        f = self.format(np.where(bad, 0.0, v))
        if self.empty is not None:
            f = rows.blank(f, self.empty[which])
            bad &= ~self.empty[which]
        if bad.any():  # few: each as Python writes it
            words = rows.Strings([str(x) for x in v[bad].tolist()])
            f = rows.overlay(f, bad, words.field(slice(None)))
        return f

    def filled(self, which: NDArray[np.intp]) -> NDArray[np.bool_]:
        """Whether each of rows ``which`` has any text: every one not ``empty``."""
        if self.empty is None:
            return np.ones(np.asarray(which).size, dtype=bool)
        out: NDArray[np.bool_] = ~self.empty[which]
        return out


@dataclass(frozen=True)
class Joined:
    """Fields side by side, each from its own column (a prefix and a number, a size and a side)."""

    parts: tuple[Cells, ...]

    @property
    def n(self) -> int:
        """Rows of the column."""
        return self.parts[0].n

    @property
    def ascii(self) -> bool:
        """Whether every text is ASCII."""
        return all(p.ascii for p in self.parts)

    @property
    def clean(self) -> bool:
        """Whether no text ends in a space."""
        return all(p.clean for p in self.parts)

    def field(self, which: NDArray[np.intp]) -> rows.Field:
        """The texts of rows ``which``."""
        return np.hstack([p.field(which) for p in self.parts])

    def filled(self, which: NDArray[np.intp]) -> NDArray[np.bool_]:
        """Whether each of rows ``which`` has any text (in any of its parts)."""
        out: NDArray[np.bool_] = np.logical_or.reduce([p.filled(which) for p in self.parts])
        return out


@dataclass(frozen=True)
class Same:
    """The same text on every one of ``count`` rows (``""``: an empty column)."""

    text: str
    count: int

    @property
    def n(self) -> int:
        """Rows of the column."""
        return self.count

    @property
    def ascii(self) -> bool:
        """Whether the text is ASCII."""
        return self.text.isascii()

    @property
    def clean(self) -> bool:
        """Whether the text does not end in a space."""
        return not self.text.endswith(" ")

    def field(self, which: NDArray[np.intp]) -> rows.Field:
        """The texts of rows ``which``."""
        b = np.frombuffer(self.text.encode("utf-8"), dtype=np.uint8)
        return np.ascontiguousarray(np.broadcast_to(b, (np.asarray(which).size, b.size)))

    def filled(self, which: NDArray[np.intp]) -> NDArray[np.bool_]:
        """Whether each of rows ``which`` has any text: all or none."""
        return np.full(np.asarray(which).size, bool(self.text), dtype=bool)


@dataclass(frozen=True)
class Stacked:
    """Columns one after another (each alignment's stakes, in job order)."""

    parts: tuple[Cells, ...]

    @cached_property
    def starts(self) -> NDArray[np.intp]:
        """Where each part starts, then the end."""
        return np.concatenate([[0], np.cumsum([p.n for p in self.parts])]).astype(np.intp)

    @property
    def n(self) -> int:
        """Rows of the column."""
        return int(self.starts[-1])

    @property
    def ascii(self) -> bool:
        """Whether every text is ASCII."""
        return all(p.ascii for p in self.parts)

    @property
    def clean(self) -> bool:
        """Whether no text ends in a space."""
        return all(p.clean for p in self.parts)

    def field(self, which: NDArray[np.intp]) -> rows.Field:
        """The texts of rows ``which``."""
        which = np.asarray(which, dtype=np.intp)
        part = np.searchsorted(self.starts, which, side="right") - 1
        fields = [(k, p.field(which[part == k] - self.starts[k])) for k, p in enumerate(self.parts)
                  if (part == k).any()]
        out = np.zeros((which.size, max([0] + [f.shape[1] for _, f in fields])), dtype=np.uint8)
        for k, f in fields:
            out[part == k, :f.shape[1]] = f
        return out

    def filled(self, which: NDArray[np.intp]) -> NDArray[np.bool_]:
        """Whether each of rows ``which`` has any text."""
        which = np.asarray(which, dtype=np.intp)
        part = np.searchsorted(self.starts, which, side="right") - 1
        out = np.zeros(which.size, dtype=bool)
        for k, p in enumerate(self.parts):
            if (part == k).any():
                out[part == k] = p.filled(which[part == k] - self.starts[k])
        return out


def station_labels(stationing: Stationing, internal: NDArray[np.float64]) -> Formatted:
    """The station labels of internal stations, as :meth:`Stationing.labels` writes them
    (``11+50.00(2)`` where an equation makes a station occur twice).
    """
    def format(x: NDArray[np.float64]) -> rows.Field:
        f = rows.station(stationing.station(x), stationing.station_length, stationing.decimals)
        twice = stationing.occurs_twice(x)
        if twice.any():
            k = x.size
            suffix = np.hstack([rows.const("(", k), rows.integer(stationing.region(x)), rows.const(")", k)])
            f = np.hstack([f, rows.blank(suffix, ~twice)])
        return f
    return Formatted(np.asarray(internal, dtype=float), format)


def _chars(f: rows.Field) -> NDArray[np.int64]:
    """Characters in each row of a field (UTF-8: bytes that do not continue a character)."""
    return rows.row_counts((f != 0) & ((f & 0xC0) != 0x80))


def _widest(cells: Cells) -> int:
    """Characters of the widest text of a column (of a coded one: of the words it uses)."""
    if isinstance(cells, Coded):
        which = np.flatnonzero(np.bincount(cells.codes, minlength=cells.words.n))
        cells = cells.words
    else:
        which = np.arange(cells.n)
    widest = 0
    for a in range(0, which.size, _BLOCK):
        f = cells.field(which[a:a + _BLOCK])
        if f.size:
            widest = max(widest, int((np.count_nonzero(f, axis=1) if cells.ascii else _chars(f)).max()))
    return widest


@dataclass(frozen=True)
class FieldColumn:
    """A column of a printed table from whole columns: as :class:`Column`, its values a
    :class:`Cells` source laid out a block at a time.
    """

    header: str
    cells: Cells
    align: str = ">"
    with_previous: bool = False

    @cached_property
    def width(self) -> int:
        """Characters the column needs: its header or its widest value."""
        return max(len(self.header), _widest(self.cells))

    def cell(self, text: str) -> str:
        """``text`` padded to the column's width."""
        return f"{text:{self.align}{self.width}}"

    @property
    def ascii(self) -> bool:
        """Whether every text of the column is ASCII."""
        return self.cells.ascii

    def aligned(self, which: NDArray[np.intp]) -> tuple[rows.Field, NDArray[np.int64]]:
        """Rows ``which`` padded with spaces to the column's width (as :meth:`cell`), and where
        each row's text ends in them (after its last character that is not a space; 0: none).
        """
        f = self.cells.field(which)
        if f.size and int(f.max()) >= 0x80:  # text of another script: pad by characters, not bytes
            out = self._scattered(f)
            return out, _ink_end(out)
        m, w = f.shape
        width = self.width
        if not w:
            return np.full((m, width), 32, dtype=np.uint8), np.zeros(m, dtype=np.int64)
        keep = f != 0
        nb = rows.row_counts(keep)
        right = self.align == ">"
        # rows whose text is not one run at the field's right end (left end, to align left)
        edge = np.argmax(keep, axis=1) if right else w - np.argmax(keep[:, ::-1], axis=1)
        ragged = (nb > 0) & ((w - edge if right else edge) != nb)
        if ragged.any():
            g = self._scattered(f[ragged])
            f = f.copy()
            f[ragged] = 0
            # justified in a field of the column's width: no longer ragged
            wide = max(w, width)
            h = np.zeros((m, wide), dtype=np.uint8)
            if right:
                h[:, wide - w:] = f
                h[ragged, wide - width:] = g[:, :width]
            else:
                h[:, :w] = f
                h[ragged, :width] = g[:, :width]
            f, w = h, wide
        out = np.zeros((m, width), dtype=np.uint8)
        if right:
            out[:, max(0, width - w):] = f[:, max(0, w - width):]
        else:
            out[:, :min(w, width)] = f[:, :width]
        out[out == 0] = 32
        if not self.cells.clean:
            return out, _ink_end(out)
        return out, np.where(nb > 0, width, 0) if right else nb.astype(np.int64)

    def ink(self, which: NDArray[np.intp]) -> NDArray[np.int64]:
        """Where the text of rows ``which`` ends once padded (:meth:`aligned`'s second value),
        without padding them: a clean ASCII column's text is one run at its side (right-aligned:
        ending at the column's width wherever there is any, found without laying it out).
        """
        if not (self.cells.clean and self.cells.ascii):
            return self.aligned(which)[1]
        if self.align == ">":  # whether each row has text is enough
            right: NDArray[np.int64] = np.where(self.cells.filled(which), self.width, 0)
            return right
        left: NDArray[np.int64] = np.count_nonzero(self.cells.field(which), axis=1).astype(np.int64)
        return left

    def _scattered(self, f: rows.Field) -> rows.Field:
        """Any field padded with spaces to the column's width, its text moved to one run
        (NUL padding anywhere; UTF-8 counted by characters).
        """
        keep = f != 0
        nb = rows.row_counts(keep)
        pad = self.width - _chars(f)
        m = f.shape[0]
        wide = int((pad + nb).max()) if m else self.width
        out = np.zeros((m, max(wide, self.width)), dtype=np.uint8)
        r, c = np.nonzero(keep)
        rank = (np.cumsum(keep, axis=1) - 1)[r, c]
        at = np.arange(out.shape[1])[None, :]
        if self.align == ">":
            out[r, pad[r] + rank] = f[r, c]
            out[at < pad[:, None]] = 32
        else:
            out[r, rank] = f[r, c]
            out[(at >= nb[:, None]) & (at < (nb + pad)[:, None])] = 32
        return out


@dataclass(frozen=True)
class Block:
    """Records laid out: their bytes (every line ending in ``\\n``), and for each record its
    bytes, its lines, its first line's and its widest line's characters.
    """

    data: bytes
    size: NDArray[np.int64]
    lines: NDArray[np.int64]
    first: NDArray[np.int64]
    widest: NDArray[np.int64]


class FieldTable:
    """A table of :class:`FieldColumn` packed on lines of ``width`` as :func:`table_lines`
    packs them (``None``: one line a record); records laid out a block at a time.
    """

    def __init__(self, columns: list[FieldColumn], width: int | None = WIDTH):
        self.columns = columns
        self.packed = _pack(columns, width)
        self.indent = _indent(columns) if columns else 0

    def heads(self) -> list[str]:
        """The column header lines."""
        ind = " " * self.indent
        return [((ind if k else "") + " ".join(c.cell(c.header) for c in cols)).rstrip()
                for k, cols in enumerate(self.packed)]

    @cached_property
    def places(self) -> list[list[tuple[int, FieldColumn]]]:
        """Where each cell of each line starts in it, in characters (in bytes too where every
        text is ASCII; the widths are the whole column's, the same for every block of records).
        """
        out = []
        for k, cols in enumerate(self.packed):
            pos = self.indent if k else 0
            at = []
            for j, c in enumerate(cols):
                pos += 1 if j else 0
                at.append((pos, c))
                pos += c.width
            out.append(at)
        return out

    @property
    def ascii(self) -> bool:
        """Whether every text of the table is ASCII (one byte a character)."""
        return all(c.ascii for c in self.columns)

    def block(self, which: NDArray[np.intp]) -> Block:
        """The records of rows ``which``.

        Each line is its cells side by side; where its ink ends is found cell by cell (the
        end of the last cell with text that is not space), and the bytes before it, with a
        newline after each line up to the record's last that is not empty, are taken out
        of the whole block at once (``"\\n".join(lines).rstrip()`` of each record).
        """
        m = which.size
        mats: list[rows.Field] = []  # every line's cells, then a newline column
        spans: list[int] = []  # bytes of each line
        ends: list[NDArray[np.int64]] = []  # where each line's ink ends (bytes)
        for k, cols in enumerate(self.packed):
            pos = 0
            if k:
                mats.append(rows.const(" " * self.indent, m))
                pos = self.indent
            end = np.zeros(m, dtype=np.int64)
            for j, c in enumerate(cols):
                if j:
                    mats.append(rows.const(" ", m))
                    pos += 1
                cell, ink = c.aligned(which)  # text in other scripts: wider in bytes than the column
                end = np.where(ink > 0, pos + ink, end)
                pos += cell.shape[1]
                mats.append(cell)
            mats.append(rows.const("\n", m))
            spans.append(pos)
            ends.append(end)
        last, count, size = _record_lines(ends)
        keep = np.hstack([x for k, (span, end) in enumerate(zip(spans, ends))  # each line to its ink, a newline
                          for x in (np.arange(span)[None, :] < end[:, None], (count > k)[:, None])])
        whole = np.hstack([np.broadcast_to(f, (m, f.shape[1])) for f in mats])
        chars = last
        if not self.ascii:  # text in other scripts: its padding stays NUL
            keep &= whole != 0
            lead = keep & ((whole & 0xC0) != 0x80)
            at = np.cumsum([0] + [n + 1 for n in spans])
            chars = np.stack([rows.row_counts(lead[:, at[k]:at[k] + spans[k]]) for k in range(len(ends))], axis=1)
            size = rows.row_counts(keep)
        return Block(whole[keep].tobytes(), size.astype(np.int64), count.astype(np.int64),
                     chars[:, 0].astype(np.int64), chars.max(axis=1).astype(np.int64))

    def measure(self, which: NDArray[np.intp]) -> Block:
        """The records of rows ``which`` as :meth:`block` lays them out, without their bytes
        (``data`` empty): each one's size, lines, first and widest line, found from where each
        cell's text ends (ASCII tables; others are laid out whole).
        """
        if not self.ascii:
            return replace(self.block(which), data=b"")
        ends = []
        for at in self.places:
            end = np.zeros(which.size, dtype=np.int64)
            for pos, c in at:
                ink = c.ink(which)
                end = np.where(ink > 0, pos + ink, end)
            ends.append(end)
        last, count, size = _record_lines(ends)
        return Block(b"", size.astype(np.int64), count.astype(np.int64), last[:, 0].astype(np.int64),
                     last.max(axis=1).astype(np.int64))


def _record_lines(ends: list[NDArray[np.int64]]) -> tuple[NDArray[np.int64], NDArray[np.int64], NDArray[np.int64]]:
    """From where each line's ink ends (bytes, 0: none), each record's ends (one column a line),
    its lines (the empty ones after its last that is not dropped, at least one) and its bytes
    (ASCII: each line to its ink and a newline).
    """
    last = np.stack(ends, axis=1)
    used = last > 0
    count = np.maximum(1, np.where(used.any(axis=1), len(ends) - np.argmax(used[:, ::-1], axis=1), 0))
    size = (last * (np.arange(len(ends))[None, :] < count[:, None])).sum(axis=1) + count
    return last, count, size


def _ink_end(cell: rows.Field) -> NDArray[np.int64]:
    """One past the last byte of each row that is neither a space nor padding (0: none)."""
    if not cell.shape[1]:
        return np.zeros(cell.shape[0], dtype=np.int64)
    ink = (cell != 32) & (cell != 0)
    out: NDArray[np.int64] = np.where(ink.any(axis=1), cell.shape[1] - np.argmax(ink[:, ::-1], axis=1), 0)
    return out


@dataclass(frozen=True)
class Records:
    """The records of one part of a sheet, laid out (:func:`paged_bytes`): their UTF-8 bytes,
    every line ending in ``\n``, where each record ends in them (``ends[k]``, from 0), and for
    each record its lines, its first line's and its widest line's characters.
    """

    data: bytes | bytearray | memoryview
    ends: NDArray[np.int64]
    lines: NDArray[np.int64]
    first: NDArray[np.int64]
    widest: NDArray[np.int64]

    @classmethod
    def of_texts(cls, records: list[str]) -> Records:
        """Records given as text (a record of several lines holds ``\n``)."""
        split = [row_lines(r) for r in records]
        data = [(r + "\n").encode("utf-8") for r in records]
        return cls(b"".join(data), np.cumsum([0] + [len(x) for x in data], dtype=np.int64),
                   np.array([len(r) for r in split], dtype=np.int64),
                   np.array([len(r[0]) for r in split], dtype=np.int64),
                   np.array([max(len(x) for x in r) for r in split], dtype=np.int64))

    def text(self, a: int, b: int) -> memoryview:
        """The bytes of records ``a:b``."""
        return memoryview(self.data)[int(self.ends[a]):int(self.ends[b])]

    def part(self, a: int, b: int) -> Records:
        """Records ``a:b`` (their bytes not copied)."""
        return Records(self.text(a, b), self.ends[a:b + 1] - self.ends[a], self.lines[a:b], self.first[a:b],
                       self.widest[a:b])


def _titled(blk: Block, titles: list[tuple[int, list[str]]]) -> None:
    """Each of ``titles`` (a record's place in ``blk``, the lines opening it) counted in its record."""
    for k, lines in titles:
        blk.size[k] += len(("\n".join(lines) + "\n").encode("utf-8"))
        blk.lines[k] += len(lines)
        blk.first[k] = len(lines[0])
        blk.widest[k] = max([int(blk.widest[k])] + [len(x) for x in lines])


def _inside(titles: dict[int, list[str]], keys: NDArray[np.int64], a: int, b: int) -> list[tuple[int, list[str]]]:
    """The titles of records ``a:b`` (``keys``: every title's record, sorted), by place from ``a``."""
    return [(k - a, titles[k]) for k in keys[np.searchsorted(keys, a):np.searchsorted(keys, b)].tolist()]


def table_records(table: FieldTable, which: NDArray[np.intp],
                  titles: dict[int, list[str]] | None = None) -> Records:
    """The records of ``table``'s rows ``which`` in that order, laid out a block at a time;
    ``titles``: lines opening a record (by its position in ``which``), kept with it.
    """
    titles = titles or {}
    keys = np.array(sorted(titles), dtype=np.int64)
    data = bytearray()  # grown in place: no second copy of the sheet
    size, lines, first, widest = [], [], [], []
    for a in range(0, which.size, _BLOCK):
        blk = table.block(which[a:a + _BLOCK])
        inside = _inside(titles, keys, a, a + blk.lines.size)
        if inside:  # each title before its record
            ends = np.concatenate([[0], np.cumsum(blk.size)]).tolist()
            at = 0
            for k, head in inside:
                data += blk.data[at:ends[k]] + ("\n".join(head) + "\n").encode("utf-8")
                at = ends[k]
            data += blk.data[at:]
            _titled(blk, inside)
        else:
            data += blk.data
        size.append(blk.size)
        lines.append(blk.lines)
        first.append(blk.first)
        widest.append(blk.widest)
    none = [np.zeros(0, dtype=np.int64)]
    return Records(data, np.concatenate([[0], np.cumsum(np.concatenate(size or none))]).astype(np.int64),
                   np.concatenate(lines or none), np.concatenate(first or none), np.concatenate(widest or none))


class TableRecords:
    """The records of ``table``'s rows ``which`` (with ``titles``, as :func:`table_records`) for
    :func:`paged_pieces`, laid out only when asked for (:meth:`part`): a sheet of a million stakes
    keeps each record's count of lines, first and widest line's characters (12 bytes), never its
    text.
    """

    def __init__(self, table: FieldTable, which: NDArray[np.intp], titles: dict[int, list[str]] | None = None):
        self.table, self.which, self.titles = table, which, titles or {}
        self.keys = np.array(sorted(self.titles), dtype=np.int64)
        self.lines = np.zeros(which.size, dtype=np.int32)
        self.first = np.zeros(which.size, dtype=np.int32)
        self.widest = np.zeros(which.size, dtype=np.int32)
        for a in range(0, which.size, _BLOCK):
            blk = table.measure(which[a:a + _BLOCK])
            _titled(blk, _inside(self.titles, self.keys, a, a + blk.lines.size))
            b = a + blk.lines.size
            self.lines[a:b], self.first[a:b], self.widest[a:b] = blk.lines, blk.first, blk.widest

    def part(self, a: int, b: int) -> Records:
        """Records ``a:b``, laid out now."""
        return table_records(self.table, self.which[a:b], dict(_inside(self.titles, self.keys, a, b)))


def fixed_format(decimals: int) -> Callable[[NDArray[np.float64]], rows.Field]:
    """A block formatter of numbers to ``decimals`` (:func:`rows.fixed`)."""
    return lambda v: rows.fixed(v, decimals)


def dms_format(wrap360: bool) -> Callable[[NDArray[np.float64]], rows.Field]:
    """A block formatter of angles to the second (:func:`rows.dms`)."""
    return lambda v: rows.dms(v, 0, wrap360)


def number_cells(values: NDArray[np.float64], decimals: int) -> Formatted:
    """Numbers to ``decimals``, empty where NaN (a stake without the number)."""
    v = np.asarray(values, dtype=float)
    return Formatted(v, fixed_format(decimals), np.isnan(v))


def setout_fields(d: Design) -> list[tuple[str, bool, Cells]]:
    """The setout table's columns as :func:`setout_cells` writes them for the sheet (offsets
    with their side), as whole-column sources: ``(key, grouped, cells)`` in order, the columns
    of :attr:`Presentation.setout_columns` (tests/test_sheets_fast.py holds them equal).
    """
    sd = d.setup
    assert sd is not None
    sp, so = d.stakes, sd.setout
    n = len(sp)
    numbered = Joined((Same(sp.prefix, sp.numbered),
                       Formatted(sp.number.astype(float), lambda v: rows.integer(v.astype(np.int64)))))
    named = list(sp.layout.names) if sp.layout is not None else []
    point: Cells = Stacked((numbered, Texts.of(named))) if named else numbered
    dec = d.unit.station_decimals
    off = np.asarray(sp.offset, dtype=float)
    shown = round_to(off, dec)  # the side of the offset as printed: one that rounds to zero is on the line
    side = Coded(Texts.of([" LT", " RT", ""]), np.where(shown < 0, 0, np.where(shown > 0, 1, 2)))
    at = np.asarray(sd.setout.at_instrument, dtype=bool)
    out: list[tuple[str, bool, Cells]] = [
        ("point", False, point),
        ("station", False, Coded(station_labels(sp.stationing, sp.all_stations), sp.station_of)),
        ("offset", False, Joined((Formatted(np.abs(off), fixed_format(dec)), side))),
        ("code", False, Coded(Texts.of(sp.all_codes), sp.code_of)),
        ("feature", False, Coded(Texts.of(sp.all_features), sp.feature_of)),
        ("angle_right", False, Formatted(np.asarray(so.angle_right, dtype=float), dms_format(True), at)),
        ("grid_distance", False, number_cells(so.grid_distance, 3)),
        ("ground_distance", False, number_cells(so.ground_distance, 3))]
    if sp.elevation is not None:
        out.append(("design_elevation", False, number_cells(sp.elevation, 3)))
    if so.zenith is not None and so.slope_distance is not None:
        z = np.asarray(so.zenith, dtype=float)
        out.append(("zenith", False, Formatted(z, dms_format(False), np.isnan(z))))  # no height, no zenith
        out.append(("slope_distance", True, number_cells(so.slope_distance, 3)))
    prec = sd.precision
    if prec is not None:
        out.append(("sigma_along", False, number_cells(prec.sigma_along, 4)))
        out.append(("sigma_across", True, number_cells(prec.sigma_across, 4)))
        out.append(("r95", True, number_cells(prec.r95, 4)))
    flagged = np.zeros(n, dtype=bool) if sd.flagged is None else np.asarray(sd.flagged, dtype=bool)
    if at.any() or flagged.any():
        words = ["", AT_INSTRUMENT_NOTE, FLAG, f"{AT_INSTRUMENT_NOTE}; {FLAG}"]
        out.append(("note", False, Coded(Texts.of(words), at.astype(np.intp) + 2 * flagged)))
    return out
