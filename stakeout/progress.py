"""A plain progress bar on stderr, for long builds and checks at a terminal."""

from __future__ import annotations

import sys
from typing import TextIO

__all__ = ["Progress", "PROGRESS_MIN_POINTS"]

#: Jobs with more points than this show progress when stderr is a terminal.
PROGRESS_MIN_POINTS = 50_000


class Progress:
    """``[#####.....] 3/7 setout.csv`` on one stderr line; silent when not a terminal."""

    def __init__(self, total: int, points: int, stream: TextIO | None = None, width: int = 30):
        self.stream = stream if stream is not None else sys.stderr
        self.total = max(1, total)
        self.width = width
        self.done = 0
        isatty = getattr(self.stream, "isatty", lambda: False)
        self.enabled = points > PROGRESS_MIN_POINTS and bool(isatty())

    def step(self, what: str) -> None:
        """Mark one more part done."""
        self.done += 1
        if not self.enabled:
            return
        filled = self.width * self.done // self.total
        bar = "#" * filled + "." * (self.width - filled)
        self.stream.write(f"\r[{bar}] {self.done}/{self.total} {what:<20}")
        if self.done >= self.total:
            self.stream.write("\n")
        self.stream.flush()
