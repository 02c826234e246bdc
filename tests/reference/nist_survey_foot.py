"""NIST & NGS, "Deprecation of the United States (U.S.) Survey Foot", Federal
Register Vol. 85 No. 193, pp. 62698-62708 (2020-10-05), and the 1959 notice
24 FR 5348: the two feet in metres, exactly."""

from __future__ import annotations

from fractions import Fraction

from . import Figure

SOURCE = "NIST & NGS, Federal Register Vol. 85 No. 193 (2020) and 24 FR 5348 (1959)"

INTERNATIONAL_FOOT = Figure("international foot, metres", Fraction(3048, 10000), SOURCE, "published", 0.0, "0.3048")
US_SURVEY_FOOT = Figure("US survey foot, metres", Fraction(1200, 3937), SOURCE, "published", 0.0, "1200/3937")
INTERNATIONAL_IN_SURVEY_FEET = Figure("1 international foot in US survey feet", Fraction(999998, 1000000),
                                      SOURCE, "published", 0.0, "0.999998")
