"""Build every sample job and record the SHA-256 of each output.

Run as a script to refresh the recorded digests after a deliberate change
of output (say why in the commit):

    .venv/bin/python tests/sample_outputs.py --update

``tests/test_sample_outputs.py`` rebuilds the samples and compares, so a
change meant to leave outputs alone (a restructuring) proves it does.
``manifest.json`` is left out: it is the one file with a timestamp.
"""

from __future__ import annotations

import hashlib
import json
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_jobs"
DIGESTS = Path(__file__).resolve().parent / "data" / "sample_digests.json"
#: The check run recorded beside the builds: (job, staked file).
CHECKS = (("loop_ramp_usft.toml", "staked/loop_ramp_shots.csv"),
          ("orchard_vale_interchange_m.toml", "staked/orchard_vale_shots.csv"))


def _run(args: list[str]) -> tuple[int, str]:
    from typer.testing import CliRunner

    from stakeout.cli import app

    r = CliRunner().invoke(app, args, env={"SOURCE_DATE_EPOCH": None})  # alignment.xml: the fixed date
    return r.exit_code, r.stdout


def compute_digests(work: Path) -> dict[str, str]:
    """Build every sample into ``work``; ``{"job/file": sha256}``."""
    out: dict[str, str] = {}
    for job in sorted(SAMPLES.glob("*.toml")):
        dest = work / job.stem
        code, _ = _run(["build", str(job), "--out", str(dest)])
        assert code == 0, f"{job.name}: build exit {code}"
        for f in sorted(dest.iterdir()):
            if f.name != "manifest.json":
                out[f"{job.stem}/{f.name}"] = hashlib.sha256(f.read_bytes()).hexdigest()
        code, text = _run(["curve", str(job)])
        assert code == 0, f"{job.name}: curve exit {code}"
        out[f"{job.stem}/curve-report"] = hashlib.sha256(text.encode("utf-8")).hexdigest()
    for job, staked in CHECKS:
        dest = work / ("check-" + Path(job).stem)
        _run(["check", str(SAMPLES / job), str(SAMPLES / staked), "--out", str(dest)])
        for f in sorted(dest.iterdir()):
            out[f"check-{Path(job).stem}/{f.name}"] = hashlib.sha256(f.read_bytes()).hexdigest()
    return out


def recorded() -> dict[str, str]:
    """The digests on record."""
    return json.loads(DIGESTS.read_text(encoding="utf-8"))


if __name__ == "__main__":  # pragma: no cover
    sys.path.insert(0, str(ROOT))
    with tempfile.TemporaryDirectory() as tmp:
        now = compute_digests(Path(tmp))
    if "--update" in sys.argv:
        DIGESTS.write_text(json.dumps(now, indent=1, sort_keys=True) + "\n", encoding="utf-8")
        print(f"recorded {len(now)} digests in {DIGESTS}")
    else:
        old = recorded()
        diff = sorted(k for k in old.keys() | now.keys() if old.get(k) != now.get(k))
        print("\n".join(diff) or "all sample outputs identical")
        sys.exit(1 if diff else 0)
