"""The project's exceptions and its warnings-as-data.

Library code raises these; only the command line turns them into one line on
stderr and exit status 2.  Nothing here imports the command-line framework.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from dataclasses import dataclass

__all__ = ["CctkitError", "InputError", "Stopped", "Flag"]


class CctkitError(ValueError):
    """Base class of every error cctkit raises on purpose."""


class InputError(CctkitError):
    """A file or argument cannot be used; the message names it and the cause.

    Parameters
    ----------
    message
        What is wrong and what is expected.
    source
        The file (or argument) concerned, shown first in the message.
    line
        1-based line number in ``source`` where it applies.
    """

    #: What a reader skipping bad input (``skipped=`` lists) left out because of this error:
    #: ``"file"``, ``"row"`` (a spectrum of a wide CSV or Parquet file) or ``"column"``
    #: (a spectrum of a long delimited file).
    part: str = "file"

    def __init__(self, message: str, *, source: str | None = None, line: int | None = None):
        self.source = source
        self.line = line
        self.reason = message
        where = ""
        if source is not None:
            where = f"{source}:{line}: " if line is not None else f"{source}: "
        super().__init__(f"{where}{message}")


class Stopped(BaseException):
    """The run was stopped by a signal (Ctrl-C or SIGTERM).

    A ``BaseException``, like ``KeyboardInterrupt``, so that no ``except Exception`` swallows it;
    ``code`` is the conventional exit status, 128 + the signal number.
    """

    def __init__(self, signum: int):
        import signal

        self.signum = int(signum)
        self.code = 128 + self.signum
        self.reason = (
            "interrupted" if self.signum == signal.SIGINT else f"stopped by {signal.Signals(self.signum).name}"
        )
        self.note = "nothing was written"  # what was left behind, for the one-line message
        super().__init__(self.reason)


#: Signals received by :func:`cctkit.cli`'s stop handler, in order (see :func:`raise_if_stopped`).
STOP_SIGNALS: list[int] = []


def raise_if_stopped() -> None:
    """Raise :class:`Stopped` for a signal the stop handler recorded.

    The handler raises at once too; this is the safety net at each chunk a long run writes, for a
    raise that Python code called from C may discard.
    """
    if STOP_SIGNALS:
        raise Stopped(STOP_SIGNALS[0])


#: Inside :func:`stop_signals` (a list used as a stack of flags: one entry per open context).
_OWN_HANDLERS: list[bool] = []


def quiet_arrow_signals(pa) -> None:
    """Inside :func:`stop_signals`, turn pyarrow's own stop handling off (``pa`` is the pyarrow module).

    pyarrow's CSV reader, called from the main thread, puts its own SIGINT/SIGTERM handlers in
    place for the length of the call and takes them away after; a signal that arrives as they are
    taken away is now and then lost (measured under load: 8 of 90 SIGTERMs sent to ``cctkit batch
    --workers 2`` once it was writing were never acted on, the run finishing with exit 0; 0 of 70
    with pyarrow's handling off).  With it off, our handler acts as soon as the call returns (a chunk's read is short).
    :func:`stop_signals` turns it back on when it ends; library use outside it is left alone.
    """
    if _OWN_HANDLERS and not _OWN_HANDLERS[-1]:
        pa.enable_signal_handlers(False)
        _OWN_HANDLERS[-1] = True


@contextlib.contextmanager
def stop_signals() -> Iterator[None]:
    """Ctrl-C (SIGINT) and SIGTERM raise :class:`Stopped` (recorded in :data:`STOP_SIGNALS`
    first), so every temporary file is removed on the way out; the earlier handlers come back
    afterwards.  Outside the main thread, where no handler can be set, nothing changes."""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def stop(signum, frame):
        STOP_SIGNALS.append(signum)  # for raise_if_stopped, should this raise be discarded on its way
        raise Stopped(signum)

    saved = {sig: signal.signal(sig, stop) for sig in (signal.SIGINT, signal.SIGTERM)}
    _OWN_HANDLERS.append(False)
    try:
        yield
    finally:
        for sig, handler in saved.items():
            signal.signal(sig, handler)
        STOP_SIGNALS.clear()
        if _OWN_HANDLERS.pop():  # pyarrow's stop handling was turned off: the outermost context turns it on
            if _OWN_HANDLERS:
                _OWN_HANDLERS[-1] = True
            else:
                import sys

                sys.modules["pyarrow"].enable_signal_handlers(True)


@dataclass(frozen=True)
class Flag:
    """A doubtful condition found while measuring, carried with the results.

    ``code`` is stable and machine-readable (e.g. ``"range-short"``); ``message``
    is one sentence for a person.
    """

    code: str
    message: str

    def as_dict(self) -> dict[str, str]:
        return {"code": self.code, "message": self.message}
