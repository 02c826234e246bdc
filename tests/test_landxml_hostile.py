"""Hostile LandXML: numbers out of range, contradicting vertical curves, other encodings, big files,
text that would forge console lines (issue of the second hardening round).

Sources: the project's documented bounds (stakeout/limits.py, job-file contract: the same bounds for
typed and file values); the LandXML 1.2 schema for what an attribute means; Python's codecs as the
independent reader of Shift_JIS; the geometry of a circular vertical curve (arc length = R times the
change of grade angle, common practice).
"""

from __future__ import annotations

import math
import subprocess
import sys

import pytest

from stakeout import landxml as lx
from stakeout.errors import JobFileError

NS = "http://www.landxml.org/schema/LandXML-1.2"
UNITS = '<Units><Metric linearUnit="meter" angularUnit="decimal degrees"/></Units>'


def doc(body: str, decl: str = '<?xml version="1.0" encoding="UTF-8"?>', app: str = "") -> str:
    return f'{decl}\n<LandXML xmlns="{NS}" version="1.2">{UNITS}{app}{body}</LandXML>\n'


def line_alignment(sta_start: str = "0", extra: str = "", start: str = "1000 2000") -> str:
    return (f'<Alignments><Alignment name="A" staStart="{sta_start}" length="100"><CoordGeom>'
            f'<Line><Start>{start}</Start><End>1100 2000</End></Line></CoordGeom>{extra}</Alignment></Alignments>')


def parse(text: str, encoding: str = "utf-8") -> lx.XDesign:
    return lx.parse_landxml(text.encode(encoding), source="road.xml")


# --- item 1: the bounds of typed numbers apply to numbers from a design file ---------------------------

@pytest.mark.parametrize("body, culprit", [
    (line_alignment("1e16"), "alignment 'A' staStart = 1e+16: out of range"),
    (line_alignment(start="1e300 2000"), "element 1 (Line) Start"),
    (line_alignment(extra='<StaEquation staInternal="50" staAhead="1e12"/>'), "StaEquation 1 staAhead = 1000000000000.0: out of range"),
    (line_alignment(extra='<Profile><ProfAlign name="P"><PVI>0 100</PVI><PVI>50 1e300</PVI></ProfAlign></Profile>'),
     "ProfAlign 'P', PVI 2 elevation = 1e+300: out of range"),
    (line_alignment(extra='<Profile><ProfAlign name="P"><PVI>0 100</PVI><ParaCurve length="1e20">50 101</ParaCurve>'
                          '<PVI>100 100</PVI></ProfAlign></Profile>'), "ParaCurve 2 length = 1e+20: out of range"),
    ('<CgPoints><CgPoint name="C1">1e11 2000 10</CgPoint></CgPoints>', "CgPoint 'C1' = '1e11 2000 10': out of range"),
])
def test_landxml_numbers_out_of_range_are_refused_naming_element_and_attribute(body, culprit):
    # typed stations and coordinates are bounded to 1e9 and heights to 1e5 (stakeout/limits.py); a design
    # file's staStart="1e16" once gave the label -9223372036855+224.192 and a PVI at 1e300 failed in a writer
    with pytest.raises(JobFileError) as info:
        parse(doc(body))
    assert culprit in str(info.value)
    assert "road.xml" in str(info.value)
    assert len(str(info.value)) < 300  # no 300-digit numbers


# --- item 9: a CircCurve's length against its radius and grades -----------------------------------------

def circ_profile(length: str) -> str:
    # grades -2 % and +3 %: arc length R * (atan(0.03) - atan(-0.02)) (common practice: arc = R * angle)
    return line_alignment(extra=f'<Profile><ProfAlign name="FG"><PVI>0 100</PVI><CircCurve length="{length}" '
                                f'radius="1200">50 99</CircCurve><PVI>100 100.5</PVI></ProfAlign></Profile>')


def test_circ_curve_length_contradicting_radius_and_grades_is_refused():
    arc = 1200.0 * (math.atan(0.03) - math.atan(-0.02))
    assert parse(doc(circ_profile(repr(arc)))).profiles[0].pvis[1].length == pytest.approx(arc)
    with pytest.raises(JobFileError, match=r"CircCurve 2 .*length = 500 contradicts radius 1200 and the grades "
                                           r"-2% and \+3%, which give 59\.98"):
        parse(doc(circ_profile("500")))


# --- item 13: encodings --------------------------------------------------------------------------------

def test_shift_jis_landxml_is_read():
    # Python's codecs read Shift_JIS; the parser itself takes no multi-byte encoding (it was exit 3)
    text = doc(line_alignment(), decl='<?xml version="1.0" encoding="Shift_JIS"?>',
               app='<Application name="測量ソフト"/>')
    design = parse(text, "shift_jis")
    assert design.application == "測量ソフト"
    assert design.alignments[0].name == "A"


@pytest.mark.parametrize("decl, message", [
    ('<?xml version="1.0" encoding="x-no-such-thing"?>', "names encoding 'x-no-such-thing', which is unknown"),
    ('<?xml version="1.0" encoding="rot13"?>', "is not a text encoding"),
])
def test_unknown_declared_encoding_is_refused_by_name(decl, message):
    with pytest.raises(JobFileError, match=message):
        parse(doc(line_alignment(), decl=decl))


def test_bytes_not_in_the_declared_encoding_are_refused_with_the_line():
    data = doc(line_alignment(), decl='<?xml version="1.0" encoding="Shift_JIS"?>').encode() + b"\n<!-- \x81\xff -->"
    with pytest.raises(JobFileError, match=r"line 4: bytes that are not 'Shift_JIS'"):
        lx.parse_landxml(data, source="road.xml")


# --- item 14: a big file in bounded memory -------------------------------------------------------------

def test_big_landxml_is_read_in_bounded_memory(tmp_path):
    # 40 MB of surface points a staking job does not use: the stream drops them as it reads, so the
    # reading process stays far below the size of the file's whole tree (about 15 times the file)
    big = tmp_path / "big.xml"
    with open(big, "w", encoding="utf-8") as fh:
        fh.write(doc("").replace("</LandXML>\n", ""))
        fh.write(line_alignment())
        fh.write('<Surfaces><Surface name="EG"><Definition surfType="TIN"><Pnts>\n')
        row = "".join(f'<P id="{i}">{1000 + i * 0.001:.4f} {2000 + i * 0.002:.4f} 100.0000</P>\n' for i in range(1000))
        for _ in range(900):
            fh.write(row)
        fh.write("</Pnts></Definition></Surface></Surfaces></LandXML>\n")
    # the peak of this process image: VmHWM (Linux) belongs to the new image after exec, whereas
    # ru_maxrss is kept across exec and so counts the forking pytest process (a large suite: flaky)
    code = ("import resource, sys; from stakeout.landxml import read_landxml; d = read_landxml(sys.argv[1]); "
            "hwm = [ln.split()[1] for ln in open('/proc/self/status') if ln.startswith('VmHWM:')] "
            "if sys.platform.startswith('linux') else []; "
            "print(hwm[0] if hwm else resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, d.not_used)")
    r = subprocess.run([sys.executable, "-c", code, str(big)], capture_output=True, text=True, check=True)
    peak_kb = int(r.stdout.split()[0])
    assert "Surface 'EG'" in r.stdout
    assert peak_kb * 1024 < 6 * big.stat().st_size + 150 * 2**20, peak_kb


# --- item 3: text from a design file is shown escaped -----------------------------------------------------

def test_design_file_text_cannot_forge_console_lines(tmp_path):
    # a namespace URI and an <Application name> with a line feed, a C1 control (U+009B) and a
    # right-to-left override (U+202E) were printed raw by `build` and `inspect`
    from typer.testing import CliRunner

    from stakeout.cli import app

    forged = "&#10;stakeout: all checks passed"
    body = (f'<Application name="Drafter{forged}&#x9b;31m&#x202e;"/>'
            f'<x:Extra xmlns:x="urn:x{forged}"/>' + line_alignment())
    path = tmp_path / "road.xml"
    path.write_text(doc(body), encoding="utf-8")
    r = CliRunner().invoke(app, ["inspect", str(path)])
    assert r.exit_code == 0, r.output
    lines = r.output.splitlines()
    assert not any(line.startswith("stakeout: all checks passed") for line in lines)
    assert "\x9b" not in r.output and "\u202e" not in r.output
    assert "written by: Drafter\\nstakeout: all checks passed\\x9b31m\\u202e" in r.output
    assert "(urn:x\\nstakeout: all checks passed)" in r.output
    # the not-used notes of a build come from the same escaped text
    design = lx.parse_landxml(path.read_bytes(), source="road.xml")
    assert all("\n" not in item for item in design.not_used)


# --- issue 28 item 12: messages name what the user gave ---------------------------------------------------

def test_landxml_profile_messages_name_the_files_elements_not_profile_pvi(tmp_path):
    # a LandXML profile's curve past its neighbour was reported as `profile.pvi[...]` with a
    # curve_length the file does not have; now the ProfAlign, the element and its attribute
    from stakeout.jobfile.design_file import _check_profile_extents

    prof = parse(doc(line_alignment(extra='<Profile><ProfAlign name="FG"><PVI>0 100</PVI>'
                                          '<UnsymParaCurve lengthIn="10" lengthOut="90">50 99</UnsymParaCurve>'
                                          '<PVI>100 100.5</PVI></ProfAlign></Profile>'))).profiles[0]
    with pytest.raises(JobFileError) as info:
        _check_profile_extents(prof)
    msg = str(info.value)
    assert msg.startswith("profile.landxml <ProfAlign 'FG'> UnsymParaCurve 2 lengthOut = 90: the vertical curve "
                          "ends at 140, past PVI 3 at 100")
    assert "profile.pvi" not in msg and "curve_length" not in msg


def test_equation_at_the_alignments_end_names_sta_internal_not_a_sta_back():
    # an equation at the very end passed the file check and was then refused as `...StaEquation 1.back`,
    # a staBack the file does not have
    from stakeout.errors import GeometryError

    a = lx.pick_alignment(parse(doc(line_alignment(extra='<StaEquation staInternal="100" staAhead="500"/>'))), None)
    with pytest.raises(GeometryError, match=r"StaEquation 1 \(staInternal 100\): not inside the alignment"):
        lx.validate_geometry(a)


def test_huge_numbers_in_messages_are_short():
    # fmt once printed 1e300 with its 301 digits
    assert lx.records.fmt(1e300) == "1e+300"
    assert lx.records.fmt(-2.5e16) == "-2.5e+16"
    assert lx.records.fmt(12.3456789) == "12.345679"


def test_utf32_and_utf16_with_a_byte_order_mark_are_read():
    # the parser reads no UTF-32, and took a UTF-16 file declaring Shift_JIS for a multi-byte error (exit 3)
    for decl, enc in (("UTF-32", "utf-32"), ("Shift_JIS", "utf-16")):
        text = doc(line_alignment(), decl=f'<?xml version="1.0" encoding="{decl}"?>', app='<Application name="測量"/>')
        assert lx.parse_landxml(text.encode(enc), source="road.xml").application == "測量"


def test_ebcdic_landxml_is_refused_by_name():
    text = doc(line_alignment(), decl='<?xml version="1.0" encoding="cp500"?>')
    with pytest.raises(JobFileError, match=r"road.xml: does not begin with '<' .*EBCDIC"):
        lx.parse_landxml(text.encode("cp500"), source="road.xml")
