"""The ``cctkit`` command line: a thin layer over the library.

Each subcommand lives in a module of its own that exposes ``register(app)``;
shared options and output helpers are in :mod:`cctkit.cli.options`.  Errors the
library raises on purpose (:class:`~cctkit.errors.CctkitError`) and usage errors
become one line on stderr and exit status 2.  Heavy imports (colour-science,
matplotlib, scipy.optimize) happen inside the commands, never here.
"""

from __future__ import annotations

import contextlib
import errno
import importlib
import os
import sys
import time

import click
import typer
from typer.core import TyperCommand, TyperGroup

from .. import __version__
from ..errors import CctkitError, Stopped
from ..formats import terminal_safe
from ..safe_io import os_error_text

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
        from ..safe_io import forget_inputs
        from .options import set_verbosity, verbosity

        set_verbosity(0)
        args = _verbosity_first(sys.argv[1:] if args is None else list(args))
        started = time.perf_counter()
        forget_inputs()
        streams = _guard_streams()
        try:
            with _one_line_warnings(), _stop_signals():
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
        except Stopped as exc:
            _fail(f"cctkit: {exc.reason}; {exc.note}", exc.code)
        except (typer.Abort, click.exceptions.Abort, KeyboardInterrupt):
            _fail("cctkit: interrupted; nothing was written", 130)
        except OSError as exc:  # the file system refused (full, read-only, gone): name the file
            if exc.errno == errno.EPIPE:  # the reader of our output went away (e.g. `| head`)
                _quiet_exit(0)
            where = f"{exc.filename}: " if exc.filename is not None else ""
            _fail(f"cctkit: {where}{os_error_text(exc)}", 2)
        except MemoryError:
            _fail("cctkit: out of memory; for large lots use `cctkit batch`, which works in chunks", 2)
        except RecursionError:
            _fail("cctkit: input nested too deeply", 2)
        except Exception as exc:  # noqa: BLE001 - the last line of defence against tracebacks
            if os.environ.get("CCTKIT_DEBUG") or verbosity() > 0:
                raise
            _fail(f"cctkit: internal error, please report it ({_plain(exc)}); set CCTKIT_DEBUG=1 for the details", 1)
        finally:
            _restore_streams(streams)
        code = rv if isinstance(rv, int) else 0
        if verbosity() > 0:
            typer.echo(f"cctkit: finished in {time.perf_counter() - started:.2f} s (exit status {code})", err=True)
        if standalone_mode:
            sys.exit(code)
        return code


#: Options of the whole program that a user may also type after the command (``cctkit inspect f --quiet``).
_ANYWHERE = ("--quiet", "--verbose")


def _verbosity_first(args: list[str]) -> list[str]:
    """``args`` with ``--quiet``/``--verbose`` given after the command moved before it, where the
    program's own options are read (nothing after a ``--`` is touched)."""
    front: list[str] = []
    rest: list[str] = []
    command_seen = False
    for k, a in enumerate(args):
        if a == "--":
            rest.extend(args[k:])
            break
        if command_seen and a in _ANYWHERE:
            front.append(a)
            continue
        command_seen = command_seen or not a.startswith("-")
        rest.append(a)
    return front + rest


@contextlib.contextmanager
def _stop_signals():
    """Ctrl-C (SIGINT) and SIGTERM raise :class:`Stopped`, so every temporary file is removed on the way out."""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def stop(signum, frame):
        raise Stopped(signum)

    saved = {sig: signal.signal(sig, stop) for sig in (signal.SIGINT, signal.SIGTERM)}
    try:
        yield
    finally:
        for sig, handler in saved.items():
            signal.signal(sig, handler)


def _plain(exc: BaseException) -> str:
    """The exception's own words, on one line and without the name of a Python type."""
    text = " ".join(str(exc).split())[:200]
    return text or "no message"


def _fail(message: str, code: int):
    typer.echo(message, err=True)
    sys.exit(code)


def _quiet_exit(code: int):
    with contextlib.suppress(OSError, ValueError):
        sys.stdout = open(os.devnull, "w")  # nothing more can reach the closed pipe
    sys.exit(code)


class _SafeText:
    """A text stream that writes control characters from untrusted text as visible escapes."""

    def __init__(self, stream, keep: str):
        self._stream = stream
        self._keep = keep
        self.trusted = stream  # for text cctkit makes itself with terminal codes (the progress bar)

    def write(self, text):
        if isinstance(text, str):
            text = terminal_safe(text, keep=self._keep)
        return self._stream.write(text)

    def __getattr__(self, name):
        return getattr(self._stream, name)


def _guard_streams():
    saved = (sys.stdout, sys.stderr)
    if not isinstance(sys.stdout, _SafeText):
        sys.stdout = _SafeText(sys.stdout, keep="")
    if not isinstance(sys.stderr, _SafeText):
        sys.stderr = _SafeText(sys.stderr, keep="\r")  # the progress line redraws itself with \r
    return saved


def _restore_streams(saved) -> None:
    sys.stdout, sys.stderr = saved


@contextlib.contextmanager
def _one_line_warnings():
    """Python warnings (numpy's RuntimeWarning and the like) as one line each, without source lines."""
    import warnings

    seen: set[str] = set()

    def show(message, category, filename, lineno, file=None, line=None):
        text = " ".join(str(message).split())
        if text not in seen:
            seen.add(text)
            typer.echo(f"cctkit: warning: {text}", err=True)

    saved = warnings.showwarning
    warnings.showwarning = show
    try:
        yield
    finally:
        warnings.showwarning = saved


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
                               "(before or after the command)."),
    verbose: bool = typer.Option(False, "--verbose", help="Also the run time on stderr, and a traceback on an "
                                 "internal error (before or after the command)."),
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
