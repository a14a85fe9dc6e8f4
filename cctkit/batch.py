"""Batch runs over many spectra: one chunk function, streamed input, ordered output.

The unit of work is a chunk of spectra.  :func:`spectra_results` runs
:func:`cctkit.analysis.analyse` on one chunk (a :class:`~cctkit.spectra.Spectra`)
and returns a *table*: a dict of
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
Peak memory is therefore a few chunks, whatever the input size.  On a Dask
cluster every worker must be able to import the same version of cctkit; chunks
are sent to the workers with ``client.scatter`` and run with ``client.submit``.

Numbers do not depend on how the input is cut into chunks or where a chunk
runs, up to the last bits of a float: the measures are matrix products, and
BLAS may round a dot product differently for a different number of rows.  Runs
over the same chunks give identical bytes.
"""

from __future__ import annotations

import itertools
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

from .analysis import flatten_record  # re-exported: the flattening rule records_table follows
from .errors import InputError
from .formats import csv_text
from .progress import Progress  # a live bar on a terminal, plain lines elsewhere
from .spectra import Spectra

__all__ = [
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
#: How long to try reaching a Dask scheduler before giving up [s].
SCHEDULER_TIMEOUT_S = 10.0
_STRING_COLUMNS = frozenset(
    {"name", "source", "sha256", "quantity", "spectral_unit", "reference", "cri_reference", "flags", "cctkit_version"}
)


# --------------------------------------------------------------------------- the chunk function


def spectra_results(spectra: Spectra, *, observer: int = 2, rendering: bool = True,
                    interpolation: str = "auto") -> dict[str, np.ndarray]:
    """Every measure for a chunk of spectra, as a table of columns (see :func:`records_table`).

    ``observer`` and ``rendering`` are passed to :func:`cctkit.analysis.analyse`.  The table ends with a ``cctkit_version`` column, as the CSV of ``inspect`` does.
    """
    from . import __version__
    from .analysis import analyse

    analysis = analyse(spectra, observer=observer, rendering=rendering, interpolation=interpolation)
    # Analysis.columns() equals records_table(analysis.records()) (tests hold it), built from
    # the arrays without a dict per spectrum; so batch output and `inspect` output agree.
    table = analysis.columns()
    table["cctkit_version"] = np.full(len(spectra), __version__, dtype=object)  # as inspect's CSV has it
    return table


def records_table(records: Sequence[dict[str, Any]]) -> dict[str, np.ndarray]:
    """Columns from records, named and ordered as :func:`flatten_record` names them.

    Column types: float64 (NaN where the record holds ``None``), int64, bool, or
    object (str/None).  Built column by column rather than row by row, because a
    chunk has thousands of records of some 250 flattened fields.
    """
    keys: dict[str, None] = {}
    for r in records:
        keys.update(dict.fromkeys(r))
    n = len(records)
    out: dict[str, np.ndarray] = {}
    for k in keys:
        vals = [r.get(k, _ABSENT) for r in records]
        if k == "flags":
            out[k] = np.array(
                [None if v is _ABSENT else ";".join(f["code"] for f in v) for v in vals], dtype=object
            )
            continue
        if not any(isinstance(v, list) for v in vals):
            out[k] = _column(k, [None if v is _ABSENT else v for v in vals])
            continue
        widths = {len(v) if isinstance(v, list) else -1 for v in vals}
        if len(widths) != 1 or -1 in widths:
            # lists of differing lengths, or lists beside scalars: flatten row by row
            flat = [flatten_record({k: v}) if v is not _ABSENT else {} for v in vals]
            sub: dict[str, None] = {}
            for f in flat:
                sub.update(dict.fromkeys(f))
            for name in sub:
                out[name] = _column(name, [f.get(name) for f in flat])
            continue
        width = widths.pop()
        if k == "R":
            names = [f"R{j + 1}" for j in range(width)]
        elif (k.startswith("measured_range") or k.endswith("_range_nm")) and width == 2:
            names = [f"{k}_lo", f"{k}_hi"]
        else:
            names = [f"{k}{j + 1}" for j in range(width)]
        types = set(map(type, itertools.chain.from_iterable(vals)))
        if n and types <= {float, type(None)}:
            block = np.array(vals, dtype=np.float64)  # None -> NaN
            for j, name in enumerate(names):
                out[name] = np.ascontiguousarray(block[:, j])
        else:
            for j, name in enumerate(names):
                out[name] = _column(name, [v[j] for v in vals])
    return out


_ABSENT = object()


def _column(key: str, items: list[Any]) -> np.ndarray:
    types = set(map(type, items))
    present = types - {type(None)}
    if key in _STRING_COLUMNS or str in present:
        return np.array(items, dtype=object)
    if present and present <= {bool, np.bool_}:
        return np.array(items, dtype=bool if type(None) not in types else object)
    if present and present <= {int} and type(None) not in types:
        return np.array(items, dtype=np.int64)
    if present <= {float, int, np.float64}:
        return np.array(items, dtype=np.float64)  # None -> NaN
    return np.array(items, dtype=object)


@dataclass(frozen=True)
class _ChunkResult:
    """A worker's answer, only what the writing process writes: CSV text, or an Arrow table.

    ``columns`` names the columns in order (the CSV header, the Parquet schema).
    """

    columns: list[str]
    csv_text: str | None = None
    arrow: Any = None


def _work(spectra: Spectra, observer: int, rendering: bool, output: str = ".csv",
          interpolation: str = "auto") -> _ChunkResult:
    """What a worker runs: one chunk in, its formatted output out (module level so it pickles).

    Formatting here rather than in the writing process spreads the cost of turning some
    250 numbers per spectrum into text over the workers, and the parent receives the text
    (or the Arrow table) only.
    """
    with _one_blas_thread():
        table = spectra_results(spectra, observer=observer, rendering=rendering, interpolation=interpolation)
    if output == ".csv":
        return _ChunkResult(list(table), csv_text=table_csv(table, list(table)))
    return _ChunkResult(list(table), arrow=_arrow_table(table))


# --------------------------------------------------------------------------- writers


class _CsvWriter:
    """CSV rows appended chunk by chunk, in the cell format of :func:`cctkit.formats.csv_text`
    (the one ``inspect`` writes: floats at repr precision, empty for missing)."""

    def __init__(self, path: Path):
        self._fh: TextIO = open(path, "w", encoding="utf-8", newline="")
        self.columns: list[str] | None = None

    def write(self, result: _ChunkResult) -> None:
        if self.columns is None:
            self.columns = list(result.columns)
            self._fh.write(csv_text(self.columns, ()))  # the header, once
        _checked_columns(self.columns, result.columns)
        if result.columns != self.columns:
            raise RuntimeError("a chunk produced its columns in another order than the first chunk")
        self._fh.write(result.csv_text or "")

    def close(self) -> None:
        self._fh.flush()
        os.fsync(self._fh.fileno())
        self._fh.close()


_CSV_SPECIAL = frozenset(',"\r\n')


def _text_cells(col: np.ndarray) -> list[str]:
    """Cells of a str/None column as :func:`cctkit.formats.csv_text` writes them, each distinct value once."""
    uniq = {v: None for v in col.tolist()}
    for v in uniq:
        if v is None or v == "":
            uniq[v] = ""
        elif isinstance(v, str) and _CSV_SPECIAL.isdisjoint(v):
            uniq[v] = v
        else:  # quoting (or a non-str cell): exactly what csv_text does for it
            uniq[v] = csv_text(["", ""], [[v, ""]], write_header=False)[:-2]
    return [uniq[v] for v in col.tolist()]


def _float_cells_py(col: np.ndarray) -> list[str]:
    """``repr(float(v))`` per value, empty for NaN/inf (the rule of :func:`cctkit.formats.csv_text`)."""
    if np.isfinite(col).all():
        return list(map(float.__repr__, col.tolist()))
    return ["" if not math.isfinite(v) else repr(v) for v in col.tolist()]


def _float_cells_arrow(col: np.ndarray):
    """The cells of :func:`_float_cells_py` as an Arrow string array (NaN/inf as nulls), formatted in C++.

    Arrow's shortest round-trip text equals Python's ``repr`` for non-integral finite
    values with 1e-4 <= |v| < 1e10 (both print the shortest digits that round-trip, in
    positional notation there; the tests check it); the other values take ``repr``.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    finite = np.isfinite(col)
    if col.shape[0] and finite[0] and (col == col[0]).all():  # a constant column: format once
        return pa.array([repr(float(col[0]))] * col.shape[0], type=pa.string())
    a = np.abs(col)
    with np.errstate(invalid="ignore"):
        other = finite & ~((a >= 1e-4) & (a < 1e10) & (col != np.trunc(col)))
    cells = pc.cast(pa.array(col, mask=~finite), pa.string())
    if other.any():
        fixed = list(map(float.__repr__, col[other].tolist()))
        cells = pc.replace_with_mask(cells, pa.array(other), pa.array(fixed, type=pa.string()))
    return cells


def _cells(col: np.ndarray, arrow: bool):
    if col.dtype == np.float64:
        return _float_cells_arrow(col) if arrow else _float_cells_py(col)
    if col.dtype == bool:
        return np.where(col, "True", "False").tolist()
    if col.dtype == np.int64:
        return list(map(str, col.tolist()))
    return _text_cells(col)


def table_csv(table: dict[str, np.ndarray], columns: list[str]) -> str:
    """The rows of ``table`` (no header) as CSV text in ``columns`` order, column by column.

    The bytes equal :func:`cctkit.formats.csv_text` over the same rows (tests hold it):
    floats at repr precision, NaN empty, strings quoted only where CSV needs it.  Each
    column is formatted once, as a whole; with pyarrow installed the numbers are
    formatted and the rows joined in Arrow's C++ kernels.
    """
    n = _table_rows(table)
    if n == 0:
        return ""
    try:
        import pyarrow as pa
        import pyarrow.compute as pc
    except ImportError:
        pa = None
    if pa is None:
        cells = [_cells(table[k], False) if k in table else [""] * n for k in columns]
        return "".join(",".join(row) + "\n" for row in zip(*cells))
    arrays = []
    for k in columns:
        c = _cells(table[k], True) if k in table else [""] * n
        arrays.append(c if isinstance(c, pa.Array) else pa.array(c, type=pa.string()))
    rows = pc.binary_join_element_wise(*arrays, ",", null_handling="replace", null_replacement="")
    text = pc.binary_join_element_wise(rows, "\n", "")  # each row followed by its line end
    _, offsets, data = text.buffers()
    bounds = np.frombuffer(offsets, dtype=np.int32)[[text.offset, text.offset + len(text)]]
    return data.to_pybytes()[bounds[0] : bounds[1]].decode("utf-8")


def _table_rows(table: dict[str, np.ndarray]) -> int:
    return len(next(iter(table.values()))) if table else 0


def _checked_columns(columns: list[str], table: dict[str, np.ndarray]) -> list[str]:
    extra = [k for k in table if k not in columns]
    if extra:
        raise RuntimeError(f"a chunk produced columns the first chunk did not: {', '.join(extra)}")
    return columns


class _ParquetWriter:
    """Parquet row groups appended chunk by chunk; missing numbers are nulls."""

    def __init__(self, path: Path, metadata: dict[str, str]):
        self._path = path
        self._metadata = metadata
        self._writer = None
        self._schema = None
        self.columns: list[str] | None = None

    def write(self, result: _ChunkResult) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        tbl = result.arrow
        if self._writer is None:
            self.columns = list(result.columns)
            meta = {k.encode(): v.encode() for k, v in self._metadata.items()}
            self._schema = tbl.schema.with_metadata(meta)
            self._writer = pq.ParquetWriter(self._path, self._schema)
        _checked_columns(self.columns, result.columns)
        if result.columns != self.columns or tbl.schema.remove_metadata() != self._schema.remove_metadata():
            n = tbl.num_rows
            arrays = [
                tbl.column(f.name).cast(f.type) if f.name in tbl.column_names else pa.nulls(n, type=f.type)
                for f in self._schema
            ]
            tbl = pa.Table.from_arrays(arrays, schema=self._schema)
        else:
            tbl = tbl.replace_schema_metadata(self._schema.metadata)
        self._writer.write_table(tbl)

    def close(self) -> None:
        if self._writer is not None:
            self._writer.close()


def _arrow_table(table: dict[str, np.ndarray]):
    """The table as a :class:`pyarrow.Table`; missing numbers (NaN) are nulls."""
    import pyarrow as pa

    arrays = []
    for k, col in table.items():
        t = _arrow_type(k, col)
        if col.dtype == np.float64:
            arrays.append(pa.array(col, type=t, mask=~np.isfinite(col)))
        elif col.dtype in (np.int64, bool):
            arrays.append(pa.array(col, type=t))
        else:
            arrays.append(pa.array(col.tolist(), type=t))
    return pa.Table.from_arrays(arrays, names=list(table))


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


# --------------------------------------------------------------------------- running


def default_workers(chunks: int | None = None) -> int:
    """Local worker processes by default: one per CPU this process may run on, at most one per chunk.

    Each chunk runs with one BLAS thread (:func:`_one_blas_thread`), so the workers, not BLAS
    threads, share the CPUs; the writing process mostly waits and needs no CPU of its own
    (measured in ``benchmarks/bench_batch.py``).
    """
    try:
        cpus = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # pragma: no cover - not Linux
        cpus = os.cpu_count() or 1
    if chunks is not None:
        cpus = min(cpus, chunks)
    return max(1, cpus)


def _one_blas_thread():
    """A context with one BLAS thread, for every chunk wherever it runs.

    The worker processes are the parallelism; BLAS threads on top of them would compete
    for the same CPUs (threadpoolctl sets the limit for whichever BLAS numpy uses).  And
    a BLAS may round a product differently with another number of threads: with one
    thread everywhere, a batch's numbers do not depend on how many workers ran it.
    """
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # pragma: no cover - a declared dependency
        from contextlib import nullcontext

        return nullcontext()
    return threadpool_limits(1)


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
    submit: Callable[[Spectra], Any], result: Callable[[Any], _ChunkResult], chunks: Iterator[Spectra], window: int
) -> Iterator[tuple[int, _ChunkResult]]:
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


def _inline(chunks: Iterator[Spectra], opts: tuple) -> Iterator[tuple[int, _ChunkResult]]:
    for chunk in chunks:
        yield len(chunk), _work(chunk, *opts)


def _local_pool(chunks: Iterator[Spectra], workers: int, opts: tuple) -> Iterator[tuple[int, _ChunkResult]]:
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    # fork shares the already-built tables with the workers; elsewhere the default context is used
    methods = multiprocessing.get_all_start_methods()
    context = multiprocessing.get_context("fork") if "fork" in methods and sys.platform.startswith("linux") else None
    pool = ProcessPoolExecutor(max_workers=workers, mp_context=context)
    try:
        yield from _ordered_map(
            lambda c: pool.submit(_work, c, *opts), lambda f: f.result(), chunks, 2 * workers
        )
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _dask(chunks: Iterator[Spectra], address: str, opts: tuple) -> Iterator[tuple[int, _ChunkResult]]:
    try:
        from distributed import Client
    except ImportError:  # pragma: no cover - a declared dependency
        raise InputError("--scheduler needs the dask[distributed] package") from None
    try:
        client = Client(address, timeout=f"{SCHEDULER_TIMEOUT_S}s", set_as_default=False)
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"cannot reach the Dask scheduler ({type(exc).__name__}: {str(exc).splitlines()[0] if str(exc) else ''})", source="--scheduler") from None
    futures: list[Any] = []
    try:
        workers = max(1, len(client.scheduler_info().get("workers", {})))

        def submit(chunk: Spectra):
            data = client.scatter(chunk)  # large arguments travel directly to a worker, not in the task graph
            fut = client.submit(_work, data, *opts, pure=False)
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
    interpolation: str = "auto",
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
    observer, rendering, interpolation
        Passed to :func:`cctkit.analysis.analyse` (folder members on other grids are resampled by
        the reader, see :func:`cctkit.readers.wide.open_chunked`).
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
        workers = default_workers(None if source.total is None else -(-source.total // source.chunk_size))
    if isinstance(workers, bool) or not isinstance(workers, (int, np.integer)) or workers < 1:
        raise InputError(f"workers must be a positive number, got {workers!r}", source="--workers")
    inputs = list(source.files) + [source.path]
    check_output_path(out, overwrite=overwrite, inputs=inputs)
    progress = progress or Progress(source.total, enabled=False)
    chunks = source.chunks()
    opts = (observer, rendering, suffix, interpolation)
    if scheduler:
        executor = f"dask {scheduler}"
        results = _dask(chunks, scheduler, opts)
    elif workers > 1 and not (source.total is not None and source.total <= source.chunk_size):
        executor = f"{workers} local processes"
        results = _local_pool(_warmed(chunks, observer, rendering), workers, opts)
    else:
        executor = "this process"
        results = _inline(chunks, opts)
    count = 0
    n_chunks = 0
    t0 = time.perf_counter()
    with atomic_path(out, overwrite=overwrite, inputs=inputs) as tmp:
        if suffix == ".csv":
            writer: Any = _CsvWriter(tmp)
        else:
            writer = _ParquetWriter(tmp, {"cctkit": json.dumps(metadata or {}, default=str)})
        try:
            for n, result in results:
                writer.write(result)
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
