"""The cautions printed at the foot of every sheet and report."""

from __future__ import annotations

__all__ = ["CAUTION_LINES"]

CAUTION_LINES = (
    "CAUTION: computed by stakeout from the job file named above. Check every",
    "value independently (closures, a second computation, field checks on known",
    "control) before staking. Local codes and the judgement of a licensed surveyor",
    "govern; this sheet does not replace them.",
)
