"""Documented bounds on every number and every input file stakeout reads.

Numbers
-------
Outputs carry coordinates, stations, offsets and distances with 4 decimals
(``outputs.md``).  A float64 has a 53-bit significand, so between
``2**k`` and ``2**(k+1)`` consecutive doubles are ``2**(k-52)`` apart (one
"ulp").  Below ``2**30 = 1,073,741,824`` the spacing is at most
``2**-23 = 1.2e-7``: about 840 times finer than half a unit of the 4th
decimal (``5e-5``), so a value and the few dozen roundings a computation
adds to it still print the right 4th decimal.  At ``1e13`` the spacing is
``2**-9 = 0.002`` (the 3rd decimal is noise); at ``2**53 = 9.0e15`` it is
``1`` (only whole numbers); ``1e16`` cannot even be told from ``1e16 + 1``,
which is how a start station of ``1e16`` once came out as ``2.4192``.

Hence the bounds, in job units (metres or feet):

=========================  ======================  ===========================
quantity                   bound                   why
=========================  ======================  ===========================
coordinate (N, E)          ``|v| <= 1e9``          inside ``2**30``: 4 decimals
                                                   exact; 100 times any grid
                                                   coordinate on Earth (a
                                                   northing in US feet is at
                                                   most ~3.3e7)
station                    ``|v| <= 1e9``          same; labels stay short
station length             whole, ``1 .. 1e6``     100 (feet) and 1000 (metres)
                                                   in practice; 1e6 keeps the
                                                   part after ``+`` to 6 digits
length, radius, offset     ``|v| <= 1e9``          lengths are added to
                                                   stations and coordinates
height, elevation          ``|v| <= 1e5``          100 km in metres, 30 km in
                                                   feet: above any ground or
                                                   instrument height
point number               ``0 .. 10**15 - 1``     15 digits: exact in float64
                                                   (``< 2**53``) and int64, and
                                                   a 20-character id keeps 5
                                                   characters for a prefix
=========================  ======================  ===========================

Files
-----
========================  ============  ============================================
input                     limit         why
========================  ============  ============================================
job file                  16 MiB        hand-written TOML; 16 MiB is over a million
                                        extra stations.  The reader never waits on
                                        a device or a pipe (``build /dev/zero``).
staked file               256 MiB       about four million 60-byte shots, far more
                                        than any project's staking, yet read
                                        within a few GiB of memory
staked-file field         4,096 chars   an id or description is a few dozen
staked-file record        65,536 chars  one row, quoted line breaks included
========================  ============  ============================================

Only regular files are read (a device, a pipe or a socket is refused before
anything is read), so ``/dev/zero`` or a FIFO never hangs the tool.

Job files are UTF-8; a UTF-8 byte-order mark (which editors write) is
accepted and skipped; UTF-16 and UTF-32 are refused by name (TOML is UTF-8).

Every refusal is a one-line error naming the key (or the file) and the
allowed range.
"""

from __future__ import annotations

import codecs
import math
import os
import stat
from pathlib import Path

from .errors import JobFileError, StakeoutError

__all__ = [
    "MAX_COORDINATE",
    "MAX_STATION",
    "MAX_STATION_LENGTH",
    "MAX_LENGTH",
    "MAX_HEIGHT",
    "MAX_POINT_NUMBER",
    "MAX_JOB_FILE_BYTES",
    "MAX_STAKED_FILE_BYTES",
    "MAX_FIELD_CHARS",
    "MAX_RECORD_CHARS",
    "check_coordinate",
    "check_station_value",
    "check_station_length",
    "check_length",
    "check_height",
    "MAX_CROSS_SLOPE",
    "MAX_ROLLOVER",
    "check_first_point",
    "check_point_numbers",
    "read_regular_file",
    "decode_job_text",
    "unicode_bom",
]

#: Largest absolute northing or easting, job units.
MAX_COORDINATE = 1e9
#: Largest absolute station value, job units.
MAX_STATION = 1e9
#: Largest station length (units per full station), job units.
MAX_STATION_LENGTH = 10**6
#: Largest length, radius or absolute offset, job units.
MAX_LENGTH = 1e9
#: Largest absolute height or elevation, job units.
MAX_HEIGHT = 1e5
#: Largest point number (15 digits).
MAX_POINT_NUMBER = 10**15 - 1
#: Largest absolute cross slope, percent (1:1; steeper faces are given with ``dz``).
MAX_CROSS_SLOPE = 100.0
#: Largest rollover (algebraic difference of two cross slopes), percent.
MAX_ROLLOVER = 2 * MAX_CROSS_SLOPE

#: Largest job file, bytes (16 MiB).
MAX_JOB_FILE_BYTES = 16 * 2**20
#: Largest staked file, bytes (256 MiB).
MAX_STAKED_FILE_BYTES = 256 * 2**20
#: Longest field of a staked file, characters.
MAX_FIELD_CHARS = 4096
#: Longest record (row) of a staked file, characters, line ends included.
MAX_RECORD_CHARS = 65536


def _show(value: object) -> str:
    from .textsafety import show_value

    return show_value(value)


def _finite(value: object, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise JobFileError(f"{where} = {_show(value)}: expected a number")
    try:
        v = float(value)
    except OverflowError:  # a whole number beyond the float range: finite, but out of every range
        return math.inf if value > 0 else -math.inf
    if not math.isfinite(v):
        raise JobFileError(f"{where} = {_show(value)}: must be a finite number")
    return v


def _bounded(value: object, where: str, bound: float, what: str) -> float:
    v = _finite(value, where)
    if abs(v) > bound:
        raise JobFileError(
            f"{where} = {_show(value)}: out of range; {what} must lie within -{bound:,.0f} to {bound:,.0f} "
            "job units (the range in which 4 decimals are exact)"
        )
    return v


def check_coordinate(value: object, where: str) -> float:
    """Bound a northing or easting to ``|value| <= MAX_COORDINATE``.

    Parameters
    ----------
    value : float
        Grid coordinate, job units.
    where : str
        The key named in the error, e.g. ``setup.occupied.northing``.

    Returns
    -------
    float
        The value as a float.

    Raises
    ------
    JobFileError
        Not a finite number, or out of range (the message gives the range).
    """
    return _bounded(value, where, MAX_COORDINATE, "coordinates")


def check_station_value(value: object, where: str) -> float:
    """Bound a station value (already parsed) to ``|value| <= MAX_STATION``.

    Parameters
    ----------
    value : float
        Station, job units along the alignment.
    where : str
        The key named in the error, e.g. ``alignment.start.station``.

    Returns
    -------
    float
        The value as a float.

    Raises
    ------
    JobFileError
        Not a finite number, or out of range.
    """
    return _bounded(value, where, MAX_STATION, "stations")


def check_station_length(value: object, where: str = "job.station_length") -> int:
    """Validate a station length: a whole number from 1 to ``MAX_STATION_LENGTH``.

    Parameters
    ----------
    value : int or float
        Units per full station (100 for feet, 1000 for metres in practice);
        a float must be whole (``100.0``).
    where : str
        The key named in the error.

    Returns
    -------
    int
        The station length.

    Raises
    ------
    JobFileError
        Not a number, not whole, not positive, or over ``MAX_STATION_LENGTH``
        (``1e20`` once crashed the label formatter).
    """
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise JobFileError(f"{where} = {_show(value)}: expected a whole number such as 100 or 1000")
    v = _finite(value, where)
    if abs(v) > MAX_STATION_LENGTH:
        raise JobFileError(f"{where} = {_show(value)}: out of range; a station length runs from 1 to "
                           f"{MAX_STATION_LENGTH:,} job units (100 or 1000 in practice)")
    if v <= 0 or v != int(v):
        raise JobFileError(f"{where} = {_show(value)}: must be a positive whole number such as 100 or 1000")
    return int(v)


def check_length(value: object, where: str, allow_zero: bool = False, signed: bool = False) -> float:
    """Bound a length, radius, interval or offset to ``MAX_LENGTH``.

    Parameters
    ----------
    value : float
        Length, job units.  An offset is signed (negative left, positive
        right looking up-station).
    where : str
        The key named in the error, e.g. ``staking.interval``.
    allow_zero : bool
        Accept 0 (e.g. ``lead_in``, an offset of the centreline).
    signed : bool
        Accept negative values (offsets).

    Returns
    -------
    float
        The value as a float.

    Raises
    ------
    JobFileError
        Not a finite number, negative (unless ``signed``), zero (unless
        ``allow_zero``) or beyond ``MAX_LENGTH``.
    """
    v = _finite(value, where)
    if not signed:
        if v < 0 or (v == 0 and not allow_zero):
            need = "0 or more" if allow_zero else "greater than 0"
            raise JobFileError(f"{where} = {_show(value)}: must be {need}")
    elif v == 0 and not allow_zero:
        raise JobFileError(f"{where} = {_show(value)}: must not be 0")
    if abs(v) > MAX_LENGTH:
        lo = f"-{MAX_LENGTH:,.0f}" if signed else "0"
        raise JobFileError(
            f"{where} = {_show(value)}: out of range; lengths must lie within {lo} to {MAX_LENGTH:,.0f} "
            "job units (the range in which 4 decimals are exact)"
        )
    return v


def check_height(value: object, where: str, nonnegative: bool = False) -> float:
    """Bound a height or elevation to ``|value| <= MAX_HEIGHT``.

    Parameters
    ----------
    value : float
        Height or elevation, job units.
    where : str
        The key named in the error, e.g. ``setup.instrument_height``.
    nonnegative : bool
        Refuse negative values (instrument and target heights).

    Returns
    -------
    float
        The value as a float.

    Raises
    ------
    JobFileError
        Not a finite number, negative when ``nonnegative``, or out of range.
    """
    v = _finite(value, where)
    if nonnegative and v < 0:
        raise JobFileError(f"{where} = {_show(value)}: must be 0 or more")
    if abs(v) > MAX_HEIGHT:
        lo = "0" if nonnegative else f"-{MAX_HEIGHT:,.0f}"
        raise JobFileError(
            f"{where} = {_show(value)}: out of range; heights must lie within {lo} to {MAX_HEIGHT:,.0f} job units"
        )
    return v


def check_first_point(value: object, where: str = "staking.first_point") -> int:
    """Validate the first point number: a whole number, 0 to ``MAX_POINT_NUMBER``.

    Parameters
    ----------
    value : int
        The number read from the job file.
    where : str
        The key named in the error.

    Returns
    -------
    int
        The value.

    Raises
    ------
    JobFileError
        Not a whole number, negative, or over ``MAX_POINT_NUMBER``.
    """
    if isinstance(value, bool) or not isinstance(value, int) or value < 0:
        raise JobFileError(f"{where} = {_show(value)}: must be a whole number, 0 or more")
    if value > MAX_POINT_NUMBER:
        raise JobFileError(f"{where} = {_show(value)}: out of range; point numbers run from 0 to {MAX_POINT_NUMBER:,}")
    return value


def check_point_numbers(first_point: int, count: int, where: str = "staking.first_point") -> None:
    """Check that ``count`` points numbered from ``first_point`` stay within range.

    Parameters
    ----------
    first_point : int
        Number of the first point.
    count : int
        How many points are numbered (every stake, extra stations included).
    where : str
        The key named in the error.

    Raises
    ------
    JobFileError
        When the last number, ``first_point + count - 1``, exceeds
        ``MAX_POINT_NUMBER``.
    """
    last = int(first_point) + int(count) - 1
    if last > MAX_POINT_NUMBER:
        raise JobFileError(
            f"{where} = {first_point}: {count:,} points would run to {last:,}; point numbers end at "
            f"{MAX_POINT_NUMBER:,} (start lower)"
        )


def _size(n: int) -> str:
    return f"{n // 2**20:,} MiB" if n >= 2**20 and n % 2**20 == 0 else f"{n:,} bytes"


def read_regular_file(path: str | Path, what: str, max_bytes: int,
                      error: type[StakeoutError] = JobFileError) -> bytes:
    """Read a whole regular file of at most ``max_bytes`` bytes.

    Anything else (a folder, a device such as ``/dev/zero``, a pipe, a
    socket) is refused before a byte is read, and so is a file over the
    limit; the file is opened without blocking, so a FIFO never hangs.

    Parameters
    ----------
    path : str or Path
        The file (a symbolic link to a regular file is followed).
    what : str
        How the message names it, e.g. ``"job file"``, ``"staked file"``.
    max_bytes : int
        Largest size accepted, bytes (:data:`MAX_JOB_FILE_BYTES`,
        :data:`MAX_STAKED_FILE_BYTES`).
    error : type
        The exception raised (``JobFileError`` by default,
        ``StakedFileError`` for the staked file).

    Returns
    -------
    bytes
        The file's content.

    Raises
    ------
    StakeoutError
        (``error``) Not found, a folder, not a regular file, over the limit
        or unreadable; one line naming the file.
    """
    p = str(path)
    head = f"{what} {p!r}"

    def refuse(mode: int) -> None:
        if stat.S_ISDIR(mode):
            raise error(f"{head}: is a folder, not a file")
        if not stat.S_ISREG(mode):
            raise error(f"{head}: is not a regular file (a device, pipe or socket); give a file saved on disk")

    try:
        refuse(os.stat(p).st_mode)  # before opening: opening a device may already do something
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0)
                     | getattr(os, "O_BINARY", 0))
    except FileNotFoundError:
        raise error(f"{head}: not found") from None
    except IsADirectoryError:
        raise error(f"{head}: is a folder, not a file") from None
    except OSError as exc:
        raise error(f"{head}: cannot be read ({exc.strerror})") from None
    try:
        st = os.fstat(fd)
        refuse(st.st_mode)  # it may have been swapped since the first look
        if st.st_size > max_bytes:
            raise error(f"{head}: {_size(st.st_size)}; the limit is {_size(max_bytes)}")
        chunks: list[bytes] = []
        total = 0
        while True:
            chunk = os.read(fd, max(st.st_size - total, 1 << 16))  # the whole file, then EOF
            if not chunk:
                break
            total += len(chunk)
            if total > max_bytes:
                raise error(f"{head}: grew past the limit of {_size(max_bytes)} while being read")
            chunks.append(chunk)
    except OSError as exc:
        raise error(f"{head}: cannot be read ({exc.strerror})") from None
    finally:
        os.close(fd)
    return chunks[0] if len(chunks) == 1 else b"".join(chunks)


_BOMS = (  # UTF-32 first: its little-endian mark starts with UTF-16's
    (codecs.BOM_UTF32_LE, "UTF-32"),
    (codecs.BOM_UTF32_BE, "UTF-32"),
    (codecs.BOM_UTF8, "UTF-8"),
    (codecs.BOM_UTF16_LE, "UTF-16"),
    (codecs.BOM_UTF16_BE, "UTF-16"),
)


def unicode_bom(data: bytes) -> str | None:
    """The encoding a byte-order mark at the start of ``data`` announces.

    Parameters
    ----------
    data : bytes
        The start of a file.

    Returns
    -------
    str or None
        ``"UTF-8"``, ``"UTF-16"`` or ``"UTF-32"``, or None without a mark.
    """
    for bom, name in _BOMS:
        if data.startswith(bom):
            return name
    return None


def decode_job_text(data: bytes, path: str) -> str:
    """Decode job-file bytes: UTF-8, with or without a byte-order mark.

    Parameters
    ----------
    data : bytes
        The whole job file.
    path : str
        The file as named in messages.

    Returns
    -------
    str
        The text, without a leading UTF-8 byte-order mark.

    Raises
    ------
    JobFileError
        UTF-16 or UTF-32 text (named as such), NUL bytes (UTF-16 without a
        mark, or not a text file), or bytes that are not UTF-8.
    """
    bom = unicode_bom(data)
    if bom in ("UTF-16", "UTF-32"):
        raise JobFileError(f"{path}: is {bom} text (it starts with a {bom} byte-order mark); save it as UTF-8")
    if bom == "UTF-8":
        data = data[len(codecs.BOM_UTF8):]
    nul = data.find(b"\x00")
    if nul >= 0:
        raise JobFileError(
            f"{path}: holds a NUL byte (byte {nul + (3 if bom else 0)}): UTF-16 text without a byte-order mark, "
            "or not a text file; save it as UTF-8"
        )
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise JobFileError(f"{path}: not UTF-8 text (byte {exc.start + (3 if bom else 0)})") from None
