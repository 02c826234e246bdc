"""No half-written outputs, atomic --force, and a fuzzed job-file loader."""

import json

from hypothesis import HealthCheck, given, reject, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from stakeout.outputs import BY_NAME
from stakeout.alignment import build_alignment
from stakeout.cli import app
from stakeout.errors import StakeoutError
from stakeout.jobfile import parse_job
from stakeout.design import build_stationing
from stakeout.staking import plan_stakes

from .helpers import SAMPLES

runner = CliRunner()
JOB = SAMPLES / "loop_ramp_usft.toml"


#: The writer function behind each output named in these tests.
_WRITERS = {"preview": "stakeout.writers.dxf.plan_png", "dxf": "stakeout.writers.dxf.plan_dxf",
            "report": "stakeout.writers.html.report_html"}


def _fail_on(name, monkeypatch):
    assert name in BY_NAME

    def boom(*args, **kwargs):
        raise KeyboardInterrupt  # as if Ctrl-C arrived while the last file was written

    monkeypatch.setattr(_WRITERS[name], boom)


def test_interrupted_build_leaves_nothing(tmp_path, monkeypatch):
    _fail_on("report", monkeypatch)  # the last file of a default build
    out = tmp_path / "out"
    r = runner.invoke(app, ["build", str(JOB), "--out", str(out)])
    assert r.exit_code == 130
    assert not out.exists() and list(tmp_path.iterdir()) == []


def test_failed_force_keeps_old_folder(tmp_path, monkeypatch):
    out = tmp_path / "out"
    assert runner.invoke(app, ["build", str(JOB), "--out", str(out)]).exit_code == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    _fail_on("dxf", monkeypatch)
    r = runner.invoke(app, ["build", str(JOB), "--out", str(out), "--force"])
    assert r.exit_code == 130
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_second_build_without_force_fails_untouched(tmp_path):
    out = tmp_path / "out"
    assert runner.invoke(app, ["build", str(JOB), "--out", str(out)]).exit_code == 0
    before = {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in out.iterdir()}
    r = runner.invoke(app, ["build", str(JOB), "--out", str(out)])
    assert r.exit_code == 2 and "--force" in r.output
    assert {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in out.iterdir()} == before


def test_force_replaces_whole_folder(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "stale.csv").write_text("old")
    assert runner.invoke(app, ["build", str(JOB), "--out", str(out), "--force"]).exit_code == 0
    assert not (out / "stale.csv").exists()


def test_manifest_proves_outputs(tmp_path):
    import hashlib

    out = tmp_path / "out"
    assert runner.invoke(app, ["build", str(JOB), "--out", str(out)]).exit_code == 0
    man = json.loads((out / "manifest.json").read_text())
    assert man["job_file"]["sha256"] == hashlib.sha256(JOB.read_bytes()).hexdigest()
    assert man["crs"] == "EPSG:2229" and man["libraries"]["proj"]
    for name, info in man["outputs"].items():
        data = (out / name).read_bytes()
        assert info == {"sha256": hashlib.sha256(data).hexdigest(), "bytes": len(data)}
    assert set(man["outputs"]) == {p.name for p in out.iterdir()} - {"manifest.json"}


# ---- fuzzing the loader --------------------------------------------------------------
def _str(v: str) -> str:
    return json.dumps(v, ensure_ascii=False).replace("\x7f", "\\u007f")


def _toml_value(v):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return repr(v)
    if isinstance(v, str):
        return _str(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_str(k)} = {_toml_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(v)


def _toml(doc: dict) -> str:
    return "\n".join(f"{_str(k)} = {_toml_value(v)}" for k, v in doc.items()) + "\n"


scalars = st.one_of(st.booleans(), st.integers(-10**6, 10**6), st.floats(allow_nan=False, allow_infinity=False),
                    st.text(max_size=12), st.sampled_from(["rest", "12+34.56", "45-30-00", "N 10 E", "auto", "m",
                                                           "us_ft", "left", "right", "line", "arc", "EPSG:32633"]))
values = st.recursive(scalars, lambda ch: st.one_of(st.lists(ch, max_size=4),
                                                    st.dictionaries(st.text(max_size=8), ch, max_size=4)),
                      max_leaves=12)

import tomllib

VALID = tomllib.loads((SAMPLES / "site_road_metric.toml").read_text())
VALID_B = tomllib.loads((SAMPLES / "pi_list_local_ft.toml").read_text())


@st.composite
def mutated_jobs(draw):
    base = json.loads(json.dumps(draw(st.sampled_from([VALID, VALID_B]))))
    for _ in range(draw(st.integers(1, 4))):
        path = [base]
        node = base
        while isinstance(node, (dict, list)) and node and draw(st.booleans()):
            key = draw(st.sampled_from(sorted(node.keys()) if isinstance(node, dict) else list(range(len(node)))))
            path.append(key)
            node = node[key]
        parent = base
        for k in path[1:-1]:
            parent = parent[k]
        key = path[-1] if len(path) > 1 else None
        action = draw(st.sampled_from(["replace", "delete", "add"]))
        if key is None or action == "add":
            if isinstance(node, dict):
                node[draw(st.text(min_size=1, max_size=8))] = draw(values)
        elif action == "delete" and isinstance(parent, dict):
            del parent[key]
        else:
            parent[key] = draw(values)
    return base


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(mutated_jobs())
def test_fuzzed_loader_only_raises_own_errors(doc):
    # the loader (and building what it returns) either succeeds or raises StakeoutError
    try:
        text = _toml(doc)
    except TypeError:
        reject()  # a value TOML cannot write: not a case (Hypothesis fails if too many are)
    try:
        job = parse_job(text.encode())
        a = build_alignment(job.alignment)
        if a.length / job.staking.interval < 20000:
            plan_stakes(a, job.staking, build_stationing(job, a))
    except StakeoutError:
        pass


@settings(max_examples=200, deadline=None)
@given(st.binary(max_size=200))
def test_random_bytes(data):
    try:
        parse_job(data)
    except StakeoutError:
        pass


def test_progress_only_at_a_terminal():
    import io

    from stakeout.progress import Progress

    class Tty(io.StringIO):
        def isatty(self):
            return True

    quiet = io.StringIO()
    p = Progress(2, 100_000, stream=quiet)
    p.step("a")
    p.step("b")
    assert quiet.getvalue() == ""
    small = Tty()
    Progress(2, 10, stream=small).step("a")
    assert small.getvalue() == ""
    loud = Tty()
    p = Progress(2, 100_000, stream=loud)
    p.step("a")
    p.step("b")
    assert "2/2" in loud.getvalue() and loud.getvalue().endswith("\n")


def test_force_never_replaces_a_folder_holding_the_inputs(tmp_path, monkeypatch):
    job = tmp_path / "job.toml"
    job.write_bytes(JOB.read_bytes())
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path), "--force"])
    assert r.exit_code == 2 and "job.toml" in r.output
    assert job.exists()
    work = tmp_path / "work"
    work.mkdir()
    (work / "keep.txt").write_text("mine")
    monkeypatch.chdir(work)
    r = runner.invoke(app, ["build", str(job), "--out", ".", "--force"])
    assert r.exit_code == 2 and "working folder" in r.output
    r = runner.invoke(app, ["build", str(job), "--out", str(tmp_path), "--force"])
    assert r.exit_code == 2
    assert (work / "keep.txt").read_text() == "mine" and job.exists()
