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
import time

import typer
from typer.core import TyperCommand, TyperGroup

from .. import __version__
from ..errors import CctkitError

__all__ = ["app", "main"]

_COMMAND_MODULES = ("core", "compare", "verify", "report", "batch", "blend", "uncertainty")


class _PlainUsage(TyperCommand):
    """A command whose usage line names its arguments plainly: ``FILES...``, ``T_K``, ``[NAME]``."""

    def collect_usage_pieces(self, ctx) -> list[str]:
        pieces = [self.options_metavar] if self.options_metavar else []
        for param in self.get_params(ctx):
            if getattr(param, "param_type_name", "") == "argument":
                if getattr(param, "hidden", False):
                    continue
                name = (param.metavar or (param.name or "").upper()).rstrip(".")
                if param.nargs != 1:
                    name += "..."
                pieces.append(name if param.required else f"[{name}]")
            else:
                pieces.extend(param.get_usage_pieces(ctx))
        return pieces


class _App(typer.Typer):
    """The typer app whose commands default to :class:`_PlainUsage`."""

    def command(self, *args, cls=None, **kwargs):
        return super().command(*args, cls=cls or _PlainUsage, **kwargs)


class _OneLineErrors(TyperGroup):
    """A group whose ``main`` reports every expected failure as one line, exit status 2."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        from .options import set_verbosity, verbosity

        set_verbosity(0)
        started = time.perf_counter()
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
            if os.environ.get("CCTKIT_DEBUG") or verbosity() > 0:
                raise
            _fail(f"cctkit: internal error ({type(exc).__name__}: {exc}); set CCTKIT_DEBUG=1 for a traceback", 1)
        code = rv if isinstance(rv, int) else 0
        if verbosity() > 0:
            typer.echo(f"cctkit: finished in {time.perf_counter() - started:.2f} s (exit status {code})", err=True)
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


app = _App(
    cls=_OneLineErrors,
    add_completion=True,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
    help="Colour temperature, chromaticity, colour rendering and photometry from measured spectra.",
)


@app.callback()
def _root(
    version: bool = typer.Option(False, "--version", callback=_version, is_eager=True, help="Print the version and exit."),
    quiet: bool = typer.Option(False, "--quiet", help="Only results and errors: no progress, notes or 'wrote' lines "
                               "(give it before the command)."),
    verbose: bool = typer.Option(False, "--verbose", help="Also the run time on stderr, and a traceback on an "
                                 "internal error (give it before the command)."),
) -> None:
    """Colour temperature, chromaticity, colour rendering and photometry from measured spectra."""
    from .options import set_verbosity

    if quiet and verbose:
        raise CctkitError("--quiet and --verbose exclude each other")
    set_verbosity(-1 if quiet else 1 if verbose else 0)


for _name in _COMMAND_MODULES:
    importlib.import_module(f"{__name__}.{_name}").register(app)


def main() -> None:
    """Console-script entry point."""
    app()
