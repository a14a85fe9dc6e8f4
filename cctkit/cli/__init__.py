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
import re
import sys
import time
from pathlib import Path

import typer
from typer.core import TyperCommand, TyperGroup

from .. import __version__
from ..errors import CctkitError, Stopped, stop_signals

__all__ = ["app", "main"]

_COMMAND_MODULES = ("core", "compare", "verify", "report", "batch", "blend", "uncertainty")


def _aborts() -> tuple[type[BaseException], ...]:
    """The exceptions that mean "the user stopped it" (click's own only where something loaded click)."""
    found: tuple[type[BaseException], ...] = (typer.Abort, KeyboardInterrupt)
    click = sys.modules.get("click")
    if click is not None:
        found += (click.exceptions.Abort,)
    return found


_NUMBER = {
    int: re.compile(r"[+-]?[0-9]+"),
    float: re.compile(r"[+-]?([0-9]+[.]?[0-9]*|[.][0-9]+)([eE][+-]?[0-9]+)?"),
}


class _QuickCoercion:
    """Turns the command-line text of a plain parameter (str, Path, int, float, a flag, or a list of one)
    into its value without building a validation schema, which costs more than a short command's work.

    Anything it is not sure of (a number written otherwise, a path that exists but cannot be read, another
    type) goes to the framework's own coercion, so values and error messages stay the framework's.
    """

    def __init__(self, kind: type, many: bool):
        self.kind = kind
        self.many = many

    def coerce(self, value, param, ctx):
        if value is None:
            return () if self.many else None
        try:
            if self.many:
                if isinstance(value, str):
                    raise ValueError(value)
                return [self._one(item) for item in value]
            return self._one(value)
        except ValueError:
            from typer._coercion import build_runtime_param

            param._runtime_param = build_runtime_param(param.type_descriptor)
            return param._runtime_param.coerce(value, param=param, ctx=ctx)

    def _one(self, value):
        kind = self.kind
        if isinstance(value, kind) and (kind is bool or not isinstance(value, bool)):
            return value
        if not isinstance(value, str) or kind is bool:
            raise ValueError(value)
        if kind is str:
            return value
        if kind is Path:
            try:
                os.stat(value)
            except OSError:
                return Path(value)
            if os.access(value, os.R_OK):
                return Path(value)
            raise ValueError(value)
        if _NUMBER[kind].fullmatch(value):
            return kind(value)
        raise ValueError(value)


def _install_quick_coercion(params) -> None:
    """Give each plain parameter a :class:`_QuickCoercion` (typer 0.29 and later build a validation
    schema per parameter on first use; earlier versions have no such step and are left alone)."""
    from typing import get_args, get_origin

    for param in params:
        descriptor = getattr(param, "type_descriptor", None)
        if descriptor is None or getattr(param, "_runtime_param", False) is not None:
            continue
        info = descriptor.parameter_info
        try:
            special = (
                descriptor.file_annotation is not None
                or info.parser is not None
                or info.min is not None
                or info.max is not None
                or info.clamp
                or info.exists
                or info.resolve_path
                or info.writable
                or not info.file_okay
                or not info.dir_okay
                or info.allow_dash
                or info.path_type is not None
            )
        except AttributeError:  # a framework version that describes parameters otherwise
            return
        if special:
            continue
        annotation, many = descriptor.annotation, False
        if get_origin(annotation) is list and len(get_args(annotation)) == 1:
            annotation, many = get_args(annotation)[0], True
        if annotation in (str, Path, int, float, bool):
            param._runtime_param = _QuickCoercion(annotation, many)


class _PlainUsage(TyperCommand):
    """A command whose usage line names its arguments plainly: ``FILES...``, ``T_K``, ``[NAME]``."""

    def parse_args(self, ctx, args):
        _install_quick_coercion(self.get_params(ctx))
        return super().parse_args(ctx, args)

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

    def parse_args(self, ctx, args):
        _install_quick_coercion(self.get_params(ctx))
        return super().parse_args(ctx, args)

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        from .options import set_verbosity, verbosity

        set_verbosity(0)
        args = _verbosity_first(sys.argv[1:] if args is None else list(args))
        started = time.perf_counter()
        safe_io = sys.modules.get(f"{__package__.rpartition('.')[0]}.safe_io")
        if safe_io is not None:  # only a module already loaded can hold inputs of an earlier command
            safe_io.forget_inputs()
        streams = _guard_streams()
        try:
            with _one_line_warnings(), stop_signals():
                rv = super().main(
                    args=args,
                    prog_name=prog_name or "cctkit",
                    complete_var=complete_var,
                    standalone_mode=False,
                    **extra,
                )
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
        except _aborts():
            _fail("cctkit: interrupted; nothing was written", 130)
        except OSError as exc:  # the file system refused (full, read-only, gone): name the file
            if exc.errno == errno.EPIPE:  # the reader of our output went away (e.g. `| head`)
                _quiet_exit(0)
            where = f"{exc.filename}: " if exc.filename is not None else ""
            from ..safe_io import os_error_text

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
            from ..formats import terminal_safe

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


def _root(
    version: bool = typer.Option(
        False, "--version", callback=_version, is_eager=True, help="Print the version and exit."
    ),
    quiet: bool = typer.Option(
        False,
        "--quiet",
        help="Only results and errors: no progress, notes or 'wrote' lines (before or after the command).",
    ),
    verbose: bool = typer.Option(
        False,
        "--verbose",
        help="Also the run time on stderr, and a traceback on an internal error (before or after the command).",
    ),
) -> None:
    """Colour temperature, chromaticity, colour rendering and photometry from measured spectra."""
    from .options import set_verbosity

    if quiet and verbose:
        raise CctkitError("--quiet and --verbose exclude each other")
    set_verbosity(-1 if quiet else 1 if verbose else 0)


def _build_app(modules: tuple[str, ...] = _COMMAND_MODULES) -> _App:
    """The typer app with the commands of ``modules`` (all of them by default)."""
    built = _App(
        cls=_OneLineErrors,
        add_completion=True,
        no_args_is_help=True,
        pretty_exceptions_enable=False,
        rich_markup_mode=None,
        help="Colour temperature, chromaticity, colour rendering and photometry from measured spectra.",
    )
    built.callback()(_root)
    for name in modules:
        importlib.import_module(f"{__name__}.{name}").register(built)
    return built


# The module holding each command: a run of one command imports and builds only that module's commands
# (tests/test_cli_core.py holds this table equal to what the modules register).
COMMAND_MODULE = {
    "inspect": "core",
    "cct": "core",
    "locus": "core",
    "blackbody": "core",
    "versus": "compare",
    "reference": "compare",
    "verify": "verify",
    "bin": "verify",
    "report": "report",
    "batch": "batch",
    "blend": "blend",
    "uncertainty": "uncertainty",
}

app: _App  # every command; built on first use (module __getattr__ below)


def __getattr__(name: str):
    if name == "app":
        built = _build_app()
        globals()["app"] = built
        return built
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def _app_for(args: list[str]) -> _App:
    """The app a run with these arguments needs: only the named command (and its module) where one is
    named, everything for help, completion, a mistyped command or no command."""
    if not any(k.endswith("_COMPLETE") for k in os.environ):
        for word in args:
            if word in ("--quiet", "--verbose"):
                continue
            if word in COMMAND_MODULE:
                built = _build_app((COMMAND_MODULE[word],))
                built.registered_commands = [c for c in built.registered_commands if c.name == word]
                return built
            break
    return globals().get("app") or __getattr__("app")


#: True once :func:`main` runs: the process ends when its command does (see ``options.ending_process``).
CONSOLE_RUN = False


def main() -> None:
    """Console-script entry point."""
    global CONSOLE_RUN
    CONSOLE_RUN = True
    _app_for(sys.argv[1:])()
