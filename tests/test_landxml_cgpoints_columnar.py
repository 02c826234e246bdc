"""alignment.xml's CgPoints laid out by numpy give the bytes of the per-point writer they replaced.

Outside reference: Python's own ``"%.6f"`` formatting (the exact binary value, half to even) and
``str.translate`` escaping, in the per-point writer kept below as it was; lxml.etree parses the
result back to the same names, codes and numbers.
"""

from __future__ import annotations

import re

import numpy as np
import pytest
from lxml import etree

from stakeout.errors import JobFileError
from stakeout.landxml.records import XPoint, XPoints
from stakeout.landxml.writer import _cgpoints_text
from stakeout.numbers import fixed_strings

_BAD = re.compile("[^\t\n\r\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")
_ESC = str.maketrans({"&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "\n": "&#10;", "\r": "&#13;",
                      "\t": "&#9;"})


def _reference(points: XPoints) -> bytes:
    """The per-point writer of alignment.xml before the columnar one (one f-string a point)."""
    n = len(points.names)

    def attrs(name: str, values: list[str] | None) -> list[str]:
        if values is None:
            return [""] * n
        assert not _BAD.search("".join(values))
        return [f' {name}="{v.translate(_ESC)}"' if v else "" for v in values]

    elev = np.full(n, np.nan) if points.elevation is None else np.asarray(points.elevation, dtype=float)
    z_text = [f" {z}" if z != "nan" else "" for z in fixed_strings(elev, 6)]
    rows = [f'    <CgPoint name="{name.translate(_ESC)}"{code}{desc}>{n_} {e_}{z}</CgPoint>\n'
            for name, code, desc, n_, e_, z in zip(points.names, attrs("code", points.codes),
                                                   attrs("desc", points.descs), fixed_strings(points.northing, 6),
                                                   fixed_strings(points.easting, 6), z_text, strict=True)]
    return ("  <CgPoints>\n" + "".join(rows) + "  </CgPoints>\n").encode("utf-8")


_WORDS = ["CL", "EP", "", "a&b", "<x>", 'say "hi"', "tab\there", "line\nbreak", "é", "中心", "R\r2", "🛣"]


def _random_points(seed: int, n: int, scale: float, elevation: str, descs: bool) -> XPoints:
    rng = np.random.default_rng(seed)
    names = [f"{rng.choice(_WORDS)}{i}" for i in range(n)]
    north = np.clip(rng.normal(0.0, scale, n), -9.9e11, 9.9e11)
    east = np.clip(rng.normal(0.0, scale, n), -9.9e11, 9.9e11)
    # values on and near a half unit of the sixth decimal, tiny negatives (never "-0.000000")
    special = np.array([0.0, -0.0, -4e-7, -5e-7, 5e-7, 1.5e-6, 2.5e-6, -2.5e-6, 0.0000005000001, 123.4567895])
    north[: special.size] = special[: min(n, special.size)]
    z: np.ndarray | None = rng.normal(100.0, 50.0, n)
    if elevation == "some nan":
        z[rng.random(n) < 0.3] = np.nan
    elif elevation == "all nan":
        z = np.full(n, np.nan)
    elif elevation == "none":
        z = None
    codes = [str(rng.choice(_WORDS)) for _ in range(n)]
    return XPoints(names, north, east, z, codes, [str(rng.choice(_WORDS)) for _ in range(n)] if descs else None)


@pytest.mark.parametrize("seed, n, scale, elevation, descs", [
    (1, 1, 10.0, "some nan", True), (2, 37, 1e6, "some nan", False), (3, 5000, 1e5, "none", True),
    (4, 20000, 3e4, "all nan", False), (5, 300, 5e10, "some nan", True), (6, 300, 4e11, "some nan", True),
    (7, 40000, 1e3, "given", True)])
def test_cgpoints_columnar_same_bytes(seed, n, scale, elevation, descs):
    pts = _random_points(seed, n, scale, elevation, descs)
    got = b"".join(_cgpoints_text(pts))
    assert got == _reference(pts)
    root = etree.fromstring(b'<CgPoints xmlns="x">' + got.split(b"\n", 1)[1].rsplit(b"  </CgPoints>", 1)[0]
                            + b"</CgPoints>")
    assert [e.get("name") for e in root] == list(pts.names)
    assert [e.get("code") or "" for e in root] == list(pts.codes or [])


def test_cgpoints_of_xpoint_records_same_bytes():
    pts = _random_points(8, 200, 1e4, "some nan", True)
    recs = [XPoint(name, float(n), float(e), None if np.isnan(z) else float(z), c, ds)
            for name, n, e, z, c, ds in zip(pts.names, pts.northing, pts.easting, pts.elevation, pts.codes,
                                            pts.descs)]
    assert b"".join(_cgpoints_text(recs)) == _reference(pts)


def test_cgpoints_bad_character_still_refused():
    pts = _random_points(9, 50, 10.0, "some nan", False)
    bad = XPoints([*pts.names[:-1], "bell\x07"], pts.northing, pts.easting, pts.elevation, pts.codes)
    with pytest.raises(JobFileError, match="point name"):
        _cgpoints_text(bad)
