"""``python -m stakeout``: the same as the ``stakeout`` command."""

from __future__ import annotations

from .cli import main

__all__: list[str] = []

main()
