"""Independent helpers shared by the tests."""

from __future__ import annotations

import functools
import math
from pathlib import Path


ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_jobs"
#: The LandXML 1.2 schema from landxml.org ("Date Posted: 7/29/2008"), an unchanged copy of the
#: design notes' reference/LandXML-1.2.xsd kept in the repository (tests/data/README.md).
LANDXML_SCHEMA = ROOT / "tests" / "data" / "LandXML-1.2.xsd"


@functools.cache
def landxml_schema():
    """The LandXML 1.2 schema as an lxml ``XMLSchema`` (read once)."""
    from lxml import etree

    return etree.XMLSchema(etree.parse(str(LANDXML_SCHEMA)))


def write_job(tmp_path: Path, text: str, name: str = "job.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def arc_end_by_rotation(n0, e0, az0_deg, radius, delta_deg, turn):
    """Independent arc end: rotate the start point about the centre (complex numbers)."""
    # x = east, y = north; azimuth clockwise from north
    a = math.radians(az0_deg)
    p0 = complex(e0, n0)
    right = complex(math.cos(a), -math.sin(a))  # right normal
    centre = p0 + turn * radius * right
    rot = complex(math.cos(-turn * math.radians(delta_deg)), math.sin(-turn * math.radians(delta_deg)))
    p1 = centre + (p0 - centre) * rot
    return p1.imag, p1.real, centre.imag, centre.real


def build_job(job, out: Path, *extra: str) -> Path:
    """Run `stakeout build` in-process and insist that it succeeds."""
    from typer.testing import CliRunner

    from stakeout.cli import app

    r = CliRunner().invoke(app, ["build", str(job), "--out", str(out), *extra])
    assert r.exit_code == 0, r.output
    return out


def read_rows(path: Path) -> list[dict]:
    """A CSV file as dictionaries keyed by its header."""
    import csv

    with open(path, newline="") as fh:
        return list(csv.DictReader(fh))


def sheet_records(text: str) -> list[str]:
    """The records of the tables of a printed text sheet, each record's lines
    joined by one space.

    A table is a rule (``---``), its header lines, a rule, its records and a
    closing rule; a line at the margin opens a record and an indented line
    continues it (a stake's further columns on an 80-column sheet).
    """
    records: list[str] = []
    rules = 0
    for line in text.replace("\f", "").splitlines():
        if line.startswith("---"):
            rules = (rules + 1) % 3
            continue
        if rules != 2 or not line.strip():
            continue
        if line[:1] == " " and records:
            records[-1] += " " + line.strip()
        else:
            records.append(line.rstrip())
    return records


_STATUS = r"((?:control )?out \((?:horizontal|vertical|both)\)|ok|control|duplicate|unmatched|superseded)"


def check_row(text: str, pid: str, design: str | None = None) -> tuple[str, str, str]:
    """A shot's row in ``check.txt`` (the first whose shot, and design point if
    given, match), its status and the line under it (what to do).

    The status ends the row, or opens the line under it where the row has
    no room for it (an 80-column sheet with long statuses).
    """
    import re

    lines = text.replace("\f", "").splitlines()
    want = [pid] if design is None else [pid, design]
    k = next(i for i, ln in enumerate(lines) if ln.split()[: len(want)] == want)
    row = lines[k].rstrip()
    under = lines[k + 1].strip() if k + 1 < len(lines) and lines[k + 1][:1] == " " else ""
    m = re.search(" " + _STATUS + "$", row)
    if m:
        return row[: m.start()].rstrip(), m.group(1), under
    m = re.match(_STATUS + "(?:: (.*))?$", under)
    assert m, f"no status for shot {pid}: {row!r} / {under!r}"
    return row, m.group(1), m.group(2) or ""
