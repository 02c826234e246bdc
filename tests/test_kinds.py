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


def _alignment_with(el_class):
    """A line, an element of ``el_class`` (an arc's fields) as a one-element curve, a line."""
    from stakeout.alignment import Alignment, Curve, Line

    first = Line.follow(0.0, 0.0, 0.0, 0.0, 100.0)
    arc = Arc.follow(100.0, first.end_northing, first.end_easting, 0.0, 50.0, 200.0, 1)
    mid = el_class(*(getattr(arc, f.name) for f in dataclasses.fields(Arc)))
    last = Line.follow(150.0, arc.end_northing, arc.end_easting, arc.end_azimuth, 100.0)
    curve = Curve(1, (1,), 1, arc.delta, 100.0, 150.0, None, None, None, None)
    return Alignment.from_elements("T", [first, mid, last], (curve,), ())


def test_unknown_kind_skipped_by_the_deflection_sheet():
    # before the registry, deflections.txt silently left out a curve element that was neither an
    # Arc nor a Spiral (and report.html asserted it was an arc): now it fails loudly
    import numpy as np

    from stakeout.presentation import deflection_rows

    @dataclasses.dataclass(frozen=True)
    class Cubic(Arc):
        kind = "cubic"

    ok = deflection_rows(_alignment_with(Arc), np.array([110.0, 120.0]))
    assert [i for _, i, _ in ok] == [1]
    with pytest.raises(TypeError, match="deflection rows.*Cubic"):
        deflection_rows(_alignment_with(Cubic), np.array([110.0, 120.0]))


def test_external_recomputed_by_every_writer():
    # the external of a curve with spirals was measured by each of five writers building an
    # Alignment and running its inverse; now the alignment measures it once, and a design's
    # presentation model is made once and shared by every writer of the build
    import math
    from pathlib import Path

    from stakeout.alignment import SinglePISpec, build_alignment
    from stakeout.design import build_design
    from stakeout.jobfile import load_job
    from stakeout.presentation import curve_views

    # New Hampshire DOT, "Spiral Curve Data" (published): Delta 77-47-44.8 RT, Rc 300.00 ft,
    # Ls 200.00 ft -> Es 92.58 ft
    delta = 77 + 47 / 60 + 44.8 / 3600
    a = build_alignment(SinglePISpec("NH", 2396.20, 405083.92, 964724.93, 40.0, 40.0 + delta, (300.0,), (None,),
                                     50.0, 50.0, spirals=(200.0, 200.0)))
    assert a.curve_externals() is a.curve_externals()
    (cv,) = curve_views(a)
    assert cv.external == pytest.approx(92.58, abs=0.005)
    assert math.isclose(cv.external, float(a.curve_externals()[0]))

    d = build_design(load_job(Path(__file__).resolve().parent.parent / "sample_jobs" / "site_road_metric.toml"))
    assert d.presentation is d.presentation
    assert d.presentation.curves is d.presentation.curves
    assert d.presentation.deflections is d.presentation.deflections


def test_element_module_tables_cover_every_class():
    # the element module's own per-kind tables (keyed by class): the features an element adds at
    # the POB and the POE, and every class in at least one join
    from stakeout.alignment.elements import END_FEATURES, JOIN_FEATURES, START_FEATURES

    assert set(START_FEATURES) == set(ELEMENT_CLASSES)
    assert set(END_FEATURES) == set(ELEMENT_CLASSES)
    joined = {c for pair in JOIN_FEATURES for c in pair}
    assert joined == set(ELEMENT_CLASSES)
