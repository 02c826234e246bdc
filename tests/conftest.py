"""Shared fixtures and the Hypothesis profiles of the tests.

Hypothesis profiles (chosen here, before any test module is imported):
- ``ci`` when the environment has ``CI=true``: more examples for the
  properties that do not set their own count, ``derandomize=True`` and no
  example database, so a CI run tries the same examples every time and a
  failure reproduces;
- ``dev`` otherwise: fewer examples, random ones each run (the database
  under .hypothesis/ replays a failure).
Both have no deadline (the machine is shared; speed is never asserted) and
allow slow data generation. ``HYPOTHESIS_PROFILE=ci`` (or ``dev``) picks one
explicitly. A property with its own ``@settings(max_examples=...)`` keeps
its count under both profiles.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path

import pytest
from hypothesis import HealthCheck, settings

from .helpers import SAMPLES

_COMMON = {"deadline": None, "suppress_health_check": [HealthCheck.too_slow]}
settings.register_profile("ci", max_examples=300, derandomize=True, database=None, print_blob=True, **_COMMON)
settings.register_profile("dev", max_examples=30, derandomize=False, **_COMMON)


def hypothesis_profile(environ: Mapping[str, str] = os.environ) -> str:
    """The profile a run uses: ``HYPOTHESIS_PROFILE`` if set, else ``ci`` under ``CI=true``, else ``dev``."""
    if environ.get("HYPOTHESIS_PROFILE"):
        return environ["HYPOTHESIS_PROFILE"]
    return "ci" if environ.get("CI", "").strip().lower() == "true" else "dev"


settings.load_profile(hypothesis_profile())


@pytest.fixture
def samples() -> Path:
    return SAMPLES
