"""The command line on the sample jobs (typer's CliRunner and real processes)."""

import hashlib
import os
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stakeout.cli import app

from .helpers import SAMPLES, build_job, read_rows

runner = CliRunner()
SAMPLE_FILES = sorted(SAMPLES.glob("*.toml"))


def _digests(folder: Path) -> dict[str, str]:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in sorted(folder.iterdir())
            if p.name != "manifest.json"}


def _line_codes(rows: list[dict[str, str]], name: str) -> set[str]:
    """The offset lines' codes of an alignment: those on its first station's stakes."""
    first = next(r["station"] for r in rows if r["alignment"] == name)
    return {r["code"] for r in rows if r["alignment"] == name and r["station"] == first and "POB" in r["feature"]}


@pytest.mark.parametrize("job", SAMPLE_FILES, ids=lambda p: p.stem)
def test_build_samples(job, tmp_path):
    out = build_job(job, tmp_path / "out")
    assert list(read_rows(out / "points.csv")[0]) == ["point", "northing", "easting", "elevation", "description"]
    rows = read_rows(out / "stations.csv")
    for name in dict.fromkeys(r["alignment"] for r in rows):  # each alignment's grid, in station order
        st = [r for r in rows if r["alignment"] == name and r["code"] in _line_codes(rows, name)]
        assert st[0]["feature"].startswith("POB") and st[-1]["feature"].endswith("POE")
        stations = [float(r["station"]) for r in st]
        assert stations == sorted(stations) or "EQ" in {f for r in st for f in r["feature"].split()}
    assert (out / "curves.csv").read_text().startswith(
        "curve,pi_station,pc_station,pt_station,radius,delta_deg,delta_dms,length,tangent_back,"
        "tangent_ahead,chord,external,middle_ordinate,turn")
    assert (out / "manifest.json").exists()


def test_curve_report(tmp_path):
    r = runner.invoke(app, ["curve", str(SAMPLES / "loop_ramp_usft.toml")])
    assert r.exit_code == 0
    assert "T_B, smaller-radius side" in r.output and "T_A, larger-radius side" in r.output
    assert "licensed surveyor" in r.output


def test_existing_folder_needs_force(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("mine")
    job = str(SAMPLES / "pi_list_local_ft.toml")
    r = runner.invoke(app, ["build", job, "--out", str(out)])
    assert r.exit_code == 2 and "--force" in r.output
    assert [p.name for p in out.iterdir()] == ["keep.txt"]
    r = runner.invoke(app, ["build", job, "--out", str(out), "--force"])
    assert r.exit_code == 0
    assert not (out / "keep.txt").exists() and (out / "points.csv").exists()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]


def test_only(tmp_path):
    out = tmp_path / "o"
    r = runner.invoke(app, ["build", str(SAMPLES / "pi_list_local_ft.toml"), "--out", str(out),
                            "--only", "points,curves"])
    assert r.exit_code == 0, r.output
    assert sorted(p.name for p in out.iterdir()) == ["curves.csv", "points.csv"]
    r = runner.invoke(app, ["build", str(SAMPLES / "pi_list_local_ft.toml"), "--out", str(tmp_path / "p"),
                            "--only", "setout"])
    assert r.exit_code == 2 and "[setup]" in r.output
    assert not (tmp_path / "p").exists()


def test_bad_job_exit_2_no_traceback(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("format = 1\n[job]\nunits = \"yards\"\n")
    r = subprocess.run([sys.executable, "-m", "stakeout.cli", "build", str(bad), "--out", str(tmp_path / "o")],
                       capture_output=True, text=True)
    assert r.returncode == 2
    assert "job.units" in r.stderr and "yards" in r.stderr and "Traceback" not in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1
    assert not (tmp_path / "o").exists()


def test_byte_identical_across_hash_seeds(tmp_path):
    # Same job, same version -> byte-identical files whatever the hash seed.
    digests = []
    for seed in ("1", "12345"):
        out = tmp_path / f"o{seed}"
        env = dict(os.environ, PYTHONHASHSEED=seed)
        subprocess.run([sys.executable, "-m", "stakeout.cli", "build", str(SAMPLES / "loop_ramp_usft.toml"),
                        "--out", str(out)], check=True, env=env, capture_output=True)
        digests.append(_digests(out))
    assert digests[0] == digests[1] and len(digests[0]) >= 3


def test_byte_identical_from_another_folder(tmp_path):
    # The same job file copied elsewhere gives the same bytes (sheets name the file, not its folder).
    a = build_job(SAMPLES / "curve_table_ramp.toml", tmp_path / "a")
    other = tmp_path / "elsewhere"
    other.mkdir()
    (other / "curve_table_ramp.toml").write_bytes((SAMPLES / "curve_table_ramp.toml").read_bytes())
    b = build_job(other / "curve_table_ramp.toml", tmp_path / "b")
    assert _digests(a) == _digests(b)


def test_python_dash_m():
    r = subprocess.run([sys.executable, "-m", "stakeout", "--help"], capture_output=True, text=True)
    assert r.returncode == 0 and "build" in r.stdout and "check" in r.stdout
