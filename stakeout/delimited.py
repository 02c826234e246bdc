"""Hardened reading of delimited text files: the staked file and the listed points.

The pieces every reader of a CSV-like input shares (see
:mod:`stakeout.shots` for the rules they enforce): decoding (UTF-8 with or
without a byte-order mark, UTF-16 with one, Windows-1252; UTF-32 and NUL
bytes refused by name), records with their line numbers (CR, LF or CRLF,
quoted line breaks counted as an editor does, a record bounded to
``MAX_RECORD_CHARS``), the delimiter that splits the first record into the
most fields, fields bounded to ``MAX_FIELD_CHARS``, numbers in plain ASCII
and a header naming a column twice.

Every refusal is raised as the reader's own error class, prefixed with how
the reader names the file (:class:`Source`), so each reader keeps its own
messages.
"""

from __future__ import annotations

import csv
import math
import re
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

from .errors import StakeoutError
from .limits import MAX_FIELD_CHARS, MAX_RECORD_CHARS, unicode_bom

__all__ = ["Source", "decode_text", "records", "blank", "detect_delimiter", "check_fields", "number",
           "python_reads", "not_a_number", "check_header_once"]

#: A number as a data collector writes it: ASCII digits, optional sign,
#: point and exponent.  float() alone would also take "١٢٣", "１２３" and "1_840".
_NUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_LINE = re.compile(r"[^\r\n]*(?:\r\n?|\n)|[^\r\n]+")


@dataclass(frozen=True)
class Source:
    """How a reader names its file in messages, and what it raises.

    ``head`` starts every message (``staked file 'shots.csv'``); ``what``
    is what the file is meant to be (``a staked-points file``), said when
    it is plainly not one.
    """

    head: str
    error: type[StakeoutError]
    what: str

    def fail(self, rest: str) -> StakeoutError:
        """The reader's error for the message ``head + rest``."""
        return self.error(self.head + rest)


def number(s: str) -> float | None:
    """A finite number written in plain ASCII, or None."""
    if _NUMBER.fullmatch(s) is None:
        return None
    v = float(s)
    return v if math.isfinite(v) else None


def python_reads(s: str) -> bool:
    """True when Python's ``float`` would read ``s`` as a finite number (other digits, ``_``)."""
    try:
        return math.isfinite(float(s))
    except ValueError:
        return False


def not_a_number(s: str) -> str:
    """Why ``s`` is refused as a number: ``is not a number``, with the rule spelt out when Python would
    have read it (other digits, ``_`` separators).
    """
    why = "is not a number"
    if python_reads(s):
        why += " written with the ASCII digits 0-9 (an optional sign, '.' and exponent; no separators)"
    return why


def decode_text(raw: bytes, src: Source) -> tuple[str, str]:
    """Text and encoding name (``UTF-8``, ``UTF-16`` or ``Windows-1252``) of a delimited file."""
    bom = unicode_bom(raw)
    if bom == "UTF-32":
        raise src.fail(": is UTF-32 text (it starts with a UTF-32 byte-order mark); export it as UTF-8")
    if bom == "UTF-16":
        try:
            text = raw.decode("utf-16")  # the mark gives the byte order
        except UnicodeDecodeError as exc:
            raise src.fail(f": starts with a UTF-16 byte-order mark but is not UTF-16 text "
                           f"(byte {exc.start + 2}); export it as UTF-8") from None
        if "\x00" in text:
            raise src.fail(f": UTF-16 text holding a NUL character; not {src.what}")
        return text, "UTF-16"
    nul = raw.find(b"\x00")
    if nul >= 0:
        raise src.fail(
            f": holds a NUL byte (byte {nul}): UTF-16 text without a byte-order mark, or not a text "
            "file; export it as UTF-8 (or UTF-16 with a byte-order mark)"
        )
    try:
        return raw.decode("utf-8-sig"), "UTF-8"
    except UnicodeDecodeError:
        pass
    try:
        return raw.decode("cp1252"), "Windows-1252"
    except UnicodeDecodeError as exc:
        raise src.fail(f": neither UTF-8 nor Windows-1252 (Latin-1) text (byte {exc.start}); "
                       "export it as UTF-8") from None


class _Lines:
    """Physical lines of ``text`` with their ends (CR, LF or CRLF), counted,
    refusing a record longer than ``MAX_RECORD_CHARS`` as it is fed.
    """

    def __init__(self, text: str, src: Source):
        self._it = _LINE.finditer(text)
        self._src = src
        self.line = 0
        self.record_start = 1
        self._chars = 0

    def new_record(self) -> None:
        self.record_start = self.line + 1
        self._chars = 0

    def __iter__(self) -> "_Lines":
        return self

    def __next__(self) -> str:
        line = next(self._it).group()
        self.line += 1
        self._chars += len(line)
        if self._chars > MAX_RECORD_CHARS:
            raise self._src.fail(
                f" line {self.record_start}: a row of over {MAX_RECORD_CHARS:,} "
                f"characters; not {self._src.what} (or an unclosed quote)"
            )
        return line


def records(text: str, delim: str, src: Source) -> Iterator[tuple[int, list[str]]]:
    """(line number, fields) of every record, blank ones included; ``delim`` ``" "`` splits on runs of spaces."""
    lines = _Lines(text, src)
    if delim == " ":
        for line in lines:
            yield lines.line, line.split()
            lines.new_record()
        return
    reader = csv.reader(lines, delimiter=delim, skipinitialspace=True)
    while True:
        lines.new_record()
        try:
            r = next(reader)
        except StopIteration:
            return
        except csv.Error as exc:
            raise src.fail(f" line {lines.record_start}: cannot be read as delimited text ({exc})") from None
        yield lines.record_start, r


def blank(r: list[str]) -> bool:
    """True for a record of nothing but blanks."""
    return not any(c.strip() for c in r)


def detect_delimiter(text: str, src: Source) -> str:
    """The delimiter (comma, semicolon, tab, else space) splitting the first parsed record into the most fields."""
    best, most = " ", 1
    for d in (",", ";", "\t"):
        try:
            first = next((r for _, r in records(text, d, src) if not blank(r)), [])
        except src.error:  # this delimiter's reading runs away: not it
            continue
        if len(first) > most:
            best, most = d, len(first)
    return best


def check_fields(src: Source, ln: int, r: list[str]) -> None:
    """Refuse a field longer than ``MAX_FIELD_CHARS``."""
    for k, c in enumerate(r):
        if len(c) > MAX_FIELD_CHARS:
            raise src.fail(f" line {ln}: field {k + 1} is {len(c):,} characters long; "
                           f"the limit is {MAX_FIELD_CHARS:,}")


def check_header_once(src: Source, ln: int, names: Sequence[str], row: Sequence[str], known: Sequence[str],
                      advice: str) -> None:
    """Refuse a header naming one of ``known`` twice: the first such (in ``known``'s order), its columns
    and their text as given in ``row``; ``advice`` ends the message.
    """
    for c in known:
        at = [i + 1 for i, n in enumerate(names) if n == c]
        if len(at) > 1:
            raise src.fail(
                f" line {ln}: the header names {c!r} twice (columns "
                f"{', '.join(map(str, at))}: {', '.join(repr(row[i - 1].strip()) for i in at)}); {advice}"
            )
