"""Writers: every output file of a build or a check, and the atomic folder they go into.

Toolkits (format only; any writer may use them): :mod:`.text` (numbers, words, header
block, curve-data lines, text tables and pages, cautions), :mod:`.rows` (vectorised CSV
fields), :mod:`.csvtext` (RFC 4180 text, the point-file layout), :mod:`.checkwords` (a
check's words), :mod:`.sections` (cross-section pieces), :mod:`.folder` (the atomic output folder).

Renderers (one output or a family each): :mod:`.tables`, :mod:`.control`, :mod:`.sheets`,
:mod:`.report`, :mod:`.checkreport`, :mod:`.html`, :mod:`.dxf`, :mod:`.picture`,
:mod:`.profile_picture`, :mod:`.superelevation`, :mod:`.exchange`, :mod:`.manifest`.  A renderer reads the
:class:`~stakeout.design.Design` and its presentation model (:mod:`stakeout.presentation`)
and only formats them; it imports no other renderer and nothing of
:mod:`stakeout.alignment` (``tests/test_layout.py``).
"""

from __future__ import annotations

__all__: list[str] = []
