"""Texts made when asked for: a sequence of strings that builds only the ones read.

A build of a million stakes shows every stake's id, label or code in a few
places only (an error message, a report's two thousand rows, a block of a file
being written); these columns are sequences whose items are made on demand, so
no list of a million strings is kept.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import overload

__all__ = ["OnDemand"]


class OnDemand(Sequence[str]):
    """A sequence of ``len(self)`` strings; a subclass says how to make one (:meth:`one`) and may
    make a run of them faster (:meth:`span`).
    """

    def __len__(self) -> int:
        raise NotImplementedError

    def one(self, i: int) -> str:
        """Item ``i`` (0 <= i < len)."""
        raise NotImplementedError

    def span(self, a: int, b: int) -> list[str]:
        """Items ``a`` to ``b`` (0 <= a <= b <= len)."""
        return [self.one(k) for k in range(a, b)]

    @overload
    def __getitem__(self, i: int) -> str: ...

    @overload
    def __getitem__(self, i: slice) -> list[str]: ...

    def __getitem__(self, i: int | slice) -> str | list[str]:
        if isinstance(i, slice):
            a, b, step = i.indices(len(self))
            if step == 1:
                return self.span(a, max(a, b))
            return [self.one(k) for k in range(a, b, step)]
        k = i + len(self) if i < 0 else i
        if not 0 <= k < len(self):
            raise IndexError(i)
        return self.one(k)
