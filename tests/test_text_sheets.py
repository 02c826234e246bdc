"""The printed text sheets: 80 columns and 60 lines a page by default, ``--wide`` for one line per stake.

Page size is common practice: 80 characters fit A4 and US Letter portrait at
10 characters an inch within normal margins, and 60 lines at 6 lines an inch
fit both page heights with the printer's top and bottom margins.  The
values on the sheets are checked against the project's own CSV files, which
other tests check against outside references; here the question is only
whether the printed page carries every stake, whole, readable and on one
page.
"""

from __future__ import annotations

import csv
import re
import string
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from stakeout.cli import app
from stakeout.writers.text import WIDTH, Column, table_lines

from .helpers import SAMPLES, build_job, read_rows, sheet_records

PAGE_LINES = 60  # common practice (see the module docstring)
WIDE_COLUMNS = 132  # common practice: a landscape page or a wide carriage at 10 characters an inch
SHEETS = ("setout.txt", "deflections.txt")
JOBS = sorted(SAMPLES.glob("*.toml"))
#: the samples with an instrument setup, which get setout sheets
SETUP_JOBS = [j for j in JOBS if "[setup]" in j.read_text(encoding="utf-8")]


def _sheets(job: str) -> tuple[str, ...]:
    """The sheets a sample's build must hold: setout.txt only with a setup; deflections.txt always."""
    return SHEETS if job in {j.stem for j in SETUP_JOBS} else ("deflections.txt",)


@pytest.fixture(scope="module")
def built(tmp_path_factory) -> dict[tuple[str, bool], Path]:
    """Every sample built twice: default sheets and ``--wide`` sheets."""
    out = {}
    for job in JOBS:
        for wide in (False, True):
            dest = tmp_path_factory.mktemp(job.stem + ("-wide" if wide else ""))
            only = "setout,sheet,deflections,points,stations" if job in SETUP_JOBS else "deflections,points"
            out[(job.stem, wide)] = build_job(job, dest / "out", "--only", only, *(["--wide"] if wide else []))
    return out


def _pages(text: str) -> list[list[str]]:
    return [page.rstrip("\n").split("\n") for page in text.split("\f")]


def _check_pages(text: str, width: int, records: bool = True) -> None:
    """At most 60 lines a page, no line over ``width``, no record split across a page
    (``records``: the tables' records open at the margin and run on indented).
    """
    for page in _pages(text):
        assert len(page) <= PAGE_LINES
        assert max(len(line) for line in page) <= width
        rules = [i for i, line in enumerate(page) if line.startswith("---")]
        for a, b in zip(rules[1::3], rules[2::3]):  # the records of each table on the page
            if records and b > a + 1:
                assert not page[a + 1].startswith(" "), "a record's second line opens a page: the record was split"


@pytest.mark.parametrize("job", [j.stem for j in JOBS])
def test_text_sheets_fit_80_columns_and_60_lines_by_default(built, job):
    # regression: setout.txt ran to 93-114 columns and deflections.txt to 98, wrapping on a portrait page
    out = built[(job, False)]
    assert {name for name in SHEETS if (out / name).exists()} == set(_sheets(job))
    for name in _sheets(job):
        _check_pages((out / name).read_text(encoding="utf-8"), WIDTH, records=name == "setout.txt")
    assert WIDTH == 80


@pytest.mark.parametrize("job", [j.stem for j in SETUP_JOBS])
def test_every_stake_is_on_the_sheet_once_with_its_values(built, job):
    """Each stake's record carries its setout.csv values (rounded as printed), in both layouts."""
    out = built[(job, False)]
    assert (out / "setout.txt").exists()
    rows = read_rows(out / "setout.csv")
    design_el = {r["point"]: r["elevation"] for r in read_rows(out / "stations.csv")}
    for wide in (False, True):
        records = sheet_records((built[(job, wide)] / "setout.txt").read_text(encoding="utf-8"))
        by_point = {}
        for rec in records:
            by_point.setdefault(rec.split()[0], []).append(rec)
        for r in rows:
            found = by_point.get(r["point"], [])
            assert len(found) == 1, (wide, r["point"])
            tokens = found[0].split()
            numbers = [float(t) for t in tokens if re.fullmatch(r"-?\d+\.\d+", t)]

            def printed(value: str, decimals: int) -> bool:  # the CSV's value, as printed to fewer decimals
                return any(abs(x - float(value)) <= 0.5 * 10.0 ** -decimals + 1e-4 for x in numbers)

            assert printed(r["grid_distance"], 3) and printed(r["ground_distance"], 3), tokens
            if r["angle_right_deg"]:  # printed to the whole second
                want = float(r["angle_right_deg"]) * 3600.0
                angles = [_seconds(t) for t in tokens if re.fullmatch(r"\d+-\d\d-\d\d", t)]
                assert any(abs((p - want + 648000.0) % 1296000.0 - 648000.0) <= 0.5 + 1e-6 for p in angles), tokens
            if design_el[r["point"]]:
                assert printed(design_el[r["point"]], 3), tokens
            if r.get("slope_distance"):
                assert printed(r["slope_distance"], 3), tokens
            if r.get("r95"):
                assert printed(r["r95"], 4), tokens


def _seconds(dms: str) -> float:
    d, m, sec = dms.split("-")
    return int(d) * 3600.0 + int(m) * 60.0 + float(sec)


@pytest.mark.parametrize("job", [j.stem for j in JOBS])
def test_wide_sheets_hold_one_line_per_stake(built, job):
    out = built[(job, True)]
    assert {name for name in SHEETS if (out / name).exists()} == set(_sheets(job))
    for name in _sheets(job):
        text = (out / name).read_text(encoding="utf-8")
        _check_pages(text, WIDE_COLUMNS, records=name == "setout.txt")
        for page in _pages(text):  # no continuation line in any table
            rules = [i for i, line in enumerate(page) if line.startswith("---")]
            for a, b in zip(rules[1::3], rules[2::3]):
                assert all(not line.startswith(" ") for line in page[a + 1:b] if name == "setout.txt")
    if "setout.txt" in _sheets(job):
        records = sheet_records((out / "setout.txt").read_text(encoding="utf-8"))
        rows = read_rows(out / "setout.csv")
        # one section per setup, in setup order, each in point order
        stakes = [r["point"] for r in sorted(rows, key=lambda r: int(r.get("setup") or 0))]
        assert [rec.split()[0] for rec in records if rec.split()[0] in set(stakes)] == stakes


def test_default_and_wide_records_are_the_same_values(built):
    # the two layouts differ only in where a record's line breaks: the same tokens in the same order, but for
    # the wide layout's own `slope %` column (one more token on a stake with a cross slope)
    for job in SETUP_JOBS:
        a, b = (built[(job.stem, w)] / "setout.txt" for w in (False, True))
        narrow = [r.split() for r in sheet_records(a.read_text())]
        wide = [r.split() for r in sheet_records(b.read_text())]
        assert len(narrow) == len(wide)
        for n, w in zip(narrow, wide):
            if n != w:
                k = next((i for i, (x, y) in enumerate(zip(n, w)) if x != y), len(n))
                assert n == w[:k] + w[k + 1:]
                float(w[k])  # the slope itself


def test_harrow_fen_precision_runs_on_to_a_second_line(built):
    # the corridor sample carries precision columns: on 80 columns they run on under their own header
    text = (built[("harrow_fen_bypass_control_m", False)] / "setout.txt").read_text()
    # (the note column is there only when a stake has a note: since setups are chosen for
    # precision no stake of this sample exceeds the tolerance, and none is at the instrument)
    flagged = re.search(r"\b[1-9]\d* flagged r95>tol", text) is not None  # some setup's section counts one
    note = " +note" if flagged else ""
    assert re.search(r"^point +station +offset +code +feature +ang right +grid dist +grnd dist\n +sd along +sd across +r95"
                     + note + "$", text, re.M)
    wide = (built[("harrow_fen_bypass_control_m", True)] / "setout.txt").read_text()
    assert re.search(r"^point .* grnd dist +sd along +sd across +r95" + note + "$", wide, re.M)


def _shoot_every_point(tmp_path: Path, north: float, rename) -> tuple[Path, list[dict], Path]:
    """The loop ramp sample, every design point shot ``north`` off, ids ``rename(k, point)``."""
    job = SAMPLES / "loop_ramp_usft.toml"
    rows = read_rows(build_job(job, tmp_path / "b", "--only", "points") / "points.csv")
    staked = tmp_path / "shots.csv"
    with open(staked, "w", newline="") as fh:
        w = csv.writer(fh)
        for k, r in enumerate(rows):
            w.writerow([rename(k, r["point"]), f"{float(r['northing']) + north:.4f}", r["easting"]])
    return job, rows, staked


def test_check_txt_pages_with_many_shots(tmp_path):
    # every design point of the loop ramp staked and shot: the within-tolerance table runs over pages,
    # its column header repeated, no page over 60 lines or 80 columns
    job, rows, staked = _shoot_every_point(tmp_path, 0.01, lambda k, pid: pid)
    for extra, width in (((), WIDTH), (("--wide",), WIDE_COLUMNS)):
        res = CliRunner().invoke(app, ["check", str(job), str(staked), "--out", str(tmp_path / f"c{width}"), *extra])
        assert res.exit_code == 0, res.output
        text = (tmp_path / f"c{width}" / "check.txt").read_text()
        pages = _pages(text)
        assert len(pages) >= 3
        for page in pages:
            assert len(page) <= PAGE_LINES and max(len(line) for line in page) <= width
        continued = [p for p in pages if any("WITHIN TOLERANCE, continued" in line for line in p)]
        assert continued and all(any(line.startswith("shot ") for line in p) for p in continued)
        shots = [rec.split()[0] for rec in sheet_records(text)]
        assert sorted(shots) == sorted(r["point"] for r in rows)
        assert any("Prepared by" in line for line in pages[-1])


# ---- the table layout, on random tables -------------------------------------------------------------
_word = st.text(string.ascii_letters + string.digits + "+-.", min_size=0, max_size=14)


@st.composite
def _tables(draw):
    n_cols = draw(st.integers(1, 12))
    n_rows = draw(st.integers(0, 6))
    cols = []
    for k in range(n_cols):
        header = draw(st.text(string.ascii_lowercase, min_size=1, max_size=10))
        values = draw(st.lists(_word, min_size=n_rows, max_size=n_rows))
        if k == 0:
            values = [v or "p" for v in values]  # a record opens with its id
        align = "<" if k == 0 else draw(st.sampled_from("<>"))  # ids at the margin, as on the sheets
        cols.append(Column(header, values, align, with_previous=k > 0 and draw(st.booleans())))
    return cols


@settings(max_examples=200, deadline=None)
@given(_tables())
def test_table_lines_keep_order_alignment_and_width(cols):
    heads, records = table_lines(cols, WIDTH)
    # every line within the width, unless one group alone is wider (it then has a line to itself)
    groups = []
    for c in cols:
        if c.with_previous and groups:
            groups[-1].append(c)
        else:
            groups.append([c])
    widest = max(cols[0].width + 1 + sum(c.width + 1 for c in g) for g in groups)
    assert all(len(line) <= max(WIDTH, widest) for line in heads)
    # the header lines name the columns in order; a record's lines hold its cells in the same order
    assert " ".join(heads).split() == [w for c in cols for w in c.header.split()]
    n_lines = len(heads)
    for i, rec in enumerate(records):
        lines = rec.split("\n")
        assert len(lines) <= n_lines
        assert not lines[0].startswith(" ")
        assert " ".join(lines).split() == [w for c in cols for w in c.values[i].split()]
    # one line per record when there is no width
    heads1, records1 = table_lines(cols, None)
    assert len(heads1) == 1 and all("\n" not in r for r in records1)


def test_check_txt_long_ids_and_a_long_attention_table_fit_80_columns(tmp_path):
    # regressions: the attention table's "continued" line ran to 84 columns, and ids over 7 characters
    # were cut to 6 on an 80-column check.txt although the row had room for them
    # renumbered in the field, all 0.2 off: every one needs attention
    job, rows, staked = _shoot_every_point(tmp_path, 0.2, lambda k, pid: "X" * 30 if k == 0 else f"LOOPRAMP-{pid}")
    res = CliRunner().invoke(app, ["check", str(job), str(staked), "--out", str(tmp_path / "c")])
    assert res.exit_code == 1, res.output
    text = (tmp_path / "c" / "check.txt").read_text()
    pages = _pages(text)
    for page in pages:
        assert len(page) <= PAGE_LINES and max(len(line) for line in page) <= WIDTH
    assert any(line == "NEEDS ATTENTION, continued" for p in pages for line in p)
    shots = [rec.split()[0] for rec in sheet_records(text)]
    assert set(shots) == {"X" * 23 + "~"} | {f"LOOPRAMP-{r['point']}" for r in rows[1:]}
    assert "~: the end of a shot id cut to 24 characters (check.csv holds it whole)" in text
    got = {r["point"] for r in read_rows(tmp_path / "c" / "check.csv")}
    assert "X" * 30 in got
