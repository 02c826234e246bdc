"""The ``stakeout`` command line: wiring only.

Exit codes: 0 success; 1 a check found stakes out of tolerance, duplicated
or unmatched; 2 bad input (one line on stderr, no traceback; ``--debug``
shows one); 3 an internal error (a bug: please report it); 130 interrupted
(Ctrl-C), 143 terminated (SIGTERM), 129 hung up (SIGHUP).

SIGTERM and SIGHUP are treated like Ctrl-C while a command runs: the
temporary output folder is removed and nothing is written (a SIGHUP that
is ignored, as under ``nohup``, stays ignored).  An interruption after the
new outputs were moved into place says so: they are complete.
"""

from __future__ import annotations

import errno
import signal
import sys
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Callable, Optional, TypeVar

import typer

from .errors import StakeoutError
from .outputs import only_help
from .textsafety import escape_text

__all__ = ["app", "main", "Terminated"]


class Terminated(KeyboardInterrupt):
    """SIGTERM or SIGHUP, raised like Ctrl-C so that clean-up runs.

    Parameters
    ----------
    signum : int
        The signal received.
    """

    def __init__(self, signum: int):
        super().__init__(signum)
        self.signum = signum


def _raise_terminated(signum: int, frame: object) -> None:
    raise Terminated(signum)


@contextmanager
def _signals_as_interrupts() -> Iterator[None]:
    """While a command runs, SIGTERM and SIGHUP raise :class:`Terminated`."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    saved = {}
    for name in ("SIGTERM", "SIGHUP"):
        s = getattr(signal, name, None)
        if s is None or signal.getsignal(s) == signal.SIG_IGN:
            continue
        saved[s] = signal.signal(s, _raise_terminated)
    try:
        yield
    finally:
        for s, h in saved.items():
            signal.signal(s, h)


def _signal_name(signum: int) -> str:
    try:
        return signal.Signals(signum).name
    except ValueError:
        return f"signal {signum}"

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    help="Stake points, setout sheets and staked-point checks from one job file. "
    "Results must be checked independently; local codes and a licensed surveyor's judgement govern.",
    pretty_exceptions_enable=False,
    rich_markup_mode=None,  # help texts name TOML tables like [check]: print them as written
)


def _version(value: bool) -> None:
    if value:
        from . import __version__

        typer.echo(f"stakeout {__version__}")
        raise typer.Exit(0)


@app.callback()
def _main(
    version: bool = typer.Option(False, "--version", callback=_version, is_eager=True,
                                 help="Print the version and exit."),
) -> None:
    """Stake points, setout sheets and staked-point checks from one job file.

    Results must be checked independently; local codes and a licensed surveyor's judgement govern.
    """

T = TypeVar("T")


class _StdoutFailed(Exception):
    """Standard output cannot be written (a full disk, a closed pipe)."""

    def __init__(self, exc: OSError):
        super().__init__(exc.strerror or str(exc))
        self.errno = exc.errno


def _say(text: str, err: bool = False, nl: bool = True) -> None:
    """Print to the console: control characters escaped (nothing printed can
    drive the terminal or forge a line), what the console's encoding cannot
    show replaced (``?``).  A failure to write stderr is ignored (nothing
    more can be said there); one of stdout raises :class:`_StdoutFailed`.
    """
    stream = sys.stderr if err else sys.stdout
    if stream is None:
        return
    text = escape_text(text, keep="\n") + ("\n" if nl else "")
    enc = getattr(stream, "encoding", None) or "utf-8"
    try:
        text = text.encode(enc, errors="replace").decode(enc, errors="replace")
    except LookupError:
        text = text.encode("ascii", errors="replace").decode("ascii")
    try:
        stream.write(text)
        stream.flush()
    except (OSError, ValueError) as exc:
        if err:
            return
        raise _StdoutFailed(exc if isinstance(exc, OSError) else OSError(errno.EBADF, str(exc))) from None


def _print_result(text: str) -> None:
    """Print a command's report on stdout; a full disk or closed stdout is exit 2 with a line
    (a reader that stopped reading, as ``| head``, ends it quietly).
    """
    try:
        _say(text, nl=False)
    except _StdoutFailed as exc:
        if exc.errno == errno.EPIPE:
            raise typer.Exit(0) from None
        _say(f"stakeout: error: cannot write to standard output ({exc}); nothing more was printed", err=True)
        raise typer.Exit(2) from None


def _guard(debug: bool, fn: Callable[[], T]) -> T:
    from .writers.folder import InterruptedAfterCommit, committed_targets

    before = len(committed_targets())
    try:
        with _signals_as_interrupts():
            return fn()
    except StakeoutError as exc:
        if debug:
            raise
        _say(f"stakeout: error: {exc}", err=True)
        raise typer.Exit(2) from None
    except InterruptedAfterCommit as exc:
        how = "interrupted" if exc.signum == signal.SIGINT else f"terminated ({_signal_name(exc.signum)})"
        msg = f"stakeout: {how} after the new outputs were moved into place; {exc.target} is complete"
        if exc.remains is not None:
            msg += (f"; the replaced folder was not fully deleted: its remains ({exc.remains.name}) are "
                    "deleted by the next run with the same --out")
        _say(msg, err=True)
        raise typer.Exit(128 + exc.signum) from None
    except KeyboardInterrupt as exc:  # Ctrl-C, or Terminated (SIGTERM, SIGHUP)
        signum = int(getattr(exc, "signum", signal.SIGINT))
        how = "interrupted" if signum == signal.SIGINT else f"terminated ({_signal_name(signum)})"
        done = committed_targets()[before:]
        if done:
            _say(f"stakeout: {how} after the outputs were written; {done[-1]} is complete", err=True)
        else:
            _say(f"stakeout: {how}; nothing was written", err=True)
        raise typer.Exit(128 + signum) from None
    except typer.Exit:
        raise
    except Exception as exc:  # a bug, not bad input: say so in one line
        if debug:
            raise
        _say(f"stakeout: internal error ({type(exc).__name__}: {exc}); nothing was written. "
             "Please report it with the job file; --debug shows the traceback", err=True)
        raise typer.Exit(3) from None


_WIDE_HELP = ("Print setout.txt and deflections.txt one line per stake, headers and notes wrapped at 132 columns "
              "(default: 80 columns, a stake's further columns run on to the next line).")


@app.command()
def build(
    job: str = typer.Argument(..., help="The job file (TOML, format 1)."),
    out: str = typer.Option(..., "--out", "-o", help="Folder to write the outputs into."),
    only: Optional[str] = typer.Option(None, "--only", help=only_help()),
    force: bool = typer.Option(False, "--force", help="Replace an existing, non-empty output folder."),
    wide: bool = typer.Option(False, "--wide", help=_WIDE_HELP),
    debug: bool = typer.Option(False, "--debug", help="Show a traceback on errors."),
) -> None:
    """Compute the job and write its stake files into one folder."""
    from .pipeline import run_build

    for note in _guard(debug, lambda: run_build(job, out, only, force, wide)):
        _say(note, err=True)


@app.command()
def curve(
    job: str = typer.Argument(..., help="The job file (TOML, format 1)."),
    debug: bool = typer.Option(False, "--debug", help="Show a traceback on errors."),
) -> None:
    """Print the alignment's elements, key points and curve data."""
    from .pipeline import run_curve_report

    _print_result(_guard(debug, lambda: run_curve_report(job)))


@app.command()
def check(
    job: str = typer.Argument(..., help="The job file (TOML, format 1) with a [check] table."),
    staked: str = typer.Argument(..., help="The staked points exported by the data collector."),
    out: str = typer.Option(..., "--out", "-o", help="Folder to write check.csv, check.txt and restake.csv into."),
    force: bool = typer.Option(False, "--force", help="Replace an existing, non-empty output folder."),
    columns: Optional[str] = typer.Option(None, "--columns", help="Column order of the staked file, e.g. "
                                          "point,easting,northing,elevation,description (skip ignores one)."),
    delimiter: str = typer.Option("auto", "--delimiter", help="auto, comma, semicolon, tab or space."),
    wide: bool = typer.Option(False, "--wide", help="Print check.txt one line per shot where it fits 132 columns "
                              "(default 80)."),
    debug: bool = typer.Option(False, "--debug", help="Show a traceback on errors."),
) -> None:
    """Check staked shots against design; exit 1 if any needs attention."""
    from .pipeline import run_check

    ok, notes = _guard(debug, lambda: run_check(job, staked, out, force, columns, delimiter, wide))
    for note in notes:
        _say(note, err=True)
    if not ok:
        raise typer.Exit(1)


@app.command()
def inspect(
    design_file: str = typer.Argument(..., help="A LandXML 1.2 design file."),
    debug: bool = typer.Option(False, "--debug", help="Show a traceback on errors."),
) -> None:
    """Show what a LandXML design file holds: units, alignments, profiles, points."""
    from .pipeline import run_inspect

    _print_result(_guard(debug, lambda: run_inspect(design_file)))


def main() -> None:
    """Console-script entry point.

    A command runs once and ends, so the process skips what only a
    long-lived one needs: the cyclic garbage collector (the work makes
    next to no reference cycles) and the teardown of every imported module
    at exit (a fifth of a small build's time).  By then the outputs are
    committed and synced; the standard streams are flushed before the
    process ends with the command's exit code.  Calling :data:`app` (as the
    tests do) keeps the ordinary behaviour.
    """
    import gc
    import os
    import sys

    gc.disable()
    try:
        app(prog_name="stakeout")
        code = 0
    except SystemExit as exc:  # how click ends every command
        if exc.code is None or isinstance(exc.code, int):
            code = exc.code or 0
        else:
            print(exc.code, file=sys.stderr)
            code = 1
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):  # a closed pipe: nothing more can be said
            pass
    os._exit(code)


if __name__ == "__main__":  # pragma: no cover
    main()
