"""``slopestakes.csv``, ``slopestakes.txt`` and ``volumes.csv``: the slope stakes and earthwork volumes
of a job with ``[slope_stakes]``.

Both read the design's :class:`~stakeout.earthwork.Earthwork` (one row per
staked station and side; one row per station with both catch points) and
the stake table's catch and reference stakes; numbers with 4 decimals, empty
where there is none (NaN).

Every column is a whole-column source (:class:`~stakeout.writers.text.Cells`):
the CSV files are laid out :data:`CHUNK_ROWS` rows at a time with
:func:`~stakeout.writers.rows.join_rows` and written piece by piece, the
sheet's table a block of records at a time (:class:`~stakeout.writers.text.FieldTable`);
no Python string a field.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from itertools import chain

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..design import Design
from ..staking import StakePoints
from . import rows
from .csvtext import FORMULA_LEADS, csv_field, csv_text_field
from .text import (WIDE, WIDTH, Cells, Coded, FieldColumn, FieldTable, Formatted, Joined, Same, SheetPart, TableRecords,
                   Texts, fixed_format, header_lines, number_cells, paged_pieces, station_labels, wrap_lines)

__all__ = ["SLOPESTAKES_COLUMNS", "VOLUMES_COLUMNS", "CHUNK_ROWS", "slopestakes_csv", "slopestakes_sheet",
           "slopestakes_sheet_pieces", "volumes_csv"]

#: Decimals of the sheet's offsets and elevations.
SHEET_DECIMALS = 3
#: Decimals of the CSV numbers.
CSV_DECIMALS = 4
#: Rows of a CSV file laid out at once (one piece of the file); a file of at most this many rows is one piece.
CHUNK_ROWS = 4096

SLOPESTAKES_COLUMNS = ("alignment", "station", "station_label", "side", "hinge_point", "hinge_offset",
                       "hinge_elevation", "ground_at_hinge", "kind", "catch_point", "catch_offset", "catch_northing",
                       "catch_easting", "catch_elevation", "catch_cut_fill", "reference_point", "reference_offset",
                       "reference_northing", "reference_easting", "reference_ground", "hd_to_hinge", "vd_to_hinge",
                       "note")
VOLUMES_COLUMNS = ("alignment", "station", "station_label", "cut_area", "fill_area", "cut_volume", "fill_volume",
                   "cumulative_cut", "cumulative_fill")


# ---- whole-column sources ---------------------------------------------------------------------
class _Ids:
    """Point ids of stakes given by table index (-1: none, an empty field); ``quoted``: as CSV
    fields (:func:`csv_field`).  A numbered id is the prefix and the number side by side; an id
    the job named (a listed point) is looked up among the few that occur.
    """

    def __init__(self, sp: StakePoints, index: NDArray[np.int64], quoted: bool = False):
        self.index = np.asarray(index, dtype=np.int64)
        self.first, self.numbered, self.quoted = sp.first_point, sp.numbered, quoted
        head, tail = sp.prefix, ""
        if quoted and csv_field(head) != head:  # digits never need quoting: the prefix decides
            head, tail = csv_field(head)[:-1], '"'
        self.head, self.tail = head, tail
        self.named = np.unique(self.index[self.index >= self.numbered])
        texts = [sp.point_id(i) for i in self.named.tolist()]
        self.words = rows.Strings([csv_field(t) if quoted else t for t in texts])
        self.ascii = (head + tail).isascii() and all(t.isascii() for t in texts)
        self.clean = not any(t.endswith(" ") for t in texts)  # a numbered id ends in a digit

    @property
    def n(self) -> int:
        """Rows of the column."""
        return int(self.index.size)

    def field(self, which: NDArray[np.intp]) -> rows.Field:
        """The ids of rows ``which``."""
        i = self.index[which]
        m = i.size
        num = (i >= 0) & (i < self.numbered)
        f = rows.blank(np.hstack([Same(self.head, m).field(which), rows.integer(np.where(num, self.first + i, 0)),
                                  Same(self.tail, m).field(which)]), ~num)
        named = i >= self.numbered
        if named.any():
            f = rows.overlay(f, named, self.words.field(np.searchsorted(self.named, i[named])))
        return f if self.quoted else rows.packed(f)  # on a sheet: one run, as a left-aligned column takes it

    def filled(self, which: NDArray[np.intp]) -> NDArray[np.bool_]:
        """Whether each of rows ``which`` has an id (a numbered or a named one; -1: none)."""
        out: NDArray[np.bool_] = self.index[which] >= 0
        return out


def _guarded(labels: Coded) -> Joined:
    """Station labels as CSV text fields that no spreadsheet runs as a formula (:func:`csv_guard`:
    an apostrophe before a leading ``-``); labels hold only digits, signs, a point and
    parentheses, so none needs quoting.  Each station's label is looked at once.
    """
    words = labels.words.field(np.arange(labels.words.n, dtype=np.intp))
    lead = words[np.arange(words.shape[0]), np.argmax(words != 0, axis=1)] if words.size else words[:, :0]
    guard = np.isin(lead.ravel(), np.frombuffer("".join(FORMULA_LEADS).encode("ascii"), dtype=np.uint8))
    return Joined((Coded(Texts.of(["", "'"]), guard.astype(np.intp)[labels.codes]), labels))


def _coded(values: ArrayLike, word: Callable[[str], str] = str) -> Coded:
    """A column of few distinct texts (a side, a kind, a note), each written as ``word`` gives it:
    found one distinct text at a time (no sorted copy of the whole column).
    """
    a = np.asarray(values, dtype=str).ravel()
    codes = np.full(a.size, -1, dtype=np.intp)
    words: list[str] = []
    while a.size and codes[first := int(np.argmax(codes < 0))] < 0:
        codes[a == a[first]] = len(words)
        words.append(word(str(a[first])))
    return Coded(Texts.of(words), codes)


def _labels(sp: StakePoints, station: NDArray[np.int64]) -> Coded:
    """The station labels of the stake plan's stations ``station`` (:attr:`StakePoints.labels`)."""
    return Coded(station_labels(sp.stationing, sp.stations), np.asarray(station, dtype=np.intp))


@dataclass(frozen=True)
class _Packed(Joined):
    """Parts side by side as one run of text from the left (``right``: to the right; :func:`rows.packed`)."""

    right: bool = False

    @property
    def clean(self) -> bool:
        """The last part does not end in a space."""
        return self.parts[-1].clean

    def field(self, which: NDArray[np.intp]) -> rows.Field:
        """The texts of rows ``which``."""
        return rows.packed(super().field(which), self.right)


def _lath(vertical: NDArray[np.float64], horizontal: NDArray[np.float64], decimals: int = 2) -> Joined:
    """What a crew writes on a lath, as :func:`~stakeout.slopestakes.lath_marking` writes it
    (``C 3.42 @ 26.40``; empty where either number is missing).
    """
    v = np.asarray(vertical, dtype=np.float64).ravel()
    h = np.asarray(horizontal, dtype=np.float64).ravel()
    none = np.isnan(v) | np.isnan(h)
    return _Packed((Coded(Texts.of(["C ", "F ", ""]), np.where(none, 2, np.where(v < 0, 0, 1))),
                   Formatted(np.abs(v), fixed_format(decimals), none),
                   Coded(Texts.of([" @ ", ""]), none.astype(np.intp)),
                   Formatted(h, fixed_format(decimals), none)))


# ---- CSV ----------------------------------------------------------------------------------------
def _csv(header: Sequence[str], columns: Sequence[Cells]) -> bytes | Iterator[bytes]:
    """A CSV file of whole columns: the header, then :data:`CHUNK_ROWS` rows a piece, each laid out
    by numpy (:func:`rows.in_order`: on the cores free, in order); one piece when few.
    """
    n = columns[0].n if columns else 0
    step = CHUNK_ROWS

    def chunk(a: int) -> bytes:
        which = np.arange(a, min(n, a + step), dtype=np.intp)
        comma = rows.const(",", which.size)
        return rows.join_rows([f for k, c in enumerate(columns) for f in ((comma,) if k else ()) + (c.field(which),)],
                              which.size)

    head = (",".join(header) + "\n").encode("ascii")
    if n <= step:
        return head + b"".join(map(chunk, range(0, n, step)))
    return chain([head], rows.in_order(chunk, range(0, n, step)))


def _csv_numbers(values: ArrayLike) -> Cells:
    """CSV numbers (:data:`CSV_DECIMALS`), empty where NaN (as :func:`numbers_or_empty`)."""
    return number_cells(np.asarray(values, dtype=np.float64), CSV_DECIMALS)


def slopestakes_csv(design: Design) -> bytes | Iterator[bytes]:
    """``slopestakes.csv``: one row per staked station and side, station order, left before right."""
    ew = design.earthwork
    assert ew is not None and ew.slopes is not None
    r, sp = ew.slopes, design.stakes
    assert r.catch_point is not None and r.reference_point is not None
    res = r.result
    num = _csv_numbers
    cols: list[Cells] = [
        Same(csv_text_field(design.alignment.name), len(r.side)),
        num(sp.station_values[r.station]),
        _guarded(_labels(sp, r.station)),
        _coded(r.side),
        _Ids(sp, r.hinge, quoted=True),
        num(r.hinge_offset),
        num(res.lines.z),
        num(res.ground_at_hinge),
        _coded(res.kind),
        _Ids(sp, r.catch_point, quoted=True),
        num(r.catch_offset),
        num(res.catch_n),
        num(res.catch_e),
        num(res.catch_z),
        num(res.catch_cut_fill),
        _Ids(sp, r.reference_point, quoted=True),
        num(r.reference_offset),
        num(res.ref_n),
        num(res.ref_e),
        num(res.ref_ground),
        num(res.ref_dist),
        num(res.vd_to_hinge),
        _coded(res.note, csv_field),
    ]
    return _csv(SLOPESTAKES_COLUMNS, cols)


def volumes_csv(design: Design) -> bytes | Iterator[bytes]:
    """``volumes.csv``: areas at every station with both catch points, average-end-area volumes between them."""
    ew = design.earthwork
    assert ew is not None
    sp = design.stakes
    st = ew.volume_stations
    if ew.sections is None or ew.volumes is None or st.size == 0:
        return _csv(VOLUMES_COLUMNS, [])
    v = ew.volumes
    num = _csv_numbers
    cols: list[Cells] = [
        Same(csv_text_field(design.alignment.name), int(st.size)),
        num(sp.station_values[st]),
        _guarded(_labels(sp, st)),
        num(ew.sections.cut_area[st]),
        num(ew.sections.fill_area[st]),
        num(v.cut),
        num(v.fill),
        num(v.cumulative_cut),
        num(v.cumulative_fill),
    ]
    return _csv(VOLUMES_COLUMNS, cols)


# ---- the sheet ----------------------------------------------------------------------------------
def _side_words(design: Design) -> list[str]:
    """One line per staked side: its hinge and slopes, as the job gives them (run per unit rise)."""
    spec = design.job.slope_stakes
    assert spec is not None
    out = []
    for side, sd in spec.sides():
        ditch = ("" if sd.ditch_depth is None else
                 f", ditch {sd.ditch_depth:g} deep at {sd.foreslope:g}:1, {sd.ditch_width:g} wide")
        out.append(f"{side}: hinge {sd.hinge}, fill {sd.fill_slope:g}:1, cut {sd.cut_slope:g}:1{ditch}")
    out.append(f"reference stakes {spec.reference_offset:g} beyond the catch; no catch farther than "
               f"{spec.max_width:g} from the hinge")
    return out


def _sheet_numbers(values: NDArray[np.float64]) -> _Packed:
    """The sheet's numbers (:data:`SHEET_DECIMALS`), empty where NaN, each one run to the right
    (a sign beside its digits).
    """
    return _Packed((number_cells(values, SHEET_DECIMALS),), right=True)


def slopestakes_sheet(design: Design, wide: bool = False) -> bytes:
    """``slopestakes.txt`` whole (:func:`slopestakes_sheet_pieces` joined)."""
    return b"".join(slopestakes_sheet_pieces(design, wide))


def slopestakes_sheet_pieces(design: Design, wide: bool = False) -> Iterator[bytes]:
    """``slopestakes.txt``, a run of pages at a time (:func:`~stakeout.writers.text.paged_pieces`):
    per staked station and side the hinge, the catch stake and the reference stake, each with
    what the crew writes on its lath (``C 3.42 @ 26.40``: cut or fill to the hinge, at the
    horizontal distance to it); 80 columns (``wide``: one line per record) and 60 lines a page.
    """
    ew = design.earthwork
    assert ew is not None and ew.slopes is not None
    page, width = (WIDE, None) if wide else (WIDTH, WIDTH)
    r, sp = ew.slopes, design.stakes
    assert r.catch_point is not None and r.reference_point is not None
    res = r.result
    title = "SLOPE STAKES"
    head = header_lines(title, design) + [""] + wrap_lines(_side_words(design), page)
    table = FieldTable([
        FieldColumn("Station", _Packed((_labels(sp, r.station),)), "<"),
        FieldColumn("Side", _coded(r.side, lambda s: s[0].upper()), "<"),
        FieldColumn("Hinge", _Ids(sp, r.hinge), "<"),
        FieldColumn("Elev", _sheet_numbers(res.lines.z)),
        FieldColumn("Kind", _coded(res.kind), "<"),
        FieldColumn("Catch", _Ids(sp, r.catch_point), "<"),
        FieldColumn("Offset", _sheet_numbers(r.catch_offset)),
        FieldColumn("Lath (catch)", _lath(res.catch_cut_fill, res.catch_dist), "<"),
        FieldColumn("Ref", _Ids(sp, r.reference_point), "<"),
        FieldColumn("Offset", _sheet_numbers(r.reference_offset), with_previous=True),
        FieldColumn("Lath (reference)", _lath(res.vd_to_hinge, res.ref_dist), "<", with_previous=True),
        FieldColumn("Note", _coded(res.note), "<", with_previous=True),
    ], width)
    records = TableRecords(table, np.arange(len(r.side), dtype=np.intp))  # laid out as their pages are written
    missing, _, why = design.presentation.catch_gaps
    foot = ["Lath: C (cut) or F (fill) from the ground at the stake up or down to the hinge,",
            "@ the horizontal distance from the stake to the hinge; offsets negative left.",
            f"{missing} of {len(r.side)} station side(s) without a catch point" + (f" ({why})." if why else "."),
            "Catch and reference point ids are numbered after the last stake of the job."]
    return paged_pieces(head, [SheetPart([], table.heads(), records)], f"{title}   {design.job.info.name}", foot, page)
