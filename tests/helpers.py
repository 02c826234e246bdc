"""Independent helpers shared by the tests."""

from __future__ import annotations

import math
from pathlib import Path


ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_jobs"


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
