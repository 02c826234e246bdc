"""Some outputs rendered by a second process while the build renders the rest.

A corridor's outputs are independent once the design is built, and the build
renders them one after another on one core (numpy releases the interpreter
lock only inside its loops, so threads gain little: measured). On Linux, for
a build of at least :data:`MIN_STAKES` stakes on a machine with two cores or
more, run by a process with no other thread alive (a lock another thread held
would stay held in the child), the build forks once, before it writes
anything (a fork refused: one process): the child renders its share of the
outputs (:func:`share`: about half the work by :data:`COST`, among those made
from the design alone) straight into the temporary folder, and the parent
renders the others. The child shares the design with the parent
(copy on write), so nothing is sent between them but, at the end, each file's
size and hash, or the child's error, which the parent raises as its own.

Each file is made by the same function either way, so the bytes are the same
(tests/test_beside.py). Interrupted (Ctrl-C, SIGTERM), or failing itself, the
parent kills and waits for the child before the temporary folder is removed.
``MIN_STAKES`` and the gain are measured by benchmarks/run.py (DEVELOPERS.md).
"""

from __future__ import annotations

import os
import pickle
import signal
import sys
import threading
import traceback
from collections.abc import Sequence
from typing import TYPE_CHECKING, NoReturn

from .errors import OutputError, StakeoutError

if TYPE_CHECKING:  # pragma: no cover
    from .design import Design
    from .outputs import Output, Rendered
    from .writers.folder import OutputFolder

__all__ = ["MIN_STAKES", "COST", "Beside", "share", "start"]

#: Builds of fewer stakes render every output in one process. Measured (DEVELOPERS.md), the second
#: process paid at every size tried, 5 % on a sample of a few hundred stakes, 9 % at 3,000, 31 % at
#: 250,000; below this size a build takes about a second, mostly imports, and one process is the
#: simpler to follow when something goes wrong.
MIN_STAKES = 2_000
#: The signals that interrupt a build (Ctrl-C; SIGTERM and SIGHUP, which the CLI makes interruptions).
_INTERRUPTS = {signal.SIGINT, signal.SIGTERM, signal.SIGHUP}
#: What each output costs to render, seconds a million stakes (measured one after another in one
#: process on the rich corridor, benchmarks/run.py ``outputs``, 2026-12-04; the earthwork files with
#: a ground): how the outputs are shared between the two processes. Not listed: :data:`SMALL`.
COST = {"setout.txt": 1.62, "plan.dxf": 1.32, "alignment.xml": 0.86, "slopestakes.txt": 0.84,
        "setout.csv": 0.38, "deflections.txt": 0.36, "plan.svg": 0.34, "report.html": 0.33,
        "slopestakes.csv": 0.32, "stations.csv": 0.31, "points.csv": 0.26, "volumes.csv": 0.07}
SMALL = 0.02


def share(files: Sequence["Output"]) -> tuple[list["Output"], list["Output"]]:
    """The outputs the second process renders and those left to the build, in writing order.

    Only an output made from the design alone (its writer named ``"module:function"``) may go;
    one drawn from another, or another's source (plan.dxf, plan.svg, the report), stays. The
    rest go, the costliest first, each to the process with less to do so far (longest
    processing time first).
    """
    movable = [o for o in files if isinstance(o.writer, str)]
    load = [0.0, sum(COST.get(o.filename, SMALL) for o in files if not isinstance(o.writer, str))]
    away: set[str] = set()
    for o in sorted(movable, key=lambda o: -COST.get(o.filename, SMALL)):
        k = 0 if load[0] < load[1] else 1
        load[k] += COST.get(o.filename, SMALL)
        if k == 0:
            away.add(o.name)
    return [o for o in files if o.name in away], [o for o in files if o.name not in away]


class Beside:
    """The second process: its id, the pipe its answer comes down, and the outputs it renders."""

    def __init__(self, pid: int, answer: int, outputs: Sequence["Output"]) -> None:
        self.pid = pid
        self.answer = answer
        self.outputs = tuple(outputs)
        self._open = True

    def finish(self) -> dict[str, tuple[str | None, int]]:
        """Wait for the second process; each of its files' SHA-256 (None unless hashed) and size.

        Raises
        ------
        StakeoutError
            The error the second process met (the same class and message), or an
            :class:`OutputError` when it ended without an answer (killed).
        """
        data = b""
        try:
            while chunk := os.read(self.answer, 1 << 16):
                data += chunk
        except BaseException:  # interrupted (SIGTERM reaches the parent alone): never wait for its work
            self.abandon()
            raise
        self._close()
        names = ", ".join(o.filename for o in self.outputs)
        if not data:
            raise OutputError(f"the second process rendering {names} ended without finishing them "
                              "(killed, or out of memory?); nothing was written")
        kind, *rest = pickle.loads(data)
        if kind == "ok":
            files: dict[str, tuple[str | None, int]] = rest[0]
            return files
        if kind == "error":
            cls, message = rest
            try:
                err = cls(message)
            except TypeError:
                err = StakeoutError(message)
            raise err
        tb: str = rest[0]
        last = tb.strip().splitlines()[-1] if tb.strip() else "no traceback"
        crash = RuntimeError(f"in the second process rendering {names}: {last}")
        crash.add_note(tb)  # the whole traceback, shown with --debug
        raise crash

    def abandon(self) -> None:
        """Kill the second process and wait for it (the build failed or was interrupted)."""
        if self._open:
            from .writers.folder import signals_held

            with signals_held():  # a second Ctrl-C would stop the wait for good: a zombie
                try:
                    os.kill(self.pid, signal.SIGKILL)
                except ProcessLookupError:
                    pass
                self._close()

    def _close(self) -> None:
        if self._open:
            self._open = False
            os.close(self.answer)
            os.waitpid(self.pid, 0)


def usable(stakes: int) -> bool:
    """Whether a build of ``stakes`` stakes renders some outputs in a second process here."""
    return (sys.platform.startswith("linux") and hasattr(os, "fork") and stakes >= MIN_STAKES
            and len(os.sched_getaffinity(0)) >= 2
            and threading.active_count() == 1)  # a lock another thread holds would stay held in the child


def start(design: "Design", files: Sequence["Output"], folder: "OutputFolder", done: "Rendered",
          stakes: int) -> tuple[Beside | None, list["Output"]]:
    """Fork the second process for its share of ``files`` (:func:`share`), when it pays.

    Call it before the build writes anything (no other thread runs then). Returns the
    second process (None: none was started, or the fork was refused) and the outputs left
    to the caller.
    """
    mine, rest = share(files)
    if not mine or not rest or not usable(stakes):
        return None, list(files)
    sys.stdout.flush()
    sys.stderr.flush()
    read, write = os.pipe()
    # no interruption may land in the child before its guard below (it would run on as the build)
    saved = signal.pthread_sigmask(signal.SIG_BLOCK, _INTERRUPTS)
    try:
        pid = os.fork()
    except OSError:  # refused (ENOMEM under strict overcommit, EAGAIN at the process limit): one process
        signal.pthread_sigmask(signal.SIG_SETMASK, saved)
        os.close(read)
        os.close(write)
        return None, list(files)
    if pid:
        b = Beside(pid, read, mine)
        try:
            os.close(write)
            signal.pthread_sigmask(signal.SIG_SETMASK, saved)  # an interruption held back lands now
        except BaseException:
            b.abandon()
            raise
        return b, rest
    _second(saved, read, write, mine, design, folder, done)


def _second(saved: "set[int | signal.Signals]", read: int, write: int, mine: Sequence["Output"], design: "Design",
            folder: "OutputFolder", done: "Rendered") -> NoReturn:
    """The second process: render, answer, and leave at once (no clean-up of the parent's)."""
    code = 0
    answer: tuple[object, ...]
    try:
        signal.pthread_sigmask(signal.SIG_SETMASK, saved)  # an interruption held back lands in here
        os.close(read)
        try:
            from .writers.folder import write_file

            answer = ("ok", {o.filename: write_file(folder, o.filename, o.chunks(design, done)) for o in mine})
        except StakeoutError as exc:
            answer = ("error", type(exc), str(exc))
        except KeyboardInterrupt:
            os._exit(130)
        except BaseException:  # a bug: its traceback goes to the parent, which reports it
            answer = ("crash", traceback.format_exc(limit=8))
        data = pickle.dumps(answer)
        while data:
            data = data[os.write(write, data):]
    except BaseException:
        code = 1
    finally:
        os._exit(code)
