"""``manifest.json``: proof of which design produced which files.

The only output that carries a timestamp.  Library versions are read from
package metadata, so writing the manifest imports nothing heavy.
"""

from __future__ import annotations

import hashlib
import json
from datetime import datetime, timezone
from importlib import metadata
from typing import Any

from .. import __version__
from ..design import Design

__all__ = ["manifest_json"]


def _version(dist: str) -> str | None:
    try:
        return metadata.version(dist)
    except metadata.PackageNotFoundError:
        return None


def manifest_json(d: Design, job_path: str, outputs: dict[str, bytes]) -> bytes:
    """Render the manifest for the given outputs (name -> file bytes)."""
    info = d.job.info
    job_sha256, job_name, units, crs = d.job.sha256, info.name, info.unit.key, info.crs
    factors: dict[str, Any] = d.factors
    proj_version = d.proj_version
    doc = {
        "tool": "stakeout",
        "version": __version__,
        "created_utc": datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "job_file": {"path": job_path, "sha256": job_sha256},
        "design_files": [
            {"role": f.role, "path": f.path, "sha256": f.sha256, "chosen": f.chosen, "not_used": list(f.not_used)}
            for f in d.job.design_files
        ],
        "job_name": job_name,
        "units": units,
        "crs": crs,
        "factors": factors,
        "libraries": {
            "numpy": _version("numpy"),
            "pyproj": _version("pyproj"),
            "proj": proj_version,
            "ezdxf": _version("ezdxf"),
        },
        "outputs": {
            name: {"sha256": hashlib.sha256(data).hexdigest(), "bytes": len(data)}
            for name, data in sorted(outputs.items())
        },
    }
    return (json.dumps(doc, indent=2, sort_keys=True) + "\n").encode("utf-8")
