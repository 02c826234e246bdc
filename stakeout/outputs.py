"""The output registry: one table of every file ``stakeout build`` can write.

Each entry names the ``--only`` name, the file, the writer (as
``"module:function"``, imported only when that file is rendered) and what it
needs.  ``--only``, the help text, the default set of outputs and the
manifest are all driven from :data:`OUTPUTS`; a new output is one entry
here plus its writer.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from importlib import import_module
from typing import TYPE_CHECKING

from .errors import JobFileError

if TYPE_CHECKING:  # pragma: no cover - the registry itself stays light to import
    from .design import Design

__all__ = ["Output", "OUTPUTS", "BY_NAME", "Rendered", "Written", "pieces", "whole", "parse_only", "only_help"]


class Rendered(dict[str, bytes]):
    """Files rendered so far in one build (file name -> bytes), so that one
    output can reuse another (the preview is drawn from plan.dxf, the report holds plan.svg),
    and the build's print option: ``wide`` text sheets (one line per stake, notes wrapped at 132 columns)
    instead of 80 columns.  ``writing`` names the files the build writes (the report links to
    sections.svg only when it is one of them).
    """

    def __init__(self, wide: bool = False, writing: frozenset[str] = frozenset()) -> None:
        super().__init__()
        self.wide = wide
        self.writing = writing
        self._parts: dict[int, Rendered] = {}

    def part(self, k: int) -> "Rendered":
        """What alignment ``k`` of several rendered so far (its own plan.svg for its report)."""
        if k not in self._parts:
            self._parts[k] = Rendered(self.wide, self.writing)
        return self._parts[k]


#: What a writer returns: the whole file (bytes, or text written as UTF-8), or its bytes piece by
#: piece (a generator rendering a page at a time, so that a big file never sits whole in memory).
Written = bytes | str | Iterable[bytes]


def _writer(target: str) -> Callable[..., Written]:
    """The writer named ``"module:function"`` (the module under ``stakeout.writers``), imported now."""
    module, _, function = target.partition(":")
    fn: Callable[..., Written] = getattr(import_module(f"{__package__}.writers.{module}"), function)
    return fn


def pieces(out: Written) -> Iterator[bytes]:
    """A writer's result as pieces of bytes."""
    if isinstance(out, str):
        yield out.encode("utf-8")
    elif isinstance(out, (bytes, bytearray, memoryview)):
        yield bytes(out)
    else:
        yield from out


def whole(out: Written) -> bytes:
    """A writer's result as the whole file."""
    if isinstance(out, bytes):
        return out
    return b"".join(pieces(out))


@dataclass(frozen=True)
class Output:
    """One output file.

    ``writer`` is either ``"module:function"``, a writer in
    ``stakeout.writers`` called as ``function(design)`` (``function(design,
    wide=...)`` for a ``wide`` text sheet) and imported only when the file is
    rendered, so a build pays only for the outputs it writes; or a render
    function ``(design, done) -> Written`` for an output drawn from another
    (the report holds plan.svg, the preview is drawn from plan.dxf).  A
    writer gives bytes, text (written as UTF-8) or its bytes piece by piece
    (:data:`Written`).  ``needs_setup`` outputs exist only for jobs
    with a ``[setup]``, ``needs_profile`` only for jobs with a ``[profile]``;
    ``extra`` names the optional install an output needs (``None``: always
    available); ``default`` outputs are written by a build without ``--only``,
    the others only when named.
    """

    name: str
    filename: str
    what: str
    writer: str | Callable[["Design", Rendered], Written]
    needs_setup: bool = False
    needs_profile: bool = False
    extra: str | None = None
    applies: Callable[["Design"], bool] | None = None  # None: whenever the above allow
    absent: str = ""  # why it was not written where ``applies`` says no
    default: bool = True
    wide: bool = False  # a text sheet that reads the build's --wide
    #: With several alignments, how their files become one (:mod:`stakeout.writers.several`): ``rows``
    #: (CSV), ``sheets`` (text), ``pictures`` (SVG), ``documents`` (HTML), or ``whole`` (the writer
    #: draws every alignment itself, or the file is the job's: control).
    several: str = "rows"

    def serves(self, design: "Design") -> bool:
        """Whether the file exists for this design (for several alignments: for any of them)."""
        return any((not self.needs_profile or p.profile is not None) and (self.applies is None or self.applies(p))
                   for p in (design.parts or (design,)))

    def render(self, design: "Design", done: Rendered) -> bytes:
        """The file's bytes; with several alignments each one's joined into one file."""
        return whole(self.chunks(design, done))

    def chunks(self, design: "Design", done: Rendered) -> Iterator[bytes]:
        """The file's bytes piece by piece, as its writer renders them (a writer rendering page by
        page keeps memory bounded); with several alignments each one's joined into one file, CSV
        rows and text sheets still piece by piece.
        """
        if not design.parts or self.several == "whole":
            yield from self._chunks(design, done)
            return
        from .writers import several

        served = [(k, p) for k, p in enumerate(design.parts) if self.serves(p)]
        if self.several in ("rows", "sheets"):  # piece by piece, each alignment's writer called in turn
            streamed = {"rows": several.csv_rows_pieces, "sheets": several.sheets_pieces}[self.several]
            yield from streamed(self._chunks(p, done.part(k)) for k, p in served)
            return
        join = {"pictures": several.svg_sheets, "documents": several.html_documents}[self.several]
        yield join([whole(self._chunks(p, done.part(k))) for k, p in served])

    def _chunks(self, design: "Design", done: Rendered) -> Iterator[bytes]:
        if not isinstance(self.writer, str):
            return pieces(self.writer(design, done))
        fn = _writer(self.writer)
        return pieces(fn(design, wide=done.wide) if self.wide else fn(design))


def _has_spirals(d: "Design") -> bool:
    return d.presentation.has_spirals


def _has_slope_stakes(d: "Design") -> bool:
    return d.earthwork is not None and d.earthwork.slopes is not None


def _once(d: "Design", done: Rendered, filename: str, target: str) -> bytes:
    """A file another output is drawn from, rendered once a build."""
    if filename not in done:
        done[filename] = whole(_writer(target)(d))
    return done[filename]


def _dxf(d: "Design", done: Rendered) -> Written:
    if "plan.png" not in done.writing:  # nothing is drawn from it: piece by piece, never kept
        return _writer("dxf:plan_dxf_pieces")(d)
    return _once(d, done, "plan.dxf", "dxf:plan_dxf")


def _picture(d: "Design", done: Rendered) -> bytes:
    return _once(d, done, "plan.svg", "picture:plan_svg")


def _report(d: "Design", done: Rendered) -> bytes:
    profile = (_once(d, done, "profile.svg", "profile_picture:profile_svg").decode("utf-8")
               if d.profile is not None else None)
    sections = None
    if d.earthwork is not None and d.earthwork.sections is not None:
        from .writers import html, sections_picture

        sections = html.SectionPictures(lambda limit: sections_picture.report_pictures(d, limit),
                                        "sections.svg" in done.writing,
                                        min(d.earthwork.volume_stations.size, sections_picture.MAX_DRAWN_SECTIONS))
    return whole(_writer("html:report_html")(d, _picture(d, done).decode("utf-8"), profile, sections))


def _preview(d: "Design", done: Rendered) -> bytes:
    return whole(_writer("dxf:plan_png")(_once(d, done, "plan.dxf", "dxf:plan_dxf")))


def _nothing(d: "Design", done: Rendered) -> bytes:
    return b""  # the manifest is written by the pipeline, after every other file


#: Every output, in writing order (the manifest comes last and is written by the pipeline).
OUTPUTS: tuple[Output, ...] = (
    Output("points", "points.csv", "the point file for the data collector", "tables:points_csv"),
    Output("stations", "stations.csv", "every stake with its station, offset and feature", "tables:stations_csv"),
    Output("curves", "curves.csv", "one row per arc", "tables:curves_csv"),
    Output("elements", "elements.csv", "one row per element: lines, arcs and spirals", "tables:elements_csv"),
    Output("spirals", "spirals.csv", "one row per spiral with its figures", "tables:spirals_csv",
           applies=_has_spirals, absent="the alignment has no spirals"),
    Output("profile", "profile.csv", "one row per PVI of the profile", "tables:profile_csv", needs_profile=True),
    Output("profile-picture", "profile.svg", "a picture of the profile: grades, vertical curves, staked stations",
           "profile_picture:profile_svg", needs_profile=True, several="pictures"),
    Output("superelevation-picture", "superelevation.svg", "the superelevation diagram: left and right cross slopes "
           "against station, key points and SE rows", "superelevation:superelevation_svg",
           applies=lambda d: d.sections is not None and d.sections.has_table, absent="no [[superelevation]] rows",
           several="pictures"),
    Output("slopestakes", "slopestakes.csv", "one row per staked station and side: hinge, catch point, reference "
           "stake", "earthwork:slopestakes_csv", applies=_has_slope_stakes, absent="the job has no [slope_stakes]"),
    Output("slopestakes-sheet", "slopestakes.txt", "the printable slope-stake sheet with the lath markings",
           "earthwork:slopestakes_sheet_pieces", applies=_has_slope_stakes, absent="the job has no [slope_stakes]", wide=True,
           several="sheets"),
    Output("sections-picture", "sections.svg", "the cross-sections at each station with both catch points: ground, "
           "design template, hinges, catch and reference stakes, areas", "sections_picture:sections_svg",
           applies=_has_slope_stakes, absent="the job has no [slope_stakes]", several="pictures"),
    Output("volumes", "volumes.csv", "cut and fill areas at each station with both catch points, average-end-area "
           "volumes", "earthwork:volumes_csv", applies=_has_slope_stakes, absent="the job has no [slope_stakes]"),
    Output("setout", "setout.csv", "angle right and distances from the occupied point", "tables:setout_csv",
           needs_setup=True),
    Output("sheet", "setout.txt", "the printable setout sheet", "sheets:setout_pieces", needs_setup=True, wide=True,
           several="whole"),
    Output("deflections", "deflections.txt", "deflection angles and chords for each arc", "sheets:deflection_pieces",
           wide=True, several="sheets"),
    Output("control", "control.csv", "the control points the job lists or uses, in the point file's layout",
           "control:control_csv", several="whole"),
    Output("landxml", "alignment.xml", "the staked design as LandXML 1.2 (alignment, profile, stakes)",
           "exchange:alignment_xml_pieces", several="whole"),
    Output("dxf", "plan.dxf", "the plan check drawing", _dxf, several="whole"),
    Output("picture", "plan.svg", "the plan picture: stakes, key points, PIs, control, north arrow, scale bar",
           _picture, several="whole"),
    Output("report", "report.html", "the printable report: header, curves, plan, setout, deflections, sign-off",
           _report, several="documents"),
    Output("preview", "plan.png", "a raster preview of plan.dxf (matplotlib; only when named)", _preview,
           extra="preview", default=False, several="whole"),
    Output("manifest", "manifest.json", "hashes of the job file and of every output", _nothing, several="whole"),
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
