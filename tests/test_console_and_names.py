"""Issue 28 items 6-9 and 13, issue 26 items 2 and 12: names from files and
the system never drive the terminal or forge a line, the console never
prints a traceback for what it cannot show or store, and the output folder
follows the umask.  Real processes are run where the behaviour is the
process's (encodings, /dev/full, umask: POSIX and Python's documented
stream behaviour); the files are read back independently (xml.etree for SVG).
"""

import os
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

from typer.testing import CliRunner

from stakeout.cli import app

from .helpers import SAMPLES

runner = CliRunner()
JOB = SAMPLES / "site_road_metric.toml"

#: UTM zone 33 N on WGS 84 as WKT 1 (the parameters of EPSG:32633, from memory), with a name that
#: tries to forge a sheet line.
WKT = ('PROJCS["UTM 33\nFAKE HEADER LINE",GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,'
       '298.257223563]],PRIMEM["Greenwich",0],UNIT["degree",0.0174532925199433]],PROJECTION["Transverse_Mercator"],'
       'PARAMETER["latitude_of_origin",0],PARAMETER["central_meridian",15],PARAMETER["scale_factor",0.9996],'
       'PARAMETER["false_easting",500000],PARAMETER["false_northing",0],UNIT["metre",1]]')


def _run(args, **kw):
    return subprocess.run([sys.executable, "-m", "stakeout.cli", *args], capture_output=True, **kw)


def test_crs_wkt_name_forged_sheet_lines(tmp_path):
    text = JOB.read_text(encoding="utf-8").replace('crs = "EPSG:32633"', 'crs = """' + WKT.replace("\n", "\\n") + '"""')
    assert "FAKE HEADER LINE" in text
    job = tmp_path / "job.toml"
    job.write_text(text, encoding="utf-8")
    out = tmp_path / "o"
    r = runner.invoke(app, ["build", str(job), "--out", str(out)])
    assert r.exit_code == 0, r.output
    for f in out.iterdir():
        if f.suffix in (".txt", ".csv", ".svg", ".html"):
            body = f.read_text(encoding="utf-8")
            assert not any(line.startswith("FAKE HEADER LINE") for line in body.splitlines()), f.name
    ET.parse(out / "plan.svg")  # still well-formed XML


def test_job_file_name_with_newline_forged_sheet_lines(tmp_path):
    job = tmp_path / "job\nFAKE HEADER LINE.toml"
    job.write_text(JOB.read_text(encoding="utf-8"), encoding="utf-8")
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "o")])
    assert r.exit_code == 2
    assert len(r.output.strip().splitlines()) == 1
    assert "job\\nFAKE HEADER LINE.toml" in r.output and "LINE FEED" in r.output
    assert not (tmp_path / "o").exists()


def test_job_file_name_not_utf8(tmp_path):
    name = os.fsdecode(b"job\xff\xfe.toml")
    (tmp_path / name).write_text(JOB.read_text(encoding="utf-8"), encoding="utf-8")
    r = _run(["build", os.fsencode(str(tmp_path / name)), "--out", str(tmp_path / "o")])
    assert r.returncode == 2, r.stderr
    err = r.stderr.decode("utf-8")
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert "job\\xff\\xfe.toml" in err and "not UTF-8" in err
    assert not (tmp_path / "o").exists()


def test_curve_traceback_on_a_legacy_console(tmp_path):
    job = tmp_path / "job.toml"
    job.write_text(JOB.read_text(encoding="utf-8").replace('name = "ACC"', 'name = "ACC"')
                   .replace('name = "Birchmoor yard access road"', 'name = "Straße 測量 ☃"'), encoding="utf-8")
    r = _run(["curve", str(job)], env={**os.environ, "PYTHONIOENCODING": "cp1252"})
    assert r.returncode == 0, r.stderr
    out = r.stdout.decode("cp1252")
    assert "Straße ?? ?" in out  # what cp1252 cannot show is replaced
    assert b"Traceback" not in r.stderr


def test_curve_and_inspect_to_a_full_disk(tmp_path):
    build = runner.invoke(app, ["build", str(JOB), "--out", str(tmp_path / "x"), "--only", "landxml"])
    assert build.exit_code == 0
    for args in (["curve", str(JOB)], ["inspect", str(tmp_path / "x" / "alignment.xml")]):
        with open("/dev/full", "w") as full:
            r = subprocess.run([sys.executable, "-m", "stakeout.cli", *args], stdout=full, stderr=subprocess.PIPE)
        err = r.stderr.decode("utf-8")
        assert r.returncode == 2, err
        assert "Traceback" not in err and len(err.strip().splitlines()) == 1
        assert "cannot write to standard output (No space left on device)" in err


def test_build_exit_1_when_stderr_cannot_be_written(tmp_path):
    out = tmp_path / "o"
    with open("/dev/full", "w") as full:
        r = subprocess.run([sys.executable, "-m", "stakeout.cli", "build", str(JOB), "--out", str(out)],
                           stdout=subprocess.PIPE, stderr=full)
    assert r.returncode == 0
    assert (out / "points.csv").exists()


def test_output_folder_always_0755(tmp_path):
    for mask, want in ((0o027, 0o750), (0o002, 0o775)):
        out = tmp_path / f"o{mask:o}"
        r = subprocess.run([sys.executable, "-m", "stakeout.cli", "build", str(JOB), "--out", str(out),
                            "--only", "points"], capture_output=True, preexec_fn=lambda m=mask: os.umask(m))
        assert r.returncode == 0, r.stderr
        assert out.stat().st_mode & 0o777 == want
        assert (out / "points.csv").stat().st_mode & 0o777 == 0o666 & ~mask


def test_console_escapes_control_characters(tmp_path, monkeypatch):
    from stakeout import pipeline

    monkeypatch.setattr(pipeline, "run_curve_report", lambda job: "name \x1b]0;pwned\x07\u202eX\nnext line\n")
    r = runner.invoke(app, ["curve", str(JOB)])
    assert r.exit_code == 0
    assert r.output == "name \\x1b]0;pwned\\x07\\u202eX\nnext line\n"


def test_unused():
    assert Path  # keeps the import used where a platform lacks /dev/full
