"""The reference tables themselves (tests/reference/): every row names its
source and status, and every table is read by at least one test."""

from __future__ import annotations

import importlib
import pkgutil
import re
from pathlib import Path

import pytest

from . import reference
from .reference import STATUSES, Figure, figures

HERE = Path(__file__).resolve().parent
MODULES = sorted(m.name for m in pkgutil.iter_modules(reference.__path__))


def test_there_are_tables():
    assert "fhwa_bridge_geometry" in MODULES and "nhdot_spiral_curve" in MODULES


@pytest.mark.parametrize("name", MODULES)
def test_every_row_names_its_source(name):
    module = importlib.import_module(f"{reference.__name__}.{name}")
    rows = figures(module)
    assert rows, f"{name} holds no Figure rows"
    assert module.SOURCE, name
    for row in rows:
        assert isinstance(row, Figure)
        assert row.status in STATUSES and row.source and row.what, row
        assert row.tol >= 0.0, row
        if row.status == "published":
            assert row.source == module.SOURCE, row  # a published figure comes from the module's source


@pytest.mark.parametrize("name", MODULES)
def test_every_table_is_used(name):
    # one table per source, read by the tests that need it (not typed again in a test file)
    users = [p.name for p in HERE.glob("test_*.py")
             if p.name != Path(__file__).name
             and re.search(rf"^from \.reference import .*\b{name}\b", p.read_text(encoding="utf-8"), re.M)]
    assert users, f"no test imports tests/reference/{name}.py"


def test_a_row_without_source_or_with_an_unknown_status_is_refused():
    with pytest.raises(ValueError, match="no source"):
        Figure("x", 1.0, "", "published")
    with pytest.raises(ValueError, match="status"):
        Figure("x", 1.0, "a book", "remembered")
