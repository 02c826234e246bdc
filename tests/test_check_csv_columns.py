"""check.csv from whole columns (issue 27) writes the very bytes of the row-by-row writer.

The row-by-row writer it replaced is kept here as the reference (``_reference_check_csv``, as it
stood): every field formatted by Python's own ``f"{v:.4f}"`` rule through ``finite_or_empty``
(stakeout/numbers.py: the exact binary value, half to even) and quoted by ``csv_text_field``
(RFC 4180).  Both run on random check results: NaN and infinities, exact ties of the fourth
decimal, values just either side of zero, numbers beyond the digit tables, ids that need a
guard or quotes, non-ASCII and very long ids, control points, station equations and a prefix.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from stakeout.check import STATUSES, CheckResult
from stakeout.pipeline import compute
from stakeout.shots import Shots
from stakeout.writers import checkreport, rows
from stakeout.writers.checkreport import CHECK_COLUMNS, check_csv
from stakeout.writers.checkwords import target_id
from stakeout.writers.csvtext import DECIMALS, csv_text, csv_text_field
from stakeout.writers.text import finite_or_empty

SAMPLES = Path(__file__).resolve().parent.parent / "sample_jobs"


def _reference_check_csv(d, shots: Shots, r: CheckResult) -> bytes:
    """check.csv as written row by row before issue 27 (the reference implementation)."""
    def _f(v: float, dec: int = DECIMALS) -> str:
        return finite_or_empty(v, dec)

    station = d.stationing.station
    name = csv_text_field(d.alignment.name)
    out = []
    for k in range(len(shots)):
        g = int(r.related[k])
        out.append(",".join([
            csv_text_field(shots.point[k]), csv_text_field(target_id(d, r, k)), _f(float(station(r.station[k]))),
            _f(r.offset[k]), _f(r.d_northing[k]), _f(r.d_easting[k]), _f(r.horizontal_error[k]),
            _f(r.d_station[k]), _f(r.d_offset[k]), _f(r.d_elevation[k]), r.status[k], r.matched_by[k],
            _f(shots.northing[k]), _f(shots.easting[k]), str(shots.line[k]), r.fails[k],
            str(shots.line[g]) if g >= 0 else "",
            _f(r.d_along[k]), _f(r.d_across[k]), name if r.design_index[k] >= 0 else "",
        ]))
    return csv_text(CHECK_COLUMNS, out).encode("utf-8")


ODD_IDS = ["=1+1", "-5", "+7", "@x", "a,b", 'say "hi"', "é-12", "測量3", "", " sp ace", "x" * 300, "'q"]


def _numbers(rng: np.random.Generator, n: int, scale: float) -> np.ndarray:
    v = rng.normal(0.0, scale, n)
    pick = rng.random(n)
    v[pick < 0.05] = np.nan
    v[(pick >= 0.05) & (pick < 0.07)] = np.inf
    v[(pick >= 0.07) & (pick < 0.09)] = -np.inf
    ties = (pick >= 0.09) & (pick < 0.2)  # k + 1/2 in the last printed place, as the float nearest it
    v[ties] = (rng.integers(-10**6, 10**6, int(ties.sum())) + 0.5) / 10**DECIMALS
    small = (pick >= 0.2) & (pick < 0.25)  # either side of zero, printing as 0.0000 or -0.0001
    v[small] = rng.uniform(-1.5e-4, 1.5e-4, int(small.sum()))
    v[(pick >= 0.25) & (pick < 0.27)] = -0.0
    return v


def _random_case(d, rng: np.random.Generator, n: int, control_ids: tuple[str, ...], wild: bool
                 ) -> tuple[Shots, CheckResult]:
    m = len(d.stakes)
    pool = [f"{d.stakes.prefix}{d.stakes.first_point + i}" for i in range(min(m, 50))] + ["R12", "S9"]
    if wild:
        pool += ODD_IDS
    points = [pool[i] for i in rng.integers(0, len(pool), n)]
    kind = rng.random(n)
    design = np.where(kind < 0.7, rng.integers(0, m, n), -1)
    control = np.where((kind >= 0.7) & (kind < 0.85) & bool(control_ids),
                       rng.integers(0, max(1, len(control_ids)), n), -1)
    status = [STATUSES[i] for i in rng.integers(0, len(STATUSES), n)]
    fails = [("", "horizontal", "vertical", "both")[i] for i in rng.integers(0, 4, n)]
    matched = [("number", "nearest", "")[i] for i in rng.integers(0, 3, n)]
    related = np.where(rng.random(n) < 0.2, rng.integers(0, max(1, n), n), -1)
    big = 1e14 if wild else 1e3  # wild: some numbers beyond the digit tables (1e13)
    lines = sorted(rng.choice(10 * n + 10, n, replace=False).tolist())
    station = np.where(rng.random(n) < 0.1, np.nan, rng.uniform(d.alignment.start_station - 50,
                                                                  d.alignment.end_station + 50, n))
    shots = Shots(points, _numbers(rng, n, 1e6), _numbers(rng, n, big), _numbers(rng, n, 10.0), [""] * n, lines)
    r = CheckResult(
        design_index=design, control_index=control, control_ids=control_ids, matched_by=matched,
        station=station, offset=_numbers(rng, n, 20.0), d_northing=_numbers(rng, n, 0.05),
        d_easting=_numbers(rng, n, big), horizontal_error=np.abs(_numbers(rng, n, 0.05)),
        d_station=_numbers(rng, n, 0.05), d_offset=_numbers(rng, n, 0.05), d_elevation=_numbers(rng, n, 0.05),
        status=status, fails=fails, related=related, not_staked=np.zeros(0, dtype=np.int64),
        restake=np.zeros(0, dtype=np.int64), horizontal_tolerance=0.05, vertical_tolerance=0.03, search_radius=0.5,
        d_along=_numbers(rng, n, 0.05), d_across=_numbers(rng, n, 0.05), ground_along=_numbers(rng, n, 0.05),
        ground_across=_numbers(rng, n, 0.05))
    return shots, r


@pytest.fixture(scope="module")
def designs():
    return {name: compute(SAMPLES / f"{name}.toml") for name in
            ("loop_ramp_usft", "site_road_metric", "kestrel_rise_superelevation_m")}


@pytest.mark.parametrize("seed", range(12))
def test_check_csv_is_the_row_writers_bytes(designs, seed):
    rng = np.random.default_rng(seed)
    name = ("loop_ramp_usft", "site_road_metric", "kestrel_rise_superelevation_m")[seed % 3]
    d = designs[name]
    controls = [(), ("CP1", "CP2"), ("=C1", "a,b", 'q"t', "é9", "")][seed % 3]
    n = int(rng.integers(0, 400)) if seed else 0
    shots, r = _random_case(d, rng, n, controls, wild=seed % 2 == 1)
    assert check_csv(d, shots, r) == _reference_check_csv(d, shots, r)


def test_check_csv_in_blocks_is_the_row_writers_bytes(designs, monkeypatch):
    # many rows: rendered in blocks on threads, a very long id in a block of its own
    d = designs["site_road_metric"]
    shots, r = _random_case(d, np.random.default_rng(99), 40_000, ("CP1", "=C2"), wild=True)
    assert check_csv(d, shots, r) == _reference_check_csv(d, shots, r)
    monkeypatch.setattr(checkreport, "_CHUNK_ROWS", 300)
    assert check_csv(d, shots, r) == _reference_check_csv(d, shots, r)


def test_check_csv_prefix_with_a_guard(designs):
    # a prefix a spreadsheet would take as a formula: every design id guarded, as csv_text_field does
    d = designs["site_road_metric"]
    d2 = replace(d, stakes=replace(d.stakes, prefix="-P"))
    shots, r = _random_case(d2, np.random.default_rng(5), 300, ("CP1",), wild=False)
    assert check_csv(d2, shots, r) == _reference_check_csv(d2, shots, r)


def test_strings_field_takes_any_text():
    col = rows.Strings(["ab", "", "é,x", "=1", "z"])
    assert col.lens.tolist() == [2, 0, 4, 2, 1]
    assert col.rows_holding(b"=", b",").tolist() == [2, 3]
    assert rows.join_rows([col.field(slice(None))], 5) == "ab\n\né,x\n=1\nz\n".encode()
    assert rows.join_rows([col.field(np.array([4, 0]))], 2) == b"z\nab\n"
    assert rows.Strings([]).field(slice(None)).shape == (0, 0)
    with pytest.raises(ValueError, match="NUL"):
        rows.Strings(["a\0b"])


def test_whole_column_statuses_agree_with_each_shot(designs):
    # check.txt and check.html count and list shots from CheckResult.attention/within/governing: the
    # same shots as the rule written out for one shot at a time (as needs_attention read before)
    shots, r = _random_case(designs["loop_ramp_usft"], np.random.default_rng(3), 500, ("CP1",), wild=False)

    def needs(k: int) -> bool:
        s = r.status[k]
        return s in ("out", "misnumbered", "duplicate", "unmatched") or (s == "control" and r.fails[k] != "")

    for k in range(len(shots)):
        assert r.attention[k] == needs(k) == r.needs_attention(k)
        assert r.within[k] == (r.status[k] in ("ok", "control") and not needs(k))
        assert r.governing[k] == (r.status[k] in ("ok", "out"))
    assert r.all_ok == (not any(needs(k) for k in range(len(shots))))
