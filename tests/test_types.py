"""The package type-checks (house style: full type hints, a type checker in CI)."""

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


@pytest.mark.slow
def test_mypy_clean():
    # mypy is in the [test] extra: a missing mypy fails here rather than skipping the type check
    r = subprocess.run([sys.executable, "-m", "mypy", "stakeout"], cwd=ROOT, capture_output=True, text=True)
    assert r.returncode == 0, r.stdout + r.stderr
