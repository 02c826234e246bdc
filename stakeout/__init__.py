"""stakeout: turn a horizontal alignment into stake points, setout sheets and checks.

Results must be checked independently before use; local codes and a
licensed surveyor's judgement govern.
"""

from __future__ import annotations

__all__ = ["__version__"]

__version__ = "0.1.0"
