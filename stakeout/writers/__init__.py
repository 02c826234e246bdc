"""Writers: CSV tables, printable sheets, the DXF plan, the manifest, and the
atomic output folder they all go into.
"""

from __future__ import annotations

__all__: list[str] = []
