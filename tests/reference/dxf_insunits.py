"""The DXF reference's HEADER section, variable ``$INSUNITS`` (the drawing's
units): the codes for the job's three units."""

from __future__ import annotations

from . import Figure

SOURCE = "DXF Reference, HEADER section variables, $INSUNITS"

FEET = Figure("$INSUNITS of feet", 2, SOURCE, "published")
METRES = Figure("$INSUNITS of metres", 6, SOURCE, "published")
US_SURVEY_FEET = Figure("$INSUNITS of US survey feet", 21, SOURCE, "published")

#: the job-file unit key -> its code
BY_UNIT = {"ft": FEET, "m": METRES, "us_ft": US_SURVEY_FEET}
