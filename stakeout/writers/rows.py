"""Vectorised text rows: numbers and short ASCII text turned into bytes with
numpy, no Python call per field.

Each field is a ``(N, width)`` ``uint8`` matrix of ASCII codes, padded with
NUL bytes; :func:`join_rows` lays fields side by side, ends each row with
``\\n`` and drops the padding.  Numbers are rounded once, in units of their
last printed digit, by the one rule of :mod:`stakeout.numbers` (the exact
binary value, half to even: what ``f"{v:.4f}"`` prints), so a value never
prints as ``-0.0000`` and carries are exact.  Text of any script and length
(ids read from a file) is a :class:`Strings` column: joined and encoded as
UTF-8 once, taken out a block of rows at a time; :func:`row_chunks` sizes the
blocks so that a few very long texts do not widen every field.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable, Iterator, Sequence
from concurrent.futures import Future, ThreadPoolExecutor

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..numbers import scaled

__all__ = ["Field", "fixed", "integer", "text", "const", "blank", "repeat_rows", "tile_rows", "join_rows", "dms",
           "station", "optional", "overlay", "packed", "Strings", "row_chunks", "in_order"]

Field = NDArray[np.uint8]
_LIMIT = 10**17  # largest scaled value handled exactly


def _quad_tables() -> NDArray[np.uint32]:
    """The digits of 0..9999 as four ASCII bytes in one uint32 each (bytes in memory
    order), in five tables: row ``k`` (0-3) blanks (NUL) the leading zeros of a
    number's top four digits but keeps at least its last ``k`` digits; row 4
    keeps all four (the digits below a number's top four).
    """
    i = np.arange(10000)
    digits = np.stack([48 + i // 1000, 48 + i // 100 % 10, 48 + i // 10 % 10, 48 + i % 10], axis=1).astype(np.uint8)
    length = np.searchsorted(10 ** np.arange(5), i, side="right")  # digits of i (0 for 0)
    out = np.empty((5, 10000, 4), dtype=np.uint8)
    for k in range(5):
        keep = np.arange(4)[None, :] >= 4 - np.maximum(length, k)[:, None]
        out[k] = digits * keep
    return out.view(np.uint32)[..., 0]


_QUADS = _quad_tables()
_POWERS = 10 ** np.arange(18, dtype=np.int64)  # 1 .. 10**17: a number's digits by binary search


def _digits(v: NDArray[np.int64], min_len: int, zero_pad: bool) -> Field:
    """Decimal digits of non-negative integers, right-aligned, NUL-padded on the left
    (``zero_pad``: zeros instead), at least ``min_len`` digits.

    Four digits per vectorised step, each group looked up in a table: the
    group holding a number's leading digit (nothing above it) comes from a
    table with its leading zeros blank, the groups below from the full one.
    """
    n = v.size
    vmax = int(v.max()) if n else 0
    if vmax >= _LIMIT:
        raise ValueError(f"number too large to format: {vmax}")
    width = max(min_len, len(str(vmax)))
    quads = (width + 3) // 4
    out = np.empty((n, quads), dtype=np.uint32)
    w = v
    for j in range(quads - 1, -1, -1):
        q = w // 10000
        r = w - q * 10000
        if zero_pad:
            np.take(_QUADS[4], r, out=out[:, j])
        else:  # table 4 where digits remain above, else the one keeping the digits min_len asks for here
            k = min(4, max(0, min_len - 4 * (quads - 1 - j)))
            np.take(_QUADS.ravel(), r + np.where(q > 0, 4 * 10000, k * 10000), out=out[:, j])
        w = q
    return out.view(np.uint8)[:, 4 * quads - width:]


def fixed(values: ArrayLike, decimals: int) -> Field:
    """Numbers with a fixed number of decimals (``-12.5000``)."""
    x = np.asarray(values, dtype=float).ravel()
    if not np.all(np.isfinite(x)):
        raise ValueError("cannot format a non-finite number")
    v = scaled(np.abs(x), 10**decimals)
    neg = (x < 0) & (v > 0)
    d = _digits(v, decimals + 1, False)
    w = d.shape[1]
    out = np.zeros((x.size, w + 1 + (1 if decimals else 0)), dtype=np.uint8)
    if decimals:
        cut = w - decimals
        out[:, 1:cut + 1] = d[:, :cut]
        out[:, cut + 1] = 46
        out[:, cut + 2:] = d[:, cut:]
    else:
        out[:, 1:] = d
    if neg.any():  # the sign just before the first digit: each number one run of text, as a column aligns it
        first = w - np.maximum(decimals + 1, np.searchsorted(_POWERS, v[neg], side="right"))
        out[np.flatnonzero(neg), first] = 45
    return out


def integer(values: ArrayLike, width: int = 1, zero_pad: bool = False) -> Field:
    """Whole numbers (``v >= 0`` unless negative ones are wanted with a sign)."""
    v = np.asarray(values, dtype=np.int64).ravel()
    neg = v < 0
    d = _digits(np.abs(v), width, zero_pad)
    if np.any(neg):
        return np.hstack([np.where(neg, 45, 0).astype(np.uint8)[:, None], d])
    return d


def text(strings: Sequence[str]) -> Field:
    """ASCII strings as a field (they must be ASCII: safe text guarantees it)."""
    if len(strings) == 0:
        return np.zeros((0, 0), dtype=np.uint8)
    a = np.array(strings, dtype=str)
    w = max(1, a.dtype.itemsize // 4)
    codes = a.view(np.uint32).reshape(len(strings), w)
    if np.any(codes > 127):
        raise ValueError("non-ASCII text in a vectorised field")
    return codes.astype(np.uint8)


def const(s: str, n: int) -> Field:
    """The same text on every row."""
    b = np.frombuffer(s.encode("ascii"), dtype=np.uint8)
    return np.broadcast_to(b, (n, b.size))


def blank(f: Field, empty: NDArray[np.bool_]) -> Field:
    """The field with the rows where ``empty`` is True left empty (all padding)."""
    out: Field = f * ~np.asarray(empty, dtype=bool)[:, None]
    return out


def repeat_rows(f: Field, m: int) -> Field:
    """Each row ``m`` times in a row (per-station field -> per-point)."""
    return np.repeat(f, m, axis=0)


def tile_rows(f: Field, k: int) -> Field:
    """The whole block ``k`` times (per-offset field -> per-point)."""
    return np.tile(f, (k, 1))


def join_rows(fields: Sequence[Field], n: int) -> bytes:
    """Lay fields side by side, end rows with ``\\n`` and drop the padding.

    The rows are one structured array, a fixed-size byte field per column:
    each column is copied in one pass (a field of the same text on every
    row is filled), and ``bytes.translate`` drops the NUL padding.
    """
    if n == 0:
        return b""
    cols = [f for f in fields if f.shape[1]]
    names = [f"c{i}" for i in range(len(cols))]
    layout = np.dtype({"names": names + ["end"], "formats": [f"V{f.shape[1]}" for f in cols] + ["V1"]})
    out = np.empty(n, dtype=layout)
    for name, f in zip(names, cols):
        if f.strides[0] == 0:  # the same text on every row (a separator, a prefix)
            out[name] = np.void(f[0].tobytes())
        else:
            out[name] = np.ascontiguousarray(np.broadcast_to(f, (n, f.shape[1]))).view(f"V{f.shape[1]}")[:, 0]
    out["end"] = np.void(b"\n")
    return out.tobytes().translate(None, b"\0")


def dms(degrees: ArrayLike, decimals: int = 1, wrap360: bool = True) -> Field:
    """Angles in ``D-MM-SS.s``, rounded once with the carry (never ``59-60``)."""
    x = np.asarray(degrees, dtype=float).ravel()
    if wrap360:
        x = np.mod(x, 360.0)
    scale = 10**decimals
    total = scaled(np.abs(x), 3600 * scale)
    if wrap360:
        total %= 360 * 3600 * scale
    neg = (x < 0) & (total > 0)
    deg = total // (3600 * scale)
    rem = total % (3600 * scale)
    mins, secs = rem // (60 * scale), rem % (60 * scale)
    n = x.size
    parts = [np.where(neg, 45, 0).astype(np.uint8)[:, None], integer(deg), const("-", n), integer(mins, 2, True),
             const("-", n), integer(secs // scale, 2, True)]
    if decimals:
        parts += [const(".", n), integer(secs % scale, decimals, True)]
    return np.hstack([np.broadcast_to(p, (n, p.shape[1])) for p in parts])


def station(values: ArrayLike, station_length: int, decimals: int) -> Field:
    """Station labels ``12+34.56`` (``-0+25.00`` for negative stations)."""
    x = np.asarray(values, dtype=float).ravel()
    scale = 10**decimals
    total = scaled(np.abs(x), scale)
    per = int(station_length) * scale
    neg = (x < 0) & (total > 0)
    full, rem = total // per, total % per
    n = x.size
    int_width = len(str(int(station_length) - 1))
    parts = [np.where(neg, 45, 0).astype(np.uint8)[:, None], integer(full), const("+", n),
             integer(rem // scale, int_width, True)]
    if decimals:
        parts += [const(".", n), integer(rem % scale, decimals, True)]
    return np.hstack([np.broadcast_to(p, (n, p.shape[1])) for p in parts])


def optional(values: ArrayLike, decimals: int) -> Field:
    """Numbers as :func:`fixed`, an empty field where a value is NaN or infinite."""
    x = np.asarray(values, dtype=float).ravel()
    finite = np.isfinite(x)
    return blank(fixed(np.where(finite, x, 0.0), decimals), ~finite)


def overlay(f: Field, where: NDArray[np.bool_], g: Field) -> Field:
    """``f`` with its rows ``where`` replaced by the rows of ``g`` (one for each True), as wide as the wider."""
    out = np.zeros((f.shape[0], max(f.shape[1], g.shape[1])), dtype=np.uint8)
    out[:, :f.shape[1]] = f
    out[where] = 0
    out[where, :g.shape[1]] = g
    return out


def row_counts(mask: NDArray[np.bool_]) -> NDArray[np.int64]:
    """How many of each row's entries are True, exactly: a product with a column of ones in
    float32 (exact below 2**24 entries a row), four times as fast on these short rows as
    ``mask.sum(axis=1)``, which walks each row's few entries one call at a time.
    """
    m = np.asarray(mask)
    if m.ndim != 2 or not m.size or m.shape[1] >= 1 << 24:
        return np.asarray(m.sum(axis=-1), dtype=np.int64)
    out: NDArray[np.int64] = (m.view(np.uint8).astype(np.float32) @ np.ones(m.shape[1], dtype=np.float32)
                              ).astype(np.int64)
    return out


def packed(f: Field, right: bool = False) -> Field:
    """Each row's bytes moved to its left end (``right``: its right end) in order, the padding (NUL)
    on the other side: each text one run, as an aligned column wants it (a field joined of parts
    padded on the left, a sign apart from the digits of a short number).
    """
    keep = f != 0
    n = row_counts(keep)
    w = int(n.max()) if n.size else 0
    out = np.zeros((f.shape[0], w), dtype=np.uint8)
    at = np.arange(w)[None, :]
    out[at >= (w - n)[:, None] if right else at < n[:, None]] = f[keep]
    return out


class Strings:
    """A column of text of any length and script (UTF-8), taken out a block of rows at a time.

    The strings are joined once (``NUL`` between them, so no string may hold one) and encoded
    once; :meth:`field` lays the rows asked for into a field as wide as the widest of them.
    """

    def __init__(self, strings: Sequence[str]):
        self.n = len(strings)
        buf = np.frombuffer("\0".join(strings).encode("utf-8"), dtype=np.uint8)
        ends = np.flatnonzero(buf == 0)
        if ends.size != max(0, self.n - 1):
            raise ValueError("a NUL character in a vectorised text field")
        self.buf = buf
        ends = np.append(ends, buf.size)[: self.n]
        self.starts = np.concatenate([np.zeros(min(1, self.n), dtype=np.int64), ends[:-1] + 1])
        #: Bytes of each row's text.
        self.lens = ends - self.starts

    def rows_holding(self, first: bytes, anywhere: bytes) -> NDArray[np.intp]:
        """The rows whose text starts with a byte of ``first`` or holds a byte of ``anywhere`` (ASCII bytes)."""
        hit = np.zeros(self.n, dtype=bool)
        if self.buf.size == 0:
            return np.flatnonzero(hit)
        if first:
            lead = self.buf[np.minimum(self.starts, self.buf.size - 1)]
            hit |= (self.lens > 0) & np.isin(lead, np.frombuffer(first, dtype=np.uint8))
        if anywhere:
            at = np.flatnonzero(np.isin(self.buf, np.frombuffer(anywhere, dtype=np.uint8)))
            hit[np.searchsorted(self.starts, at, side="right") - 1] = True
        return np.flatnonzero(hit)

    def field(self, which: slice | NDArray[np.intp]) -> Field:
        """The rows ``which`` (a slice, or row indices) as a field."""
        starts, lens = self.starts[which], self.lens[which]
        k = starts.size
        out = np.zeros((k, int(lens.max()) if k else 0), dtype=np.uint8)
        if out.size:
            row = np.repeat(np.arange(k), lens)
            col = np.arange(row.size) - np.repeat(np.cumsum(lens) - lens, lens)
            out[row, col] = self.buf[np.repeat(starts, lens) + col]
        return out


def row_chunks(width: NDArray[np.int64], rows: int = 16384, budget: int = 16384 * 256) -> list[tuple[int, int]]:
    """Blocks ``(start, stop)`` of at most ``rows`` rows covering ``width.size`` rows in order, each
    kept to about ``budget`` bytes of rows x its widest row (``width``: each row's bytes of text),
    so that a few very long texts do not widen every field of a large block.
    """
    n = width.size
    step = 256
    heads = np.arange(0, n, step)
    widest = np.maximum.reduceat(width, heads).tolist() if n else []
    out = []
    s0, top = 0, 0
    for b, w in zip(heads.tolist(), widest):
        end = min(b + step, n)
        if b > s0 and (end - s0 > rows or (end - s0) * max(top, w, 1) > budget):
            out.append((s0, b))
            s0, top = b, 0
        top = max(top, w)
    if s0 < n:
        out.append((s0, n))
    return out


def in_order(render: Callable[[int], bytes], starts: Iterable[int]) -> Iterator[bytes]:
    """``render(s)`` for each of ``starts``, in order: on the cores the build's other threads
    leave free (numpy releases the GIL in its loops; one core is kept for the thread writing the
    files and the caller), each worker at most one piece ahead of the reader, so the pieces
    waiting in memory stay few whatever the file's size. On two cores that is one: measured, two
    render threads there were slower than one (benchmarks/run.py, DEVELOPERS.md).
    """
    todo = iter(starts)
    workers = min(4, (os.cpu_count() or 1) - 1)
    if workers < 2:
        yield from map(render, todo)
        return
    first = next(todo, None)
    if first is None:
        return
    second = next(todo, None)
    if second is None:
        yield render(first)
        return
    with ThreadPoolExecutor(max_workers=workers) as pool:
        ahead: list[Future[bytes]] = [pool.submit(render, first), pool.submit(render, second)]
        for s in todo:
            if len(ahead) >= 2 * workers:
                yield ahead.pop(0).result()
            ahead.append(pool.submit(render, s))
        for f in ahead:
            yield f.result()
