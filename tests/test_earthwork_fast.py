"""Issue 27: slopestakes.csv, volumes.csv and slopestakes.txt are built from whole columns (the
CSV files a chunk of rows at a time, written piece by piece); their bytes are those of the
row-by-row writers they replace (tests/earthwork_reference.py, a frozen copy), in both sheet
layouts, with chunks of 1, 2 and 7 rows so that every chunk boundary is crossed.

The designs: the sample job with slope stakes, the slope-stake test jobs (a planar, a folded
and a curved ground), and random earthwork results laid over them: NaN, infinities, values
at and beside a rounding tie, negative values that round to zero, every kind and note,
catch points missing, an alignment name and a point prefix that need CSV quoting or the
formula guard, stations before the start (labels starting with ``-``).  No outside
reference: the reference is the previous output itself.
"""

from __future__ import annotations

import tracemalloc
from dataclasses import replace

import numpy as np
import pytest

from stakeout.design import Design, build_design
from stakeout.jobfile import load_job
from stakeout.outputs import pieces, whole
from stakeout.slopestakes import NOTE_NO_CATCH, NOTE_OUTSIDE
from stakeout.volumes import Volumes
from stakeout.writers import earthwork, text

from . import earthwork_reference as ref
from .helpers import SAMPLES

WRITERS = [("slopestakes.csv", "slopestakes_csv", {}), ("volumes.csv", "volumes_csv", {}),
           ("slopestakes.txt", "slopestakes_sheet", {}), ("slopestakes.txt wide", "slopestakes_sheet", {"wide": True})]


def _bytes(out) -> bytes:
    return out.encode("utf-8") if isinstance(out, str) else whole(out)


def _same(d: Design, monkeypatch, chunks=(1, 2, 7, None)) -> None:
    """Every earthwork file, for each chunk size: the new bytes are the reference's."""
    want = {name: _bytes(getattr(ref, fn)(d, **kw)) for name, fn, kw in WRITERS}
    for k in chunks:
        with monkeypatch.context() as m:
            if k is not None:
                m.setattr(earthwork, "CHUNK_ROWS", k)
                m.setattr(text, "_BLOCK", k)  # the sheet's blocks of records too
            for name, fn, kw in WRITERS:
                out = getattr(earthwork, fn)(d, **kw)
                got = whole(out)
                assert got.decode().splitlines() == want[name].decode().splitlines(), f"{name} chunk {k}"
                assert got == want[name], f"{name} chunk {k}"
                if name.endswith(".csv") and k is not None and got.count(b"\n") > k + 1:
                    parts = list(pieces(getattr(earthwork, fn)(d, **kw)))  # piece by piece, header first
                    assert parts[0] == got[:got.index(b"\n") + 1] and len(parts) > 2


@pytest.fixture(scope="module")
def sample() -> Design:
    return build_design(load_job(SAMPLES / "fenwick_cutting_earthwork_m.toml"))


def test_earthwork_files_of_the_sample_are_the_row_by_row_bytes(sample, monkeypatch):
    assert sample.earthwork is not None and sample.earthwork.slopes is not None
    _same(sample, monkeypatch)


@pytest.fixture(scope="module", params=["planar", "folded", "curve"])
def road(request, tmp_path_factory) -> Design:
    from .test_slope_stake_jobs import write_case  # a road over a ground: catch points, gaps, notes

    return build_design(load_job(write_case(tmp_path_factory.mktemp(request.param), "csv", request.param)))


def test_earthwork_files_of_the_slope_stake_jobs_are_the_row_by_row_bytes(road, monkeypatch):
    _same(road, monkeypatch)


def _values(rng: np.random.Generator, n: int) -> np.ndarray:
    """Numbers a printer can get wrong: ties and their neighbours, negative zeros, NaN, infinities."""
    pick = rng.integers(0, 8, n)
    base = rng.integers(-10**6, 10**6, n) / 10**4
    out = rng.normal(0.0, 300.0, n)
    out = np.where(pick == 1, base + 0.00005, out)  # a tie at 4 decimals (as stored: a little off)
    out = np.where(pick == 2, np.nextafter(base + 0.0005, np.inf), out)  # beside a tie at 3 and 2 decimals
    out = np.where(pick == 3, -rng.uniform(0.0, 0.00006, n), out)  # rounds to zero: no sign
    out = np.where(pick == 4, np.nan, out)
    out = np.where(pick == 5, rng.choice([np.inf, -np.inf, -0.0, 0.005, -0.005, 0.125]), out)
    return np.where(pick == 6, base * 1000.0, out)


def random_earthwork(d: Design, seed: int, n: int | None = None) -> Design:
    """``d`` with random slope-stake rows and volumes laid over its stakes (any count of rows)."""
    rng = np.random.default_rng(seed)
    ew = d.earthwork
    assert ew is not None and ew.slopes is not None
    sp = d.stakes
    k = sp.stations.size
    n = int(rng.integers(0, 40)) * (seed % 6 > 0) if n is None else n  # no rows at all too
    station = np.sort(rng.integers(0, k, n))
    res = ew.slopes.result
    v = [_values(rng, n) for _ in range(18)]
    result = replace(res, ground_at_hinge=v[0], kind=rng.choice(np.array(["cut", "fill", ""]), n),
                     catch_dist=v[1], catch_n=v[2], catch_e=v[3], catch_z=v[4], ref_dist=v[5], ref_n=v[6],
                     ref_e=v[7], ref_ground=v[8], vd_to_hinge=v[9],
                     note=rng.choice(np.array(["", NOTE_NO_CATCH, NOTE_OUTSIDE, 'odd, "quoted" note']), n),
                     lines=replace(res.lines, z=v[10]))
    none = rng.random(n) < 0.3
    catch = np.where(none, -1, rng.integers(0, len(sp), n))
    slopes = replace(ew.slopes, station=station, side=tuple(rng.choice(["left", "right"], n).tolist()),
                     hinge=rng.integers(0, sp.numbered, n), hinge_offset=v[11], catch_offset=v[12],
                     reference_offset=v[13], result=result, catch_point=catch,
                     reference_point=np.where(none, -1, rng.integers(0, len(sp), n)))
    st = np.sort(rng.choice(k, min(k, int(rng.integers(0, 30))), replace=False))
    sections = None if ew.sections is None else replace(ew.sections, cut_area=_values(rng, k),
                                                        fill_area=_values(rng, k))
    vols = Volumes(*(_values(rng, st.size) for _ in range(4)))
    ew = replace(ew, slopes=slopes, volume_stations=st, sections=sections, volumes=vols)
    prefix = ["", "P", 'Q,"7', "=X", "Ä-"][seed % 5]
    shift = [0.0, -120.0][seed % 2]  # stations before the start: labels from "-"
    stakes = replace(sp, prefix=prefix, stations=sp.stations + shift)
    name = ["Road", "=SUM(A1)", 'Main, "north"', "Straße"][seed % 4]
    return replace(d, alignment=replace(d.alignment, name=name), stakes=stakes, earthwork=ew)


@pytest.mark.parametrize("seed", range(12))
def test_earthwork_files_of_random_results_are_the_row_by_row_bytes(sample, seed, monkeypatch):
    _same(random_earthwork(sample, seed), monkeypatch, chunks=(1, 7, None))


def test_slopestakes_csv_was_built_row_by_row_in_python(sample, monkeypatch):
    """The CSV was joined from one Python string a field: ~9x its own size in memory at 1M
    stakes (369 MiB for a 41 MiB file).  Now its columns are laid out a chunk of rows at a time
    and the file comes piece by piece: rendering it never holds much more than a chunk.
    """
    d = random_earthwork(sample, 99, n=40_000)
    monkeypatch.setattr(earthwork, "CHUNK_ROWS", 1024)
    size = len(whole(earthwork.slopestakes_csv(d)))
    tracemalloc.start()
    try:
        largest = max(len(p) for p in pieces(earthwork.slopestakes_csv(d)))
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert largest < size / 10  # piece by piece
    assert peak < size  # the file was never whole (was ~9x its size)


def test_ids_of_named_points_among_numbered_ones():
    """A stake the job named (a listed point, after the numbered ones) keeps its own id, quoted
    where CSV needs it; -1 is no stake; the numbers carry the prefix.
    """
    from types import SimpleNamespace

    from stakeout.writers import rows
    from stakeout.writers.csvtext import csv_field

    names = ["TREE 1", 'gate, "east"', "Brücke", "X"]
    sp = SimpleNamespace(first_point=98, numbered=5, prefix='P"',
                         point_id=lambda i: f'P"{98 + i}' if i < 5 else names[i - 5])
    index = np.array([0, 6, -1, 4, 7, 2, 6, 8, -1, 1])
    for quoted in (False, True):
        ids = earthwork._Ids(sp, index, quoted)  # type: ignore[arg-type]
        for which in (np.arange(10), np.array([1, 2, 3]), np.array([9, 0])):
            got = rows.join_rows([ids.field(which)], which.size).decode("utf-8").split("\n")[:-1]
            want = ["" if i < 0 else (csv_field if quoted else str)(sp.point_id(int(i))) for i in index[which]]
            assert got == want
