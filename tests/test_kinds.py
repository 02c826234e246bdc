"""The registry of element kinds: every per-kind table covers every element class, and an
element of a class nobody registered fails loudly (a TypeError naming the table) instead of
being drawn, tabulated or written as some other kind.
"""

from __future__ import annotations

import dataclasses
import importlib

import pytest

from stakeout.alignment import Arc, Element
from stakeout.alignment.kinds import ELEMENT_CLASSES, PerKind

#: Every module that builds a per-kind table (imported so that its tables are registered).
TABLE_MODULES = ("stakeout.alignment.kinds", "stakeout.presentation", "stakeout.writers.text",
                 "stakeout.writers.dxf", "stakeout.writers.picture")


def _subclasses(cls: type) -> set[type]:
    out = set()
    for sub in cls.__subclasses__():
        out |= {sub} | _subclasses(sub)
    return out


def test_every_element_class_is_registered():
    # a new kind is a subclass of Element; it must be in the registry (and so in every table)
    found = {c for c in _subclasses(Element) if c.__module__.startswith("stakeout.")}
    assert found <= set(ELEMENT_CLASSES)


def test_every_table_has_every_element_class():
    for name in TABLE_MODULES:
        importlib.import_module(name)
    tables = PerKind.tables
    assert {t.what for t in tables} >= {"curve part", "deflection rows", "DXF drawing", "SVG path segment",
                                        "deflection title"}
    for t in tables:
        assert set(t.classes) == set(ELEMENT_CLASSES), t.what


def test_a_table_missing_a_kind_is_refused():
    with pytest.raises(TypeError, match="no entry for spiral"):
        PerKind("incomplete", {"line": 1, "arc": 2})
    with pytest.raises(TypeError, match="unknown kinds clothoid"):
        PerKind("too many", {"line": 1, "arc": 2, "spiral": 3, "clothoid": 4})
    PerKind.tables[:] = [t for t in PerKind.tables if t.what not in ("incomplete", "too many")]


def test_unregistered_element_class_fails_loudly():
    @dataclasses.dataclass(frozen=True)
    class Cubic(Arc):  # a kind nobody registered, even one derived from a known class
        kind = "cubic"

    table = PerKind.tables[0]
    el = Cubic(0.0, 10.0, 0.0, 0.0, 0.0, 10.0, 0.0, 0.0, 1, 100.0, 5.0, 0.0, 100.0)
    with pytest.raises(TypeError, match=f"{table.what}.*Cubic"):
        table[el]
