"""The side printed with an offset (points.csv descriptions): that of the offset as printed."""

from __future__ import annotations


def test_offset_rounding_to_zero_printed_with_a_side(tmp_path):
    """Regression (review): an offset line at -0.0001 printed `0.000 LT` in points.csv; an offset
    that rounds to zero is on the line and has no side, as setout.txt already printed it."""
    from .helpers import SAMPLES, build_job, read_rows, write_job

    text = (SAMPLES / "site_road_metric.toml").read_text(encoding="utf-8")
    text = text.replace('{ offset = -3.5, code = "EPL" }', '{ offset = -0.0001, code = "NEAR" }')
    assert "NEAR" in text
    out = build_job(write_job(tmp_path, text), tmp_path / "out", "--only", "points")
    descs = [r["description"] for r in read_rows(out / "points.csv")]
    near = [d for d in descs if d.startswith("NEAR")]
    assert near and all(d.endswith(" 0.000") for d in near), near[:3]
    assert all(d.endswith(" 3.500 RT") for d in descs if d.startswith("EPR"))
