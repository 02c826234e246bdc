"""Atomic output folders: write everything into a temporary folder beside the
target and move it into place only when every file is complete.

An existing non-empty target is replaced only with ``force``, and then by
two renames, so a reader never sees a half-replaced folder.

Rules for the target (``--out``):

* **A symbolic link is refused.**  Replacing "the folder" would either turn
  the link into a folder (leaving the folder it pointed to behind) or write
  through it into a place the user did not name; both surprise.  The
  message names the link's target: give that folder itself.  Links in the
  folders *above* the target are followed as usual.
* **A mount point is refused**: it can be neither renamed nor removed
  ("Device or resource busy"), so the outputs cannot be moved onto it;
  write into a folder inside it.  A rename that still fails with that error
  gets the same explanation.
* ``force`` never replaces a folder that holds an input (every file the
  job reads, ``Job.inputs()``, and the staked file), the working folder or
  the home folder.  An input given as
  a symbolic link protects the link's folder, every folder along its chain
  of links, and the folder of the file it finally points to.
* A target that another program creates (or fills) during the build is
  never replaced without ``force``: the error says that it appeared and is
  not empty, and the new outputs are discarded.

Killed runs (SIGKILL, out of memory, power loss) cannot clean up: the
temporary folders carry the process id in their names
(``.NAME.partial-PID-XXXX``, ``.NAME.old-PID-XXXX``), and the next run
with the same target removes those of processes that no longer run; a
target missing after a kill between the two renames of ``force`` is first
restored from its ``.old-`` folder (:attr:`OutputFolder.litter_notes`
says what was done).  Folders of running processes are never touched.

Signals: Ctrl-C (and SIGTERM or SIGHUP, which the CLI turns into the same
interruption) anywhere before the outputs are in place removes the
temporary folder and leaves the target untouched.  The renames that put
the outputs in place are done with those signals held back, so an
interruption lands either before them or after them.  After them the
outputs are in place: an interruption while the replaced folder is being
deleted raises :class:`InterruptedAfterCommit`, whose message says so, and
the replaced folder's remains -- a hidden ``.NAME.remains-XXXX`` folder
beside the target -- are deleted by the next run writing to the same
target.
"""

from __future__ import annotations

import errno
import hashlib
import os
import shutil
import signal
import tempfile
import threading
from collections.abc import Iterable, Iterator
from concurrent.futures import Future, ThreadPoolExecutor
from contextlib import contextmanager
from pathlib import Path
from types import TracebackType
from typing import BinaryIO, Callable

from ..errors import OutputError

__all__ = ["OutputFolder", "InterruptedAfterCommit", "REMAINS_MARK", "committed_targets", "signals_held"]

#: Middle part of the name of a replaced folder's remains:
#: ``.NAME.remains-XXXX`` beside the target.  Only a replaced folder whose
#: new outputs are already in place is ever given this name, so deleting
#: it is always safe.
REMAINS_MARK = ".remains-"

_COMMITTED: list[Path] = []

_HELD_SIGNALS = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))


class InterruptedAfterCommit(KeyboardInterrupt):
    """Interrupted after the new outputs were moved into place.

    Parameters
    ----------
    target : Path
        The output folder, complete and in place.
    remains : Path or None
        The replaced folder's remains still to delete (None if there are
        none); the next run writing to ``target`` deletes them.
    signum : int
        The signal that interrupted (``signal.SIGINT`` for Ctrl-C).
    """

    def __init__(self, target: Path, remains: Path | None, signum: int):
        super().__init__(str(target))
        self.target = target
        self.remains = remains
        self.signum = signum


#: Pieces of a file rendered but not yet written that may wait in memory (:meth:`OutputFolder.write_chunks`).
IN_FLIGHT = 8


class _File:
    """One output file being written by the background thread: its handle, hash and size."""

    def __init__(self, path: Path, name: str, hashed: bool = True) -> None:
        self.path = path
        self.name = name
        self.sha256 = hashlib.sha256() if hashed else None
        self.size = 0
        self._fh: "BinaryIO | None" = None

    def open(self) -> None:
        self._fh = open(self.path, "wb")

    def append(self, data: bytes) -> None:
        if self._fh is None:  # its open failed, and said so
            return
        self._fh.write(data)
        if self.sha256 is not None:
            self.sha256.update(data)
        self.size += len(data)

    def close(self) -> None:
        if self._fh is None:
            return
        fh, self._fh = self._fh, None
        try:
            fh.flush()
            os.fsync(fh.fileno())
        finally:
            fh.close()

    def drop(self) -> None:
        """Close the file unfinished (its writer failed: the folder is being discarded)."""
        fh, self._fh = self._fh, None
        if fh is not None:
            try:
                fh.close()
            except OSError:  # its buffer could not be flushed: the build's own error is the one to say
                pass


def write_file(folder: "OutputFolder", name: str, chunks: Iterable[bytes]) -> tuple[str | None, int]:
    """Write one file into ``folder``'s temporary folder here and now, piece by piece (a second
    process rendering some of a build's outputs): its SHA-256 (when the folder hashes) and size.
    """
    f = _File(folder.path(name), name, folder.hashes)
    try:
        f.open()
        for c in chunks:
            f.append(c)
        f.close()
    except OSError as exc:
        raise folder.cannot_write(name, exc) from None
    return (None if f.sha256 is None else f.sha256.hexdigest()), f.size


def committed_targets() -> tuple[Path, ...]:
    """Every output folder put in place by this process so far, oldest first.

    The CLI compares the count before and after a command, so that an
    interruption after a commit is not reported as "nothing was written".

    Returns
    -------
    tuple of Path
        The targets, absolute.
    """
    return tuple(_COMMITTED)


def _umask() -> int:
    """The process's file-mode creation mask (read without changing it where the system allows)."""
    try:
        with open("/proc/self/status", encoding="ascii", errors="replace") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    with signals_held():
        mask = os.umask(0o022)
        os.umask(mask)
    return mask


def _owner_pid(name: str, prefix: str) -> int | None:
    """The process id in a temporary folder's name (``PREFIX<pid>-XXXX``), None if it is not one."""
    if not name.startswith(prefix):
        return None
    head = name[len(prefix):].split("-", 1)[0]
    return int(head) if head.isascii() and head.isdigit() and len(head) < 10 else None


def _alive(pid: int) -> bool:
    """Whether process ``pid`` still runs (this process counts; a process of
    another user counts as running).
    """
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True
    return True


def _nearest_existing(p: Path) -> Path:
    while not p.exists():
        p = p.parent
    return p


@contextmanager
def signals_held() -> Iterator[None]:
    """Hold SIGINT, SIGTERM and SIGHUP back during a few renames, then
    deliver the first one that arrived (through the handler in force).
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    pending: list[int] = []

    def hold(signum: int, frame: object) -> None:
        pending.append(signum)

    saved = {}
    for s in _HELD_SIGNALS:
        h = signal.getsignal(s)
        if h is None or h == signal.SIG_IGN:
            continue
        saved[s] = h
        signal.signal(s, hold)
    try:
        yield
    finally:
        for s, h in saved.items():
            signal.signal(s, h)
        if pending:
            signal.raise_signal(pending[0])


def _locations(p: Path) -> list[Path]:
    """Every place path ``p`` stands for: itself (its folder resolved), each
    link of its chain of symbolic links, and the file it finally names.
    """
    cur = Path(p).absolute()
    out: list[Path] = []
    for _ in range(40):  # the kernel's own limit on a chain of links
        if cur.name in ("", ".", ".."):
            break
        try:
            here = cur.parent.resolve() / cur.name
        except (OSError, RuntimeError):
            break
        out.append(here)
        if not here.is_symlink():
            break
        try:
            link = Path(os.readlink(here))
        except OSError:
            break
        cur = link if link.is_absolute() else here.parent / link
    try:
        out.append(Path(p).absolute().resolve())
    except (OSError, RuntimeError):
        pass
    return out


class OutputFolder:
    """Collect output files in a hidden temporary folder, then commit.

    Use as a context manager; :meth:`commit` moves the folder into place.
    Leaving the block without committing (an error, Ctrl-C, SIGTERM)
    removes the temporary folder and leaves the target untouched.

    Parameters
    ----------
    target : str or Path
        The output folder (``--out``).
    force : bool
        Replace an existing, non-empty target.
    option : str
        How messages name the target's option.
    protect : tuple of str or Path
        Input files whose folders ``force`` must never replace.

    Attributes
    ----------
    removed_remains : list of Path
        Remains of an earlier interrupted replacement that :meth:`__enter__`
        deleted (for a note to the user).
    """

    def __init__(self, target: str | Path, force: bool = False, option: str = "--out",
                 protect: tuple[str | Path, ...] = (), hashes: bool = True):
        self.target = Path(target).absolute()
        self.hashes = hashes  # hash each file as it is written (for a manifest): False saves that work
        self.force = force
        self.option = option
        self.tmp: Path | None = None
        self.removed_remains: list[Path] = []
        self._writer: ThreadPoolExecutor | None = None  # writes files while the next output renders
        self._pending: list[Future[None]] = []
        self._files: dict[str, _File] = {}  # what is written, with its hash and size once written
        self._adopted: dict[str, tuple[str, int]] = {}  # written by another process: hash and size
        self._check_protected(protect)
        self.litter_notes: list[str] = []
        self._clean_litter()
        self._check_target()
        self._existed = self.target.exists()

    def _clean_litter(self) -> None:
        """Remove the temporary folders a killed run left beside the target
        (``.NAME.partial-PID-*``, ``.NAME.old-PID-*`` of a process that no
        longer runs), restoring a missing target from its ``.old-`` folder.
        """
        t = self.target
        # a run whose --out parent did not exist yet made its temporary folder in the nearest folder
        # that did (see __enter__): look there too
        places = list(dict.fromkeys([t.parent, _nearest_existing(t.parent)]))
        entries = []
        for place in places:
            try:
                entries += sorted(os.scandir(place), key=lambda e: e.name)
            except OSError:
                continue
        stale: dict[str, list[os.DirEntry[str]]] = {"partial": [], "old": []}
        for e in entries:
            for kind in stale:
                pid = _owner_pid(e.name, f".{t.name}.{kind}-")
                if pid is not None and e.is_dir(follow_symlinks=False) and not _alive(pid):
                    stale[kind].append(e)
        olds = sorted(stale["old"], key=lambda e: e.stat(follow_symlinks=False).st_mtime_ns)
        if olds and not t.exists() and not t.is_symlink():
            keep = olds.pop()  # killed between the two renames: the replaced outputs go back
            try:
                os.rename(keep.path, t)
                self.litter_notes.append(f"{self.option} {str(t)!r} was missing after a killed run: restored it "
                                         f"from {keep.name}")
            except OSError as exc:
                raise OutputError(f"{self.option} {str(t)!r}: missing after a killed run, its earlier outputs are "
                                  f"in {keep.path!r} and cannot be moved back ({exc.strerror}); move them back "
                                  "by hand") from None
        for e in stale["partial"] + olds:
            shutil.rmtree(e.path, ignore_errors=True)
            self.litter_notes.append(f"removed {e.name}, left beside {self.option} by a killed run")

    def _check_protected(self, protect: tuple[str | Path, ...]) -> None:
        # --force replaces the whole folder: never one that holds the inputs,
        # the working folder or the user's home.  An input reached through a
        # symbolic link protects the link's folder and its target's.
        t = self.target.resolve()
        cwd, home = Path.cwd().resolve(), Path.home().resolve()
        keep: list[tuple[Path, str]] = [(loc, Path(p).name) for p in protect for loc in _locations(Path(p))]
        keep += [(cwd, "the working folder"), (home, "the home folder")]
        for p, what in keep:
            if p == t or t in p.parents:
                raise OutputError(
                    f"{self.option} {str(self.target)!r}: holds {what}; write the outputs to a folder of their own"
                )

    def _check_target(self, during_build: bool = False) -> None:
        t = self.target
        if t.is_symlink():
            try:
                dest = repr(os.readlink(t))
            except OSError:
                dest = "elsewhere"
            raise OutputError(
                f"{self.option} {str(t)!r}: is a symbolic link (to {dest}); stakeout does not write through "
                "links, give the folder itself"
            )
        if t.exists():
            if not t.is_dir():
                raise OutputError(f"{self.option} {str(t)!r}: exists and is not a folder")
            if os.path.ismount(t):
                raise self._mount_error()
            if any(t.iterdir()) and not self.force:
                if during_build:
                    how = ("appeared during the build and is not empty" if not self._existed else
                           "was empty when the build began and is not empty now")
                    raise OutputError(
                        f"{self.option} {str(t)!r}: the folder {how} (another program wrote there); it was left "
                        "as it is and the new outputs were discarded; run again, with --force to replace it"
                    )
                raise OutputError(
                    f"{self.option} {str(t)!r}: folder exists and is not empty; "
                    "use --force to replace it"
                )

    def _mount_error(self) -> OutputError:
        return OutputError(
            f"{self.option} {str(self.target)!r}: is a mount point (Device or resource busy), which cannot be "
            f"removed or renamed to put the outputs in place; write them into a folder inside it, e.g. "
            f"{self.option} {str(self.target / 'stakeout')!r}"
        )

    def _move_error(self, exc: OSError) -> OutputError:
        if exc.errno == errno.EBUSY:
            return self._mount_error()
        if exc.errno in (errno.EEXIST, errno.ENOTEMPTY):
            return OutputError(
                f"{self.option} {str(self.target)!r}: a folder of that name appeared during the build and is not "
                "empty (another program wrote there); it was left as it is and the new outputs were discarded"
            )
        return OutputError(
            f"{self.option} {str(self.target)!r}: cannot move the outputs into place ({exc.strerror or exc})"
        )

    def _remove_remains(self) -> None:
        # Remains of a replaced folder whose deletion was interrupted: the
        # new outputs went into place, so these are garbage by construction.
        prefix = f".{self.target.name}{REMAINS_MARK}"
        try:
            entries = list(os.scandir(self.target.parent))
        except OSError:
            return
        for e in entries:
            if e.name.startswith(prefix) and e.is_dir(follow_symlinks=False):
                shutil.rmtree(e.path, ignore_errors=True)
                self.removed_remains.append(Path(e.path))

    def __enter__(self) -> "OutputFolder":
        self._remove_remains()
        base = _nearest_existing(self.target.parent)
        try:
            with signals_held():  # never a temporary folder that nobody will remove
                self.tmp = Path(tempfile.mkdtemp(prefix=f".{self.target.name}.partial-{os.getpid()}-", dir=base))
        except OSError as exc:
            raise OutputError(f"{self.option} {str(self.target)!r}: cannot write there ({exc.strerror})") from None
        except BaseException:
            self._discard()
            raise
        return self

    def _discard(self) -> None:
        if self.tmp is not None and self.tmp.exists():
            with signals_held():  # a second Ctrl-C or SIGTERM waits until the litter is gone
                shutil.rmtree(self.tmp, ignore_errors=True)

    def __exit__(self, exc_type: type[BaseException] | None, exc: BaseException | None,
                 tb: TracebackType | None) -> None:
        try:
            if self._writer is not None:  # no write may land in the folder after it is removed
                with signals_held():  # a second Ctrl-C or SIGTERM waits for the write in hand
                    self._writer.shutdown(wait=True, cancel_futures=True)
                self._writer = None
        finally:
            for f in self._files.values():  # a writer that failed mid-file never queued its close
                f.drop()
            self._discard()

    def path(self, name: str) -> Path:
        """Where to write output file ``name`` inside the temporary folder."""
        assert self.tmp is not None
        return self.tmp / name

    def write_bytes(self, name: str, data: bytes) -> None:
        """Write one complete file into the temporary folder.

        The file is written and flushed to disk by a background thread while
        the caller renders the next output; :meth:`commit` waits for every
        write and raises the first failure (:class:`OutputError`), as does
        the next call here.
        """
        self.write_chunks(name, (data,))

    def write_chunks(self, name: str, chunks: Iterable[bytes]) -> None:
        """Write one file given piece by piece (a writer rendering page by page), so that no
        more than :data:`IN_FLIGHT` pieces wait in memory: each piece is written, hashed and
        finally flushed to disk by the background thread while the next is rendered. Errors
        as :meth:`write_bytes`; :meth:`written` gives each file's hash and size.
        """
        self._raise_failed()
        if self._writer is None:
            self._writer = ThreadPoolExecutor(max_workers=1, thread_name_prefix="stakeout-write")
        f = self._files[name] = _File(self.path(name), name, self.hashes)
        self._submit(f, f.open)
        for c in chunks:
            if c:
                self._submit(f, f.append, c)
        self._submit(f, f.close)

    def _submit(self, f: "_File", fn: Callable[..., None], *args: bytes) -> None:
        assert self._writer is not None
        self._pending.append(self._writer.submit(self._guarded, f, fn, *args))
        while len(self._pending) > IN_FLIGHT:  # the oldest piece first: the writer is one thread, in order
            self._pending.pop(0).result()

    def _guarded(self, f: "_File", fn: Callable[..., None], *args: bytes) -> None:
        try:
            fn(*args)
        except OSError as exc:
            raise self.cannot_write(f.name, exc) from None

    def cannot_write(self, name: str, exc: OSError) -> OutputError:
        """The error of a file that cannot be written (here, or by :func:`write_file` in another process)."""
        return OutputError(f"{self.option} {str(self.target)!r}: cannot write {name} ({exc.strerror})")

    def _raise_failed(self, wait: bool = False) -> None:
        """Raise the error of a finished write (``wait``: wait for them all first)."""
        for f in list(self._pending):
            if wait or f.done():
                self._pending.remove(f)
                f.result()

    def written(self) -> dict[str, tuple[str, int]]:
        """Every file written so far: name -> (SHA-256 in hex, bytes), once all are on disk
        (only with ``hashes``).
        """
        self._raise_failed(wait=True)
        out = {name: (f.sha256.hexdigest(), f.size) for name, f in self._files.items() if f.sha256 is not None}
        out.update(self._adopted)
        return out

    def adopt(self, name: str, sha256: str | None, size: int) -> None:
        """Count a file another process wrote into the temporary folder (:func:`write_file`)."""
        if sha256 is not None:
            self._adopted[name] = (sha256, size)

    def commit(self) -> None:
        """Move the finished folder into place (replacing the old one with force).

        Raises
        ------
        OutputError
            The target cannot take the outputs (it appeared or was filled
            during the build without ``force``, is a mount point, a link, or
            the renames fail); the temporary folder is then removed on
            leaving the block and the target is untouched.
        InterruptedAfterCommit
            Interrupted after the outputs were in place (while the replaced
            folder was being deleted).
        """
        assert self.tmp is not None
        self._raise_failed(wait=True)
        tmp, t = self.tmp, self.target
        try:
            t.parent.mkdir(parents=True, exist_ok=True)
            os.chmod(tmp, 0o777 & ~_umask())  # as mkdir would have made it (mkdtemp makes 0700)
        except OSError as exc:
            raise self._move_error(exc) from None
        committed = False
        remains: Path | None = None
        try:
            if t.exists() or t.is_symlink():
                self._check_target(during_build=True)
            if not t.exists():
                with signals_held():
                    os.rename(tmp, t)
                    committed, self.tmp = True, None
                    _COMMITTED.append(t)
            elif not any(t.iterdir()):
                with signals_held():
                    os.rmdir(t)
                    os.rename(tmp, t)
                    committed, self.tmp = True, None
                    _COMMITTED.append(t)
            else:
                old = Path(tempfile.mkdtemp(prefix=f".{t.name}.old-{os.getpid()}-", dir=t.parent))
                old.rmdir()
                with signals_held():
                    os.rename(t, old)
                    try:
                        os.rename(tmp, t)
                    except BaseException:
                        os.rename(old, t)
                        raise
                    committed, self.tmp = True, None
                    _COMMITTED.append(t)
                    remains = old.with_name(f".{t.name}{REMAINS_MARK}{old.name.rsplit('.old-', 1)[1]}")
                    try:
                        os.rename(old, remains)
                    except OSError:
                        remains = old  # unlikely name clash: delete it under its first name
                shutil.rmtree(remains, ignore_errors=True)
                remains = None
        except KeyboardInterrupt as exc:
            if not committed:
                raise
            signum = int(getattr(exc, "signum", getattr(signal, "SIGINT", 2)))
            raise InterruptedAfterCommit(t, remains, signum) from None
        except OutputError:
            raise
        except OSError as exc:
            raise self._move_error(exc) from None
