"""``manifest.json``: proof of which design produced which files.

The only output that carries a timestamp.  Library versions are read from
package metadata, so writing the manifest imports nothing heavy.
"""

from __future__ import annotations

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


def manifest_json(d: Design, job_path: str, outputs: dict[str, tuple[str, int]]) -> bytes:
    """Render the manifest for the given outputs (name -> (SHA-256 in hex, bytes))."""
    info = d.job.info
    job_sha256, job_name, units, crs = d.job.sha256, info.name, info.unit.key, info.crs
    factors = d.factors.as_dict()
    proj_version = d.proj_version
    doc: dict[str, Any] = {
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
            name: {"sha256": digest, "bytes": size}
            for name, (digest, size) in sorted(outputs.items())
        },
    }
    sd = d.setup
    if sd is not None and sd.listed:
        doc["setups"] = [
            {k: v for k, v in {
                "setup": o.number, "where": o.where, "occupied": o.occupied.id,
                "backsight": o.backsight.id if o.backsight is not None else None,
                "backsight_grid_azimuth_deg": o.backsight_azimuth, "combined_factor": o.scale.combined_factor,
                "scale_factor": o.scale.scale_factor, "elevation_factor": o.scale.elevation_factor,
                "convergence_deg": o.scale.convergence, "stakes": o.stake_count, "farthest_sight": o.farthest_sight,
            }.items() if v is not None}
            for o in d.occupations  # with several alignments: stakes over all of them
        ]
    spec = d.job.instrument
    if spec is not None and sd is not None and sd.precision is not None:
        doc["instrument"] = {"angle_sigma_arcsec": spec.angle_sigma_arcsec, "distance_sigma": spec.distance_sigma,
                             "distance_ppm": spec.distance_ppm, "centering_sigma": spec.centering_sigma,
                             "pole_sigma": spec.pole_sigma,
                             "horizontal_tolerance": sd.tolerance,
                             "flagged": None if sd.flagged is None else int(sd.flagged.sum())}
    return (json.dumps(doc, indent=2, sort_keys=True) + "\n").encode("utf-8")
