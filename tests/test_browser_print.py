"""report.html and check.html printed by a real browser: headless Chromium prints them
to PDF on US Letter and on A4; poppler's pdfinfo and ``pdftotext -layout`` read the
PDF back.

Checked: the page count and page sizes (portrait pages, the pictures on landscape
pages: Letter 612 x 792 pt, A4 595 x 842 pt, ISO 216 and ANSI sizes, common
practice), that every point number is printed, that no table row is cut across
pages (every row's cells on one line of one page) and that the column headers are
repeated on every page a table runs onto.

Without Chromium or poppler the tests skip and say so; under ``CI=true`` a missing
tool is a failure (``.ci/run`` installs both).
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest
from lxml import html as lhtml
from typer.testing import CliRunner

from stakeout.cli import app

from .helpers import SAMPLES, build_job, read_rows

pytestmark = pytest.mark.slow  # a headless browser prints each page: several seconds

BROWSERS = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable")
SIZES = {"letter": ("", (612, 792)), "a4": ("@page { size: A4; } @page picture { size: A4 landscape; }", (595, 842))}


def _tools() -> tuple[str, str, str]:
    browser = next((p for p in map(shutil.which, BROWSERS) if p), None)
    pdftotext, pdfinfo = shutil.which("pdftotext"), shutil.which("pdfinfo")
    missing = [name for name, found in (("Chromium (Debian package chromium)", browser),
                                        ("pdftotext (poppler-utils)", pdftotext),
                                        ("pdfinfo (poppler-utils)", pdfinfo)) if not found]
    if missing:
        why = "not installed: " + ", ".join(missing) + "; apt-get install -y chromium poppler-utils"
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail("CI=true and the browser print test cannot run: " + why)
        pytest.skip("browser print test skipped: " + why)
    assert browser and pdftotext and pdfinfo
    return browser, pdftotext, pdfinfo


def _print(browser: str, page: Path, pdf: Path, profile: Path) -> None:
    cmd = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           f"--user-data-dir={profile}", "--no-pdf-header-footer", f"--print-to-pdf={pdf}", page.as_uri()]
    r = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
    assert r.returncode == 0 and pdf.exists() and pdf.stat().st_size > 0, r.stderr[-2000:]


def _pages(pdftotext: str, pdf: Path) -> list[str]:
    text = subprocess.run([pdftotext, "-layout", str(pdf), "-"], capture_output=True, text=True, check=True).stdout
    pages = text.split("\f")
    return pages[:-1] if pages and not pages[-1].strip() else pages


def _sizes(pdfinfo: str, pdf: Path) -> list[tuple[float, float]]:
    info = subprocess.run([pdfinfo, str(pdf)], capture_output=True, text=True, check=True).stdout
    count = int(re.search(r"^Pages:\s+(\d+)", info, re.M).group(1))
    per = subprocess.run([pdfinfo, "-f", "1", "-l", str(count), str(pdf)], capture_output=True, text=True,
                         check=True).stdout
    sizes = [(float(w), float(h)) for w, h in re.findall(r"^Page\s+\d+ size:\s+([\d.]+) x ([\d.]+)", per, re.M)]
    assert len(sizes) == count
    return sizes


@pytest.fixture(scope="module")
def printed(tmp_path_factory):
    browser, pdftotext, pdfinfo = _tools()
    tmp = tmp_path_factory.mktemp("print")
    out = build_job(SAMPLES / "loop_ramp_usft.toml", tmp / "build")
    chk = tmp / "check"
    r = CliRunner().invoke(app, ["check", str(SAMPLES / "loop_ramp_usft.toml"),
                                 str(SAMPLES / "staked" / "loop_ramp_shots.csv"), "--out", str(chk)])
    assert r.exit_code == 1, r.output
    done = {}
    for name, folder in (("report", out), ("check", chk)):
        source = (folder / f"{name}.html").read_text(encoding="utf-8")
        for size, (css, _) in SIZES.items():
            page = tmp / f"{name}-{size}.html"
            page.write_text(source.replace("</head>", f"<style>{css}</style></head>", 1) if css else source,
                            encoding="utf-8")
            pdf = tmp / f"{name}-{size}.pdf"
            _print(browser, page, pdf, tmp / f"profile-{name}-{size}")
            done[(name, size)] = (page, _pages(pdftotext, pdf), _sizes(pdfinfo, pdf))
    return out, chk, done


def _rows(page: Path) -> list[tuple[list[str], list[str], list[str]]]:
    """(column headers, cells kept on one line, cells that may wrap) of every row of every data table."""
    doc = lhtml.fromstring(page.read_bytes())
    out = []
    for table in doc.xpath("//table[contains(@class, 'data')]"):
        heads = [th.text_content().strip() for th in table.xpath("./thead/tr/th") if "w" not in th.get("class", "")]
        for tr in table.xpath("./tbody/tr"):
            tds = tr.xpath("./td")
            wraps = ["w" in td.get("class", "").split() for td in tds]
            out.append((heads, [td.text_content().strip() for td, w in zip(tds, wraps) if not w],
                        [td.text_content().strip() for td, w in zip(tds, wraps) if w]))
    return out


def _line_pattern(cells: list[str]) -> re.Pattern[str]:
    words = [w for c in cells if c for w in c.split()]
    return re.compile(r"(?<!\S)" + r"\s+".join(map(re.escape, words)) + r"(?!\S)")


@pytest.mark.parametrize("name", ["report", "check"])
@pytest.mark.parametrize("size", list(SIZES))
def test_page_count_and_sizes(printed, name, size):
    _, _, done = printed
    _, pages, sizes = done[(name, size)]
    assert len(pages) == len(sizes) >= (5 if name == "report" else 2)
    portrait = SIZES[size][1]
    landscape = (portrait[1], portrait[0])
    assert all(min(abs(w - p[0]) + abs(h - p[1]) for p in (portrait, landscape)) < 1.5 for w, h in sizes)
    assert sum(1 for w, h in sizes if w > h) == 1  # the picture, on its landscape page
    assert sizes[0][0] < sizes[0][1]


@pytest.mark.parametrize("name", ["report", "check"])
@pytest.mark.parametrize("size", list(SIZES))
def test_no_row_is_cut_across_pages(printed, name, size):
    # every row of every table is printed whole on one line of one page, and each page a
    # table runs onto repeats its column headers
    _, _, done = printed
    page, pages, _ = done[(name, size)]
    rows = _rows(page)
    assert rows
    lines = [(k, line) for k, text in enumerate(pages) for line in text.splitlines()]
    seen_on: dict[tuple[str, ...], set[int]] = {}
    for heads, cells, wrapped in rows:
        pat = _line_pattern(cells)
        where = {k for k, line in lines if pat.search(line)}
        assert where, f"row {cells} is not printed whole on one line of one page"
        # a cell that wraps (a note) is printed on the same page as the rest of its row
        words = [w for c in wrapped for w in c.split()]
        assert any(all(w in pages[k].split() for w in words) for k in where), f"row {cells}: {wrapped} cut"
        seen_on.setdefault(tuple(heads), set()).update(where)
    for heads, where in seen_on.items():
        head_pat = _line_pattern(list(heads))
        for k in where:
            assert any(head_pat.search(line) for line in pages[k].splitlines()), \
                f"page {k + 1}: rows without their column headers {heads}"


@pytest.mark.parametrize("size", list(SIZES))
def test_every_point_number_is_printed(printed, size):
    out, chk, done = printed
    text = "\n".join(done[("report", size)][1])
    words = set(text.split())
    missing = [r["point"] for r in read_rows(out / "points.csv") if r["point"] not in words]
    assert not missing, f"point numbers not printed in report.html: {missing[:10]}"
    text = "\n".join(done[("check", size)][1])
    words = set(text.split())
    shots = [r["point"] for r in read_rows(chk / "check.csv")]
    assert all(p in words for p in shots)
    assert "NEEDS ATTENTION" in done[("check", size)][1][0]  # the verdict on the first page
    assert "Sign-off" in text and "checked by" in text
