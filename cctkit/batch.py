"""Batch runs over many spectra: one chunk function, streamed input, ordered output.

The unit of work is a chunk of spectra.  :func:`chunk_results` (arrays in) and
:func:`spectra_results` (a :class:`~cctkit.spectra.Spectra` in) run
:func:`cctkit.analysis.analyse` on one chunk and return a *table*: a dict of
column name -> 1-D array, one row per spectrum, with the same columns and
numbers as the CSV that ``cctkit inspect --output x.csv`` writes (list fields
numbered ``R1..R14``, ``Rf_h1..Rf_h16``, flags as ``;``-joined codes).

:func:`run_batch` reads a :class:`~cctkit.readers.wide.ChunkedInput` chunk by
chunk, maps the chunk function over the chunks -- inline, on a local
:class:`concurrent.futures.ProcessPoolExecutor`, or on a Dask cluster through
``dask.distributed.Client(address)`` -- with a bounded number of chunks in
flight, and writes the tables *in input order* as they arrive: CSV appended to a
temporary file, Parquet through :class:`pyarrow.parquet.ParquetWriter`, renamed
into place only when every chunk succeeded (:func:`cctkit.safe_io.atomic_path`).
Peak memory is therefore a few chunks, whatever the input size.

Numbers do not depend on how the input is cut into chunks or where a chunk
runs, up to the last bits of a float: the measures are matrix products, and
BLAS may round a dot product differently for a different number of rows.  Runs
over the same chunks give identical bytes.
"""

from __future__ import annotations

import csv
import json
import math
import os
import sys
import time
from collections import deque
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Iterator, Sequence, TextIO

import numpy as np

from .errors import Flag, InputError
from .spectra import Quantity, Spectra

__all__ = [
    "chunk_results",
    "spectra_results",
    "flatten_record",
    "records_table",
    "run_batch",
    "BatchSummary",
    "Progress",
    "default_workers",
    "OUTPUT_SUFFIXES",
]

OUTPUT_SUFFIXES = (".csv", ".parquet")
_STRING_COLUMNS = frozenset({"name", "source", "sha256", "quantity", "spectral_unit", "reference", "flags"})


# --------------------------------------------------------------------------- the chunk function


def chunk_results(
    values: np.ndarray,
    wavelength_nm: np.ndarray,
    quantity: Quantity | str,
    names: Sequence[str],
    *,
    sources: Sequence[str] = (),
    sha256: Sequence[str] = (),
    flags: Sequence[Sequence[Flag]] = (),
    measured_range_nm: Sequence[tuple[float, float, float]] = (),
    observer: int = 2,
    rendering: bool = True,
) -> dict[str, np.ndarray]:
    """Every measure for a chunk of spectra, as a table of columns.

    Parameters
    ----------
    values
        Spectral values, shape (n, L) [unit of ``quantity``].
    wavelength_nm
        Wavelength axis, shape (L,) [nm].
    quantity
        Radiometric quantity of ``values``.
    names
        One name per spectrum.
    sources, sha256, flags, measured_range_nm
        Provenance per spectrum (as in :class:`~cctkit.spectra.Spectra`).
    observer
        2 or 10 (see :func:`cctkit.analysis.analyse`).
    rendering
        Compute CIE 13.3 and CIE 224 / TM-30 colour rendering.

    Returns
    -------
    dict[str, numpy.ndarray]
        One 1-D array of length n per column (see :func:`records_table`).
    """
    spectra = Spectra(
        wavelength_nm=wavelength_nm,
        values=values,
        names=tuple(names),
        quantity=quantity,
        sources=tuple(sources),
        sha256=tuple(sha256),
        flags=tuple(tuple(f) for f in flags),
        measured_range_nm=tuple(measured_range_nm),
    )
    return spectra_results(spectra, observer=observer, rendering=rendering)


def spectra_results(spectra: Spectra, *, observer: int = 2, rendering: bool = True) -> dict[str, np.ndarray]:
    """:func:`chunk_results` for spectra already held in a :class:`~cctkit.spectra.Spectra`."""
    from .analysis import analyse

    analysis = analyse(spectra, observer=observer, rendering=rendering)
    # Analysis.records() is the one definition of the per-spectrum record; flattening it keeps
    # batch output and `inspect` output the same by construction.
    return records_table(analysis.records())


def flatten_record(rec: dict[str, Any]) -> dict[str, Any]:
    """One flat row from a record: lists become numbered columns, flags ``;``-joined codes.

    ``R`` becomes ``R1..R14``; ``measured_range_nm`` becomes ``measured_range_nm_lo/_hi``;
    any other list ``k`` becomes ``k1..kn`` (``Rf_h1..Rf_h16``).
    """
    out: dict[str, Any] = {}
    for k, v in rec.items():
        if k == "flags":
            out["flags"] = ";".join(f["code"] for f in v)
        elif k == "R" and isinstance(v, list):
            out.update({f"R{i + 1}": x for i, x in enumerate(v)})
        elif isinstance(v, list):
            if k.startswith("measured_range"):
                out[f"{k}_lo"], out[f"{k}_hi"] = v
            else:
                out.update({f"{k}{i + 1}": x for i, x in enumerate(v)})
        else:
            out[k] = v
    return out


def records_table(records: Sequence[dict[str, Any]]) -> dict[str, np.ndarray]:
    """Columns from records: float64 (NaN for missing), int64, bool, or object (str/None)."""
    flat = [flatten_record(r) for r in records]
    keys: dict[str, None] = {}
    for r in flat:
        keys.update(dict.fromkeys(r))
    return {k: _column(k, [r.get(k) for r in flat]) for k in keys}


def _column(key: str, items: list[Any]) -> np.ndarray:
    present = [x for x in items if x is not None]
    if key in _STRING_COLUMNS or any(isinstance(x, str) for x in present):
        return np.array(items, dtype=object)
    if present and all(isinstance(x, (bool, np.bool_)) for x in present):
        return np.array(items, dtype=bool if len(present) == len(items) else object)
    if present and len(present) == len(items) and all(isinstance(x, (int, np.integer)) for x in present):
        return np.array(items, dtype=np.int64)
    try:
        return np.array([np.nan if x is None else x for x in items], dtype=np.float64)
    except (TypeError, ValueError):
        return np.array(items, dtype=object)


def _work(spectra: Spectra, observer: int, rendering: bool) -> dict[str, np.ndarray]:
    """What a worker runs: one chunk in, one table out (module level so it pickles)."""
    return spectra_results(spectra, observer=observer, rendering=rendering)


# --------------------------------------------------------------------------- writers


class _CsvWriter:
    """CSV rows appended chunk by chunk; numbers as ``inspect`` writes them (repr, empty for missing)."""

    def __init__(self, path: Path):
        self._fh: TextIO = open(path, "w", encoding="utf-8", newline="")
        self._w = csv.writer(self._fh, lineterminator="\n")
        self.columns: list[str] | None = None

    def write(self, table: dict[str, np.ndarray]) -> None:
        if self.columns is None:
            self.columns = list(table)
            self._w.writerow(self.columns)
        n = _table_rows(table)
        cols = [_as_cells(table.get(k), n) for k in _checked_columns(self.columns, table)]
        self._w.writerows(zip(*cols))

    def close(self) -> None:
        self._fh.flush()
        os.fsync(self._fh.fileno())
        self._fh.close()


def _table_rows(table: dict[str, np.ndarray]) -> int:
    return len(next(iter(table.values()))) if table else 0


def _checked_columns(columns: list[str], table: dict[str, np.ndarray]) -> list[str]:
    extra = [k for k in table if k not in columns]
    if extra:
        raise RuntimeError(f"a chunk produced columns the first chunk did not: {', '.join(extra)}")
    return columns


def _as_cells(col: np.ndarray | None, n: int) -> list[Any]:
    if col is None:
        return [None] * n
    if col.dtype == np.float64:
        return [None if x != x or x in (math.inf, -math.inf) else x for x in col.tolist()]
    return col.tolist()


class _ParquetWriter:
    """Parquet row groups appended chunk by chunk; missing numbers are nulls."""

    def __init__(self, path: Path, metadata: dict[str, str]):
        self._path = path
        self._metadata = metadata
        self._writer = None
        self._schema = None
        self.columns: list[str] | None = None

    def write(self, table: dict[str, np.ndarray]) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        if self._writer is None:
            self.columns = list(table)
            fields = [pa.field(k, _arrow_type(k, table[k])) for k in self.columns]
            self._schema = pa.schema(fields, metadata={k.encode(): v.encode() for k, v in self._metadata.items()})
            self._writer = pq.ParquetWriter(self._path, self._schema)
        n = _table_rows(table)
        arrays = []
        for f in self._schema:
            col = table.get(f.name)
            if col is None:
                arrays.append(pa.nulls(n, type=f.type))
            elif col.dtype == np.float64:
                arrays.append(pa.array(col, type=f.type, mask=~np.isfinite(col)))
            else:
                arrays.append(pa.array(col.tolist(), type=f.type))
        _checked_columns(self.columns, table)
        self._writer.write_table(pa.Table.from_arrays(arrays, schema=self._schema))

    def close(self) -> None:
        if self._writer is not None:
            self._writer.close()


def _arrow_type(key: str, col: np.ndarray):
    import pyarrow as pa

    if col.dtype == np.float64:
        return pa.float64()
    if col.dtype == np.int64:
        return pa.int64()
    if col.dtype == bool:
        return pa.bool_()
    present = [x for x in col.tolist() if x is not None]
    if key not in _STRING_COLUMNS and present and all(isinstance(x, bool) for x in present):
        return pa.bool_()
    return pa.string()


# --------------------------------------------------------------------------- progress


class Progress:
    """A one-line progress report on a stream: spectra done, spectra/s and ETA, redrawn with ``\\r``."""

    def __init__(self, total: int | None, *, stream: TextIO | None = None, enabled: bool = True, interval_s: float = 0.2):
        self.total = total
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = enabled
        self.interval_s = interval_s
        self.done = 0
        self._t0 = time.perf_counter()
        self._last = -math.inf
        self._width = 0

    @property
    def elapsed_s(self) -> float:
        return time.perf_counter() - self._t0

    def rate(self) -> float:
        t = self.elapsed_s
        return self.done / t if t > 0 else 0.0

    def line(self) -> str:
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
        now = time.perf_counter()
        if self.enabled and now - self._last >= self.interval_s:
            self._last = now
            self._draw(self.line())

    def finish(self) -> None:
        if self.enabled:
            self._draw(self.line())
            self.stream.write("\n")
            self.stream.flush()

    def _draw(self, text: str) -> None:
        pad = max(self._width - len(text), 0)
        self._width = len(text)
        self.stream.write("\r" + text + " " * pad)
        self.stream.flush()


def _clock(seconds: float) -> str:
    s = int(round(seconds))
    h, rem = divmod(s, 3600)
    m, s = divmod(rem, 60)
    return f"{h}:{m:02d}:{s:02d}" if h else f"{m}:{s:02d}"


# --------------------------------------------------------------------------- running


def default_workers() -> int:
    """Local worker processes by default: min(2, CPU count)."""
    return max(1, min(2, os.cpu_count() or 1))


@dataclass(frozen=True)
class BatchSummary:
    """What a batch run did."""

    output: str
    spectra: int
    chunks: int
    elapsed_s: float
    executor: str

    @property
    def spectra_per_s(self) -> float:
        return self.spectra / self.elapsed_s if self.elapsed_s > 0 else float("nan")


def _ordered_map(
    submit: Callable[[Spectra], Any], result: Callable[[Any], dict], chunks: Iterator[Spectra], window: int
) -> Iterator[tuple[int, dict]]:
    """Submit chunks keeping at most ``window`` in flight; yield (size, table) in input order."""
    pending: deque[tuple[int, Any]] = deque()
    for chunk in chunks:
        pending.append((len(chunk), submit(chunk)))
        while len(pending) >= window:
            n, fut = pending.popleft()
            yield n, result(fut)
    while pending:
        n, fut = pending.popleft()
        yield n, result(fut)


def _inline(chunks: Iterator[Spectra], observer: int, rendering: bool) -> Iterator[tuple[int, dict]]:
    for chunk in chunks:
        yield len(chunk), _work(chunk, observer, rendering)


def _local_pool(chunks: Iterator[Spectra], workers: int, observer: int, rendering: bool) -> Iterator[tuple[int, dict]]:
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    # fork shares the already-built tables with the workers; elsewhere the default context is used
    methods = multiprocessing.get_all_start_methods()
    context = multiprocessing.get_context("fork") if "fork" in methods and sys.platform.startswith("linux") else None
    pool = ProcessPoolExecutor(max_workers=workers, mp_context=context)
    try:
        yield from _ordered_map(
            lambda c: pool.submit(_work, c, observer, rendering), lambda f: f.result(), chunks, 2 * workers
        )
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _dask(chunks: Iterator[Spectra], address: str, observer: int, rendering: bool) -> Iterator[tuple[int, dict]]:
    try:
        from distributed import Client
    except ImportError:  # pragma: no cover - a declared dependency
        raise InputError("--scheduler needs the dask[distributed] package") from None
    try:
        client = Client(address, timeout="10s", set_as_default=False)
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"cannot reach the Dask scheduler ({type(exc).__name__}: {str(exc).splitlines()[0] if str(exc) else ''})", source="--scheduler") from None
    futures: list[Any] = []
    try:
        workers = max(1, len(client.scheduler_info().get("workers", {})))

        def submit(chunk: Spectra):
            data = client.scatter(chunk)  # large arguments travel directly to a worker, not in the task graph
            fut = client.submit(_work, data, observer, rendering, pure=False)
            futures.append(fut)
            return fut

        yield from _ordered_map(submit, lambda f: f.result(), chunks, 2 * workers)
    finally:
        if futures:
            client.cancel(futures)
        client.close()


def run_batch(
    source,
    output: str | os.PathLike,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    observer: int = 2,
    rendering: bool = True,
    overwrite: bool = False,
    progress: Progress | None = None,
    metadata: dict[str, Any] | None = None,
) -> BatchSummary:
    """Analyse every spectrum of ``source`` and write one row per spectrum to ``output``.

    Parameters
    ----------
    source
        A :class:`~cctkit.readers.wide.ChunkedInput` (see :func:`cctkit.readers.wide.open_chunked`).
    output
        ``.csv`` or ``.parquet`` file; written atomically, never over an input, never over an
        existing file unless ``overwrite``.
    workers
        Local worker processes (default :func:`default_workers`); 1 runs in this process.
    scheduler
        Address of a Dask scheduler (``tcp://host:port``); when given, chunks run there.
    observer, rendering
        Passed to :func:`cctkit.analysis.analyse`.
    progress
        Told of every finished chunk.
    metadata
        Provenance written into the Parquet schema metadata (key ``cctkit``, JSON).

    Raises
    ------
    InputError
        For bad input or arguments; nothing is left at ``output``.
    """
    from .safe_io import atomic_path, check_output_path

    out = Path(output)
    suffix = out.suffix.lower()
    if suffix not in OUTPUT_SUFFIXES:
        raise InputError(f"output must end in {' or '.join(OUTPUT_SUFFIXES)}, got {out.name!r}", source="--output")
    if workers is None:
        workers = default_workers()
    if isinstance(workers, bool) or not isinstance(workers, (int, np.integer)) or workers < 1:
        raise InputError(f"workers must be a positive number, got {workers!r}", source="--workers")
    inputs = list(source.files) + [source.path]
    check_output_path(out, overwrite=overwrite, inputs=inputs)
    progress = progress or Progress(source.total, enabled=False)
    chunks = source.chunks()
    if scheduler:
        executor = f"dask {scheduler}"
        results = _dask(chunks, scheduler, observer, rendering)
    elif workers > 1 and not (source.total is not None and source.total <= source.chunk_size):
        executor = f"{workers} local processes"
        results = _local_pool(_warmed(chunks, observer, rendering), workers, observer, rendering)
    else:
        executor = "this process"
        results = _inline(chunks, observer, rendering)
    count = 0
    n_chunks = 0
    t0 = time.perf_counter()
    with atomic_path(out, overwrite=overwrite, inputs=inputs) as tmp:
        if suffix == ".csv":
            writer: Any = _CsvWriter(tmp)
        else:
            writer = _ParquetWriter(tmp, {"cctkit": json.dumps(metadata or {}, default=str)})
        try:
            for n, table in results:
                writer.write(table)
                count += n
                n_chunks += 1
                progress.update(n)
        finally:
            results.close()
            writer.close()
        if count == 0:
            raise InputError("no spectra found", source=source.path)
    progress.finish()
    return BatchSummary(str(out), count, n_chunks, time.perf_counter() - t0, executor)


def _warmed(chunks: Iterator[Spectra], observer: int, rendering: bool) -> Iterator[Spectra]:
    """Build the shared tables in this process before the workers fork, then pass the chunks on."""
    first = True
    for chunk in chunks:
        if first:
            spectra_results(chunk.select(slice(0, 1)), observer=observer, rendering=rendering)
            first = False
        yield chunk
