"""The output registry: writers named as "module:function", imported only when rendered."""

from __future__ import annotations

import subprocess
import sys
from importlib import import_module

from stakeout.outputs import BY_NAME, OUTPUTS

from .helpers import SAMPLES, build_job


def test_every_named_writer_exists():
    for o in OUTPUTS:
        if isinstance(o.writer, str):
            module, _, function = o.writer.partition(":")
            assert callable(getattr(import_module(f"stakeout.writers.{module}"), function)), o.name


def test_names_and_files_unchanged():
    # --only names and files are part of the command line's contract (outputs.md)
    assert [(o.name, o.filename) for o in OUTPUTS] == [
        ("points", "points.csv"), ("stations", "stations.csv"), ("curves", "curves.csv"),
        ("elements", "elements.csv"), ("spirals", "spirals.csv"), ("profile", "profile.csv"),
        ("profile-picture", "profile.svg"), ("superelevation-picture", "superelevation.svg"),
        ("slopestakes", "slopestakes.csv"), ("slopestakes-sheet", "slopestakes.txt"),
        ("sections-picture", "sections.svg"), ("volumes", "volumes.csv"), ("setout", "setout.csv"), ("sheet", "setout.txt"),
        ("deflections", "deflections.txt"), ("control", "control.csv"), ("landxml", "alignment.xml"), ("dxf", "plan.dxf"),
        ("picture", "plan.svg"), ("report", "report.html"), ("preview", "plan.png"), ("manifest", "manifest.json")]
    assert BY_NAME["sheet"].wide and BY_NAME["deflections"].wide


def test_the_registry_and_the_help_import_no_writer():
    # a build pays only for the outputs it writes; `stakeout --help` imports neither numpy nor a writer
    code = ("import sys, stakeout.outputs, stakeout.cli; "
            "print(sorted(m for m in sys.modules if m == 'numpy' or m.startswith('stakeout.writers')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


def test_only_imports_the_writers_it_renders(tmp_path):
    code = ("import sys; from typer.testing import CliRunner; from stakeout.cli import app; "
            f"r = CliRunner().invoke(app, ['build', {str(SAMPLES / 'site_road_metric.toml')!r}, '--out', "
            f"{str(tmp_path / 'o')!r}, '--only', 'points']); assert r.exit_code == 0, r.output; "
            "print(sorted(m for m in sys.modules if m.startswith('stakeout.writers.')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    for heavy in ("dxf", "picture", "html", "exchange", "sheets"):
        assert f"stakeout.writers.{heavy}'" not in out, out


def test_wide_sheets_follow_the_build_option(tmp_path):
    # the hillside sheet has zenith and slope distance columns: a second line a stake at 80 columns
    narrow = build_job(SAMPLES / "hillside_lane_profile_m.toml", tmp_path / "a", "--only", "sheet")
    wide = build_job(SAMPLES / "hillside_lane_profile_m.toml", tmp_path / "b", "--only", "sheet", "--wide")
    a, b = ((p / "setout.txt").read_text().splitlines() for p in (narrow, wide))
    assert max(map(len, a)) <= 80 < max(map(len, b)) and len(b) < len(a)
