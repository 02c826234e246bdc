"""The job-file reader against the contract (design notes, design/job-file.md).

The contract's example job is kept in the repository as
tests/data/contract/job-file-example.toml (an unchanged copy of the first
TOML block of job-file.md; tests/data/README.md).
"""

import re
from pathlib import Path

import pytest

from stakeout.alignment import ChainSpec, PIListSpec, SinglePISpec, build_alignment
from stakeout.errors import JobFileError
from stakeout.jobfile import load_job, parse_job

ROOT = Path(__file__).resolve().parent.parent
CONTRACT_EXAMPLE = ROOT / "tests" / "data" / "contract" / "job-file-example.toml"
#: the design notes, when they are checked out beside the repository
CONTRACT = ROOT.parent / "shared" / "design" / "job-file.md"


def test_contract_example_reads():
    # job-file contract: its example job reads, with the values it gives
    job = parse_job(CONTRACT_EXAMPLE.read_bytes())
    assert isinstance(job.alignment, ChainSpec)
    assert job.info.unit.key == "us_ft" and job.info.crs == "EPSG:2229"
    assert job.staking.first_point == 1000
    assert [o.code for o in job.staking.offsets] == ["EPL", "CL", "EPR"]
    assert job.setup.backsight.id == "CP102"
    a = build_alignment(job.alignment)
    assert a.start_station == 1000.0
    assert a.end_station == pytest.approx(1000 + 250 + 600 * 35 * 3.141592653589793 / 180)


@pytest.mark.skipif(not CONTRACT.is_file(), reason="the design notes (../shared) are not beside this checkout: "
                    "nothing to compare tests/data/contract/job-file-example.toml with")
def test_contract_example_copy_is_the_contract():
    # the copy kept in the repository is still the contract's first TOML block
    block = re.search(r"```toml\n(.*?)```", CONTRACT.read_text(encoding="utf-8"), re.S).group(1)
    assert CONTRACT_EXAMPLE.read_text(encoding="utf-8") == block


BASE = """
format = 1
[job]
name = "t"
units = "ft"
[staking]
interval = 50
"""


def test_form_b_and_c(tmp_path):
    b = parse_job((BASE + """
[alignment]
start_station = "1+00"
[[alignment.pi]]
northing = 0.0
easting = 0.0
[[alignment.pi]]
northing = 1000.0
easting = 0.0
radii = [500.0, 200.0]
deltas = ["30-00-00", "rest"]
[[alignment.pi]]
northing = 1000.0
easting = 1000.0
""").encode())
    assert isinstance(b.alignment, PIListSpec)
    assert b.alignment.pis[1].deltas == (30.0, None)
    c = parse_job((BASE + """
[alignment]
name = "RAMP"
[alignment.at_pi]
station = "25+00.00"
northing = 100.0
easting = 200.0
back_tangent_azimuth = "N 30 E"
ahead_tangent_azimuth = "110-00-00"
radius = 500.0
""").encode())
    assert isinstance(c.alignment, SinglePISpec)
    assert c.alignment.back_azimuth == 30.0 and c.alignment.radii == (500.0,)


@pytest.mark.parametrize(
    "extra, key",
    [
        ("[alignment]\nstart_station = 0\n[[alignment.pi]]\nnorthing = 0\neasting = 0\n"
         "[[alignment.pi]]\nnorthing = 1\neasting = 1\nradiuss = 5\n", "alignment.pi[1].radiuss"),
        ("[alignment]\n[alignment.at_pi]\nstation = 0\nnorthing = 0\neasting = 0\nback_tangent_azimuth = 0\n"
         "ahead_tangent_azimuth = 90\nradii = [100.0, 50.0]\ndeltas = [\"rest\", \"rest\"]\n", "alignment.at_pi.deltas"),
        ("[alignment]\n[alignment.at_pi]\nstation = 0\nnorthing = 0\neasting = 0\nback_tangent_azimuth = 0\n"
         "ahead_tangent_azimuth = 90\nradius = -100.0\n", "alignment.at_pi.radius"),
        ("[alignment]\nstart = {station = 0, northing = 0, easting = 0}\nazimuth = 0\n"
         "[[alignment.element]]\nkind = \"arc\"\nradius = 100\ndelta = 10\nlength = 5\nturn = \"right\"\n",
         "alignment.element[0]"),
        ("[alignment]\nstart = {station = 0, northing = 0, easting = 0}\nazimuth = \"45-61-00\"\n"
         "[[alignment.element]]\nkind = \"line\"\nlength = 5\n", "alignment.azimuth"),
    ],
)
def test_errors_name_the_key(extra, key):
    with pytest.raises(JobFileError) as exc:
        parse_job((BASE + extra).encode())
    assert key in str(exc.value)


def test_toml_syntax_error_has_line(tmp_path):
    with pytest.raises(JobFileError, match="line 3"):
        parse_job(b"format = 1\n[job]\nname = \n")


def test_missing_file():
    with pytest.raises(JobFileError, match="not found"):
        load_job("/nonexistent/job.toml")


def test_unsafe_code_rejected():
    with pytest.raises(JobFileError, match=r"staking.offsets\[0\].code"):
        parse_job((BASE.replace("interval = 50", 'interval = 50\noffsets = [{offset = 0, code = "=SUM(A1)"}]')
                   + "[alignment]\nstart = {station = 0, northing = 0, easting = 0}\nazimuth = 0\n"
                   "[[alignment.element]]\nkind = \"line\"\nlength = 5\n").encode())
