"""Outputs are written piece by piece as their writers render them, never held whole.

The manifest's hashes are checked against hashlib over the files on disk (Python's
standard library, outside the project).
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import tracemalloc
from pathlib import Path

from stakeout import outputs, pipeline

SAMPLE = Path(__file__).resolve().parent.parent / "sample_jobs" / "loop_ramp_usft.toml"
PIECE = 1 << 20
PIECES = 48


def _big(design, done):  # a writer rendering 48 MiB a page at a time
    for k in range(PIECES):
        yield bytes([65 + k % 26]) * PIECE


def test_every_output_was_held_in_memory_until_the_build_ended(tmp_path, monkeypatch):
    """Regression: the build kept every output's bytes until the manifest was written (about 600 MB
    of a 1M-stake corridor's), and each writer returned its whole file. Now a writer may give its
    file in pieces, each written and hashed as it comes, and nothing is kept."""
    swapped = tuple(dataclasses.replace(o, writer=_big) if o.name == "points" else o for o in outputs.OUTPUTS)
    monkeypatch.setattr(pipeline, "OUTPUTS", swapped)
    tracemalloc.start()
    try:
        pipeline.run_build(SAMPLE, tmp_path / "out", "points,manifest")
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert peak < 16 * PIECE  # pieces in flight, not the 48 MiB file
    data = (tmp_path / "out" / "points.csv").read_bytes()
    assert len(data) == PIECES * PIECE
    assert data[:PIECE] == b"A" * PIECE and data[-PIECE:] == bytes([65 + (PIECES - 1) % 26]) * PIECE
    m = json.loads((tmp_path / "out" / "manifest.json").read_text())
    assert m["outputs"]["points.csv"] == {"sha256": hashlib.sha256(data).hexdigest(), "bytes": len(data)}


def test_pieces_and_whole_give_the_same_file(tmp_path):
    """A default build's files equal each output rendered whole (``Output.render``), and the
    manifest's hashes equal hashlib's over the files written."""
    notes = pipeline.run_build(SAMPLE, tmp_path / "out")
    assert notes
    d = pipeline.compute(SAMPLE)
    done = outputs.Rendered()
    m = json.loads((tmp_path / "out" / "manifest.json").read_text())
    for name, got in m["outputs"].items():
        data = (tmp_path / "out" / name).read_bytes()
        assert got == {"sha256": hashlib.sha256(data).hexdigest(), "bytes": len(data)}, name
    for o in outputs.OUTPUTS:
        f = tmp_path / "out" / o.filename
        if f.exists() and o.name != "manifest":  # the manifest holds the time it was made
            assert o.render(d, done) == f.read_bytes(), o.filename


def test_pieces_rendered_on_every_core_come_in_order_and_few_ahead():
    """``rows.in_order`` gives ``render`` of each start in order, with at most a few pieces
    rendered and not yet read (the per-point CSVs' chunks)."""
    import threading

    from stakeout.writers import rows

    for count in (0, 1, 2, 3, 17, 200):
        lock = threading.Lock()
        state = {"made": 0, "read": 0, "most": 0}

        def render(s: int) -> bytes:
            with lock:
                state["made"] += 1
                state["most"] = max(state["most"], state["made"] - state["read"])
            return str(s).encode() + b"\n"

        got = []
        for piece in rows.in_order(render, range(0, 3 * count, 3)):
            got.append(piece)
            with lock:
                state["read"] += 1
        assert got == [str(s).encode() + b"\n" for s in range(0, 3 * count, 3)]
        assert state["most"] <= 2 * 4 + 1


def test_ground_work_in_blocks_equals_it_in_one(monkeypatch):
    """Ground lookups, slope stakes and cross-sections are worked out a block at a time (bounded
    temporaries on a long corridor); each point, ray and station is its own, so blocks of 1, 2
    and 3 give exactly what one block gives."""
    import dataclasses

    import numpy as np

    from stakeout import ground, slopestakes, volumes

    job = Path(__file__).resolve().parent.parent / "sample_jobs" / "fenwick_cutting_earthwork_m.toml"

    def arrays(ew):
        out = {"gz": ew.ground_elevation, "cf": ew.cut_fill}
        res = ew.slopes.result
        for f in dataclasses.fields(res):
            if f.name != "lines":
                out[f.name] = getattr(res, f.name)
        for f in dataclasses.fields(ew.sections):
            out["cs." + f.name] = getattr(ew.sections, f.name)
        return out

    whole = arrays(pipeline.compute(job).earthwork)
    assert whole["cs.ok"].sum() > 3
    for size in (1, 2, 3):
        monkeypatch.setattr(ground, "_LOOKUP_BLOCK", size)
        monkeypatch.setattr(slopestakes, "_RAY_BLOCK", size)
        monkeypatch.setattr(volumes, "_STATION_BLOCK", size)
        got = arrays(pipeline.compute(job).earthwork)
        for k, v in whole.items():
            if v.dtype.kind == "f":
                assert np.array_equal(got[k], v, equal_nan=True), (size, k)
            else:
                assert np.array_equal(got[k], v), (size, k)


def test_a_writer_failing_mid_file_left_the_file_open(tmp_path):
    """Regression: a writer raising after some pieces (an error found on a later page) left the
    file's handle open after the build failed (ResourceWarning, a descriptor per failed build
    in a long-lived process); the folder closes every file when it is discarded."""
    import os

    import pytest

    from stakeout.errors import JobFileError
    from stakeout.writers.folder import OutputFolder

    def pieces():
        yield b"head\n"
        yield b"row\n"
        raise JobFileError("staking.interval = 0: found on a later page")

    def open_in(folder: Path) -> list[str]:
        out = []
        for fd in os.listdir("/proc/self/fd"):
            try:
                target = os.readlink(f"/proc/self/fd/{fd}")
            except OSError:
                continue
            if folder.name in target:
                out.append(target)
        return out

    folder = OutputFolder(tmp_path / "out")
    with pytest.raises(JobFileError):
        with folder:
            folder.write_chunks("points.csv", pieces())
    assert folder.tmp is not None and open_in(folder.tmp) == []
    assert not (tmp_path / "out").exists()


def test_the_streamed_joins_of_several_alignments_were_a_second_copy_of_the_whole_ones():
    """Regression (duplication): the CSV and sheet joins of several alignments were written again
    inside ``Output.chunks`` and ``several.sheets`` was left uncalled; now the whole join is the
    streamed one joined, checked here against the rule written out by hand (header of the first
    file, rows of every file; sheets split by a form feed), whatever the pieces."""
    from stakeout.writers import several

    files = [b"a,b\n", b"a,b\n1,2\n3,4\n", b"a,b\n5,6\n", b"", b"a,b"]
    expected = files[0] + b"1,2\n3,4\n" + b"5,6\n"
    for size in (1, 2, 3, 100):
        cut = [[f[i:i + size] for i in range(0, len(f), size)] for f in files]
        assert b"".join(several.csv_rows_pieces(cut)) == expected, size
        assert b"".join(several.sheets_pieces(cut)) == b"\f".join(files), size
    assert several.csv_rows(files) == expected
    assert b"".join(several.csv_rows_pieces([])) == b"" == b"".join(several.sheets_pieces([]))


def test_numbered_names_are_the_names_they_stand_for():
    """``NumberedNames`` (a prefix and consecutive numbers, names as written, in runs) gives what
    the plain list of the same names gives, for every slice and index, and their lengths."""
    import numpy as np
    from hypothesis import given, settings
    from hypothesis import strategies as st

    from stakeout.landxml import NumberedNames, NumberRun

    run = st.one_of(
        st.builds(NumberRun, st.sampled_from(["", "P", "CL-", "ü"]), st.integers(-50, 10**12), st.integers(0, 40)),
        st.lists(st.text(min_size=1, max_size=5), max_size=6).map(tuple))

    @settings(max_examples=150, deadline=None)
    @given(st.lists(run, max_size=5), st.integers(-60, 260), st.integers(-60, 260))
    def check(runs, a, b):
        plain: list[str] = []
        for r in runs:
            plain += ([f"{r.prefix}{v}" for v in range(r.first, r.first + r.size)] if isinstance(r, NumberRun)
                      else list(r))
        names = NumberedNames(runs)
        assert len(names) == len(plain)
        assert names[a:b] == plain[a:b] and names[:] == plain and names[a:b:2] == plain[a:b:2]
        for k in (a, b):
            if -len(plain) <= k < len(plain):
                assert names[k] == plain[k]
        assert np.array_equal(names.lengths(), np.array([len(t) for t in plain], dtype=np.int64))

    check()


def test_alignment_xml_made_a_string_for_every_stake_id(tmp_path):
    """Regression: alignment.xml took every stake's id as one Python string each (and a set of them
    to prove them unique): about 145 MiB more at 1M stakes. The ids are now made a block at a time;
    the file is unchanged (the sample digests) and lxml reads every CgPoint name back."""
    from lxml import etree

    from stakeout.writers import exchange

    job = Path(__file__).resolve().parent.parent / "sample_jobs" / "orchard_vale_interchange_m.toml"
    d = pipeline.compute(job)
    data = b"".join(exchange.alignment_xml_pieces(d))
    for p in d.parts or (d,):
        assert "point" not in vars(p.stakes)  # the cached list of every id was never made
    ns = {"x": "http://www.landxml.org/schema/LandXML-1.2"}
    got = [e.get("name") for e in etree.fromstring(data, etree.XMLParser(resolve_entities=False)).iterfind(
        ".//x:CgPoint", ns)]
    want = [p.stakes.point_id(i) for p in d.parts or (d,) for i in range(len(p.stakes))]
    want += [c.id for c in d.job.control_points()]
    assert got == want


def test_report_made_every_stakes_texts_to_list_two_thousand(tmp_path):
    """Regression: report.html lists at most REPORT_MAX_ROWS stakes, but its setout columns held
    every stake's id, station label, code and feature as a Python string (about 146 bytes a stake,
    kept for the rest of the build). They are now made for the listed stakes only; the report's
    bytes are those of a report made from the whole lists (the old way, rebuilt here)."""
    import dataclasses
    import sys

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
    from corridor import corridor_job

    from stakeout.writers import html

    job = corridor_job(tmp_path / "c.toml", 6000)
    d = pipeline.compute(job)
    assert len(d.stakes) > html.REPORT_MAX_ROWS
    done = outputs.Rendered()
    report = next(o for o in outputs.OUTPUTS if o.name == "report")
    got = report.render(d, done)
    for name in ("point", "station_label", "code", "feature"):
        assert name not in vars(d.stakes), name
    # the same report from whole lists: every column's values taken from the full cached lists
    sp = d.stakes
    whole = {"point": sp.point, "station": sp.station_label, "code": sp.code, "feature": sp.feature}
    pres = d.presentation
    cols = tuple(dataclasses.replace(c, values=whole[c.key]) if c.key in whole else c for c in pres.setout_columns)
    vars(pres)["setout_columns"] = cols
    assert report.render(d, outputs.Rendered()) == got
