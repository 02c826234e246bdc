"""``[ground]`` and ``[slope_stakes]`` read from TOML: typed values, every bad value refused by key.

Reference: the contract, ../shared/design/job-file.md, "Existing ground: cut
and fill at every stake, slope stakes, volumes" (its example tables are read
as given).
"""

from __future__ import annotations

import hashlib
import tomllib

import pytest

from stakeout.errors import JobFileError
from stakeout.jobfile.ground import read_ground, read_slope_stakes
from stakeout.jobfile.reader import Table
from stakeout.slopestakes import SideSlopes, SlopeStaking

CONTRACT_EXAMPLE = """
[slope_stakes]
left = { hinge = "SHL", fill_slope = 4.0, cut_slope = 3.0, foreslope = 4.0, ditch_depth = 1.0, ditch_width = 2.0 }
right = { hinge = "SHR", fill_slope = 2.0, cut_slope = 2.0 }
reference_offset = 10.0
max_width = 300.0
"""


def _top(text: str) -> Table:
    doc = tomllib.loads(text)
    return Table(doc, "", tuple(doc))


def test_contract_example_reads():
    s = read_slope_stakes(_top(CONTRACT_EXAMPLE), codes=("CL", "SHL", "SHR"))
    assert s == SlopeStaking(SideSlopes("SHL", 4.0, 3.0, 4.0, 1.0, 2.0), SideSlopes("SHR", 2.0, 2.0, None, None, 0.0),
                             10.0, 300.0)
    assert [side for side, _ in s.sides()] == ["left", "right"]


def test_no_table_no_slope_stakes():
    assert read_slope_stakes(_top("x = 1")) is None
    assert read_ground(_top("x = 1"), base=__import__("pathlib").Path(".")) is None


@pytest.mark.parametrize("body, expect", [
    ('left = { hinge = "SHL", fill_slope = 2.0, cut_slope = 2.0, foo = 1 }', "slope_stakes.left.foo: unknown key"),
    ('reference_offset = 5.0\nmax_width = 9.0', "slope_stakes: give `left"),
    ('left = { hinge = "SHL", fill_slope = 0.0, cut_slope = 2.0 }', "slope_stakes.left.fill_slope = 0.0: must be greater than 0"),
    ('left = { hinge = "SHL", fill_slope = 2.0e4, cut_slope = 2.0 }', "slope_stakes.left.fill_slope = 20000.0: out of range"),
    ('left = { hinge = "SHL", fill_slope = 2.0 }', "slope_stakes.left.cut_slope: missing"),
    ('left = { hinge = "SHL", fill_slope = 2.0, cut_slope = 2.0, ditch_width = 1.0 }',
     "slope_stakes.left.ditch_width = 1.0: needs `ditch_depth`"),
    ('left = { hinge = "SHL", fill_slope = 2.0, cut_slope = 2.0, ditch_depth = 1.0 }',
     "slope_stakes.left.ditch_depth = 1.0: needs `foreslope`"),
    ('left = { hinge = "SHL", fill_slope = 2.0, cut_slope = 2.0, foreslope = 4.0, ditch_depth = -1.0 }',
     "slope_stakes.left.ditch_depth = -1.0: must be greater than 0"),
    ('left = { hinge = "SHX", fill_slope = 2.0, cut_slope = 2.0 }', "slope_stakes.left.hinge = 'SHX': no offset line"),
    ('left = { hinge = "S\\nL", fill_slope = 2.0, cut_slope = 2.0 }', "slope_stakes.left.hinge"),
    ('left = { fill_slope = 2.0, cut_slope = 2.0 }', "slope_stakes.left.hinge: missing"),
    ('left = { hinge = "SHL", fill_slope = "2:1", cut_slope = 2.0 }', "slope_stakes.left.fill_slope = '2:1': expected a number"),
    ('left = { hinge = "SHL", fill_slope = 2.0, cut_slope = 2.0 }\nmax_width = 9.0', "slope_stakes.reference_offset: missing"),
    ('left = { hinge = "SHL", fill_slope = 2.0, cut_slope = 2.0 }\nreference_offset = 5.0\nmax_width = 1e12',
     "slope_stakes.max_width = 1000000000000.0: out of range"),
    ('left = { hinge = "SHL", fill_slope = 2.0, cut_slope = 2.0 }\nreference_offset = 0.0\nmax_width = 9.0',
     "slope_stakes.reference_offset = 0.0: must be greater than 0"),
    ('left = { hinge = "SHL", fill_slope = nan, cut_slope = 2.0 }', "slope_stakes.left.fill_slope = nan: must be a finite"),
])
def test_bad_slope_stakes_name_the_key(body, expect):
    text = "[slope_stakes]\n" + body
    if "reference_offset" not in body and "max_width" not in body:
        text += "\nreference_offset = 5.0\nmax_width = 100.0"
    with pytest.raises(JobFileError) as info:
        read_slope_stakes(_top(text), codes=("SHL", "SHR"))
    assert expect in str(info.value)


def test_ground_file_is_read_and_recorded(tmp_path):
    rows = "".join(f"{i},{1000 + (i // 4) * 10.0},{5000 + (i % 4) * 10.0},{20 + i * 0.1}\n" for i in range(16))
    (tmp_path / "survey").mkdir()
    (tmp_path / "survey" / "eg.csv").write_text(rows, encoding="utf-8")
    got = read_ground(_top('[ground]\nfile = "survey/eg.csv"'), tmp_path)
    assert got is not None
    ground, rec = got
    assert ground.face_count == 18
    assert rec.role == "ground" and rec.path == "survey/eg.csv"
    assert rec.sha256 == hashlib.sha256(rows.encode()).hexdigest()


@pytest.mark.parametrize("body, expect", [
    ('', "ground: give `file"),
    ('file = "a.csv"\nlandxml = "b.xml"', "ground: give `file"),
    ('file = "a.csv"\nname = "EG"', "ground.name = 'EG': only with `landxml`"),
    ('file = "missing.csv"', "ground.file = "),
    ('file = ""', "ground.file = '': empty"),
    ('file = 3', "ground.file = 3: expected text"),
    ('files = "a.csv"', "ground.files: unknown key"),
    ('landxml = "eg.xml"', "eg.xml': not found"),
])
def test_bad_ground_names_the_key(tmp_path, body, expect):
    with pytest.raises(JobFileError) as info:
        read_ground(_top("[ground]\n" + body), tmp_path)
    assert expect in str(info.value)
