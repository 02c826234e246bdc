"""The one exception family of stakeout.

Every error a user can cause derives from :class:`StakeoutError`; the CLI
turns it into a one-line message and exit code 2.  Each subclass also
inherits the builtin that fits, so library callers may catch either.
"""

from __future__ import annotations

__all__ = [
    "StakeoutError",
    "JobFileError",
    "GeometryError",
    "CRSError",
    "StakedFileError",
    "OutputError",
]


class StakeoutError(Exception):
    """Base of every error stakeout raises on bad input or a failed output."""


class JobFileError(StakeoutError, ValueError):
    """The job file is unreadable, malformed, or holds an impossible value."""


class GeometryError(StakeoutError, ValueError):
    """The alignment cannot be built as given (overlapping curves, ...)."""


class CRSError(StakeoutError, ValueError):
    """The coordinate reference system is unknown, unsuitable or mismatched."""


class StakedFileError(StakeoutError, ValueError):
    """The staked-points file from the data collector is malformed."""


class OutputError(StakeoutError, OSError):
    """An output folder cannot be written or would be overwritten."""
