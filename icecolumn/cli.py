"""Command-line interface ``icecolumn``: a thin shell over the Python API.

This module holds the application, its error handling and the list of command modules
(``cli_<name>.py``).  Every command parses its arguments, calls the API and prints.  Errors the user
can fix (:class:`~icecolumn.errors.IceColumnError`, an unreadable path, a bad
command line) are printed as one line ``icecolumn: error: <message>`` on
stderr with exit code 2; anything unexpected prints one ``internal error``
line with exit code 1.  ``--debug`` shows the full traceback instead.
"""

from __future__ import annotations

import sys
from typing import Annotated

import typer
from typer.core import TyperGroup

from . import cli_buoy, cli_calibrate, cli_check, cli_demo, cli_ensemble, cli_forecast, cli_laws, cli_plot, cli_run
from ._version import __version__
from .cli_common import warnings_as_lines
from .errors import IceColumnError

PROG = "icecolumn"


# --------------------------------------------------------------------------- error handling


def _one_line(text: str) -> str:
    return " ".join(str(text).split())


def _error(message: str) -> int:
    sys.stderr.write(f"{PROG}: error: {_one_line(message)}\n")
    return 2


class _Group(TyperGroup):
    """Root command: turns every failure into one line on stderr and an exit code."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        argv = list(sys.argv[1:] if args is None else args)
        debug = "--debug" in argv[: argv.index("--") if "--" in argv else len(argv)]
        try:
            with warnings_as_lines(debug):  # a warning is one line 'icecolumn: warning: ...'
                rv = super().main(args=argv, prog_name=prog_name or PROG, complete_var=complete_var,
                                  standalone_mode=False, **extra)
            code = rv if isinstance(rv, int) else 0
        except typer.Exit as exc:
            code = exc.exit_code
        except typer.Abort:
            sys.stderr.write(f"{PROG}: interrupted\n")
            code = 130
        except typer.TyperException as exc:
            if type(exc).__name__ == "NoArgsIsHelpError":  # bare 'icecolumn': show the help
                sys.stderr.write(exc.format_message().rstrip() + "\n")
                code = 2
            else:  # a bad command line: one line even with --debug
                code = _error(exc.format_message())
        except IceColumnError as exc:
            if debug:
                raise
            code = _error(str(exc))
        except OSError as exc:
            if debug:
                raise
            where = f"{exc.filename}: " if exc.filename else ""
            code = _error(f"{where}{exc.strerror or exc}")
        except KeyboardInterrupt:
            sys.stderr.write(f"\n{PROG}: interrupted\n")
            code = 130
        except Exception as exc:  # noqa: BLE001 - last resort, one line unless --debug
            if debug:
                raise
            sys.stderr.write(f"{PROG}: internal error: {type(exc).__name__}: {_one_line(exc)} "
                             f"(run with --debug for details)\n")
            code = 1
        if standalone_mode:
            sys.exit(code)
        return code


app = typer.Typer(cls=_Group, add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False,
                  rich_markup_mode=None,
                  help="Landfast sea-ice growth in a 1-D mushy-layer column: run, compare with "
                       "growth laws, plot.")


def _show_version(value: bool) -> None:
    if value:
        typer.echo(f"{PROG} {__version__}")
        raise typer.Exit(0)


@app.callback()
def _root(
    version: Annotated[bool, typer.Option("--version", callback=_show_version, is_eager=True,
                                          help="Print the version and exit.")] = False,
    debug: Annotated[bool, typer.Option("--debug", help="Show full tracebacks on errors.")] = False,
) -> None:
    """Landfast sea-ice growth in a 1-D mushy-layer column: run, compare with growth laws, plot."""


# --------------------------------------------------------------------------- commands

# Every command lives in a module ``icecolumn/cli_<name>.py`` whose ``COMMANDS`` maps the
# command name to its function; they are registered here, in this order (the order of the
# help).  The command modules import only :mod:`icecolumn.cli_common`, never this module.
for _module in (cli_run, cli_demo, cli_check, cli_laws, cli_plot, cli_forecast, cli_calibrate, cli_ensemble,
                cli_buoy):
    for _name, _command in _module.COMMANDS.items():
        app.command(_name)(_command)


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``icecolumn`` script; returns the exit code."""
    return typer.main.get_command(app).main(args=argv, prog_name=PROG, standalone_mode=False)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
