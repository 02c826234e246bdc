"""The test suite's own setup (tests/conftest.py, pyproject.toml): which
Hypothesis profile a run uses, and the registered markers."""

from __future__ import annotations

import tomllib

from hypothesis import settings

from .conftest import hypothesis_profile
from .helpers import ROOT


def test_profile_is_ci_under_ci_true_and_dev_otherwise():
    assert hypothesis_profile({"CI": "true"}) == "ci"
    assert hypothesis_profile({"CI": "TRUE"}) == "ci"
    assert hypothesis_profile({}) == "dev"
    assert hypothesis_profile({"CI": "false"}) == "dev"
    assert hypothesis_profile({"CI": "true", "HYPOTHESIS_PROFILE": "dev"}) == "dev"


def test_ci_profile_is_reproducible_and_larger():
    ci, dev = settings.get_profile("ci"), settings.get_profile("dev")
    assert ci.derandomize and ci.database is None and ci.deadline is None
    assert not dev.derandomize and dev.deadline is None
    assert ci.max_examples > dev.max_examples


def test_slow_marker_is_registered():
    conf = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["pytest"]["ini_options"]
    assert any(m.startswith("slow:") for m in conf["markers"])
    assert "--strict-markers" in conf["addopts"]
