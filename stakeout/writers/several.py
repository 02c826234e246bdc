"""Toolkit: one output file from the same output of several alignments (``[[alignment]]``).

Each alignment's file is rendered as it would be alone; these join them in
job order into the one file the job writes (CSV files and text sheets piece
by piece, as each alignment's writer renders them):

* CSV files: the header once, then every alignment's rows (each row names
  its alignment where the file has an ``alignment`` column);
* text sheets: one after the other, each alignment's starting on a new page
  (a form feed, as every page after the first);
* SVG pictures: one sheet per alignment, stacked top to bottom in one SVG;
* the HTML report: the first alignment's document holding every other
  alignment's body after its own.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Iterator, Sequence

__all__ = ["csv_rows", "csv_rows_pieces", "sheets_pieces", "svg_sheets", "html_documents"]


def csv_rows(files: Sequence[bytes]) -> bytes:
    """The header of the first file, then the rows of every file."""
    return b"".join(csv_rows_pieces([f] for f in files))


def csv_rows_pieces(files: Iterable[Iterable[bytes]]) -> Iterator[bytes]:
    """:func:`csv_rows` piece by piece: each file's pieces as they come (each file's writer asked
    only once the one before is done), a later file's header dropped wherever its pieces split it.
    """
    for k, f in enumerate(files):
        yield from (_without_header(iter(f)) if k else f)


def _without_header(chunks: Iterator[bytes]) -> Iterator[bytes]:
    """The pieces of a CSV file after its first line (nothing when it has no line break)."""
    for c in chunks:
        k = c.find(b"\n")
        if k >= 0:
            yield c[k + 1:]
            break
    yield from chunks


def sheets_pieces(files: Iterable[Iterable[bytes]]) -> Iterator[bytes]:
    """Text sheets one after the other, each on a new page (a form feed), piece by piece."""
    for k, f in enumerate(files):
        if k:
            yield b"\f"
        yield from f


_SVG_OPEN = re.compile(rb"<svg\b[^>]*>")
_SIZE = re.compile(rb'\b(width|height)="([0-9.]+)"')


def svg_sheets(files: Sequence[bytes]) -> bytes:
    """SVG pictures stacked top to bottom, each a nested ``<svg>`` at its own height."""
    if len(files) == 1:
        return files[0]
    parts = []
    y = 0.0
    width = 0.0
    for f in files:
        body = f[f.index(b"<svg"):] if b"<svg" in f else f  # no XML declaration inside
        tag = _SVG_OPEN.search(body)
        assert tag is not None, "an SVG picture without its <svg> element"
        size = {k.decode(): float(v) for k, v in _SIZE.findall(tag.group(0))}
        w, h = size.get("width", 0.0), size.get("height", 0.0)
        parts.append(b"<svg" + f' x="0" y="{y:g}"'.encode() + body[4:])
        y += h
        width = max(width, w)
    head = (f'<svg xmlns="http://www.w3.org/2000/svg" width="{width:g}" height="{y:g}" '
            f'viewBox="0 0 {width:g} {y:g}">\n').encode()
    return head + b"\n".join(p.rstrip(b"\n") for p in parts) + b"\n</svg>\n"


def html_documents(files: Sequence[bytes]) -> bytes:
    """The first HTML document with every other one's body after its own."""
    if len(files) == 1:
        return files[0]
    first = files[0]
    end = first.rindex(b"</body>")
    more = []
    for f in files[1:]:
        start = f.index(b">", f.index(b"<body")) + 1
        more.append(b'<div class="so-alignment">' + f[start:f.rindex(b"</body>")] + b"</div>\n")
    return first[:end] + b"".join(more) + first[end:]
