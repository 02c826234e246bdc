"""``plan.dxf``: the plan check drawing (the only module that imports ezdxf).

Survey azimuths run clockwise from north; DXF angles run counter-clockwise
from +x (east).  The one conversion is :func:`dxf_angle`.  Drawing x is
easting, y is northing, in job units.

Layers (names and colours are this project's own, listed in the README):

=============  ======  ==========================================================
layer          colour  contents
=============  ======  ==========================================================
SO-CL          1       centreline: true LINE and ARC entities
SO-OFFSET      8       offset lines, true LINE and ARC entities
SO-STAKE       3       one POINT per staked point
SO-STAKE-NO    3       the point number beside each stake
SO-STATION     7       station ticks and labels (labelled stations long, at the plan picture's
                       spacing for the job's length; other staked stations short)
SO-KEYPOINT    1       key points (POB, PC, PCC, PRC, PT, AP, POE): circle and label
SO-CONTROL     5       every setup's occupied point (triangle) and backsight point (circle),
                       labelled (``CP104 (setup 2)`` when setups are numbered); other control
                       points (POINT, small circle up to CONTROL_RING_MAX of them, and id)
SO-BACKSIGHT   5       the backsight line from each occupied point
SO-RADIAL      9       light lines from each occupied point to each of its stakes (up to
                       2,000 stakes; layer off)
SO-TABLE       7       curve data table and title block text
=============  ======  ==========================================================
"""

from __future__ import annotations

import functools
import io
import math
from collections import OrderedDict
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import ezdxf
import numpy as np

from ..angles import format_dms, sincosd
from ..design import Design
from ..presentation import Element, PerKind
from ..job import ControlPoint
from ..staking import COORDINATE_DECIMALS, StakePoints
from . import rows
from .sections import widened_traces
from .stationmarks import labelled_stations, sheet_scale, station_spacing
from .text import CAUTION_LINES, curve_texts

__all__ = ["LAYERS", "INSUNITS", "dxf_angle", "plan_dxf", "plan_dxf_pieces", "plan_png"]

LAYERS: dict[str, int] = {
    "SO-CL": 1,
    "SO-OFFSET": 8,
    "SO-STAKE": 3,
    "SO-STAKE-NO": 3,
    "SO-STATION": 7,
    "SO-KEYPOINT": 1,
    "SO-CONTROL": 5,
    "SO-BACKSIGHT": 5,
    "SO-RADIAL": 9,
    "SO-TABLE": 7,
}

#: $INSUNITS per job unit: 2 feet, 6 metres, 21 US survey feet.
INSUNITS = {"ft": 2, "m": 6, "us_ft": 21}

TEXT_STYLE = "SO-TEXT"

#: Every stake has its POINT and its number, and every staked station its tick, at any size:
#: the drawing is zoomable and layer SO-STAKE-NO can be switched off.  They are written in bulk
#: (:class:`Bulk`), so a labelled plan of a million stakes takes seconds, not minutes.

#: Up to this many entities (and polyline vertices) written in bulk (a small job, such as the
#: sample jobs) their numbers are written as ezdxf writes a float, the shortest text that reads
#: back exactly (the bytes ezdxf's own entities had); above it with :data:`BULK_DECIMALS` decimals from numpy's digit tables
#: (``writers/rows.py``), which is about ten times faster than Python's float text.
EXACT_MAX_ENTITIES = 10_000

#: Decimals of a coordinate written in bulk above :data:`EXACT_MAX_ENTITIES`: those of the
#: point file (0.1 mm, 0.0001 ft), which the large plan had before.
BULK_DECIMALS = COORDINATE_DECIMALS

#: Entities (or polyline vertices) of a bulk run rendered as one piece of the file: the file comes out
#: piece by piece (:func:`plan_dxf_pieces`), so that a plan of a million stakes (about 350 MB) is never
#: held whole; a piece of stakes is about 5 MB.  The bytes do not depend on it.
BLOCK_ENTITIES = 32768

#: Up to this many control points besides the setups' each has a small ring around its POINT;
#: above it (a design file's survey points: 215,000 in one) a POINT and its id only, both in
#: bulk (the title block says so).
CONTROL_RING_MAX = 5000

#: Radial lines from the occupied point are drawn for jobs up to this many stakes.
RADIAL_MAX_STAKES = 2000


def dxf_angle(azimuth_deg: float) -> float:
    """Survey azimuth (clockwise from north) -> DXF angle (counter-clockwise from east), degrees."""
    return (90.0 - azimuth_deg) % 360.0


#: Decimals of a label's rotation (degrees).  Rotations come from azimuths that numpy's
#: vectorised trigonometry computes to within a few units in the last place, and which
#: kernel runs depends on the processor (AVX-512 or not): written in full, the same job
#: gave different plan.dxf bytes on two machines.  A millionth of a degree is far below
#: anything a drawing shows, and far above that noise.
ROTATION_DECIMALS = 6


def _text(msp: Any, s: str, x: float, y: float, h: float, layer: str, rot: float = 0.0, align: str = "LEFT") -> None:
    rotation = round(rot % 360.0, ROTATION_DECIMALS) % 360.0
    t = msp.add_text(s, height=h, rotation=rotation, dxfattribs={"layer": layer, "style": TEXT_STYLE})
    t.set_placement((x, y), align=ezdxf.enums.TextEntityAlignment[align])


Ends = tuple[tuple[float, float], tuple[float, float]]  # (northing, easting) at the start and at the end


def _draw_line(msp: Any, el: Element, ends: Ends, d: Design, offset: float, layer: str) -> None:
    (n0, e0), (n1, e1) = ends
    msp.add_line((e0, n0), (e1, n1), dxfattribs={"layer": layer})


def _draw_arc(msp: Any, el: Any, ends: Ends, d: Design, offset: float, layer: str) -> None:
    (n0, e0), (n1, e1) = ends
    r = el.radius - el.turn * offset
    if r <= 1e-9:
        return
    a0 = math.degrees(math.atan2(n0 - el.center_northing, e0 - el.center_easting)) % 360.0
    a1 = math.degrees(math.atan2(n1 - el.center_northing, e1 - el.center_easting)) % 360.0
    # DXF arcs run counter-clockwise from start to end: a left turn travels
    # counter-clockwise, a right turn clockwise (so swap its ends).
    start, end = (a0, a1) if el.turn < 0 else (a1, a0)
    msp.add_arc((el.center_easting, el.center_northing), r, start, end, dxfattribs={"layer": layer})


#: Turn of the direction between the fit points of a spiral's spline (radians): a
#: cubic through points this close, with the end tangents given, stays within
#: a few millionths of the radius of the true clothoid (checked by a test to 0.0005 units).
SPLINE_STEP = 0.02


def spiral_fit_points(el: Element, d: Design, offset: float) -> tuple[np.ndarray, np.ndarray]:
    """Fit points (easting, northing) and the unit end tangents of a spiral's spline."""
    k = max(abs(el.curvature_start), abs(el.curvature_end))
    count = max(8, int(math.ceil(el.length * k / SPLINE_STEP)) + 1, int(math.ceil(el.length / 50.0)) + 1)
    n, e, az = d.presentation.element_samples(el, count, offset)
    pts = np.column_stack([e, n])
    sa, ca = sincosd(np.array([az[0], az[-1]]))
    return pts, np.column_stack([sa, ca])


def _draw_spiral(msp: Any, el: Element, ends: Ends, d: Design, offset: float, layer: str) -> None:
    from ezdxf.math import fit_points_to_cad_cv

    pts, tangents = spiral_fit_points(el, d, offset)
    spline = fit_points_to_cad_cv(pts.tolist(), tangents=tangents.tolist())
    msp.add_spline(dxfattribs={"layer": layer}).apply_construction_tool(spline)


#: How each kind of element is drawn, with true entities.
DRAW: PerKind[Callable[..., None]] = PerKind("DXF drawing", {"line": _draw_line, "arc": _draw_arc,
                                                              "spiral": _draw_spiral})


def _draw_path(msp: Any, d: Design, offset: float, layer: str) -> None:
    """Draw the centreline (offset 0) or an offset line with true entities."""
    n0, e0, n1, e1 = (v.tolist() for v in d.presentation.element_ends(offset))
    for k, el in enumerate(d.alignment.elements):
        DRAW[el](msp, el, ((n0[k], e0[k]), (n1[k], e1[k])), d, offset, layer)


def _extent(d: Design) -> tuple[float, float, float, float]:
    e = np.concatenate([d.stakes.easting, [el.start_easting for el in d.alignment.elements],
                        [d.alignment.elements[-1].end_easting]])
    n = np.concatenate([d.stakes.northing, [el.start_northing for el in d.alignment.elements],
                        [d.alignment.elements[-1].end_northing]])
    if d.setup is not None:
        for o in d.setup.occupations:
            e = np.append(e, o.occupied.easting)
            n = np.append(n, o.occupied.northing)
            if o.backsight is not None:
                e = np.append(e, o.backsight.easting)
                n = np.append(n, o.backsight.northing)
    if d.job.control:
        e = np.append(e, [p.easting for p in d.job.control])
        n = np.append(n, [p.northing for p in d.job.control])
    return float(e.min()), float(n.min()), float(e.max()), float(n.max())


def _draw_setups(msp: Any, d: Design, h: float, size: float) -> None:
    """Every setup: occupied point (triangle), backsight (circle) and backsight line, and
    radial lines from each occupied point to its own stakes (up to RADIAL_MAX_STAKES stakes).
    """
    assert d.setup is not None
    sd, sp = d.setup, d.stakes
    listed = sd.listed
    radials = len(sp) <= RADIAL_MAX_STAKES
    groups = sd.groups() if radials else [np.zeros(0, dtype=np.int64)] * len(sd.occupations)
    labelled: set[str] = set()
    for o, idx in zip(sd.occupations, groups):
        occ = o.occupied
        tri = [(occ.easting + 1.5 * h * math.sin(math.radians(t)), occ.northing + 1.5 * h * math.cos(math.radians(t)))
               for t in (0, 120, 240, 0)]
        for p, q in zip(tri, tri[1:]):
            msp.add_line(p, q, dxfattribs={"layer": "SO-CONTROL"})
        msp.add_point((occ.easting, occ.northing), dxfattribs={"layer": "SO-CONTROL"})
        name = f"{occ.id} (setup {o.number})" if listed else f"{occ.id} (occupied)"
        _text(msp, name, occ.easting + 2 * h, occ.northing + h, h, "SO-CONTROL")
        bs = o.backsight
        if bs is not None:
            end = (bs.easting, bs.northing)
            if not listed or bs.id not in labelled:  # a backsight several setups share is drawn once
                labelled.add(bs.id)
                msp.add_point(end, dxfattribs={"layer": "SO-CONTROL"})
                msp.add_circle(end, 1.2 * h, dxfattribs={"layer": "SO-CONTROL"})
                ty = bs.northing + h if not listed else bs.northing - 2 * h  # below any setup label there
                _text(msp, f"{bs.id} (backsight)", bs.easting + 2 * h, ty, h, "SO-CONTROL")
        else:
            s, co = sincosd(o.backsight_azimuth)
            length = 0.25 * size
            end = (occ.easting + length * float(s), occ.northing + length * float(co))
            what = "backsight direction" + (f" (setup {o.number})" if listed else "")
            _text(msp, what, end[0] + h, end[1], h, "SO-CONTROL")
        msp.add_line((occ.easting, occ.northing), end, dxfattribs={"layer": "SO-BACKSIGHT"})
        _radials(msp, occ, sp, idx)


def _radials(msp: Any, occ: ControlPoint, sp: StakePoints, idx: np.ndarray) -> None:
    """Radial lines from an occupied point to the stakes ``idx`` of ``sp``."""
    for e, n in zip(sp.easting[idx].tolist(), sp.northing[idx].tolist()):
        msp.add_line((occ.easting, occ.northing), (e, n), dxfattribs={"layer": "SO-RADIAL"})


def _draw_radials(msp: Any, d: Design) -> None:
    """Radial lines from each occupied point to its own stakes of this alignment (up to
    RADIAL_MAX_STAKES stakes), for an alignment after the first of a job with several.
    """
    assert d.setup is not None
    if len(d.stakes) > RADIAL_MAX_STAKES:
        return
    for o, idx in zip(d.setup.occupations, d.setup.groups()):
        _radials(msp, o.occupied, d.stakes, idx)


def _control_entities(d: Design, h: float) -> tuple[int, list[Entity]]:
    """Each other control point's POINT, its ring (up to :data:`CONTROL_RING_MAX` points) and its id."""
    ids, n, e = d.presentation.other_control
    ents = [Entity("POINT", "SO-CONTROL", "AcDbPoint", [(10, e), (20, n), (30, "0.0")])]
    if len(ids) <= CONTROL_RING_MAX:
        ents.append(Entity("CIRCLE", "SO-CONTROL", "AcDbCircle", [(10, e), (20, n), (30, "0.0"),
                                                                  (40, repr(0.6 * h))]))
    ents.append(Entity("TEXT", "SO-CONTROL", "AcDbText", _text_tags(e + 2 * h, n + h, h, ids)))
    return len(ids), ents


def _draw_control(msp: Any, d: Design, h: float, bulk: Bulk) -> None:
    """The job's other control points: a point, a small ring (up to :data:`CONTROL_RING_MAX`
    points) and its id, written in bulk.
    """
    count = len(d.presentation.other_control[0])
    per = 3 if count <= CONTROL_RING_MAX else 2
    bulk.reserve(msp, per * count, lambda: _control_entities(d, h))


def _new_doc(d: Design) -> Any:
    """An empty drawing in the job's units with the layers and text style."""
    unit = d.job.info.unit
    doc = ezdxf.new("R2013", setup=False)
    doc.header["$INSUNITS"] = INSUNITS[unit.key]
    doc.header["$MEASUREMENT"] = 1 if unit.key == "m" else 0
    doc.styles.add(TEXT_STYLE, font="txt")
    for name, colour in LAYERS.items():
        doc.layers.add(name, color=colour)
    doc.layers.get("SO-RADIAL").off()  # there for whoever wants it; off so it hides nothing
    return doc


def _build(d: Design, bulk: Bulk, doc: Any = None, shared: bool = True
           ) -> tuple[Any, tuple[float, float, float, float]]:
    """Draw one alignment's plan into ``doc`` (a new drawing when None), the stakes and control
    points reserved in ``bulk``; ``shared``: also the setups and control (once a drawing).
    Returns the drawing and the extent drawn.
    """
    job, a, sp = d.job, d.alignment, d.stakes
    unit = job.info.unit
    stn = d.stationing
    doc = _new_doc(d) if doc is None else doc
    msp = doc.modelspace()
    x0, y0, x1, y1 = _extent(d)
    size = max(x1 - x0, y1 - y0, 1.0)
    h = size / 250.0  # text height: legible at full-extent zoom

    _draw_path(msp, d, 0.0, "SO-CL")
    for ol in job.staking.offsets:
        if ol.offset != 0.0 and not ol.widening:
            _draw_path(msp, d, ol.offset, "SO-OFFSET")
    for _code, tn_, te_ in widened_traces(d):  # a widened line is what it is: a polyline along its taper
        bulk.reserve_polyline(msp, "SO-OFFSET", te_, tn_)

    bulk.reserve(msp, 2 * len(sp), lambda: _stake_entities(d, h))  # a POINT and its number per stake

    # station ticks: long and labelled at the plan picture's spacing for the job's length (the scale
    # plan.svg would draw this extent at), short at every staked station (those in bulk, between the
    # labelled ones)
    full = labelled_stations(d, station_spacing(a.length, sheet_scale(x1 - x0, y1 - y0)))
    ticks = np.unique(np.concatenate([full, sp.stations]))
    (tn, te, taz) = a.evaluate(ticks, 0.0)
    is_full = np.isin(ticks, full)
    sn, cn = sincosd(taz + 90.0)
    half = np.where(is_full, 2.0 * h, 0.8 * h)
    ends = (te - half * sn, tn - half * cn, te + half * sn, tn + half * cn)
    lab = dict(zip(full.tolist(), stn.labels(full)))
    start = 0
    for k in np.flatnonzero(is_full).tolist() + [ticks.size]:
        bulk.reserve(msp, k - start, functools.partial(_tick_entities, ends, slice(start, k)))
        if k < ticks.size:
            xa, ya, xb, yb = (float(v[k]) for v in ends)
            msp.add_line((xa, ya), (xb, yb), dxfattribs={"layer": "SO-STATION"})
            e, n, s_, c_ = float(te[k]), float(tn[k]), float(sn[k]), float(cn[k])
            # label on the left of the centreline, reading along the normal
            _text(msp, lab[float(ticks[k])], e - 2.5 * h * s_, n - 2.5 * h * c_, h, "SO-STATION",
                  rot=dxf_angle(float(taz[k]) - 90.0), align="MIDDLE_RIGHT")
        start = k + 1

    for kp in a.key_points:
        msp.add_circle((kp.easting, kp.northing), 0.8 * h, dxfattribs={"layer": "SO-KEYPOINT"})
        _text(msp, f"{' '.join(kp.features)} {stn.label(kp.station)}", kp.easting + 1.2 * h,
              kp.northing - 1.5 * h, h, "SO-KEYPOINT")

    if stn.equations:
        eq_at = np.array([eq.internal for eq in stn.equations])
        qn, qe, _ = a.evaluate(eq_at, 0.0)
        for eq, n, e in zip(stn.equations, qn.tolist(), qe.tolist()):
            msp.add_circle((e, n), 0.8 * h, dxfattribs={"layer": "SO-KEYPOINT"})
            _text(msp, f"{stn.format_value(eq.back)} BK = {stn.format_value(eq.ahead)} AH", e + 1.2 * h,
                  n - 1.5 * h, h, "SO-KEYPOINT")

    if shared and d.setup is not None:
        _draw_setups(msp, d, h, size)
    elif d.setup is not None:  # another alignment of the job: the setups drawn, only its radial lines
        _draw_radials(msp, d)
    if shared:
        _draw_control(msp, d, h, bulk)

    # title block and curve table, above the top-left corner of the job
    lines = [f"{job.info.name}", f"job file {Path(job.path).name}   sha256 {job.sha256}",
             f"alignment {a.name}   units {unit.label}",
             f"CRS {d.crs_label or 'none: local grid'}", ""]
    others = len(d.presentation.other_control[0]) if shared else 0
    if others > CONTROL_RING_MAX:
        lines.append(f"{others:,} other control points: a point and its id each, without rings (over "
                     f"{CONTROL_RING_MAX:,})")
        lines.append("")
    lines.append("CURVE DATA")
    for ct in curve_texts(d):
        cv, t = ct.curve, ct.curve.tangents
        head = f"curve {cv.number}: {ct.turn}, I {ct.delta}"
        if cv.pi_station is not None and t is not None:
            head += f", PI {ct.pi_label}, T back {t.back:.4f}, T ahead {t.ahead:.4f}"
            if t.t_a is not None and t.t_b is not None:
                head += f", T_A {t.t_a:.4f} ({t.t_a_side}), T_B {t.t_b:.4f}"
        lines.append(head)
        for k, (arc, _, _) in enumerate(ct.arcs, start=1):
            props = arc.props
            assert props is not None
            tan = f"{props.tangent:.4f}" if props.tangent is not None else "-"
            lines.append(f"  arc {k}: R {props.radius:.4f}  delta {format_dms(props.delta, 1)}  "
                         f"L {props.length:.4f}  T {tan}  chord {props.chord:.4f}")
    lines.append("")
    lines.extend(CAUTION_LINES)
    y = y1 + (len(lines) + 2) * 1.6 * h
    for line in lines:
        if line:
            _text(msp, line, x0, y, h, "SO-TABLE")
        y -= 1.6 * h

    top = y1 + (len(lines) + 3) * 1.6 * h
    return doc, (x0, y0, x1, top)


def plan_dxf(d: Design) -> bytes:
    """Render ``plan.dxf`` as bytes, identical for the same job and version; with several
    alignments every one in the one drawing (setups and control drawn once).
    """
    return b"".join(plan_dxf_pieces(d))


def plan_dxf_pieces(d: Design) -> Iterator[bytes]:
    """``plan.dxf`` piece by piece, in order (the bytes of :func:`plan_dxf`): ezdxf's drawing, in
    which the bulk runs hold their handles, then each run rendered a block at a time where it goes,
    so that no more than a block of the file is held besides the drawing's own text.
    """
    bulk, data, owner = _drawing(d)
    yield from bulk.pieces(data, owner)


def _drawing(d: Design) -> tuple[Bulk, bytes, str]:
    """The drawing ezdxf wrote, as bytes, with the bulk runs reserved in it, and model space's handle."""
    parts = d.parts or (d,)
    bulk = Bulk()
    saved = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True  # no timestamps or GUIDs in the header
    try:
        doc: Any = None
        boxes = []
        for k, p in enumerate(parts):
            doc, box = _build(p, bulk, doc, shared=k == 0)
            boxes.append(box)
        x0, y0 = min(b[0] for b in boxes), min(b[1] for b in boxes)
        x1, top = max(b[2] for b in boxes), max(b[3] for b in boxes)
        doc.header["$EXTMIN"] = (x0, y0, 0.0)
        doc.header["$EXTMAX"] = (x1, top, 0.0)
        doc.set_modelspace_vport(height=(top - y0) * 1.1, center=((x0 + x1) / 2, (y0 + top) / 2))
        # The CLASSES section can come out in set order, which follows the hash
        # seed: add the required classes now and put them in a fixed order.
        doc.classes.add_required_classes(doc.dxfversion)
        doc.classes.classes = OrderedDict(sorted(doc.classes.classes.items()))
        stream = io.StringIO()
        doc.write(stream)
        owner = doc.modelspace().block_record_handle
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = saved
    return bulk, stream.getvalue().encode(doc.output_encoding), owner


def _hex(values: np.ndarray) -> rows.Field:
    """Upper-case hexadecimal digits of non-negative integers (DXF handles), no leading zeros."""
    v = values.astype(np.int64)
    width = max(1, int(v.max()).bit_length() + 3 >> 2) if v.size else 1
    shifts = 4 * np.arange(width - 1, -1, -1, dtype=np.int64)
    digits = (v[:, None] >> shifts[None, :]) & 15
    text = np.where(digits < 10, 48 + digits, 55 + digits).astype(np.uint8)
    lead = np.cumsum(digits != 0, axis=1) == 0
    lead[:, -1] = False  # keep one digit
    return np.where(lead, 0, text).astype(np.uint8)


def _stake_heights(d: Design) -> np.ndarray:
    """Each stake's height in the drawing: its design elevation, or where it has none (a
    reference stake) the ground's, else 0.
    """
    sp = d.stakes
    z = np.zeros(len(sp)) if sp.elevation is None else sp.elevation
    none = np.isnan(z)
    if none.any():
        ground = d.earthwork.ground_elevation if d.earthwork is not None else np.zeros(len(sp))
        z = np.nan_to_num(np.where(none, ground, z))
    return z


#: A tag's value in a run of bulk entities: text on every row, a float per row (written as
#: ezdxf writes a float: Python's shortest repr), a text per row (ASCII: safe ids), or the field of
#: a block of rows (a text per row made a block at a time, never all at once).
Value = str | np.ndarray | Sequence[str] | Callable[[slice], rows.Field]


@dataclass(frozen=True)
class Entity:
    """One entity of each row of a bulk run: its type, layer, subclass and tags after the subclass."""

    dxftype: str
    layer: str
    subclass: str
    tags: list[tuple[int, Value]]


#: How a reserved run is written: (first handle, model space's handle, numbers exact?) -> its bytes,
#: a block of :data:`BLOCK_ENTITIES` entities (or vertices) a piece.
Render = Callable[[int, str, bool], Iterator[bytes]]


class Bulk:
    """Runs of entities reserved in a drawing and written after it with numpy, byte for byte as
    ezdxf writes them (checked by a test against entities ezdxf drew).

    :meth:`reserve` puts a placeholder POINT where the run goes and skips the handles of the run,
    so every entity ezdxf draws afterwards has the handle it would have had (and the header its
    handle seed); :meth:`pieces` puts each run in place of its placeholder, rendered a block at a
    time as the file is written.  Up to :data:`EXACT_MAX_ENTITIES` entities (and
    polyline vertices) in all their numbers are written as ezdxf writes them, above it to
    :data:`BULK_DECIMALS` decimals.  A run is one row per item (a stake, a control point) of one
    or more entities each, or one polyline, rendered in blocks of rows from whole columns.
    """

    def __init__(self) -> None:
        self.runs: list[tuple[int, Render]] = []
        self.size = 0

    def _reserve(self, msp: Any, count: int, size: int, render: Render) -> None:
        first = int(msp.add_point((0.0, 0.0), dxfattribs={"layer": "SO-STAKE"}).dxf.handle, 16)
        msp.doc.entitydb.handles.reset("%X" % (first + count))
        self.runs.append((first, render))
        self.size += size

    def reserve(self, msp: Any, count: int, entities: Callable[[], tuple[int, list[Entity]]]) -> None:
        """Reserve ``count`` handles here for the entities ``entities()`` gives (rows, entities a row)."""
        def render(first: int, owner: str, exact: bool) -> Iterator[bytes]:
            n, ents = entities()
            assert n * len(ents) == count
            return _entity_rows(first, owner, n, ents, exact)

        if count:
            self._reserve(msp, count, count, render)

    def reserve_polyline(self, msp: Any, layer: str, x: np.ndarray, y: np.ndarray) -> None:
        """Reserve an open LWPOLYLINE through (x, y) here, as ``msp.add_lwpolyline`` draws it."""
        def render(first: int, owner: str, exact: bool) -> Iterator[bytes]:
            yield (f"  0\nLWPOLYLINE\n  5\n{first:X}\n330\n{owner}\n100\nAcDbEntity\n  8\n{layer}\n"
                   f"100\nAcDbPolyline\n 90\n{x.size}\n 70\n0\n").encode("ascii")
            ex, ey = _exact(x, exact), _exact(y, exact)
            for i in range(0, x.size, BLOCK_ENTITIES):
                sl = slice(i, min(x.size, i + BLOCK_ENTITIES))
                k = sl.stop - i
                yield rows.join_rows([rows.const(" 10\n", k), _floats(x[sl], ex), rows.const("\n 20\n", k),
                                      _floats(y[sl], ey)], k)

        self._reserve(msp, 1, x.size, render)

    def pieces(self, data: bytes, owner: str) -> Iterator[bytes]:
        """The drawing ``data`` piece by piece, each placeholder replaced by its run rendered a block
        at a time (``owner``: the model space's handle).
        """
        at = 0
        exact = self.size <= EXACT_MAX_ENTITIES
        for first, render in self.runs:
            # "  0" on a line of its own before "POINT" can only be a group code: an entity starts here
            start = data.index(b"\n  0\nPOINT\n  5\n%X\n" % first, max(at - 1, 0)) + 1
            yield data[at:start]
            yield from render(first, owner, exact)
            at = data.index(b"\n  0\n", start) + 1
        yield data[at:]


def _exact(values: np.ndarray, exact: bool) -> bool:
    """Whether a column of floats is written as ezdxf writes them: ``exact``, or some value too
    large for the digit tables (decided for the whole column, so no block decides on its own).
    """
    return exact or bool(values.size and np.abs(values).max() >= 1e12)


def _floats(values: np.ndarray, exact: bool) -> rows.Field:
    """Floats one a row: as ezdxf writes them (``str(float)``, the shortest text that reads back
    exactly) when ``exact``, else with :data:`BULK_DECIMALS` decimals (from the digit tables).
    """
    if exact:
        return rows.text(list(map(repr, values.tolist())))
    return rows.fixed(values, BULK_DECIMALS)


def _entity_rows(first: int, owner: str, n: int, ents: list[Entity], exact: bool) -> Iterator[bytes]:
    """``n`` rows of the entities ``ents`` each, with handles from ``first`` in row order, the
    numbers written in full (``exact``) or to :data:`BULK_DECIMALS` decimals; a block of rows
    (:data:`BLOCK_ENTITIES` entities) a piece.
    """
    m = len(ents)
    step = max(1, BLOCK_ENTITIES // m)
    full = {id(v): _exact(v, exact) for ent in ents for _, v in ent.tags if isinstance(v, np.ndarray)}
    for i in range(0, n, step):  # blocks bound the temporaries and the piece; each is vectorised
        k = min(n, i + step) - i
        sl = slice(i, i + k)
        fields: list[rows.Field] = []
        head = ""
        for j, ent in enumerate(ents):
            fields += [rows.const(f"{head}  0\n{ent.dxftype}\n  5\n", k),
                       _hex(first + j + m * np.arange(i, i + k, dtype=np.int64))]
            text = f"\n330\n{owner}\n100\nAcDbEntity\n  8\n{ent.layer}\n100\n{ent.subclass}"
            for code, value in ent.tags:
                text += f"\n{code:3d}\n"
                if isinstance(value, str):
                    text += value
                    continue
                fields.append(rows.const(text, k))
                if isinstance(value, np.ndarray):
                    fields.append(_floats(value[sl], full[id(value)]))
                else:
                    fields.append(value(sl) if callable(value) else rows.text(value[sl]))
                text = ""
            fields.append(rows.const(text, k))
            head = "\n"
        yield rows.join_rows(fields, k)


def _text_tags(x: np.ndarray, y: np.ndarray, height: float, texts: Value) -> list[tuple[int, Value]]:
    """The tags ezdxf writes for ``_text`` at (x, y), left-aligned and unrotated, after its subclass."""
    return [(10, x), (20, y), (30, "0.0"), (40, repr(height)), (1, texts), (7, TEXT_STYLE), (11, x), (21, y),
            (31, "0.0"), (100, "AcDbText")]


def _tick_entities(ends: tuple[np.ndarray, ...], s: slice) -> tuple[int, list[Entity]]:
    """The short station ticks ``s`` (a LINE each) from their ends (x, y at each end)."""
    xa, ya, xb, yb = (v[s] for v in ends)
    return xa.size, [Entity("LINE", "SO-STATION", "AcDbLine", [(10, xa), (20, ya), (30, "0.0"), (11, xb), (21, yb),
                                                               (31, "0.0")])]


def _stake_entities(d: Design, h: float) -> tuple[int, list[Entity]]:
    """Each stake's POINT (at its height) and its number beside it."""
    sp = d.stakes
    e, n = sp.easting, sp.northing
    return len(sp), [Entity("POINT", "SO-STAKE", "AcDbPoint", [(10, e), (20, n), (30, _stake_heights(d))]),
                     Entity("TEXT", "SO-STAKE-NO", "AcDbText",
                            _text_tags(e + 0.4 * h, n + 0.4 * h, 0.6 * h, functools.partial(_stake_ids, sp)))]


def _stake_ids(sp: StakePoints, s: slice) -> rows.Field:
    """The ids of stakes ``s`` (prefix + number; the ids the job gave as written), made a block at
    a time: the list of every id (:attr:`StakePoints.point`) would hold a million strings.
    """
    if s.stop > sp.numbered:
        return rows.text([sp.point_id(i) for i in range(s.start, s.stop)])
    return np.hstack([rows.const(sp.prefix, s.stop - s.start),
                      rows.integer(np.arange(sp.first_point + s.start, sp.first_point + s.stop, dtype=np.int64))])


def plan_png(dxf_bytes: bytes) -> bytes:
    """Render a PNG preview of the plan with ezdxf's drawing add-on and matplotlib."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from ezdxf.addons.drawing import Frontend, RenderContext
    from ezdxf.addons.drawing.config import BackgroundPolicy, Configuration
    from ezdxf.addons.drawing.matplotlib import MatplotlibBackend

    doc = ezdxf.read(io.StringIO(dxf_bytes.decode("utf-8")))
    fig = plt.figure(figsize=(11, 8.5), dpi=200)
    ax = fig.add_axes((0, 0, 1, 1))
    cfg = Configuration(background_policy=BackgroundPolicy.WHITE)
    Frontend(RenderContext(doc), MatplotlibBackend(ax), config=cfg).draw_layout(doc.modelspace(), finalize=True)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=200, metadata={"Software": None})
    plt.close(fig)
    return buf.getvalue()
