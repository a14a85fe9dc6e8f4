"""Progress of long runs on stderr: a live bar on a terminal, plain lines anywhere else.

On a terminal the bar is drawn by rich (installed with typer); written to a file, a pipe or
a CI log, each report is one complete line (no carriage returns running together), at
most one every ``plain_interval_s``.
"""

from __future__ import annotations

import math
import sys
import time
from typing import Any, TextIO

__all__ = ["Progress"]


def _clock(seconds: float) -> str:
    s = int(round(seconds))
    h, rem = divmod(s, 3600)
    m, s = divmod(rem, 60)
    return f"{h}:{m:02d}:{s:02d}" if h else f"{m}:{s:02d}"


class Progress:
    """Spectra done, spectra/s and time left, reported on ``stream`` (default stderr).

    Parameters
    ----------
    total
        Spectra expected, or None when unknown.
    stream
        Where to report; a terminal gets a live bar, anything else plain lines.
    enabled
        False counts without printing.
    interval_s
        Least time between two plain lines [s] (the live bar redraws on its own).
    """

    def __init__(
        self, total: int | None, *, stream: TextIO | None = None, enabled: bool = True, interval_s: float = 2.0
    ):
        self.total = total
        # the command line escapes control characters on stderr; the bar's own escape codes must pass
        self.stream = stream if stream is not None else getattr(sys.stderr, "trusted", sys.stderr)
        self.enabled = enabled
        self.interval_s = interval_s
        self.done = 0
        self._t0 = time.perf_counter()
        self._last = -math.inf
        self._bar: Any = None
        self._task: Any = None
        isatty = getattr(self.stream, "isatty", None)
        if enabled and callable(isatty) and isatty():
            self._start_bar()

    @property
    def live(self) -> bool:
        """True when a live bar is drawn (the stream is a terminal)."""
        return self._bar is not None

    @property
    def elapsed_s(self) -> float:
        return time.perf_counter() - self._t0

    def rate(self) -> float:
        t = self.elapsed_s
        return self.done / t if t > 0 else 0.0

    def line(self) -> str:
        """The plain report: ``250/1,000 spectra ( 25.0%)  812 spectra/s  ETA 0:01``."""
        rate = self.rate()
        if self.total:
            total = max(self.total, self.done)
            pct = 100.0 * self.done / total
            eta = (total - self.done) / rate if rate > 0 else math.inf
            eta_text = _clock(eta) if math.isfinite(eta) else "--:--"
            return f"{self.done:,}/{total:,} spectra ({pct:5.1f}%)  {rate:,.0f} spectra/s  ETA {eta_text}"
        return f"{self.done:,} spectra  {rate:,.0f} spectra/s  {_clock(self.elapsed_s)} elapsed"

    def update(self, n: int) -> None:
        self.done += n
        if not self.enabled:
            return
        if self._bar is not None:
            self._bar.update(self._task, completed=self.done, total=max(self.total or 0, self.done) or None)
            return
        now = time.perf_counter()
        if now - self._last >= self.interval_s:
            self._last = now
            self._write_line()

    def finish(self) -> None:
        if not self.enabled:
            return
        if self._bar is not None:
            self._bar.update(self._task, completed=self.done, total=max(self.total or 0, self.done) or None)
            self._bar.stop()
            self._bar = None
            return
        self._write_line()

    def _write_line(self) -> None:
        self.stream.write(self.line() + "\n")
        self.stream.flush()

    def _start_bar(self) -> None:
        from rich.console import Console
        from rich.progress import BarColumn, TextColumn, TimeElapsedColumn, TimeRemainingColumn
        from rich.progress import Progress as LiveBar

        console = Console(file=self.stream, stderr=self.stream is sys.stderr)
        self._bar = LiveBar(
            TextColumn("{task.description}"),
            BarColumn(),
            TextColumn(
                "{task.completed:,.0f}/{task.total:,.0f} spectra" if self.total else "{task.completed:,.0f} spectra"
            ),
            TimeElapsedColumn(),
            TextColumn("left"),
            TimeRemainingColumn(),
            console=console,
            transient=False,
        )
        self._task = self._bar.add_task("analysing", total=self.total or None)
        self._bar.start()
