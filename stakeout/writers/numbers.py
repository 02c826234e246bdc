"""Bulk number formatting shared by the CSV and sheet writers.

Values are rounded once with numpy and have ``0.0`` added, so that a tiny
negative value never prints as ``-0.0000``.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["fixed", "fixed_or_empty", "rounded"]


def rounded(values: ArrayLike, decimals: int) -> list[float]:
    """Round to ``decimals`` and clear negative zeros; a plain list of floats."""
    return (np.round(np.asarray(values, dtype=float), decimals) + 0.0).tolist()


def fixed(values: ArrayLike, decimals: int) -> list[str]:
    """Format numbers with a fixed number of decimals."""
    fmt = f"%.{decimals}f"
    return [fmt % v for v in rounded(values, decimals)]


def fixed_or_empty(value: float | None, decimals: int) -> str:
    """Format one number, or an empty field for ``None``."""
    if value is None:
        return ""
    return fixed([value], decimals)[0]
