"""plan.dxf written piece by piece: the pieces are the file's bytes in order, whatever the size of a
block of bulk entities, read back with ezdxf (the reference reader), and the writer never holds the
whole file.
"""

import io
import sys
import tracemalloc
from pathlib import Path

import ezdxf
import pytest

from stakeout.design import build_design
from stakeout.jobfile import load_job
from stakeout.writers import dxf

from .helpers import SAMPLES

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
from corridor import corridor_job  # noqa: E402


def _read(data: bytes):
    doc = ezdxf.read(io.StringIO(data.decode("utf-8")))
    assert not doc.audit().has_errors
    return doc


@pytest.mark.parametrize("sample", ["loop_ramp_usft.toml", "orchard_vale_interchange_m.toml",
                                    "kestrel_rise_superelevation_m.toml", "harrow_fen_bypass_control_m.toml"])
@pytest.mark.parametrize("rounded", [False, True])
def test_pieces_of_seven_entities_are_the_whole_file(sample, rounded, monkeypatch):
    # one alignment, several, a widened line (a polyline in bulk), control points; numbers written
    # as ezdxf writes them and (over EXACT_MAX_ENTITIES) to BULK_DECIMALS: blocks of 7 entities
    # (and 7 polyline vertices) give the bytes of the default blocks
    d = build_design(load_job(SAMPLES / sample))
    if rounded:
        monkeypatch.setattr(dxf, "EXACT_MAX_ENTITIES", 0)
    whole = dxf.plan_dxf(d)
    monkeypatch.setattr(dxf, "BLOCK_ENTITIES", 7)
    pieces = list(dxf.plan_dxf_pieces(d))
    assert b"".join(pieces) == whole
    stakes = sum(len(p.stakes) for p in (d.parts or (d,)))
    assert len(pieces) > 2 * stakes / 7  # the stakes' POINT and TEXT, 7 entities a piece
    # ezdxf reading the file back: every stake's POINT and number, unique handles below the seed
    doc = _read(whole)
    msp = doc.modelspace()
    assert len(msp.query('POINT[layer=="SO-STAKE"]')) == len(msp.query('TEXT[layer=="SO-STAKE-NO"]')) == stakes
    handles = [int(e.dxf.handle, 16) for e in msp]
    assert len(set(handles)) == len(handles) and max(handles) < int(doc.header["$HANDSEED"], 16)


def test_plan_dxf_was_held_whole_with_its_rows(tmp_path, monkeypatch):
    """Regression: plan.dxf was rendered whole, its bulk rows a list of bytes joined at the end, so
    the writer held about twice the file (685 MiB more for a 1M-stake corridor's 335 MiB); it now
    gives the file a block of entities at a time and holds only the columns it draws from
    (tracemalloc sees numpy's allocations too)."""
    job = corridor_job(tmp_path / "c.toml", 60_000, elements=10, setup=False)
    d = build_design(load_job(job))
    monkeypatch.setattr(dxf, "BLOCK_ENTITIES", 1024)
    size = 0
    tracemalloc.start()
    try:
        for piece in dxf.plan_dxf_pieces(d):
            size += len(piece)
            assert len(piece) < 1 << 20  # a block of 1024 entities, or ezdxf's text between runs
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert size > 20 << 20
    assert peak < size / 5  # 2.9 MiB of 20.7 MiB (it was more than twice the file)
