"""Round trip of the staked design through LandXML: job -> alignment.xml -> job -> the same stakes.

Sources: the LandXML 1.2 schema (``tests/data/LandXML-1.2.xsd``,
landxml.org) through lxml's ``XMLSchema`` validates every export; lxml as an
independent reader of the CgPoints; the project's own reader for the round trip.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st


from .helpers import SAMPLES, build_job, landxml_schema, read_rows, write_job

NS = "{http://www.landxml.org/schema/LandXML-1.2}"




def _swap_geometry(text: str, xml: Path, job_dir: Path, has_profile: bool) -> str:
    """The sample's job text with its alignment (and profile) taken from ``xml``."""
    out, skip = [], False
    for line in text.splitlines():
        header = re.match(r"^\s*\[\[?([A-Za-z_.]+)\]\]?", line)
        if header:
            skip = header.group(1).split(".")[0] in ("alignment", "profile")
        if not skip:
            out.append(re.sub(r'^(file|landxml) = "(?!/)([^"]+)"', lambda m: f'{m.group(1)} = "{job_dir / m.group(2)}"',
                              line))
    out.append(f'[alignment]\nlandxml = "{xml}"')
    if has_profile:
        out.append(f'[profile]\nlandxml = "{xml}"')
    return "\n".join(out) + "\n"


@pytest.mark.parametrize("sample", sorted(p.name for p in SAMPLES.glob("*.toml")))
def test_every_sample_exports_valid_landxml_and_reads_back(tmp_path, sample):
    schema = landxml_schema()
    from lxml import etree

    job = SAMPLES / sample
    out = build_job(job, tmp_path / "a")
    doc = etree.parse(str(out / "alignment.xml"))
    assert schema.validate(doc), schema.error_log.last_error
    # the CgPoints, read by lxml, are the stakes of points.csv
    pts = {p.get("name"): [float(v) for v in p.text.split()] for p in doc.iter(f"{NS}CgPoint")}
    for r in read_rows(out / "points.csv"):
        ne = pts[r["point"]]
        assert ne[0] == pytest.approx(float(r["northing"]), abs=5e-5)
        assert ne[1] == pytest.approx(float(r["easting"]), abs=5e-5)
    text = job.read_text(encoding="utf-8")
    if "[[alignment]]" in text:  # several alignments: each one's read-back is in test_several_alignments.py
        assert {a.get("name") for a in doc.iter(f"{NS}Alignment")} == {r["alignment"] for r in
                                                                       read_rows(out / "stations.csv")}
        return
    again = write_job(tmp_path, _swap_geometry(text, out / "alignment.xml", job.parent, "[profile]" in text),
                      "again.toml")
    back = build_job(again, tmp_path / "b")
    first = read_rows(out / "stations.csv")
    second = read_rows(back / "stations.csv")
    assert [r["station_label"] for r in first] == [r["station_label"] for r in second]
    assert [r["feature"] for r in first] == [r["feature"] for r in second]
    for a, b in zip(first, second):
        assert math.hypot(float(a["northing"]) - float(b["northing"]),
                          float(a["easting"]) - float(b["easting"])) <= 1e-4
        assert a["elevation"] == b["elevation"]


@pytest.mark.slow
@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(st.tuples(st.floats(150.0, 600.0), st.floats(-1.0, 1.0).filter(lambda v: abs(v) > 0.5),
                          st.sampled_from([None, 0.0, 30.0, 60.0])), min_size=1, max_size=3),
       st.sampled_from(["m", "ft", "us_ft"]))
def test_random_alignments_round_trip(tmp_path_factory, curves, units):
    # property: a random PI list with (spiralled) curves and angle points (None: a PI with no curve) comes
    # back through its own export with the same stakes
    tmp = tmp_path_factory.mktemp("rt")
    n = e = 0.0
    az = 0.0
    pis = [f"[[alignment.pi]]\nnorthing = {n}\neasting = {e}"]
    for r, turn, ls in curves:
        n += 1500.0 * math.cos(math.radians(az))
        e += 1500.0 * math.sin(math.radians(az))
        spir = f"\nspirals = [{ls}, {ls}]" if ls else ""
        curve = "" if ls is None else f"\nradius = {r}{spir}"
        pis.append(f"[[alignment.pi]]\nnorthing = {n:.4f}\neasting = {e:.4f}{curve}")
        az += 60.0 * turn
    n += 1500.0 * math.cos(math.radians(az))
    e += 1500.0 * math.sin(math.radians(az))
    pis.append(f"[[alignment.pi]]\nnorthing = {n:.4f}\neasting = {e:.4f}")
    head = f'format = 1\n[job]\nname = "Round trip"\nunits = "{units}"\n'
    staking = '[staking]\ninterval = 50.0\noffsets = [{ offset = -6.0, code = "L" }, { offset = 0.0, code = "CL" }]\n'
    job = write_job(tmp, head + '[alignment]\nname = "RT"\nstart_station = 1000\n' + "\n".join(pis) + "\n" + staking)
    out = build_job(job, tmp / "a")
    again = write_job(tmp, head + f'[alignment]\nlandxml = "{out / "alignment.xml"}"\n' + staking, "again.toml")
    back = build_job(again, tmp / "b")
    first = read_rows(out / "stations.csv")
    second = read_rows(back / "stations.csv")
    assert len(first) == len(second)
    d = np.array([math.hypot(float(a["northing"]) - float(b["northing"]), float(a["easting"]) - float(b["easting"]))
                  for a, b in zip(first, second)])
    assert d.max() <= 1e-4
    assert [r["feature"] for r in first] == [r["feature"] for r in second]


def _stations_by_label(path: Path) -> dict[tuple[str, str], tuple[float, float]]:
    return {(r["station_label"], r["offset"]): (float(r["northing"]), float(r["easting"])) for r in read_rows(path)}


def _export_and_read_back(tmp_path: Path, alignment: str) -> tuple[Path, Path]:
    schema = landxml_schema()
    from lxml import etree

    head = 'format = 1\n[job]\nname = "Turns"\nunits = "m"\n'
    staking = '[staking]\ninterval = 20.0\noffsets = [{ offset = -3.0, code = "L" }, { offset = 0.0, code = "CL" }]\n'
    job = write_job(tmp_path, head + alignment + staking)
    out = build_job(job, tmp_path / "a")
    doc = etree.parse(str(out / "alignment.xml"))
    assert schema.validate(doc), schema.error_log.last_error
    again = write_job(tmp_path, head + f'[alignment]\nlandxml = "{out / "alignment.xml"}"\n' + staking, "again.toml")
    back = build_job(again, tmp_path / "b")
    first, second = _stations_by_label(out / "stations.csv"), _stations_by_label(back / "stations.csv")
    assert first.keys() == second.keys()
    for key, (n, e) in first.items():
        assert math.hypot(n - second[key][0], e - second[key][1]) <= 1e-4, key
    return out, back


def _form_a(name: str, *elements: str) -> str:
    """A form A alignment from (0, 1000, 2000) due north: a 100 line, then ``elements`` (TOML bodies)."""
    head = (f'[alignment]\nname = "{name}"\nstart = {{ station = 0.0, northing = 1000.0, easting = 2000.0 }}\n'
            'azimuth = 0.0\n')
    return head + "".join(f"[[alignment.element]]\n{e}\n" for e in ('kind = "line"\nlength = 100.0', *elements))


def test_arc_of_359_9999_degrees_is_exported_and_read_back(tmp_path):
    # a valid design the export used to refuse ("Curve C2: Start and End coincide"): the arc is written as
    # pieces of one circle (the schema's <Curve> cannot say more than a half turn by its points alone)
    alignment = _form_a("LOOP", 'kind = "arc"\nradius = 60.0\ndelta = 359.9999\nturn = "right"',
                        'kind = "line"\nlength = 100.0')
    out, back = _export_and_read_back(tmp_path, alignment)
    assert "Curve C2.1" not in (back / "elements.csv").read_text()  # the pieces are one arc again
    assert len(read_rows(back / "elements.csv")) == 3


def test_spiral_turning_215_degrees_is_exported_and_read_back(tmp_path):
    # theta = L / 2R = 450.3 / 120 rad = 215 degrees: no PI of its end tangents can describe it in one <Spiral>
    alignment = _form_a("SPIN", 'kind = "spiral"\nlength = 450.3\nradius_end = 60.0\nturn = "left"',
                        'kind = "arc"\nradius = 60.0\nlength = 30.0\nturn = "left"')
    out, back = _export_and_read_back(tmp_path, alignment)
    assert len(read_rows(back / "elements.csv")) == 3


def test_angle_point_of_a_pi_list_reads_back_from_its_own_export(tmp_path):
    # the reader used to refuse the kink its own writer wrote; the export now marks the Line that starts at
    # an angle point (<Feature code="AP">), and an unmarked kink is still refused (test_landxml: broken_kink)
    job = SAMPLES / "pi_list_local_ft.toml"
    out = build_job(job, tmp_path / "a")
    assert 'code="AP"' in (out / "alignment.xml").read_text(encoding="utf-8")
    text = job.read_text(encoding="utf-8")
    again = write_job(tmp_path, _swap_geometry(text, out / "alignment.xml", job.parent, "[profile]" in text),
                      "again.toml")
    back = build_job(again, tmp_path / "b")
    assert [r["feature"] for r in read_rows(out / "stations.csv")] == [
        r["feature"] for r in read_rows(back / "stations.csv")]
