"""The ``stakeout`` command line: wiring only.

Exit codes: 0 success; 1 a check found stakes out of tolerance, duplicated
or unmatched; 2 bad input (one line on stderr, no traceback; ``--debug``
shows one); 3 an internal error (a bug: please report it); 130 interrupted.
"""

from __future__ import annotations

from typing import Callable, Optional, TypeVar

import typer

from .errors import StakeoutError
from .outputs import only_help

__all__ = ["app", "main"]

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    help="Stake points, setout sheets and staked-point checks from one job file. "
    "Results must be checked independently; local codes and a licensed surveyor's judgement govern.",
    pretty_exceptions_enable=False,
)

T = TypeVar("T")


def _guard(debug: bool, fn: Callable[[], T]) -> T:
    try:
        return fn()
    except StakeoutError as exc:
        if debug:
            raise
        typer.echo(f"stakeout: error: {exc}", err=True)
        raise typer.Exit(2) from None
    except KeyboardInterrupt:
        typer.echo("stakeout: interrupted; nothing was written", err=True)
        raise typer.Exit(130) from None
    except typer.Exit:
        raise
    except Exception as exc:  # a bug, not bad input: say so in one line
        if debug:
            raise
        typer.echo(f"stakeout: internal error ({type(exc).__name__}: {exc}); nothing was written. "
                   "Please report it with the job file; --debug shows the traceback", err=True)
        raise typer.Exit(3) from None


@app.command()
def build(
    job: str = typer.Argument(..., help="The job file (TOML, format 1)."),
    out: str = typer.Option(..., "--out", "-o", help="Folder to write the outputs into."),
    only: Optional[str] = typer.Option(None, "--only", help=only_help()),
    force: bool = typer.Option(False, "--force", help="Replace an existing, non-empty output folder."),
    debug: bool = typer.Option(False, "--debug", help="Show a traceback on errors."),
) -> None:
    """Compute the job and write its stake files into one folder."""
    from .pipeline import run_build

    for note in _guard(debug, lambda: run_build(job, out, only, force)):
        typer.echo(note, err=True)


@app.command()
def curve(
    job: str = typer.Argument(..., help="The job file (TOML, format 1)."),
    debug: bool = typer.Option(False, "--debug", help="Show a traceback on errors."),
) -> None:
    """Print the alignment's elements, key points and curve data."""
    from .pipeline import run_curve_report

    typer.echo(_guard(debug, lambda: run_curve_report(job)), nl=False)


@app.command()
def check(
    job: str = typer.Argument(..., help="The job file (TOML, format 1) with a [check] table."),
    staked: str = typer.Argument(..., help="The staked points exported by the data collector."),
    out: str = typer.Option(..., "--out", "-o", help="Folder to write check.csv and check.txt into."),
    force: bool = typer.Option(False, "--force", help="Replace an existing, non-empty output folder."),
    columns: Optional[str] = typer.Option(None, "--columns", help="Column order of the staked file, e.g. "
                                          "point,easting,northing,elevation,description (skip ignores one)."),
    delimiter: str = typer.Option("auto", "--delimiter", help="auto, comma, semicolon, tab or space."),
    debug: bool = typer.Option(False, "--debug", help="Show a traceback on errors."),
) -> None:
    """Check staked shots against design; exit 1 if any needs attention."""
    from .pipeline import run_check

    ok, notes = _guard(debug, lambda: run_check(job, staked, out, force, columns, delimiter))
    for note in notes:
        typer.echo(note, err=True)
    if not ok:
        raise typer.Exit(1)


def main() -> None:
    """Console-script entry point."""
    app(prog_name="stakeout")


if __name__ == "__main__":  # pragma: no cover
    main()
