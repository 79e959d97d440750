"""The ``freezeout`` command line: a thin layer over :mod:`freezeout.api`.

Each command parses its options, calls the API, renders the result and maps errors to exit
codes: 0 success, 1 fit failure, 2 bad input; ``qualify`` adds 3 (lot rejected) and 4
(indeterminate). The API imports the numerical stack only when a call runs, so
``freezeout --help`` answers at once.
"""

from __future__ import annotations

import os
import sys
from typing import Annotated

import typer

from freezeout.cli import (
    fit_cmd,
    history_cmd,
    materials_cmd,
    plan_cmd,
    qualify_cmd,
    reduce_cmd,
    simulate_cmd,
)
from freezeout.cli.render import clean
from freezeout.errors import FitError, InputError

app = typer.Typer(
    name="freezeout",
    help="Fit temperature-dependent Hall runs to an equilibrium carrier model, reduce raw "
    "van der Pauw readings, and qualify incoming wafer lots.",
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
)

def _print_version(value: bool) -> None:
    if value:
        from freezeout.api import __version__

        typer.echo(f"freezeout {__version__}")
        raise typer.Exit(0)


@app.callback()
def _options(
    version: Annotated[bool, typer.Option(
        "--version", help="Print the version and exit.", is_eager=True,
        callback=_print_version)] = False,
) -> None:
    """Options before the command."""


app.command("fit", help=fit_cmd.HELP)(fit_cmd.fit_command)
app.command("simulate", help=simulate_cmd.HELP)(simulate_cmd.simulate_command)
app.command("materials", help=materials_cmd.HELP)(materials_cmd.materials_command)
app.command("reduce", help=reduce_cmd.HELP)(reduce_cmd.reduce_command)
app.command("qualify", help=qualify_cmd.HELP)(qualify_cmd.qualify_command)
app.command("history", help=history_cmd.HELP)(history_cmd.history_command)
app.command("plan", help=plan_cmd.HELP)(plan_cmd.plan_command)


def main() -> None:
    """Console-script entry point: run the app, turning errors into messages and exit codes."""
    try:
        rv = app(standalone_mode=False)
    except InputError as exc:
        sys.stderr.write(f"freezeout: error: {clean(exc)}\n")
        sys.exit(2)
    except FitError as exc:
        sys.stderr.write(f"freezeout: fit failed: {clean(exc)}\n")
        sys.exit(1)
    except typer.Exit as exc:
        sys.exit(exc.exit_code)
    except typer.Abort:
        sys.stderr.write("aborted\n")
        sys.exit(130)
    except KeyboardInterrupt:
        sys.stderr.write("interrupted\n")
        sys.exit(130)
    except OSError as exc:  # a file or folder that cannot be written or read
        where = f" {clean(exc.filename)}" if getattr(exc, "filename", None) else ""
        sys.stderr.write(f"freezeout: error: cannot use{where}: {clean(exc.strerror or exc)}\n")
        sys.exit(2)
    except Exception as exc:
        if type(exc).__module__.startswith("sqlalchemy"):
            orig = getattr(exc, "orig", None) or exc
            first = clean(str(orig).splitlines()[0])
            sys.stderr.write(f"freezeout: error: history database: {first}"
                             " (check --db or $FREEZEOUT_DB)\n")
            sys.exit(2)
        if hasattr(exc, "show") and hasattr(exc, "exit_code"):
            # a usage error of the command-line parser (typer/click): its own message
            exc.show()
            sys.exit(exc.exit_code)
        if os.environ.get("FREEZEOUT_DEBUG"):  # a bug: FREEZEOUT_DEBUG=1 shows the traceback
            raise
        sys.stderr.write(f"freezeout: internal error: {type(exc).__name__}: {clean(exc)}\n"
                         "(set FREEZEOUT_DEBUG=1 for the traceback, and please report it)\n")
        sys.exit(1)
    sys.exit(rv if isinstance(rv, int) else 0)


if __name__ == "__main__":  # pragma: no cover
    main()
