"""The ``cctkit`` command line: a thin layer over the library.

Each subcommand lives in a module of its own that exposes ``register(app)``;
shared options and output helpers are in :mod:`cctkit.cli.options`.  Errors the
library raises on purpose (:class:`~cctkit.errors.CctkitError`) and usage errors
become one line on stderr and exit status 2.  Heavy imports (colour-science,
matplotlib, scipy.optimize) happen inside the commands, never here.
"""

from __future__ import annotations

import importlib
import os
import sys

import typer
from typer.core import TyperGroup

from .. import __version__
from ..errors import CctkitError

__all__ = ["app", "main"]

_COMMAND_MODULES = ("core", "compare", "verify", "report", "batch", "blend", "uncertainty")


class _OneLineErrors(TyperGroup):
    """A group whose ``main`` reports every expected failure as one line, exit status 2."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        try:
            rv = super().main(args=args, prog_name=prog_name or "cctkit", complete_var=complete_var,
                              standalone_mode=False, **extra)
        except typer.TyperException as exc:  # usage errors (exit 2) and other framework errors
            ctx = getattr(exc, "ctx", None)
            name = getattr(ctx, "info_name", None)
            where = f"cctkit {name}" if name and name != "cctkit" else "cctkit"
            message = exc.format_message() if hasattr(exc, "format_message") else str(exc)
            _fail(f"{where}: {message}".replace("\n", " "), getattr(exc, "exit_code", 2))
        except CctkitError as exc:
            _fail(f"cctkit: {exc}".replace("\n", " "), 2)
        except typer.Abort:
            _fail("cctkit: aborted", 130)
        except Exception as exc:  # noqa: BLE001 - the last line of defence against tracebacks
            if os.environ.get("CCTKIT_DEBUG"):
                raise
            _fail(f"cctkit: internal error ({type(exc).__name__}: {exc}); set CCTKIT_DEBUG=1 for a traceback", 1)
        code = rv if isinstance(rv, int) else 0
        if standalone_mode:
            sys.exit(code)
        return code


def _fail(message: str, code: int):
    typer.echo(message, err=True)
    sys.exit(code)


def _version(value: bool) -> None:
    if value:
        typer.echo(f"cctkit {__version__}")
        raise typer.Exit(0)


app = typer.Typer(
    cls=_OneLineErrors,
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
    help="Colour temperature, chromaticity, colour rendering and photometry from measured spectra.",
)


@app.callback()
def _root(
    version: bool = typer.Option(False, "--version", callback=_version, is_eager=True, help="Print the version and exit."),
) -> None:
    """Colour temperature, chromaticity, colour rendering and photometry from measured spectra."""


for _name in _COMMAND_MODULES:
    importlib.import_module(f"{__name__}.{_name}").register(app)


def main() -> None:
    """Console-script entry point."""
    app()
