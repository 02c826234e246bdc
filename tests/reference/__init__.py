"""Reference tables: the outside values the tests check the package against.

One module per published source, typed once and imported by every test that
needs them (as geographiclib keeps one table of reference cases for all its
solvers). Each figure is a `Figure` row that names its source, says whether
the value is printed there ("published"), worked out by hand from the
source's inputs ("computed"), or recalled ("from memory"), and carries the
tolerance its printing allows (half a unit of the last printed digit).

Modules:
- `fhwa_bridge_geometry`: FHWA Bridge Geometry Manual, Table 3.2 (crest vertical curve);
- `nhdot_spiral_curve`: New Hampshire DOT, "Spiral Curve Data" (spiralled curve);
- `navedtra_simple_curve`: NAVEDTRA 14070, "Solving a Simple Curve" (circular curve, deflections);
- `nist_survey_foot`: NIST & NGS, the definitions of the international and US survey foot;
- `mahun_surveying`: J. Mahun, Open Access Surveying Library (combined factor, Lambert convergence);
- `scipy_fresnel`: scipy's own test value of the Fresnel integrals;
- `dxf_insunits`: the DXF reference's $INSUNITS codes of the three units;
- `design_notes`: worked examples of the project's design notes (references.md), [computed];
- `recalled_figures`: figures recalled "from memory", each naming where it is printed;
- `superelevation_exercise`: a published transition exercise (runout, runoff, reverse crown), edge elevations [computed];
- `transition_length_rule`: a published worked example of the transition length L = N b e.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import pytest

STATUSES = ("published", "computed", "from memory")


@dataclass(frozen=True)
class Figure:
    """One row of a reference table.

    ``what`` is the figure as the source names it, ``value`` the number (or
    tuple of numbers) in the source's units, ``source`` where it is printed,
    ``status`` one of `STATUSES`, ``tol`` the absolute tolerance the printing
    allows (0: exact), ``printed`` the text as printed when that matters (a
    DMS angle, a station).
    """

    what: str
    value: Any
    source: str
    status: str
    tol: float = 0.0
    printed: str = ""

    def __post_init__(self) -> None:
        if self.status not in STATUSES:
            raise ValueError(f"{self.what}: status {self.status!r} is none of {STATUSES}")
        if not self.source:
            raise ValueError(f"{self.what}: no source")

    def approx(self, tol: float | None = None) -> Any:
        """``pytest.approx`` of the value within the printed tolerance (or ``tol``)."""
        return pytest.approx(self.value, abs=self.tol if tol is None else tol)


def dms(text: str) -> float:
    """Degrees of a printed ``d-mm-ss.s`` angle."""
    d, m, s = text.split("-")
    return int(d) + int(m) / 60.0 + float(s) / 3600.0


def figures(module: Any) -> list[Figure]:
    """Every `Figure` of a reference module, in the order written."""
    return [v for v in vars(module).values() if isinstance(v, Figure)]
