"""The output registry: one table of every file ``stakeout build`` can write.

Each entry names the ``--only`` name, the file, the writer and what it
needs.  ``--only``, the help text, the default set of outputs and the
manifest are all driven from :data:`OUTPUTS`; a new output is one entry
here plus its writer.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

from .errors import JobFileError

if TYPE_CHECKING:  # pragma: no cover - the registry itself stays light to import
    from .design import Design

__all__ = ["Output", "OUTPUTS", "BY_NAME", "Rendered", "parse_only", "only_help"]


class Rendered(dict[str, bytes]):
    """Files rendered so far in one build (file name -> bytes), so that one
    output can reuse another (the preview is drawn from plan.dxf, the report holds plan.svg),
    and the build's print option: ``wide`` text sheets (one line per stake, notes wrapped at 132 columns)
    instead of 80 columns.
    """

    def __init__(self, wide: bool = False) -> None:
        super().__init__()
        self.wide = wide


@dataclass(frozen=True)
class Output:
    """One output file.

    ``render(design, done)`` returns the file's bytes; ``needs_setup``
    outputs exist only for jobs with a ``[setup]``, ``needs_profile`` only
    for jobs with a ``[profile]``; ``extra`` names the optional install an
    output needs (``None``: always available); ``default`` outputs are
    written by a build without ``--only``, the others only when named.
    """

    name: str
    filename: str
    what: str
    render: Callable[["Design", Rendered], bytes]
    needs_setup: bool = False
    needs_profile: bool = False
    extra: str | None = None
    applies: Callable[["Design"], bool] | None = None  # None: whenever the above allow
    absent: str = ""  # why it was not written where ``applies`` says no
    default: bool = True


def _points(d: "Design", done: Rendered) -> bytes:
    from .writers.tables import points_csv

    return points_csv(d)


def _stations(d: "Design", done: Rendered) -> bytes:
    from .writers.tables import stations_csv

    return stations_csv(d)


def _curves(d: "Design", done: Rendered) -> bytes:
    from .writers.tables import curves_csv

    return curves_csv(d)


def _spirals(d: "Design", done: Rendered) -> bytes:
    from .writers.tables import spirals_csv

    return spirals_csv(d)


def _has_spirals(d: "Design") -> bool:
    from .alignment import Spiral

    return any(isinstance(el, Spiral) for el in d.alignment.elements)


def _elements(d: "Design", done: Rendered) -> bytes:
    from .writers.tables import elements_csv

    return elements_csv(d)


def _profile(d: "Design", done: Rendered) -> bytes:
    from .writers.tables import profile_csv

    return profile_csv(d)


def _profile_picture(d: "Design", done: Rendered) -> bytes:
    from .writers.profile_picture import profile_svg

    return profile_svg(d)


def _superelevation_picture(d: "Design", done: Rendered) -> bytes:
    from .writers.sections import superelevation_svg

    return superelevation_svg(d)


def _setout(d: "Design", done: Rendered) -> bytes:
    from .writers.tables import setout_csv

    return setout_csv(d)


def _sheet(d: "Design", done: Rendered) -> bytes:
    from .writers.sheets import setout_sheet

    return setout_sheet(d, wide=done.wide).encode("utf-8")


def _deflections(d: "Design", done: Rendered) -> bytes:
    from .writers.sheets import deflection_sheet

    return deflection_sheet(d, wide=done.wide).encode("utf-8")


def _landxml(d: "Design", done: Rendered) -> bytes:
    from .writers.exchange import alignment_xml

    return alignment_xml(d)


def _dxf(d: "Design", done: Rendered) -> bytes:
    if "plan.dxf" not in done:
        from .writers.dxf import plan_dxf

        done["plan.dxf"] = plan_dxf(d)
    return done["plan.dxf"]


def _picture(d: "Design", done: Rendered) -> bytes:
    if "plan.svg" not in done:
        from .writers.picture import plan_svg

        done["plan.svg"] = plan_svg(d)
    return done["plan.svg"]


def _report(d: "Design", done: Rendered) -> bytes:
    from .writers.html import report_html

    return report_html(d, _picture(d, done).decode("utf-8"))


def _preview(d: "Design", done: Rendered) -> bytes:
    from .writers.dxf import plan_png

    return plan_png(_dxf(d, done))


#: Every output, in writing order (the manifest comes last and is written by the pipeline).
OUTPUTS: tuple[Output, ...] = (
    Output("points", "points.csv", "the point file for the data collector", _points),
    Output("stations", "stations.csv", "every stake with its station, offset and feature", _stations),
    Output("curves", "curves.csv", "one row per arc", _curves),
    Output("elements", "elements.csv", "one row per element: lines, arcs and spirals", _elements),
    Output("spirals", "spirals.csv", "one row per spiral with its figures", _spirals, applies=_has_spirals,
           absent="the alignment has no spirals"),
    Output("profile", "profile.csv", "one row per PVI of the profile", _profile, needs_profile=True),
    Output("profile-picture", "profile.svg", "a picture of the profile: grades, vertical curves, staked stations",
           _profile_picture, needs_profile=True),
    Output("superelevation-picture", "superelevation.svg", "the superelevation diagram: left and right cross slopes "
           "against station, key points and SE rows", _superelevation_picture,
           applies=lambda d: d.sections is not None and d.sections.has_table, absent="no [[superelevation]] rows"),
    Output("setout", "setout.csv", "angle right and distances from the occupied point", _setout, needs_setup=True),
    Output("sheet", "setout.txt", "the printable setout sheet", _sheet, needs_setup=True),
    Output("deflections", "deflections.txt", "deflection angles and chords for each arc", _deflections),
    Output("landxml", "alignment.xml", "the staked design as LandXML 1.2 (alignment, profile, stakes)", _landxml),
    Output("dxf", "plan.dxf", "the plan check drawing", _dxf),
    Output("picture", "plan.svg", "the plan picture: stakes, key points, PIs, control, north arrow, scale bar",
           _picture),
    Output("report", "report.html", "the printable report: header, curves, plan, setout, deflections, sign-off",
           _report),
    Output("preview", "plan.png", "a raster preview of plan.dxf (matplotlib; only when named)", _preview,
           extra="preview", default=False),
    Output("manifest", "manifest.json", "hashes of the job file and of every output", lambda d, done: b""),
)

BY_NAME: dict[str, Output] = {o.name: o for o in OUTPUTS}


def only_help() -> str:
    """The ``--only`` help text, listing every name."""
    return "Comma-separated outputs: " + ", ".join(o.name for o in OUTPUTS) + "."


def parse_only(text: str | None) -> list[str] | None:
    """Parse ``--only a,b``; ``None`` when not given."""
    if text is None:
        return None
    names = [n.strip() for n in text.split(",") if n.strip()]
    if not names:
        raise JobFileError(f"--only {text!r}: name at least one of {', '.join(BY_NAME)}")
    for n in names:
        if n not in BY_NAME:
            raise JobFileError(f"--only {n!r}: unknown output; use names from {', '.join(BY_NAME)}")
    return names
