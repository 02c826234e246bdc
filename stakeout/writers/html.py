"""Printable HTML reports: ``report.html`` of a build and ``check.html`` of a check.

Each is one self-contained file (no script, no network, no other file):
the styles are inline, the pictures are inline SVG.  Print CSS sets page
margins that suit A4 and US Letter alike, repeats table headers on every
printed page (``thead { display: table-header-group }``), keeps every
table row whole (``tr { break-inside: avoid }``) and puts the pictures on
landscape pages of their own.  Nothing time-dependent is written, so the
same design gives the same bytes.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from html import escape
from pathlib import Path
from types import SimpleNamespace
from typing import TYPE_CHECKING, Any, cast

import numpy as np

from ..angles import format_azimuth_dms, format_dms
from ..design import Design
from ..presentation import DEFLECTION_HEADERS, SETOUT_HEADERS
from .csvtext import DECIMALS, GRADE_DECIMALS
from .checkwords import (NOT_STAKED_LISTED, cut_fill, design_point_id, listed_shots, shot_label, status_text,
                         target_id, what_to_do)
from .sections import slope_texts, superelevation_table
from .text import (CAUTION_LINES, curve_texts, deflection_origin, deflection_title, end_radii, fixed, fixed_or_empty,
                   offset_side, setout_cells, side_text, turn_word, vertical_note)

if TYPE_CHECKING:  # pragma: no cover
    from ..check import CheckResult
    from ..shots import Shots

__all__ = ["report_html", "check_html", "REPORT_MAX_ROWS", "REPORT_MAX_SECTIONS", "SectionPictures", "STYLE"]

#: A report lists in full up to this many rows of each long table: the stakes (setout or stake
#: table), the deflections and the volumes.  A larger job's report lists the first this many (in the
#: job's order) and, in the setout, every stake that needs attention besides (at the instrument, r95
#: over the tolerance); it counts the rows left out and names the files that hold every row
#: (setout.csv, setout.txt, points.csv, deflections.txt, volumes.csv).  The report of such a job
#: stays a few MiB (about 2 MiB at 50,000 stakes) whatever the job's size, unless many stakes need
#: attention.
REPORT_MAX_ROWS = 2_000

#: A report draws the cross-sections inline up to this many sections (a few pages, three panels a
#: printed page); a longer job's report links to sections.svg instead, when the build writes it.
REPORT_MAX_SECTIONS = 40

#: The style sheet of both reports (screen and print).
STYLE = """
@page { margin: 13mm 12mm 15mm 12mm;
  @bottom-right { content: "page " counter(page) " of " counter(pages); font: 8pt sans-serif; color: #444; } }
@page picture { size: landscape; margin: 8mm; }
:root { color-scheme: light; }
html { font: 10pt/1.35 'DejaVu Sans', 'Liberation Sans', Arial, Helvetica, sans-serif; color: #111; }
body { margin: 0 auto; max-width: 1100px; padding: 12px; }
h1 { font-size: 16pt; margin: 0 0 2px; }
h2 { font-size: 12.5pt; margin: 16px 0 6px; border-bottom: 1.5px solid #333; break-after: avoid; }
h3 { font-size: 10.5pt; margin: 10px 0 4px; break-after: avoid; }
p { margin: 4px 0; }
.sub { font-size: 11pt; margin: 0 0 8px; }
table { border-collapse: collapse; width: 100%; margin: 4px 0 10px; }
thead { display: table-header-group; }
tfoot { display: table-footer-group; }
tr, .keep { break-inside: avoid; page-break-inside: avoid; }
th, td { border: 0.6pt solid #999; padding: 1.5px 4px; vertical-align: top; }
th { background: #eee; text-align: left; font-weight: bold; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.t { white-space: nowrap; }
td.w { white-space: normal; min-width: 14em; }
table.data { font: 8.3pt/1.25 'DejaVu Sans Mono', 'Liberation Mono', Consolas, monospace; }
table.data th { font-family: 'DejaVu Sans', 'Liberation Sans', Arial, sans-serif; font-size: 8pt; }
table.facts { width: auto; min-width: 60%; }
table.facts th { width: 11em; background: #f4f4f4; font-weight: normal; color: #333; }
table.facts td { font-family: 'DejaVu Sans Mono', 'Liberation Mono', Consolas, monospace; font-size: 9pt;
  overflow-wrap: anywhere; }
.caution { border: 1.2pt solid #b2182b; padding: 6px 8px; margin: 8px 0; background: #fff6f6;
  break-inside: avoid; }
.caution p { margin: 2px 0; }
.warn { color: #8a1c00; }
.picture { page: picture; break-before: page; break-after: page; }
.picture svg { display: block; width: 100%; height: auto; max-height: 172mm; }
section.setup + section.setup { break-before: page; }
.signoff { break-inside: avoid; margin-top: 14px; }
.signoff table td { height: 11mm; border: none; border-bottom: 0.8pt solid #000; }
.signoff table th { border: none; background: none; width: 9em; vertical-align: bottom; }
.verdict { font-size: 15pt; font-weight: bold; padding: 8px 12px; margin: 6px 0 10px; border: 2pt solid; }
.verdict.ok { color: #0b5d1e; border-color: #1a9850; background: #effaf1; }
.verdict.bad { color: #8e0f12; border-color: #d73027; background: #fdf0ef; }
.status-out { color: #b2182b; font-weight: bold; }
.status-duplicate, .status-unmatched { color: #7b3294; font-weight: bold; }
.ids { font: 8.3pt/1.5 'DejaVu Sans Mono', 'Liberation Mono', Consolas, monospace; overflow-wrap: anywhere; }
@media print { body { max-width: none; padding: 0; } h2 { margin-top: 10px; } }
"""


# ---- small pieces ----------------------------------------------------------------------------
def _dms(angle: float, decimals: int) -> str:
    """One angle as D-M-S text."""
    return str(format_dms(angle, decimals))


def _e(text: object) -> str:
    return escape(str(text), quote=True)


def _facts(rows: Sequence[tuple[str, str]]) -> str:
    return ('<table class="facts">' + "".join(f"<tr><th>{_e(k)}</th><td>{_e(v)}</td></tr>" for k, v in rows)
            + "</table>")


Cell = str | tuple[str, str]  # text, or (text, an extra class)


def _td(cell: Cell, kind: str) -> str:
    if isinstance(cell, tuple):
        return f'<td class="{kind} {_e(cell[1])}">{_e(cell[0])}</td>'
    return f'<td class="{kind}">{_e(cell)}</td>'


def _table(columns: Sequence[tuple[str, str]], rows: Sequence[Sequence[Cell]], cls: str = "data",
           caption: str = "") -> str:
    """A table: ``columns`` as (heading, kind) with kind ``n`` (number, right), ``t`` (text)
    or ``w`` (text that may wrap); cells are plain text (escaped here), or (text, class).
    """
    kinds = [k for _, k in columns]
    head = "".join(f'<th class="{k}">{_e(h)}</th>' for h, k in columns)
    body = "".join("<tr>" + "".join(_td(c, k) for c, k in zip(r, kinds)) + "</tr>" for r in rows)
    cap = f"<caption>{_e(caption)}</caption>" if caption else ""
    return f'<table class="{cls}">{cap}<thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>'


def _cautions(warnings: Sequence[str] = ()) -> str:
    text = " ".join(line.strip() for line in CAUTION_LINES)
    warn = "".join(f'<p class="warn">warning: {_e(w)}</p>' for w in warnings)
    return f'<div class="caution"><p>{_e(text)}</p>{warn}</div>'


def _signoff() -> str:
    rows = "".join(f"<tr><th>{k}</th><td></td><th>date</th><td></td></tr>" for k in ("prepared by", "checked by"))
    return f'<div class="signoff"><h2>Sign-off</h2><table>{rows}</table></div>'


def _css_string(text: str) -> str:
    """``text`` as a CSS string literal, safe inside a ``<style>`` element."""
    out = []
    for ch in text:
        if ch.isalnum() or ch in " .,:;-_+()[]/#=%'":
            out.append(ch)
        else:
            out.append(f"\\{ord(ch):x} ")
    return '"' + "".join(out) + '"'


def _document(title: str, foot: str, body: str) -> bytes:
    foot_rule = ("@page { @bottom-left { content: " + _css_string(foot)
                 + "; font: 8pt sans-serif; color: #444; } }")
    page = (
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f"<title>{_e(title)}</title>\n<style>{STYLE}{foot_rule}\n</style>\n"
        f"</head>\n<body>\n{body}\n</body>\n</html>\n"
    )
    return page.encode("utf-8")


def _job_facts(d: Design) -> list[tuple[str, str]]:
    job, a, stn = d.job, d.alignment, d.stationing
    rows = [("job file", Path(job.path).name), ("sha256", job.sha256)]
    for f in job.design_files:
        rows.append((f"{f.role} from", f"{Path(f.path).name}  sha256 {f.sha256}"))
    rows += [
        ("alignment", f"{a.name}: {stn.label(a.start_station)} to {stn.label(a.end_station)}, "
                      f"length {a.length:.4f}"),
        ("units", d.unit.label),
        ("CRS", d.crs_label or "none: local grid"),
        ("stakes", f"{len(d.stakes):,}: every {d.job.staking.interval:g} on "
                   + ", ".join(f"{c} {abs(o):.2f}{' LT' if o < 0 else ' RT' if o > 0 else ''}"
                               for c, o in zip(d.stakes.codes, d.stakes.offsets.tolist()))),
    ]
    for eq in stn.equations:
        rows.append(("station equation", f"{stn.format_value(eq.back)} BK = {stn.format_value(eq.ahead)} AH"))
    return rows


# ---- report.html ------------------------------------------------------------------------------
def _curve_section(d: Design) -> str:
    cts = curve_texts(d)
    if not cts:
        return "<h2>Curve data</h2><p>The alignment has no curves.</p>"
    out = ["<h2>Curve data</h2>"]
    for ct in cts:
        c, t = ct.curve, ct.curve.tangents
        facts = [("turn, total angle I", f"{ct.turn}, {ct.delta}"), ("kind", ct.kind)]
        if c.pi_station is None or t is None:
            facts.append(("PI", "none: I of 180 deg or more"))
        else:
            facts.append(("PI", f"{ct.pi_label}   N {c.pi_northing:.4f}   E {c.pi_easting:.4f}"))
            side_b = f" = {ct.back_side[0]} ({ct.back_side[1]} {ct.back_side[2]:.4f} side)" if ct.back_side else ""
            side_a = f" = {ct.ahead_side[0]} ({ct.ahead_side[1]} {ct.ahead_side[2]:.4f} side)" if ct.ahead_side else ""
            facts.append(("tangent PI to start", f"{t.back:.4f}{side_b}"))
            facts.append(("tangent PI to end", f"{t.ahead:.4f}{side_a}"))
        if ct.external is not None:
            facts.append(("external", f"{ct.external:.4f}"))
        rows = []
        for k, (arc, a0, a1) in enumerate(ct.arcs, start=1):
            p = arc.props
            assert p is not None
            tan = f"{p.tangent:.4f}" if p.tangent is not None else ""
            ext = f"{p.external:.4f}" if p.external is not None else ""
            rows.append([f"arc {k}", a0, a1, f"{p.radius:.4f}", _dms(p.delta, 1), f"{p.length:.4f}", tan,
                         f"{p.chord:.4f}", ext, f"{p.middle_ordinate:.4f}"])
        for k, (sp, a0, a1) in enumerate(ct.spirals, start=1):
            r0, r1 = end_radii(sp)
            rows.append([f"spiral {k}", a0, a1, f"{r0} to {r1}", _dms(sp.central_angle, 1), f"{sp.length:.4f}",
                         "", "", "", ""])
        cols = [("element", "t"), ("from", "n"), ("to", "n"), ("radius", "n"), ("delta", "n"), ("length", "n"),
                ("tangent", "n"), ("chord", "n"), ("external", "n"), ("mid-ordinate", "n")]
        out.append(f'<div class="keep"><h3>Curve {c.number}</h3>{_facts(facts)}</div>{_table(cols, rows)}')
    return "".join(out)


def _setup_groups(d: Design) -> list[tuple[str, list[tuple[str, str]], np.ndarray]]:
    """Per setup: a heading, its facts and the stake indices set out from it."""
    sd = d.setup
    assert sd is not None
    out = []
    idx = np.asarray(sd.setup_index)
    for k, o in enumerate(sd.occupations):
        title = f"Setup {o.number}: setout from" if len(sd.occupations) > 1 else "Setout from"
        out.append((f"{title} {o.occupied.id}",
                    _setup_facts(d, o),
                    np.flatnonzero(idx == k)))
    return out


def _setup_facts(d: Design, o: Any) -> list[tuple[str, str]]:
    """The facts of one setup (an :class:`~stakeout.design.Occupation`): occupied point,
    backsight, combined factor, convergence, heights.
    """
    sd = d.setup
    assert sd is not None
    setup = sd.setup
    occ, bs, bs_az, scale = o.occupied, o.backsight, float(o.backsight_azimuth), o.scale
    occ_text = f"{occ.id}   N {occ.northing:.4f}   E {occ.easting:.4f}"
    if occ.elevation is not None:
        occ_text += f"   elev {occ.elevation:.3f}"
    rows = [("occupied", occ_text)]
    if setup.instrument_height is not None:
        rows.append(("instrument height", f"{setup.instrument_height:.3f}"))
    if bs is not None:
        dist = o.backsight_distance
        rows.append(("backsight", f"{bs.id}   N {bs.northing:.4f}   E {bs.easting:.4f}"))
        rows.append(("backsight grid azimuth", f"{format_azimuth_dms(bs_az, 1)}   grid distance {dist:.4f}   "
                                               f"ground {dist / scale.combined_factor:.4f}"))
    else:
        rows.append(("backsight grid azimuth", f"{format_azimuth_dms(bs_az, 1)} (given)"))
    how = f"{scale.combined_factor:.8f}"
    if scale.scale_factor is not None and scale.elevation_factor is not None:
        how += f" = k {scale.scale_factor:.8f} x elevation factor {scale.elevation_factor:.8f}"
    else:
        how += f"   {scale.how}"
    rows.append(("combined factor", how))
    if scale.convergence is not None:
        rows.append(("convergence", _dms(scale.convergence, 1)))
    if setup.target_height is not None:
        rows.append(("target height", f"{setup.target_height:.3f}"))
    note = vertical_note(d)
    if note:
        what, how = note.split(": ", 1)
        rows.append((what, how))
    rows.append(("reading", "angle right clockwise from the backsight; ground = grid / combined factor"))
    return rows


def _setout_section(d: Design) -> str:
    sd = d.setup
    assert sd is not None
    n = len(d.stakes)
    listed = None  # every stake
    if n > REPORT_MAX_ROWS:  # the first stakes and every one needing attention
        listed = np.arange(n) < REPORT_MAX_ROWS
        listed |= sd.setout.at_instrument
        if sd.flagged is not None:
            listed |= sd.flagged
    picked = None if listed is None else np.flatnonzero(listed)
    view = d if picked is None else _cut(d, picked)  # only the listed stakes formatted
    cells = setout_cells(view, sided=True)  # offsets with their side, as setout.txt prints them
    text_keys = {"point", "code", "feature", "note"}
    cols = [(SETOUT_HEADERS[c.key][1], "t" if c.key in text_keys else "n") for c, _ in cells]
    columns = [texts for _, texts in cells]
    cs = slope_texts(view)  # jobs with cross-sections: the slope applied to each stake, after its design elevation
    if cs is not None:
        keys = [c.key for c, _ in cells]
        at = keys.index("design_elevation" if "design_elevation" in keys else "ground_distance") + 1
        cols.insert(at, ("slope %", "n"))
        columns.insert(at, cs)
    out = []
    for heading, facts, idx in _setup_groups(d):
        shown = idx if listed is None else idx[listed[idx]]
        rows_at = shown if picked is None else np.searchsorted(picked, shown)  # rows of the listed stakes' texts
        rows = [[texts[i] for texts in columns] for i in rows_at.tolist()]
        count = f"{len(idx):,} stakes"
        if len(shown) < len(idx):
            count += (f", {len(shown):,} listed here and {len(idx) - len(shown):,} left out (a report of more than "
                      f"{REPORT_MAX_ROWS:,} stakes lists the job's first {REPORT_MAX_ROWS:,} and every one at the "
                      "instrument or with r95 over the tolerance; every stake is in setout.csv, setout.txt and "
                      "points.csv)")
        out.append(f'<section class="setup"><h2>{_e(heading)}</h2>{_facts(facts)}'
                   f"<p>{count}; angles to 1 second, distances in {_e(d.unit.plural)}.</p>"
                   f"{_table(cols, rows)}</section>")
    return "".join(out)


def _cut(d: Design, picked: np.ndarray) -> Design:
    """The design as the setout table's formatters (``setout_cells``, ``slope_texts``) read it, cut
    to the stakes ``picked``: a report of a large job formats only the stakes it lists.  Whatever
    else of the design they read is the design's own; a per-stake part not cut here fails loudly
    (an attribute error) rather than misaligning rows.
    """
    sd = d.setup
    assert sd is not None

    def take(values: Any) -> Any:
        if isinstance(values, np.ndarray):
            return values[picked]
        return [values[i] for i in picked.tolist()]

    slope = d.stakes.slope
    view = _Cut(d,
                setup=SimpleNamespace(setout=SimpleNamespace(at_instrument=sd.setout.at_instrument[picked])),
                presentation=SimpleNamespace(setout_columns=[replace(c, values=take(c.values))
                                                             for c in d.presentation.setout_columns]),
                stakes=SimpleNamespace(slope=None if slope is None else slope[picked]))
    return cast(Design, view)


class _Cut(SimpleNamespace):
    """A design with some parts replaced (:func:`_cut`); every other attribute is the design's."""

    def __init__(self, d: Design, **parts: Any) -> None:
        super().__init__(**parts)
        self._design = d

    def __getattr__(self, name: str) -> Any:  # only for names not set here
        return getattr(self._design, name)


def _stakes_section(d: Design) -> str:
    """Without a setup: every stake with its coordinates."""
    sp = d.stakes
    n = len(sp)
    shown = min(n, REPORT_MAX_ROWS)  # nothing needs attention without a setup: the first stakes
    offs = side_text(sp.offset[:shown], d.unit.station_decimals)  # with their side, as setout.txt
    north, east = fixed(sp.northing[:shown], 4), fixed(sp.easting[:shown], 4)
    elev = fixed(sp.elevation[:shown], 3) if sp.elevation is not None else None
    cols = [("point", "t"), ("station", "n"), ("offset", "n"), ("code", "t"), ("feature", "t"), ("northing", "n"),
            ("easting", "n")]
    if elev is not None:
        cols.append(("design el", "n"))
    cs = slope_texts(d)  # jobs with cross-sections: the slope applied to each stake
    if cs is not None:
        cols.append(("slope %", "n"))
    rows = []
    for i in range(shown):
        r = [sp.point[i], sp.station_label[i], offs[i], sp.code[i], sp.feature[i], north[i], east[i]]
        if elev is not None:
            r.append(elev[i])
        if cs is not None:
            r.append(cs[i])
        rows.append(r)
    count = f"{n:,}"
    if shown < n:
        count += (f"; the first {shown:,} listed here and {n - shown:,} left out (a report lists up to "
                  f"{REPORT_MAX_ROWS:,}; every stake is in points.csv and stations.csv)")
    return (f"<h2>Stakes</h2><p>The job has no [setup]: the stakes with their grid coordinates "
            f"({count}).</p>{_table(cols, rows)}")


def _deflection_section(d: Design) -> str:
    lab = d.stationing.label
    tables = d.presentation.deflections
    if not tables:
        return "<h2>Deflections</h2><p>The alignment has no curves.</p>"
    total = sum(t.row_count for t in tables)
    exit_from = ("the ST of an exit spiral, sighting back along the ahead tangent"
                 if d.job.staking.exit_spiral_from == "ST" else "the CS of an exit spiral")
    out = ["<h2>Deflections</h2><p>Occupy the start of each arc (PC, PCC or PRC; the TS, or "
           f"{exit_from}), sight along its tangent (zero on the PI or the back tangent), turn the deflection toward "
           "the curve and tape the chord. Reading: the horizontal circle reading for a left deflection "
           "(360 - d) with zero on the tangent.</p>"]
    cols = [(h[1], "n") for h in DEFLECTION_HEADERS]

    def rows_of(data_rows: np.ndarray, turn: int) -> list[list[Cell]]:
        out_rows: list[list[Cell]] = []
        for st, along, defl, chord, inc in data_rows.tolist():
            reading = _dms(360.0 - defl, 0) if turn < 0 and defl != 0.0 else ""
            out_rows.append([lab(st), f"{along:.4f}", _dms(defl, 0), f"{chord:.4f}", f"{inc:.4f}", reading])
        return out_rows

    if total > REPORT_MAX_ROWS:
        out.append(f"<p>{total:,} rows: a report lists up to {REPORT_MAX_ROWS:,}; every table is in full in "
                   "deflections.txt.</p>")
    budget = REPORT_MAX_ROWS  # rows still to list
    for k, t in enumerate(tables):
        if budget <= 0:  # the rest counted, not listed
            rest = tables[k:]
            out.append(f"<p>Left out here: {sum(r.row_count for r in rest):,} rows of {len(rest):,} more curve "
                       "elements (in deflections.txt).</p>")
            break
        start = deflection_origin(t, lab).strip()
        titled = [(deflection_title(t, 'Curve', start), t.rows)]
        titled += [(f"Offset line {off.code} {offset_side(off.offset)}: from its point opposite {start}", off.rows)
                   for off in t.offsets]
        for title, data in titled:
            take = min(len(data), max(budget, 0))
            budget -= len(data)
            if take == 0:
                out.append(f"<h3>{_e(title)}</h3><p>{len(data):,} rows left out (in deflections.txt).</p>")
                continue
            left = (f"<p>The first {take:,} of {len(data):,} rows; the rest are in deflections.txt.</p>"
                    if take < len(data) else "")
            out.append(f"<h3>{_e(title)}</h3>{_table(cols, rows_of(data[:take], t.deflect_turn))}{left}")
    return "".join(out)


def _profile_section(d: Design, profile_svg: str | None) -> str:
    """The profile: one row per PVI with profile.csv's values (stations as labels, grades in
    percent, curve lengths, K, high or low point), and the profile picture (empty without a profile).
    """
    rows_of = d.presentation.profile_rows
    if d.profile is None or not rows_of:
        return ""
    lab = d.stationing.label
    dec = DECIMALS

    def grade(g: float | None) -> str:
        return "" if g is None else fixed_or_empty(100.0 * g, GRADE_DECIMALS)

    rows = []
    for i, r in enumerate(rows_of, start=1):
        whole = (r.curve_length_back or 0.0) + (r.curve_length_ahead or 0.0)
        high_low = f"{r.high_low_kind} {lab(r.high_low_station)}" if r.high_low_kind else ""
        rows.append([str(i), lab(r.station), fixed_or_empty(r.elevation, dec), grade(r.grade_in), grade(r.grade_out),
                     fixed_or_empty(whole or None, dec), fixed_or_empty(r.curve_length_back, dec),
                     fixed_or_empty(r.curve_length_ahead, dec),
                     lab(r.pvc_station) if r.pvc_station is not None else "", fixed_or_empty(r.pvc_elevation, dec),
                     lab(r.pvt_station) if r.pvt_station is not None else "", fixed_or_empty(r.pvt_elevation, dec),
                     fixed_or_empty(r.k_value, dec), fixed_or_empty(r.radius, dec), high_low,
                     fixed_or_empty(r.high_low_elevation, dec)])
    cols = [("PVI", "t"), ("station", "n"), ("elevation", "n"), ("grade in %", "n"), ("grade out %", "n"),
            ("curve L", "n"), ("L back", "n"), ("L ahead", "n"), ("PVC", "n"), ("PVC el", "n"), ("PVT", "n"),
            ("PVT el", "n"), ("K", "n"), ("radius", "n"), ("high/low", "t"), ("high/low el", "n")]
    name = f" ({d.profile.name})" if d.profile.name else ""
    out = [f"<h2>Profile{_e(name)}</h2><p>One row per PVI (the values of profile.csv): grades in percent, "
           f"curve lengths and K = L / |grade out - grade in| (in {_e(d.unit.plural)} per percent).</p>",
           _table(cols, rows)]
    if profile_svg is not None:
        svg = profile_svg.split("?>", 1)[1].lstrip() if profile_svg.startswith("<?xml") else profile_svg
        out.append(f'<section class="picture"><h2>Profile picture</h2>{svg}</section>')
    return "".join(out)


def _spiral_section(d: Design) -> str:
    """The spiral data (spirals.csv's values), empty without spirals."""
    spirals = d.presentation.spirals
    if not spirals:
        return ""
    lab, dec = d.stationing.label, DECIMALS
    rows = []
    for sv in spirals:
        el, f = sv.element, sv.figures
        rows.append([str(sv.number), str(sv.index + 1), lab(el.start), d.stationing.format_value(
            float(d.stationing.station_back(el.end))), fixed_or_empty(el.length, dec),
                     fixed_or_empty(el.radius_start, dec), fixed_or_empty(el.radius_end, dec), f"{f.theta_deg:.8f}",
                     fixed_or_empty(f.x, dec), fixed_or_empty(f.y, dec), fixed_or_empty(f.p, dec),
                     fixed_or_empty(f.k, dec), fixed_or_empty(f.long_tangent, dec),
                     fixed_or_empty(f.short_tangent, dec), turn_word(el.turn)])
    cols = [("spiral", "t"), ("element", "t"), ("start", "n"), ("end", "n"), ("length", "n"), ("radius start", "n"),
            ("radius end", "n"), ("theta deg", "n"), ("X", "n"), ("Y", "n"), ("p", "n"), ("k", "n"), ("LT", "n"),
            ("ST", "n"), ("turn", "t")]
    return ("<h2>Spirals</h2><p>The values of spirals.csv: theta the spiral angle, X and Y the end from its "
            "start along and square to its start tangent, p the shift, k the offset of the shifted PC along the "
            "tangent, LT and ST the long and short tangents; radii empty where infinite.</p>"
            + _table(cols, rows))


def _superelevation_section(d: Design) -> str:
    """The superelevation table, when the job has one (empty otherwise)."""
    rows = superelevation_table(d)
    if not rows:
        return ""
    return ("<h2>Superelevation</h2><p>Cross slopes in percent, outward from the centreline (negative falls away "
            "from it), linear by distance between rows; every row's station is staked (SE).</p>"
            + _table([("station", "n"), ("left", "n"), ("right", "n")], rows))


@dataclass(frozen=True)
class SectionPictures:
    """What the report can show of the cross-sections (handed in: a renderer never imports another).

    ``draw(limit)`` gives the legend and the first ``limit`` section panels, each an
    ``<svg>`` element; ``file`` says whether this build writes ``sections.svg``, and
    ``file_drawn`` how many sections that file draws.
    """

    draw: Callable[[int], tuple[str, list[str]]]
    file: bool
    file_drawn: int


def _earthwork_section(d: Design, sections: SectionPictures | None = None) -> str:
    """With ``[slope_stakes]``: the station sides without a catch point, the volume table
    (areas at each station with both catch points, average-end-area volumes, running totals)
    and the cross-sections: drawn inline up to :data:`REPORT_MAX_SECTIONS`, else a link to
    ``sections.svg`` (or, when the build does not write it, words saying so).
    """
    ew = d.earthwork
    if ew is None or ew.slopes is None:
        return ""
    count, total, why = d.presentation.catch_gaps
    missing = (f"{count} of {total} station sides have no catch point ({why}); slopestakes.csv and "
               "slopestakes.txt say which." if count else f"Every one of {total} station sides has a catch point.")
    head = f"<h2>Earthwork</h2><p>{_e(missing)}</p>"
    st = ew.volume_stations
    if ew.sections is None or ew.volumes is None:
        return head + "<p>No volumes: they need slope stakes on both sides ([slope_stakes] left and right).</p>"
    if st.size == 0:
        return head + "<p>No station has both catch points: no volumes.</p>"
    u = d.unit.label
    labels = d.stakes.labels
    v = ew.volumes
    shown = min(int(st.size), REPORT_MAX_ROWS)
    cols = [fixed(x[:shown], 2) for x in (ew.sections.cut_area[st], ew.sections.fill_area[st], v.cut, v.fill,
                                          v.cumulative_cut, v.cumulative_fill)]
    rows = [[labels[i], *(c[k] for c in cols)] for k, i in enumerate(st[:shown].tolist())]
    left = (f" The first {shown:,} of {st.size:,} stations are listed; every one is in volumes.csv."
            if shown < st.size else "")
    return (head + "<p>Areas (square job units) between the ground and the template from catch to catch; "
            f"volumes (cubic job units) by average end areas from the station above; units {_e(u)}.{left}</p>"
            + _table([("station", "t"), ("cut area", "n"), ("fill area", "n"), ("cut", "n"), ("fill", "n"),
                      ("total cut", "n"), ("total fill", "n")], rows)
            + _cross_sections(int(st.size), sections))


_XSEC_STYLE = "display: block; width: 100%; height: auto; margin: 4px 0; break-inside: avoid;"


def _cross_sections(n: int, sections: SectionPictures | None) -> str:
    """The report's cross-sections part for ``n`` sections (see :func:`_earthwork_section`)."""
    link = '<a href="sections.svg">sections.svg</a>'
    if sections is not None and n <= REPORT_MAX_SECTIONS:
        legend, panels = sections.draw(REPORT_MAX_SECTIONS)
        # styled inline, not in STYLE: the reports of jobs without sections keep their bytes
        legend = legend.replace("<svg ", f'<svg class="legend" style="{_XSEC_STYLE} max-width: 640px;" ', 1)
        panels = [p.replace("<svg ", f'<svg style="{_XSEC_STYLE} max-width: 640px;" ', 1) for p in panels]
        also = f" They are also in {link}." if sections.file else ""
        return ("<h3>Cross-sections</h3><p>Each station with both catch points, the ground between them: cut and fill "
                f"areas shaded, hinges, catch and reference stakes.{also}</p>"
                f'<div class="xsec">{legend}{"".join(panels)}</div>')
    if sections is not None and sections.file:
        first = ("every one" if sections.file_drawn >= n
                 else f"the first {sections.file_drawn}; volumes.csv and slopestakes.csv hold every one")
        return (f"<h3>Cross-sections</h3><p>{n} cross-sections, more than the {REPORT_MAX_SECTIONS} this report draws: "
                f"{link}, beside this report, draws {first}.</p>")
    return (f"<h3>Cross-sections</h3><p>{n} cross-sections are not drawn: this build does not write sections.svg "
            "(a build without --only, or with --only sections-picture, writes it); volumes.csv and slopestakes.csv "
            "hold every section's numbers.</p>")


def report_html(d: Design, plan_svg: str, profile_svg: str | None = None,
                sections: SectionPictures | None = None) -> bytes:
    """Render ``report.html``: header and cautions, curve data, the plan, the setout
    (or, without a setup, the stakes), the deflections and a sign-off block.

    Parameters
    ----------
    d : Design
        The computed job.
    plan_svg : str
        The plan picture as an ``<svg>`` element (``plan.svg`` without its XML declaration).
    profile_svg : str, optional
        The profile picture (``profile.svg``), for a job with a profile.
    sections : SectionPictures, optional
        The cross-sections, for a job with sections (``[slope_stakes]`` on both sides).
    """
    job = d.job
    svg = plan_svg.split("?>", 1)[1].lstrip() if plan_svg.startswith("<?xml") else plan_svg
    parts = [
        f"<header><h1>Staking report</h1><p class=\"sub\">{_e(job.info.name)}</p>{_facts(_job_facts(d))}"
        f"{_cautions(d.warnings)}</header>",
        _curve_section(d),
        _spiral_section(d),
        f'<section class="picture"><h2>Plan</h2>{svg}</section>',
        _profile_section(d, profile_svg),
        _setout_section(d) if d.setup is not None else _stakes_section(d),
        _earthwork_section(d, sections),
        _deflection_section(d),
        _signoff(),
        _cautions(),
    ]
    se = _superelevation_section(d)
    if se:
        parts.insert(2, se)
    parts = [p for p in parts if p]
    foot = f"{job.info.name}: staking report, job file sha256 {job.sha256[:16]}"
    return _document(f"Staking report: {job.info.name}", foot, "\n".join(parts))


# ---- check.html -------------------------------------------------------------------------------
def _f(v: float, decimals: int = 3) -> str:
    return f"{round(v, decimals) + 0.0:.{decimals}f}" if math.isfinite(v) else ""


def check_html(d: Design, staked_path: str, shots: "Shots", r: "CheckResult", residuals: tuple[str, float]) -> bytes:
    """Render ``check.html``: the verdict first, the shots needing attention with what to
    do, the picture of the residuals, the shots within tolerance, the superseded shots,
    the design points to set again, a sign-off block (the same reading as ``check.txt``).

    Parameters
    ----------
    d : Design
        The computed job.
    staked_path : str
        The staked file as given (its name is printed).
    shots, r : Shots, CheckResult
        The shots read and the check's result, in file order.
    residuals : (str, float)
        The residual picture as an ``<svg>`` element and its exaggeration
        (:func:`stakeout.writers.picture.residual_svg_element`).
    """
    job, unit = d.job, d.unit
    name = Path(staked_path).name
    n = len(shots)
    counts = r.counts()
    count_text = ", ".join(f"{s} {c}" for s, c in counts.items())
    attention, fine, superseded, left_out = listed_shots(r)
    n_attention = int(r.attention.sum())
    n_fine = int(r.within.sum())
    verdict = ('<div class="verdict ok">ALL WITHIN TOLERANCE</div>' if r.all_ok else
               f'<div class="verdict bad">NEEDS ATTENTION: {n_attention} of {n} shots '
               "(see the first table)</div>") + (f"<p>{_e(left_out)}</p>" if left_out else "")
    hz = r.horizontal_error[r.governing & np.isfinite(r.horizontal_error)]
    dz = r.d_elevation[r.governing & np.isfinite(r.d_elevation)]
    facts = [("job", job.info.name), ("job file", f"{Path(job.path).name}  sha256 {job.sha256}"),
             ("staked file", f"{name}  ({shots.encoding})"), ("units", unit.label),
             ("tolerances", f"horizontal {r.horizontal_tolerance:.4f}   vertical "
                            + (f"{r.vertical_tolerance:.4f}" if r.vertical_tolerance is not None
                               else "not set (not checked)")),
             ("search radius", f"{r.search_radius:.4f} (for renumbered shots)"),
             ("control points", ", ".join(r.control_ids) if r.control_ids else "none in the job"),
             ("shots", f"{n}: {count_text}"),
             ("worst horizontal error", f"{hz.max():.4f}" if hz.size else "-"),
             ("worst vertical error", f"{np.abs(dz).max():.4f}" if dz.size else "- (no elevations to compare)"),
             ("to set again (restake.csv)", f"{r.restake.size}: out of tolerance "
                                            f"{r.restake.size - r.not_staked.size}, not staked {r.not_staked.size}")]
    with_grade = d.design_elevation is not None
    listed = attention + fine + superseded  # marks of the shots listed only
    marks = dict(zip(listed, cut_fill(r.d_elevation[listed], 2 if unit.is_feet else 3)))
    cols = [("shot", "t"), ("design", "t"), ("station", "n"), ("offset", "n"), ("horiz", "n"), ("d along", "n"),
            ("d across", "n"), ("d elev", "n")] + ([("mark", "t")] if with_grade else []) + [("status", "t")]
    def row(k: int, note: bool) -> list[Cell]:
        out: list[Cell] = [shots.point[k], target_id(d, r, k), shot_label(d, r, k), _f(r.offset[k]),
                           _f(r.horizontal_error[k]), _f(r.d_along[k]), _f(r.d_across[k]), _f(r.d_elevation[k])]
        if with_grade:
            out.append(marks[k])
        out.append((status_text(r, k), f"status-{r.status[k]}"))
        if note:
            out.append(what_to_do(d, shots, r, k))
        return out

    def table(ks: list[int], note: str = "") -> str:
        return _table(cols + ([(note, "w")] if note else []), [row(k, bool(note)) for k in ks])

    svg, factor = residuals
    missing = [design_point_id(d, i) for i in r.not_staked[:NOT_STAKED_LISTED].tolist()]
    if r.not_staked.size > NOT_STAKED_LISTED:
        missing.append(f"... and {r.not_staked.size - NOT_STAKED_LISTED} more (all of them are in restake.csv)")
    parts = [
        f"<header><h1>Staked-point check</h1><p class=\"sub\">{_e(job.info.name)}</p>{verdict}{_facts(facts)}"
        "</header>",
        f"<h2>Needs attention: {n_attention}</h2>"
        + (table(attention, "what to do") if attention else "<p>None: every shot is within tolerance.</p>"),
        f'<section class="picture"><h2>Residuals, drawn {factor:g} times their length</h2>{svg}</section>',
        f"<h2>Within tolerance: {n_fine}</h2>" + (table(fine) if fine else
                                                  "<p>Not listed: see check.csv.</p>" if n_fine else "<p>None.</p>"),
        (f"<h2>Superseded: {len(superseded)}</h2><p>Shot again later in the file: the later shot governs.</p>"
         + table(superseded, "governed by")) if superseded else "",
        f"<h2>Design points not staked: {r.not_staked.size}</h2>"
        + (f'<p class="ids">{_e(" ".join(missing))}</p>' if missing else "<p>None.</p>"),
        "<p>d = staked - design; d along / d across: the residual along and square to the alignment at the "
        "design point (grid; the moves are ground distances); "
        + ("mark: the cut or fill to write on the stake, C where the shot is above design, F below; "
           if with_grade else "")
        + "status out (horizontal / vertical / both): which tolerance the shot fails; moves are looking "
        "up-station, from where the stake is to design; northing and easting residuals are in check.csv; the "
        "points to set again are in restake.csv.</p>",
        _signoff(),
        _cautions(),
    ]
    foot = f"{job.info.name}: staked-point check of {name}"
    return _document(f"Staked-point check: {job.info.name}", foot, "\n".join(parts))
