"""The registry of element kinds: every per-kind table of the program, in one place.

An element class is registered in :data:`ELEMENT_CLASSES`.  Anything that
does a different thing for each kind of element (draw it in DXF or SVG,
tabulate its deflections, say which curve part it is) does so through a
:class:`PerKind` table: built with one entry per registered kind, keyed by
the kind's name, it refuses to be built with a kind missing or unknown
(at import, so a new kind without its entries fails at once), and looking
up an element of an unregistered class raises :class:`TypeError` naming
the table and the class, instead of quietly doing the wrong thing.

Code outside :mod:`stakeout.alignment` never asks ``isinstance(el, Arc)``:
it looks the element up in a table (``tests/test_layout.py`` holds this,
and ``tests/test_kinds.py`` that every table covers every class).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import ClassVar, Generic, TypeVar

from .elements import Arc, Element, Line, Spiral

__all__ = ["ELEMENT_CLASSES", "PerKind", "KIND_NAMES", "CURVE_PART", "IS_CIRCULAR_ARC"]

#: Every element class there is (a new kind is added here and in every :class:`PerKind` table).
ELEMENT_CLASSES: tuple[type[Element], ...] = (Line, Arc, Spiral)
#: The kinds by name (``elements.csv``'s ``kind``).
KIND_NAMES: tuple[str, ...] = tuple(c.kind for c in ELEMENT_CLASSES)

V = TypeVar("V")


class PerKind(Generic[V]):
    """A table with one entry per element kind (see the module docstring).

    Parameters
    ----------
    what : str
        What the table holds, for the error messages (``"DXF drawing"``).
    entries : mapping
        Kind name (``"line"``, ``"arc"``, ``"spiral"``) -> entry; exactly the
        registered kinds.
    """

    #: Every table built so far (the test checks each covers every class).
    tables: ClassVar[list["PerKind[object]"]] = []

    def __init__(self, what: str, entries: Mapping[str, V]) -> None:
        missing = [k for k in KIND_NAMES if k not in entries]
        unknown = sorted(set(entries) - set(KIND_NAMES))
        if missing or unknown:
            raise TypeError(f"per-kind table {what!r}: " + "; ".join(
                ([f"no entry for {', '.join(missing)}"] if missing else [])
                + ([f"unknown kinds {', '.join(unknown)}"] if unknown else [])))
        self.what = what
        self._by_class: dict[type[Element], V] = {c: entries[c.kind] for c in ELEMENT_CLASSES}
        PerKind.tables.append(self)  # type: ignore[arg-type]

    @property
    def classes(self) -> tuple[type[Element], ...]:
        """The element classes the table has an entry for."""
        return tuple(self._by_class)

    def __getitem__(self, el: Element) -> V:
        """The entry of ``el``'s class; ``TypeError`` for a class not registered."""
        try:
            return self._by_class[type(el)]
        except KeyError:
            raise TypeError(f"per-kind table {self.what!r} has no entry for element class "
                            f"{type(el).__name__} (kind {type(el).kind!r}): register it in "
                            "stakeout.alignment.kinds") from None


#: Which list of a curve's data an element goes in: its arcs or its spirals (a line is in no curve).
CURVE_PART: PerKind[str | None] = PerKind("curve part", {"line": None, "arc": "arcs", "spiral": "spirals"})
#: Whether an element is a circular arc (a curve of arcs only has the published compound relations).
IS_CIRCULAR_ARC: PerKind[bool] = PerKind("circular arc", {"line": False, "arc": True, "spiral": False})
