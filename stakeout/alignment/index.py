"""A uniform grid over the elements' bounding boxes: candidate elements near a point.

The inverse compares each point only with the elements whose (padded) box
reaches the point's grid cell; points in a cell with no element fall back
to every element, so the answer is always the nearest element.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .elements import Element

__all__ = ["ElementGrid", "build_grid"]

#: Alignments of up to this many elements are searched whole, without a grid.
GRID_MIN_ELEMENTS = 8


@dataclass(frozen=True)
class ElementGrid:
    """Cell size ``g`` (job units), origin, and for each cell key the index of
    its candidate set (cells along one element share a set).  The sets are
    laid end to end: set ``i`` is ``flat[first[i]:first[i] + size[i]]``, so
    the inverse gathers every point's candidates in one step.
    """

    g: float
    e_min: float
    n_min: float
    cell_set: dict[int, int]
    flat: NDArray[np.int64]
    first: NDArray[np.int64]
    size: NDArray[np.int64]

    def keys(self, n: NDArray[np.float64], e: NDArray[np.float64]) -> NDArray[np.int64]:
        """The cell key of each point."""
        g = self.g
        return (np.floor((e - self.e_min) / g).astype(np.int64) << 32) + np.floor((n - self.n_min) / g).astype(np.int64)


#: Most (cell, element) entries a grid holds; the cell grows until it fits.
MAX_CELLS = 500_000


def _cell_entries(boxes: NDArray[np.float64], g: float) -> int:
    """How many (cell, element) entries boxes padded by one cell ``g`` make."""
    cols = np.floor((boxes[:, 2] - boxes[:, 0]) / g) + 3
    rows = np.floor((boxes[:, 3] - boxes[:, 1]) / g) + 3
    return int(np.sum(cols * rows))


def build_grid(elements: Sequence[Element], length: float,
               sample: Callable[[NDArray[np.float64]], tuple[NDArray[np.float64], NDArray[np.float64]]]
               ) -> ElementGrid | None:
    """The grid of an alignment, or ``None`` for one of few elements.

    ``sample(stations)`` gives northings and eastings of centreline points
    at internal stations; each element is boxed by its own samples
    (:meth:`Element.bbox_samples`) padded by :meth:`Element.bbox_pad`.
    """
    k = len(elements)
    if k <= GRID_MIN_ELEMENTS:
        return None
    boxes = []
    for el in elements:  # one step per element, vectorised inside
        s = np.linspace(el.start, el.end, el.bbox_samples())
        pn, pe = sample(s)
        pad = el.bbox_pad()
        boxes.append((pe.min() - pad, pn.min() - pad, pe.max() + pad, pn.max() + pad))
    b = np.array(boxes)
    extent = max(b[:, 2].max() - b[:, 0].min(), b[:, 3].max() - b[:, 1].min(), 1e-9)
    # a quarter of the mean element length: a point has two or three candidates, and shots (within a few
    # units of the line) stay nearer than a cell, so they need no search beyond their candidates; coarser
    # where that would make more than MAX_CELLS cell entries (long elements among short ones)
    g = max(length / k / 4.0, extent / 4096.0, 1e-6)
    while _cell_entries(b, g) > MAX_CELLS:
        g *= 2.0
    e_min, n_min = b[:, 0].min() - 2 * g, b[:, 1].min() - 2 * g
    cells: dict[int, list[int]] = {}
    for idx, (x0, y0, x1, y1) in enumerate(b):
        ix0, iy0 = int(np.floor((x0 - g - e_min) / g)), int(np.floor((y0 - g - n_min) / g))
        ix1, iy1 = int(np.floor((x1 + g - e_min) / g)), int(np.floor((y1 + g - n_min) / g))
        for ix in range(ix0, ix1 + 1):
            for iy in range(iy0, iy1 + 1):
                cells.setdefault((ix << 32) + iy, []).append(idx)
    ids: dict[tuple[int, ...], int] = {}
    cell_set = {key: ids.setdefault(tuple(v), len(ids)) for key, v in cells.items()}
    size = np.array([len(k) for k in ids], dtype=np.int64)
    flat = np.array([i for k in ids for i in k], dtype=np.int64)
    return ElementGrid(g, float(e_min), float(n_min), cell_set, flat, np.cumsum(size) - size, size)
