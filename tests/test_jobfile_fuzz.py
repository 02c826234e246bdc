"""The job-file loader under fuzzing: mutated sample jobs and random bytes
either load or raise the package's own one-line error (StakeoutError), never
anything else."""

import json
import tomllib

import pytest
from hypothesis import HealthCheck, given, reject, settings
from hypothesis import strategies as st

from stakeout.alignment import build_alignment
from stakeout.design import build_stationing
from stakeout.errors import StakeoutError
from stakeout.jobfile import parse_job
from stakeout.staking import plan_stakes

from .helpers import SAMPLES


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


@pytest.mark.slow
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
