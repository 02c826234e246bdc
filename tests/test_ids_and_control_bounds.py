"""Issue 26 items 4-7: an id used twice (stakes and control, two inline setup
points), a control coordinate with a lost decimal point, a setup whose sights
are absurd for the job, and an alignment of length zero end in exit 2 naming
the culprit (the cases are in tests/broken_jobs/; these tests name the
defects and check the valid neighbours still build).
"""

from typer.testing import CliRunner

from stakeout.cli import app

from .helpers import write_job

runner = CliRunner()
HERE = __import__("pathlib").Path(__file__).resolve().parent / "broken_jobs"


def _build(job, tmp_path):
    return runner.invoke(app, ["build", str(job), "--out", str(tmp_path / "o")])


def _refused(name, tmp_path, text):
    r = _build(HERE / name, tmp_path)
    assert r.exit_code == 2 and text in r.output and len(r.output.strip().splitlines()) == 1, r.output
    assert not (tmp_path / "o").exists()


def test_control_ids_equal_to_stake_ids(tmp_path):
    _refused("control_id_equal_to_stake_id.toml", tmp_path, "id '3' is also a stake's (point 3")
    # the same job with a prefix builds: P3 and 3 are different ids
    text = (HERE / "control_id_equal_to_stake_id.toml").read_text().replace('point_prefix = ""', 'point_prefix = "P"')
    assert _build(write_job(tmp_path, text), tmp_path).exit_code == 0


def test_one_id_for_two_inline_setup_points(tmp_path):
    _refused("one_id_two_inline_setup_points.toml", tmp_path, "(setup.station[0].occupied)")
    # the same point given twice at the same place is one point
    text = (HERE / "one_id_two_inline_setup_points.toml").read_text().replace(
        'id = "A", northing = 1030.0, easting = 1060.0', 'id = "A", northing = 1020.0, easting = 1020.0')
    assert _build(write_job(tmp_path, text), tmp_path).exit_code == 0


def test_control_coordinate_9e11(tmp_path):
    _refused("control_coordinate_9e11.toml", tmp_path, "line 3: northing 900000001020.0")
    _refused("setup_sight_absurd_for_the_job.toml", tmp_path, "absurd for a job")


def test_alignment_of_length_zero(tmp_path):
    _refused("alignment_of_length_zero.toml", tmp_path, "has length 0")
