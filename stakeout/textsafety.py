"""Checks of the text a job file or a staked file carries into the outputs.

Two kinds of text reach the outputs:

* **ids** -- point ids, codes, prefixes, occupied and backsight ids, the
  alignment name: 1 to 20 of ASCII letters, digits and ``_ # . / -``, not
  starting with ``-``.  They are written into CSV rows, sheet columns and
  DXF layers and texts, so nothing else is allowed.  The whole text must
  match (:func:`re.fullmatch`): a pattern anchored with ``^...$`` and
  :meth:`re.Pattern.match` lets a trailing newline through, because ``$``
  also matches just before a final ``\\n``; a ``"CL\\n"`` code would then
  split rows of ``points.csv``.
* **free text** -- ``job.name`` and any other label written as given: any
  printable text, but no control or format character (Unicode categories
  ``Cc`` and ``Cf``: NUL, tab, CR, LF, form feed, ESC, DEL, the C1 range,
  zero-width and bidirectional marks, the byte-order mark), no line or
  paragraph separator (``Zl``, ``Zp``) and no noncharacter (U+FFFE, U+FFFF,
  U+FDD0..U+FDEF and their kin in every plane).  Such characters split lines,
  break the pagination of the sheets (form feed), drive the terminal (ESC)
  or reorder what a reader sees (bidirectional overrides).

Every error is a one-line :class:`~stakeout.errors.JobFileError` naming the
key, the value (as a Python literal, so an invisible character shows) and
what is allowed.
"""

from __future__ import annotations

import re
import unicodedata

from .errors import JobFileError, StakeoutError

__all__ = [
    "SAFE_ID",
    "SAFE_ID_HELP",
    "MAX_FREE_TEXT_CHARS",
    "check_safe_id",
    "check_free_text",
    "find_unsafe_char",
    "describe_char",
    "unsafe_kind",
    "show_value",
    "escape_text",
    "show_name",
    "check_file_name",
]

#: Ids, codes and prefixes: the same characters as ``jobfile.SAFE_TEXT``,
#: but without anchors: use it only with :meth:`re.Pattern.fullmatch`.
SAFE_ID = re.compile(r"[A-Za-z0-9_#./][A-Za-z0-9_#./-]{0,19}")
SAFE_ID_HELP = "1 to 20 of letters, digits, _ # . / - (not starting with -)"

#: Default longest free text (characters).  Long enough for any real job
#: name or description of a job; a longer one is almost surely a paste
#: gone wrong, and the sheets have to lay it out.
MAX_FREE_TEXT_CHARS = 200

_BAD_CATEGORIES = frozenset({"Cc", "Cf", "Zl", "Zp", "Cs"})
_SHOW_CHARS = 60


def show_value(value: object) -> str:
    """A one-line, bounded rendering of ``value`` for an error message.

    Parameters
    ----------
    value : object
        Any value; text is shown as a Python literal (control characters
        escaped) and cut to 60 characters with an ellipsis.

    Returns
    -------
    str
        The literal, never holding a line break.
    """
    if isinstance(value, str) and len(value) > _SHOW_CHARS:
        return repr(value[:_SHOW_CHARS]) + "..."
    try:
        text = repr(value)
    except ValueError:  # a whole number past Python's digit limit for text
        return f"(a whole number of {len(hex(value)) * 1.2:.0f}-odd digits)" if isinstance(value, int) else "(?)"
    if len(text) > _SHOW_CHARS + 10:
        text = text[:_SHOW_CHARS] + "..."
    return text


def describe_char(ch: str) -> str:
    """Name one character for a message, e.g. ``U+000A (LINE FEED)``.

    Parameters
    ----------
    ch : str
        A single character.

    Returns
    -------
    str
        Its code point and Unicode name (or its category when unnamed).
    """
    names = {"\x00": "NUL", "\t": "TAB", "\n": "LINE FEED", "\r": "CARRIAGE RETURN", "\x0c": "FORM FEED",
             "\x1b": "ESC", "\x7f": "DELETE"}
    name = names.get(ch) or unicodedata.name(ch, unicodedata.category(ch))
    return f"U+{ord(ch):04X} ({name})"


def find_unsafe_char(value: str) -> int | None:
    """Index of the first control, format or separator character, or None.

    Parameters
    ----------
    value : str
        The text to scan.

    Returns
    -------
    int or None
        The position of the first character of Unicode category ``Cc``,
        ``Cf``, ``Zl``, ``Zp`` or ``Cs`` (a lone surrogate), or of a
        noncharacter (U+FFFE and its kin), or None when there is none.
    """
    if value.isascii():
        if value.isprintable():  # the common case, without a per-character loop
            return None
    for i, ch in enumerate(value):
        if unicodedata.category(ch) in _BAD_CATEGORIES or _is_noncharacter(ch):
            return i
    return None


def unsafe_kind(ch: str) -> str:
    """What an unsafe character is, for a message: ``a noncharacter`` or ``a control or format character``."""
    return "a noncharacter" if _is_noncharacter(ch) else "a control or format character"


def _is_noncharacter(ch: str) -> bool:
    """A Unicode noncharacter (U+FDD0..U+FDEF, and the last two code points of every plane:
    U+FFFE, U+FFFF, U+1FFFE ...): never meant for interchange, and U+FFFE/U+FFFF may not
    appear in an XML document at all (so not in plan.svg, report.html or alignment.xml).
    """
    cp = ord(ch)
    return 0xFDD0 <= cp <= 0xFDEF or (cp & 0xFFFE) == 0xFFFE


def check_safe_id(value: object, where: str, allow_empty: bool = False) -> str:
    """Validate an id, code or prefix: the whole text must match :data:`SAFE_ID`.

    Parameters
    ----------
    value : object
        The value read from the job file.
    where : str
        The key, e.g. ``staking.offsets[0].code``, named in the error.
    allow_empty : bool
        Accept ``""`` (e.g. an empty ``point_prefix``).

    Returns
    -------
    str
        ``value`` unchanged.

    Raises
    ------
    JobFileError
        When ``value`` is not text or not 1-20 allowed characters; a
        trailing newline is refused like any other character.
    """
    if not isinstance(value, str):
        raise JobFileError(f"{where} = {show_value(value)}: expected text ({SAFE_ID_HELP})")
    if allow_empty and value == "":
        return value
    if SAFE_ID.fullmatch(value) is None:
        raise JobFileError(f"{where} = {show_value(value)}: use {SAFE_ID_HELP}")
    return value


def check_free_text(value: object, where: str, max_len: int = MAX_FREE_TEXT_CHARS) -> str:
    """Validate free text (a job name): printable, one line, bounded length.

    Parameters
    ----------
    value : object
        The value read from the job file.
    where : str
        The key, e.g. ``job.name``, named in the error.
    max_len : int
        Most characters allowed (default :data:`MAX_FREE_TEXT_CHARS`).

    Returns
    -------
    str
        ``value`` unchanged.

    Raises
    ------
    JobFileError
        When ``value`` is not text, is longer than ``max_len`` characters,
        or holds a control, format, line- or paragraph-separator character
        (the first one is named with its position).
    """
    if not isinstance(value, str):
        raise JobFileError(f"{where} = {show_value(value)}: expected text")
    i = find_unsafe_char(value)
    if i is not None:
        raise JobFileError(
            f"{where} = {show_value(value)}: character {i + 1} is {describe_char(value[i])}, "
            f"{unsafe_kind(value[i])}; use printable text on one line"
        )
    if len(value) > max_len:
        raise JobFileError(f"{where} = {show_value(value)}: {len(value)} characters; the limit is {max_len}")
    return value


def escape_text(text: str, keep: str = "") -> str:
    """``text`` with every control, format or separator character (and a lone
    surrogate: a byte of a file name that is not UTF-8) written as a Python
    escape (``\\x1b``, ``\\u202e``, ``\\xff``), so that it can neither drive a
    terminal nor split or reorder a line.

    Parameters
    ----------
    text : str
        Any text.
    keep : str
        Characters left as they are (``"\\n"`` for a text of several lines).

    Returns
    -------
    str
        The text, unchanged when it holds no such character.
    """
    if find_unsafe_char(text) is None:
        return text
    out = []
    for ch in text:
        if ch in keep or unicodedata.category(ch) not in _BAD_CATEGORIES:
            out.append(ch)
        elif 0xDC80 <= ord(ch) <= 0xDCFF:  # a byte that is not UTF-8, kept by the file system's decoding
            out.append(f"\\x{ord(ch) - 0xDC00:02x}")
        else:
            out.append(repr(ch)[1:-1] if len(repr(ch)) > 3 else f"\\u{ord(ch):04x}")
    return "".join(out)


def show_name(name: str, limit: int = 80) -> str:
    """A name from a file or the system (a CRS's, a file's) as free text: escaped
    (:func:`escape_text`) and cut to ``limit`` characters with an ellipsis.
    """
    text = escape_text(name)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def check_file_name(path: str, what: str, error: type[StakeoutError] = JobFileError) -> None:
    """Refuse a file whose name (printed on the sheets) holds a control,
    format or separator character or a byte that is not UTF-8.

    Parameters
    ----------
    path : str
        The file as given on the command line.
    what : str
        How the message names it (``job file``, ``staked file``).
    error : type
        The exception raised.

    Raises
    ------
    StakeoutError
        (``error``) Naming the file (escaped) and the character.
    """
    name = path.replace("\\", "/").rsplit("/", 1)[-1]
    i = find_unsafe_char(name)
    if i is None:
        return
    ch = name[i]
    how = (f"byte 0x{ord(ch) - 0xDC00:02X}, which is not UTF-8" if 0xDC80 <= ord(ch) <= 0xDCFF
           else describe_char(ch))
    raise error(f"{what} '{show_name(path, 200)}': its name holds {how} at character {i + 1}; the name is "
                "printed on the sheets, so rename the file (printable UTF-8 text on one line)")
