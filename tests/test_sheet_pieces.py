"""Issue 27: setout.txt and deflections.txt (and slopestakes.txt) are written a run of pages at a time
(:func:`stakeout.writers.text.paged_pieces`), each sheet's records laid out only for the pages
being written; the pieces joined are the whole sheet byte for byte.

References: the frozen cell-by-cell writers (tests/sheets_reference.py) for one alignment; for
several alignments the sheet written whole (one piece), itself pinned by the sample digests.
Memory is measured with Python's tracemalloc (standard library), never speed.
"""

from __future__ import annotations

import sys
import tracemalloc
from pathlib import Path

import pytest
from hypothesis import given, settings

from stakeout import outputs
from stakeout.design import build_design
from stakeout.jobfile import load_job
from stakeout.pipeline import compute
from stakeout.writers import earthwork, sheets, text

from . import sheets_reference as ref
from .helpers import SAMPLES
from .test_sheets_fast import _sheet_parts

SAMPLE_JOBS = sorted(SAMPLES.glob("*.toml"))
BENCH = Path(__file__).resolve().parent.parent / "benchmarks"


@pytest.mark.parametrize("wide", [False, True], ids=["80", "wide"])
@pytest.mark.parametrize("job", SAMPLE_JOBS, ids=[j.stem for j in SAMPLE_JOBS])
def test_sheet_pieces_joined_are_the_whole_sheet(job, wide, monkeypatch):
    d = build_design(load_job(job))
    writers = [("deflections", sheets.deflection_pieces)]
    if d.setup is not None:
        writers.append(("sheet", sheets.setout_pieces))
    if d.earthwork is not None and d.earthwork.slopes is not None:
        writers.append(("slopestakes-sheet", earthwork.slopestakes_sheet_pieces))
    whole = {name: outputs.BY_NAME[name].render(d, outputs.Rendered(wide)) for name, _ in writers}
    monkeypatch.setattr(text, "PIECE_LINES", 1)  # a piece a page
    monkeypatch.setattr(text, "_BLOCK", 5)  # records laid out five at a time: titles and pieces across blocks
    for name, pieces in writers:
        got = list(outputs.BY_NAME[name].chunks(d, outputs.Rendered(wide)))
        assert b"".join(got) == whole[name], name
        if d.parts:  # each alignment's deflections, or every alignment's stakes in one setout sheet
            continue
        own = list(pieces(d, wide))
        assert len(own) == whole[name].count(b"\f") + 1 > 1, name  # one page a piece
        assert all(p.startswith(b"\f") for p in own[1:])
        if name == "slopestakes-sheet":  # its reference is tests/earthwork_reference.py, through test_earthwork_fast
            continue
        old = (ref.setout_sheet if name == "sheet" else ref.deflection_sheet)(d, wide)
        assert b"".join(own) == (old.encode("utf-8") if isinstance(old, str) else old), name


@settings(max_examples=40, deadline=None)
@given(_sheet_parts())
def test_pages_a_piece_each_are_the_reference_pages(case):
    parts, foot, head = case
    want = ref.paged_parts(head, parts, "T", foot)
    was = text.PIECE_LINES
    text.PIECE_LINES = 1  # a piece a page (parts following on the page in hand, a foot of its own pages)
    try:
        got = list(text.paged_pieces(head, parts, "T", foot))
    finally:
        text.PIECE_LINES = was
    assert b"".join(got).decode("utf-8") == want
    assert len(got) == want.count("\f") + 1


def test_setout_sheet_was_joined_whole_before_writing(tmp_path, monkeypatch):
    """Regression: setout.txt was laid out whole (every record's text in one buffer) and joined
    into one bytes object before a byte was written: at a million stakes 99 MiB and 248 MiB more
    at the peak. Now its memory beyond its columns is a few numbers a record and the pages in
    hand: while the pieces are written the peak stays well below the file's size, which any
    sheet held whole would reach."""
    sys.path.insert(0, str(BENCH))
    try:
        from corridor import corridor_job
    finally:
        sys.path.remove(str(BENCH))
    d = compute(corridor_job(tmp_path / "c.toml", 60000, elements=20, spirals=True, profile=True))
    monkeypatch.setattr(text, "PIECE_LINES", 2048)  # small pieces and blocks: the file's share shows at this size
    monkeypatch.setattr(text, "_BLOCK", 1024)
    sheets._stake_table(d, text.WIDTH)  # the design's own cached columns, before measuring
    tracemalloc.start()
    try:
        table = sheets._stake_table(d, text.WIDTH)  # the sheet's columns: kept while it is written
        assert all(c.width for c in table.columns)
        _, columns = tracemalloc.get_traced_memory()
        del table
        tracemalloc.stop()
        tracemalloc.start()
        size = pieces = 0
        for p in sheets.setout_pieces(d):
            size += len(p)
            pieces += 1
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert size > 4_000_000 and pieces > 10
    assert peak - columns < 0.75 * size
