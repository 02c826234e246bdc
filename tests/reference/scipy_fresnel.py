"""scipy's own tests of ``scipy.special.fresnel``: the Fresnel integrals at 0.5."""

from __future__ import annotations

from . import Figure

SOURCE = "scipy's test suite, scipy.special.fresnel(0.5)"

ARGUMENT = Figure("argument", 0.5, SOURCE, "published", 0.0)
S = Figure("S(0.5)", 0.064732432859999287, SOURCE, "published", 1e-17)
C = Figure("C(0.5)", 0.49234422587144644, SOURCE, "published", 1e-17)
