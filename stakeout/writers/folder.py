"""Atomic output folders: write everything into a temporary folder beside the
target and move it into place only when every file is complete.

An existing non-empty target is replaced only with ``force``, and then by
two renames, so a reader never sees a half-replaced folder.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path

from ..errors import OutputError

__all__ = ["OutputFolder"]


def _nearest_existing(p: Path) -> Path:
    while not p.exists():
        p = p.parent
    return p


class OutputFolder:
    """Collect output files in a hidden temporary folder, then commit.

    Use as a context manager; :meth:`commit` moves the folder into place.
    Leaving the block without committing (an error, Ctrl-C) removes the
    temporary folder and leaves the target untouched.
    """

    def __init__(self, target: str | Path, force: bool = False, option: str = "--out",
                 protect: tuple[str | Path, ...] = ()):
        self.target = Path(target).absolute()
        self.force = force
        self.option = option
        self.tmp: Path | None = None
        self._check_protected(protect)
        self._check_target()

    def _check_protected(self, protect: tuple[str | Path, ...]) -> None:
        # --force replaces the whole folder: never one that holds the inputs,
        # the working folder or the user's home.
        t = self.target.resolve()
        keep = [Path(p).absolute().resolve() for p in protect] + [Path.cwd().resolve(), Path.home().resolve()]
        for p in keep:
            if p == t or t in p.parents:
                what = "the working folder" if p == Path.cwd().resolve() else (
                    "the home folder" if p == Path.home().resolve() else f"{p.name}")
                raise OutputError(
                    f"{self.option} {str(self.target)!r}: holds {what}; write the outputs to a folder of their own"
                )

    def _check_target(self) -> None:
        t = self.target
        if t.exists() or t.is_symlink():
            if not t.is_dir():
                raise OutputError(f"{self.option} {str(t)!r}: exists and is not a folder")
            if any(t.iterdir()) and not self.force:
                raise OutputError(
                    f"{self.option} {str(t)!r}: folder exists and is not empty; "
                    "use --force to replace it"
                )

    def __enter__(self) -> "OutputFolder":
        base = _nearest_existing(self.target.parent)
        try:
            self.tmp = Path(tempfile.mkdtemp(prefix=f".{self.target.name}.partial-", dir=base))
        except OSError as exc:
            raise OutputError(f"{self.option} {str(self.target)!r}: cannot write there ({exc.strerror})") from None
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        if self.tmp is not None and self.tmp.exists():
            shutil.rmtree(self.tmp, ignore_errors=True)

    def path(self, name: str) -> Path:
        """Where to write output file ``name`` inside the temporary folder."""
        assert self.tmp is not None
        return self.tmp / name

    def write_bytes(self, name: str, data: bytes) -> None:
        """Write one complete file into the temporary folder."""
        try:
            with open(self.path(name), "wb") as fh:
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
        except OSError as exc:
            raise OutputError(f"{self.option} {str(self.target)!r}: cannot write {name} ({exc.strerror})") from None

    def commit(self) -> None:
        """Move the finished folder into place (replacing the old one with force)."""
        assert self.tmp is not None
        t = self.target
        try:
            t.parent.mkdir(parents=True, exist_ok=True)
            os.chmod(self.tmp, 0o755)
            if t.exists():
                self._check_target()
                if not any(t.iterdir()):
                    t.rmdir()
                    os.rename(self.tmp, t)
                else:
                    old = Path(tempfile.mkdtemp(prefix=f".{t.name}.old-", dir=t.parent))
                    old.rmdir()
                    os.rename(t, old)
                    try:
                        os.rename(self.tmp, t)
                    except BaseException:
                        os.rename(old, t)
                        raise
                    shutil.rmtree(old, ignore_errors=True)
            else:
                os.rename(self.tmp, t)
        except OSError as exc:
            raise OutputError(f"{self.option} {str(t)!r}: cannot move the outputs into place ({exc.strerror})") from None
        self.tmp = None
