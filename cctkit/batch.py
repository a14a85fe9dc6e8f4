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

import contextlib
import dataclasses
import errno
import functools
import itertools
import json
import math
import os
import sys
import time
from collections import deque
from collections.abc import Callable, Generator, Iterable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, BinaryIO

import numpy as np

from .analysis import (
    flatten_record,
    metadata_text,
)  # flatten_record re-exported: the flattening rule records_table follows
from .errors import CctkitError, InputError, Stopped, raise_if_stopped
from .formats import FORMULA_LEAD, csv_text
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

OUTPUT_SUFFIXES = (".csv", ".parquet", ".xlsx")
#: How long to try reaching a Dask scheduler before giving up [s].
SCHEDULER_TIMEOUT_S = 10.0
_STRING_COLUMNS = frozenset(
    {
        "name",
        "source",
        "sha256",
        "quantity",
        "spectral_unit",
        "reference",
        "cri_reference",
        "flags",
        "cctkit_version",
        "metadata",
        "dominant_white",
    }
)


# --------------------------------------------------------------------------- the chunk function


def spectra_results(
    spectra: Spectra,
    *,
    observer: int = 2,
    rendering: bool = True,
    interpolation: str = "auto",
    dominant_white: str = "E",
) -> dict[str, np.ndarray]:
    """Every measure for a chunk of spectra, as a table of columns (see :func:`records_table`).

    ``observer`` and ``rendering`` are passed to :func:`cctkit.analysis.analyse`.  The table ends with a ``cctkit_version`` column, as the CSV of ``inspect`` does.
    """
    from . import __version__
    from .analysis import analyse

    analysis = analyse(
        spectra, observer=observer, rendering=rendering, interpolation=interpolation, dominant_white=dominant_white
    )
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
            out[k] = np.array([None if v is _ABSENT else ";".join(f["code"] for f in v) for v in vals], dtype=object)
            continue
        if k == "metadata":  # one JSON text cell, so every chunk has the same columns
            out[k] = np.array([None if v is _ABSENT else metadata_text(v) for v in vals], dtype=object)
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
    """A worker's answer, only what the writing process writes: CSV rows (UTF-8), or an Arrow table.

    ``columns`` names the columns in order (the CSV header, the Parquet schema).  A local worker's
    CSV rows stay in its result file: ``csv_file`` is that file, open at the rows (its name already
    removed), and the writer copies them into the output inside the kernel (see :func:`_unspooled`).
    """

    columns: list[str]
    csv_bytes: bytes | None = None
    arrow: Any = None
    csv_file: BinaryIO | None = None


def _work(
    spectra: Spectra,
    observer: int,
    rendering: bool,
    output: str = ".csv",
    interpolation: str = "auto",
    csv_dialect: str = "comma",
    dominant_white: str = "E",
) -> _ChunkResult:
    """What a worker runs: one chunk in, its formatted output out (module level so it pickles).

    Formatting here rather than in the writing process spreads the cost of turning some
    250 numbers per spectrum into text over the workers, and the parent receives the text
    (or the Arrow table) only.
    """
    table = _results(spectra, observer, rendering, interpolation, dominant_white)
    return _formatted(table, output, csv_dialect)


def _results(
    spectra: Spectra, observer: int, rendering: bool, interpolation: str, dominant_white: str
) -> dict[str, np.ndarray]:
    """The first half of :func:`_work`: the chunk's table of results."""
    return spectra_results(
        spectra, observer=observer, rendering=rendering, interpolation=interpolation, dominant_white=dominant_white
    )  # one BLAS thread: see analyse()


def _formatted(table: dict[str, np.ndarray], output: str, csv_dialect: str) -> _ChunkResult:
    """The second half of :func:`_work`: the table as the writer takes it (CSV text or an Arrow table)."""
    if output == ".csv":
        data = _csv_bytes(table, list(table))
        if csv_dialect != "comma":  # the rule every command's --csv-dialect follows, run in the workers
            from .spreadsheet import csv_in_dialect

            data = csv_in_dialect(data.decode("utf-8"), csv_dialect).encode("utf-8")
        return _ChunkResult(list(table), csv_bytes=data)
    return _ChunkResult(list(table), arrow=_arrow_table(table))


# --------------------------------------------------------------------------- writers


class _CsvWriter:
    """CSV rows appended chunk by chunk, in the cell format of :func:`cctkit.formats.csv_text`
    (the one ``inspect`` writes: floats at repr precision, empty for missing)."""

    def __init__(self, path: Path, columns: list[str] | None = None, csv_dialect: str = "comma"):
        # with ``columns`` the file already holds the header and some rows (a resumed run): append
        self._fh: BinaryIO = open(path, "ab" if columns else "wb")
        self.columns: list[str] | None = list(columns) if columns else None
        self._dialect = csv_dialect

    def durable_size(self) -> int:
        """Flush the rows written so far to the disk; the file's size in bytes."""
        self._fh.flush()
        os.fsync(self._fh.fileno())
        return self._fh.tell()

    def write(self, result: _ChunkResult) -> None:
        if self.columns is None:
            self.columns = list(result.columns)
            header = csv_text(self.columns, ())  # the header, once
            if self._dialect != "comma":
                from .spreadsheet import csv_in_dialect

                header = csv_in_dialect(header, self._dialect)
            self._fh.write(header.encode("utf-8"))
        _checked_columns(self.columns, result.columns)
        if result.columns != self.columns:
            raise RuntimeError("a chunk produced its columns in another order than the first chunk")
        start = self._fh.tell()
        if result.csv_file is not None:
            self._fh.flush()
            with result.csv_file as rows:
                _copy_rest(rows, self._fh)
        else:
            self._fh.write(result.csv_bytes or b"")
            self._fh.flush()
        _start_writeback(self._fh.fileno(), start, self._fh.tell())

    def close(self) -> None:
        self._fh.flush()
        os.fsync(self._fh.fileno())
        self._fh.close()


def _copy_rest(src: BinaryIO, dst: BinaryIO) -> None:
    """Append what is left of ``src`` (from its position) to ``dst`` (flushed), copied inside the kernel
    where it can (``os.copy_file_range``, Linux), else through a buffer."""
    offset = src.tell()  # where the rows start (the buffered reader's position, not its file's)
    while hasattr(os, "copy_file_range"):
        try:
            n = os.copy_file_range(src.fileno(), dst.fileno(), 1 << 30, offset)
        except OSError as exc:
            # across file systems, onto a file opened for appending (a resumed run), ...: copy as below
            if exc.errno not in (errno.EXDEV, errno.EINVAL, errno.ENOSYS, errno.EOPNOTSUPP, errno.EBADF):
                raise  # a full disk, an I/O error: as a write would have raised
            break
        if n == 0:
            dst.seek(0, os.SEEK_END)  # the buffered file learns where the kernel left the end
            return
        offset += n
    src.seek(offset)
    for block in iter(lambda: src.read(1 << 22), b""):
        dst.write(block)
    dst.flush()


def _start_writeback(fd: int, start: int, end: int) -> None:
    """Have the kernel start writing bytes [start, end) of the file to the disk, without waiting for it
    (Linux ``sync_file_range``): the ``fsync`` at the end then finds little left to write, where it
    otherwise waited for the whole file (~0.25 s per 50 MB).  Elsewhere, or if refused, nothing happens:
    the ``fsync`` still makes the file durable and reports what went wrong."""
    call = _sync_file_range()
    if call is not None and end > start:
        call(fd, start, end - start, 2)  # SYNC_FILE_RANGE_WRITE (<linux/fs.h>): start writing, return at once


@functools.cache
def _sync_file_range() -> Any:
    if not sys.platform.startswith("linux"):
        return None
    try:
        import ctypes

        call = ctypes.CDLL(None, use_errno=True).sync_file_range
    except (OSError, AttributeError):  # pragma: no cover - a C library without it
        return None
    call.argtypes = [ctypes.c_int, ctypes.c_int64, ctypes.c_int64, ctypes.c_uint]
    call.restype = ctypes.c_int
    return call


_CSV_SPECIAL = frozenset(',"\r\n')


def _text_cells(col: np.ndarray) -> list[str]:
    """Cells of a str/None column as :func:`cctkit.formats.csv_text` writes them."""
    vals = col.tolist()
    uniq: dict[Any, str] = dict.fromkeys(vals, "")
    if set(map(type, uniq)) == {str}:
        joined = "\x00" + "\x00".join(uniq)  # each value's first character follows a NUL
        if not any(c in joined for c in _CSV_SPECIAL) and not any("\x00" + c in joined for c in FORMULA_LEAD):
            return vals  # plain text, as most columns are: the cells are the values
    for v in uniq:
        if v is None or v == "":
            uniq[v] = ""
        elif isinstance(v, str) and _CSV_SPECIAL.isdisjoint(v) and not v.startswith(FORMULA_LEAD):
            uniq[v] = v
        else:  # quoting (or a non-str cell): exactly what csv_text does for it
            uniq[v] = csv_text(["", ""], [[v, ""]], write_header=False)[:-2]
    return [uniq[v] for v in vals]


def _repr_row(values: list[float]) -> str:
    """One row of float cells by the rule of :func:`cctkit.formats.csv_text`: ``repr``, empty for NaN/inf."""
    return ",".join(repr(v) if math.isfinite(v) else "" for v in values)


#: Magnitudes [lo, hi) where orjson's text may differ from Python's ``repr``: below 1e-4 ``repr``
#: switches to exponent form (``1.5e-05``) while orjson stays positional down to 1e-5 and writes
#: one-digit exponents (``1e-09`` as ``1e-9``) down to 1e-9.  Everywhere else both print the same
#: shortest round-trip digits in the same form (measured on random bit patterns; the tests hold it).
#: The band is taken two decades wider below.
_ORJSON_BAND = (1e-11, 1e-4)


def _float_rows(block: np.ndarray) -> list[bytes]:
    """The rows of a 2-D float block as CSV cells joined by commas (UTF-8), as ``csv_text`` writes them.

    orjson prints the whole block in C (shortest round-trip digits, ~40 ns a value) and its
    ``null`` (NaN/inf) becomes an empty cell; rows holding a value in :data:`_ORJSON_BAND`
    are written again with ``repr`` -- or, where such rows are many, the columns holding
    such values are.
    """
    import orjson

    n, k = block.shape
    if not _orjson_agrees():  # pragma: no cover - an orjson whose number text changed
        return [_repr_row(r).encode() for r in block.tolist()]
    a = np.abs(block)
    with np.errstate(invalid="ignore"):
        band = (a >= _ORJSON_BAND[0]) & (a < _ORJSON_BAND[1])
    hit = band.any(axis=1)
    if k > 1 and 8 * np.count_nonzero(hit) > n:  # many rows: split off the columns that hold such values
        bad = band.any(axis=0)
        parts: list[list[bytes]] = []
        edges = [0, *(np.flatnonzero(np.diff(bad)) + 1).tolist(), k]
        for lo, hi in itertools.pairwise(edges):
            if bad[lo]:
                parts.extend(_encoded(_float_cells(block[:, j])) for j in range(lo, hi))
            else:
                parts.append(_float_rows(block[:, lo:hi]))
        return list(map(b",".join, zip(*parts)))
    rows = orjson.dumps(np.ascontiguousarray(block), option=orjson.OPT_SERIALIZE_NUMPY)[2:-2].split(b"],[")
    for i in np.flatnonzero(~np.isfinite(a).all(axis=1) & ~hit).tolist():
        rows[i] = rows[i].replace(b"null", b"")  # orjson writes NaN and inf as null
    for i in np.flatnonzero(hit).tolist():
        rows[i] = _repr_row(block[i].tolist()).encode()
    return rows


def _encoded(cells: list[str]) -> list[bytes]:
    """The cells in UTF-8, encoded as one text where no cell holds a NUL."""
    joined = "\x00".join(cells)
    if not cells or joined.count("\x00") != len(cells) - 1:
        return [c.encode("utf-8") for c in cells]
    return joined.encode("utf-8").split(b"\x00")


def _float_cells(col: np.ndarray) -> list[str]:
    """``repr`` of each value, empty for NaN/inf (the rule of :func:`cctkit.formats.csv_text`)."""
    if np.isfinite(col).all():
        return list(map(float.__repr__, col.tolist()))
    return ["" if not math.isfinite(v) else repr(v) for v in col.tolist()]


@functools.cache
def _orjson_agrees() -> bool:
    """orjson prints these values as ``repr`` does, outside its band: else every row takes ``repr``."""
    import orjson

    probe = np.array([0.1, 1 / 3, -0.0, 0.0, 1e-4, 9.99e-12, 1e-300, 5e-324, 1.5e16, 1e22, 123.0, 1e15, 2.5e-3])
    return orjson.dumps(probe, option=orjson.OPT_SERIALIZE_NUMPY).decode() == "[" + _repr_row(probe.tolist()) + "]"


def _cells(col: np.ndarray) -> list[str]:
    if col.dtype == bool:
        return np.where(col, "True", "False").tolist()
    if col.dtype == np.int64:
        return list(map(str, col.tolist()))
    return _text_cells(col)


def table_csv(table: dict[str, np.ndarray], columns: list[str]) -> str:
    """The rows of ``table`` (no header) as CSV text in ``columns`` order, column by column.

    The text equals :func:`cctkit.formats.csv_text` over the same rows (tests hold it):
    floats at repr precision, NaN empty, strings quoted only where CSV needs it.  Each
    run of adjacent float columns is formatted as one block by orjson (see :func:`_float_rows`),
    every other column once, as a whole; the rows are then joined.
    """
    return _csv_bytes(table, columns).decode("utf-8")


def _csv_bytes(table: dict[str, np.ndarray], columns: list[str]) -> bytes:
    """:func:`table_csv` in UTF-8, as the batch writer takes it (no text decoded and encoded again)."""
    n = _table_rows(table)
    if n == 0:
        return b""
    parts: list[list[bytes]] = []
    run: list[np.ndarray] = []
    for k in [*columns, None]:
        col = table.get(k) if k is not None else None
        if col is not None and col.dtype == np.float64:
            run.append(col)
            continue
        if run:
            parts.append(_float_rows(np.column_stack(run)))
            run = []
        if k is not None:
            parts.append(_encoded(_cells(col)) if col is not None else [b""] * n)
    return b"\n".join(map(b",".join, zip(*parts))) + b"\n"


def _table_rows(table: dict[str, np.ndarray]) -> int:
    return len(next(iter(table.values()))) if table else 0


def _checked_columns(columns: list[str], table: Iterable[str]) -> list[str]:
    extra = [k for k in table if k not in columns]
    if extra:
        raise RuntimeError(f"a chunk produced columns the first chunk did not: {', '.join(extra)}")
    return columns


class _ParquetWriter:
    """Parquet row groups appended chunk by chunk; missing numbers are nulls.

    With ``behind``, each chunk is encoded and written by a thread while the caller goes on
    (pyarrow's writer runs without the interpreter lock), one chunk at a time and in order, so
    the file's bytes are those of writing in the caller; an error of that write is raised by the
    next :meth:`write` or by :meth:`close`.  Not where processes are forked while the writer
    runs: the thread may hold a lock of Arrow's that a forked child would find held.
    """

    def __init__(self, path: Path, metadata: dict[str, str], *, behind: bool = False):
        self._path = path
        self._metadata = metadata
        self._writer: Any = None  # a pyarrow.parquet.ParquetWriter once the first chunk is in
        self._schema: Any = None
        self.columns: list[str] | None = None
        self._behind: Any = None  # the writing thread (a one-thread executor) with ``behind``
        self._pending: Any = None  # the future of the chunk being written
        if behind:
            from concurrent.futures import ThreadPoolExecutor

            self._behind = ThreadPoolExecutor(1, thread_name_prefix="cctkit-parquet-writer")

    def write(self, result: _ChunkResult) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        tbl = result.arrow
        if self._writer is None:
            self.columns = list(result.columns)
            meta = {k.encode(): v.encode() for k, v in self._metadata.items()}
            self._schema = tbl.schema.with_metadata(meta)
            self._writer = pq.ParquetWriter(self._path, self._schema)
        _checked_columns(self.columns or [], result.columns)
        if result.columns != self.columns or tbl.schema.remove_metadata() != self._schema.remove_metadata():
            n = tbl.num_rows
            arrays = [
                tbl.column(f.name).cast(f.type) if f.name in tbl.column_names else pa.nulls(n, type=f.type)
                for f in self._schema
            ]
            tbl = pa.Table.from_arrays(arrays, schema=self._schema)
        else:
            tbl = tbl.replace_schema_metadata(self._schema.metadata)
        if self._behind is None:
            self._writer.write_table(tbl)
            return
        self._wait()
        self._pending = self._behind.submit(self._writer.write_table, tbl)

    def _wait(self) -> None:
        """Until the chunk being written is written; its error raised here."""
        pending, self._pending = self._pending, None
        if pending is not None:
            pending.result()

    def close(self) -> None:
        try:
            self._wait()
        finally:
            if self._behind is not None:
                self._behind.shutdown(wait=True)
            if self._writer is not None:
                self._writer.close()


def _arrow_table(table: dict[str, np.ndarray]):
    """The table as a :class:`pyarrow.Table`; missing numbers (NaN) are nulls.

    Built from the arrays' buffers (:mod:`cctkit.arrow_buffers`): ``pyarrow.array`` would
    import pandas in every process that writes Parquet.
    """
    import pyarrow as pa

    from .arrow_buffers import bool_array, float_array, int_array, string_array

    arrays = []
    for k, col in table.items():
        t = _arrow_type(k, col)
        if col.dtype == np.float64:
            arrays.append(float_array(col, np.isfinite(col)))
        elif col.dtype == np.int64:
            arrays.append(int_array(col))
        elif col.dtype == bool:
            arrays.append(bool_array(col))
        elif t == pa.bool_():  # True/False with None
            items = col.tolist()
            arrays.append(bool_array(np.array([bool(v) for v in items]), np.array([v is not None for v in items])))
        else:
            items = col.tolist()
            if not set(map(type, items)) <= {str, type(None)}:
                items = [None if v is None else str(v) for v in items]
            arrays.append(string_array(items))
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

    :func:`cctkit.analysis.analyse` runs one BLAS thread, so the workers, not BLAS
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


@dataclass(frozen=True)
class BatchSummary:
    """What a batch run did."""

    output: str
    spectra: int
    chunks: int
    elapsed_s: float
    executor: str
    notes: tuple[str, ...] = ()  # what the run found and did besides (leftovers removed, resumed)

    @property
    def spectra_per_s(self) -> float:
        return self.spectra / self.elapsed_s if self.elapsed_s > 0 else float("nan")


#: What the executors yield: (spectra in the chunk, its result), in input order; closed when the run ends.
_Results = Generator[tuple[int, _ChunkResult], None, None]


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


def _inline(chunks: Iterator[Spectra], opts: tuple) -> _Results:
    # Formatting one chunk in a second thread while the next is analysed was tried and measured
    # slower on the shared 2-core machine (5.6-6.3 s against 4.0-5.4 s for 12,288 spectra): the two
    # compete for the cores and the interpreter lock.  Reading ahead is another matter: Arrow's CSV
    # parser and the hashing run without the interpreter lock (see _read_ahead).
    ahead = _read_ahead(chunks) if os.environ.get("CCTKIT_NO_READ_AHEAD") != "1" else chunks
    try:
        for chunk in ahead:
            yield len(chunk), _work(chunk, *opts)
    finally:
        close = getattr(ahead, "close", None)
        if close is not None:
            close()


def _read_ahead(chunks: Iterator[Spectra], depth: int = 1) -> Generator[Spectra, None, None]:
    """The chunks, read by a thread up to ``depth`` chunks ahead of their use.

    An error of the reader is raised here, at the chunk where it happened; closing this
    generator stops the thread (within a chunk's reading) and closes ``chunks``.
    Used only where no process is forked later: a fork while the thread holds a lock
    would leave that lock held in the child.
    """
    import queue
    import threading

    q: queue.Queue = queue.Queue(maxsize=depth)
    stop = threading.Event()
    end = object()

    def put(item) -> bool:
        while not stop.is_set():
            try:
                q.put(item, timeout=0.05)
                return True
            except queue.Full:
                continue
        return False

    def read() -> None:
        try:
            for chunk in chunks:
                if not put((chunk, None)):
                    return
            put((end, None))
        except BaseException as exc:  # noqa: BLE001 - handed to the consuming thread, raised there
            put((None, exc))
        finally:
            close = getattr(chunks, "close", None)
            if close is not None:
                with contextlib.suppress(Exception):
                    close()

    thread = threading.Thread(target=read, name="cctkit-read-ahead", daemon=True)
    thread.start()
    try:
        while True:
            chunk, exc = q.get()
            if exc is not None:
                raise exc
            if chunk is end:
                return
            yield chunk
    finally:
        stop.set()
        thread.join()


def _local_pool(chunks: Iterator[Spectra], workers: int, opts: tuple) -> _Results:
    """Chunks on local worker processes, in input order.

    A worker that dies (killed, out of memory) breaks the pool; the chunk function is pure,
    so a new pool runs the chunks that were in flight again, each at most
    :data:`LOCAL_RETRIES` times; past that the run stops with one line.
    """
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    # fork shares the already-built tables with the workers; elsewhere the default context is used
    methods = multiprocessing.get_all_start_methods()
    context = multiprocessing.get_context("fork") if "fork" in methods and sys.platform.startswith("linux") else None

    def new_pool():
        return ProcessPoolExecutor(
            max_workers=workers, mp_context=context, initializer=_worker_init, initargs=(os.getpid(),)
        )

    spool = _new_spool()  # the workers' results, one file per chunk
    opts = (spool, *opts)
    pool = new_pool()
    pending: deque[list] = deque()  # [chunk, future, attempts], in input order
    window = 2 * workers
    try:
        source = iter(chunks)
        exhausted = False
        while True:
            while not exhausted and len(pending) < window:
                chunk = next(source, None)
                if chunk is None:
                    exhausted = True
                    break
                try:
                    future = pool.submit(_spooled_work, chunk, *opts)
                except BrokenProcessPool:  # a worker died since the last look: run it on the new pool below
                    future = None
                pending.append([chunk, future, 0])
            if not pending:
                break
            item = pending[0]
            try:
                if item[1] is None:
                    raise BrokenProcessPool("the pool broke before this chunk was submitted")
                result = item[1].result()
            except BrokenProcessPool:
                item[2] += item[1] is not None  # a chunk never submitted did not fail
                if item[2] > LOCAL_RETRIES:
                    raise InputError(
                        f"a worker process died {item[2]} times running the same chunk "
                        "(out of memory?); try a smaller --chunk-size",
                        source="--workers",
                    ) from None
                _stop_workers(pool)
                pool.shutdown(wait=True, cancel_futures=True)
                pool = new_pool()
                for entry in pending:  # run what was in flight again, in order
                    entry[1] = pool.submit(_spooled_work, entry[0], *opts)
                continue
            pending.popleft()
            yield len(item[0]), _unspooled(result)
    except BaseException:  # stopped, or a chunk failed: do not wait for the chunks still running
        _stop_workers(pool)
        raise
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
        import shutil

        shutil.rmtree(spool, ignore_errors=True)


def _new_spool() -> str:
    """A new folder for the workers' results, in the system's temporary folder; first the folders
    of earlier runs that were killed (their process is gone) are removed."""
    import shutil
    import tempfile

    from .safe_io import _alive

    base = Path(tempfile.gettempdir())
    for old in base.glob(f"{_SPOOL_PREFIX}*"):
        pid = old.name[len(_SPOOL_PREFIX) :].partition("-")[0]
        if pid.isdigit() and not _alive(int(pid)):
            shutil.rmtree(old, ignore_errors=True)
    return tempfile.mkdtemp(prefix=f"{_SPOOL_PREFIX}{os.getpid()}-", dir=base)


#: Name of the workers' result folders: the prefix, the process id of the run, a random part.
_SPOOL_PREFIX = "cctkit-spool-"


def _spooled_work(spectra: Spectra, spool: str, *opts) -> str:
    """:func:`_work` in a local worker, its result left in a file of ``spool``; returns the file's path.

    Only the path goes back through the pool's pipe: a message that short is written in one
    piece, so a worker stopped or killed while answering cannot leave half a message, on
    which the pool's result reader would wait forever (seen: a run stopped by SIGTERM hung).
    """
    import pickle
    import tempfile

    result = _work(spectra, *opts)
    rows, result = result.csv_bytes, dataclasses.replace(result, csv_bytes=None)
    fd, path = tempfile.mkstemp(dir=spool, suffix=".chunk")
    with os.fdopen(fd, "wb") as fh:
        pickle.dump((result, rows is not None), fh, protocol=pickle.HIGHEST_PROTOCOL)
        if rows is not None:  # the CSV rows as such after the pickle, for the writer to copy (_unspooled)
            fh.write(rows)
    return path


def _unspooled(path: str) -> _ChunkResult:
    """A local worker's result from its file: the pickled result, and CSV rows after it, which are left
    in the file (open at the rows, the name removed) for the writer to copy into the output without
    bringing them through this process's memory (~16 MB per 4,096 spectra)."""
    import pickle

    fh = open(path, "rb")
    try:
        os.unlink(path)
        result, rows_follow = pickle.load(fh)
    except BaseException:
        fh.close()
        raise
    if not rows_follow:
        fh.close()
        return result
    return dataclasses.replace(result, csv_file=fh)


#: How often a chunk runs again after a local worker process died while running it.
LOCAL_RETRIES = 3


def _worker_init(parent: int) -> None:
    """In each local worker: die with the parent, and leave Ctrl-C and SIGTERM to the parent."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C reaches the whole process group; the parent acts
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    _die_with_parent(parent)


def _die_with_parent(parent: int) -> None:
    """Ask Linux to send SIGTERM to this process when its parent ends (prctl PR_SET_PDEATHSIG)."""
    if not sys.platform.startswith("linux"):
        return
    import ctypes
    import signal

    PR_SET_PDEATHSIG = 1  # <linux/prctl.h>
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(PR_SET_PDEATHSIG, int(signal.SIGTERM), 0, 0, 0)
    except (OSError, AttributeError):  # pragma: no cover - no prctl
        return
    if os.getppid() != parent:  # the parent ended before the request was made
        os._exit(1)


def _stop_workers(pool) -> None:
    processes = list((getattr(pool, "_processes", None) or {}).values())
    for p in processes:
        with contextlib.suppress(Exception):
            p.terminate()
    for p in processes:
        with contextlib.suppress(Exception):
            p.join(timeout=5)


def _dask(chunks: Iterator[Spectra], address: str, opts: tuple) -> _Results:
    """Chunks on a Dask cluster.  The chunk function is pure, so a chunk whose worker is lost
    is simply run again elsewhere (``retries``); the chunk travels inside its task rather than
    being scattered to one worker, so losing that worker does not lose the chunk."""
    import warnings

    _check_scheduler(address)  # before importing distributed, which takes seconds
    try:
        from distributed import Client
    except ImportError:  # pragma: no cover - a declared dependency
        raise InputError("--scheduler needs the dask[distributed] package") from None
    try:
        client = Client(address, timeout=f"{SCHEDULER_TIMEOUT_S}s", set_as_default=False)
    except Exception as exc:  # noqa: BLE001 - distributed raises many types for one cause
        raise InputError(
            f"cannot reach the Dask scheduler at {address} ({_first_line(exc)})", source="--scheduler"
        ) from None
    futures: list[Any] = []
    try:
        workers = max(1, len(client.scheduler_info().get("workers", {})))

        def submit(chunk: Spectra):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", UserWarning)  # "large object in the task graph": on purpose
                fut = client.submit(_work, chunk, *opts, pure=False, retries=DASK_RETRIES)
            futures.append(fut)
            return fut

        def result(fut):
            try:
                return fut.result()
            except CctkitError:
                raise
            except Exception as exc:  # noqa: BLE001 - lost scheduler, workers gone past the retries
                raise InputError(
                    f"the Dask cluster at {address} could not finish a chunk ({_first_line(exc)})", source="--scheduler"
                ) from None

        yield from _ordered_map(submit, result, chunks, 2 * workers)
    finally:
        with contextlib.suppress(Exception):
            if futures:
                client.cancel(futures)
            client.close(timeout=SCHEDULER_TIMEOUT_S)


#: How often a chunk is run again after its worker was lost (the chunk function is pure).
DASK_RETRIES = 3
#: How long to wait for a TCP connection to a Dask scheduler before saying it is unreachable [s].
SCHEDULER_CONNECT_S = 3.0


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip().splitlines()
    return (text[0] if text else "no details").strip()[:200]


def _check_scheduler(address: str) -> None:
    """Refuse at once, in one line, an address that cannot work: unknown scheme, TLS without
    certificates, a host that does not resolve, a port where nothing listens."""
    import socket

    scheme, _, rest = address.partition("://")
    if not rest:
        scheme, rest = "tcp", address
    if scheme in ("inproc", "ucx"):  # in this process, or a fabric with its own addressing: no socket to try
        return
    if scheme not in ("tcp", "tls", "ws", "wss"):
        raise InputError(f"{address!r}: expected tcp://host:port (or tls://host:port)", source="--scheduler")
    if scheme in ("tls", "wss"):
        try:
            import dask

            configured = dask.config.get("distributed.comm.tls.ca-file", None)
        except ImportError:  # pragma: no cover - a declared dependency
            configured = None
        if not configured:
            raise InputError(
                f"{address!r}: tls:// needs certificates from the Dask configuration "
                "(distributed.comm.tls.*), and none are set",
                source="--scheduler",
            )
    host, sep, port_text = rest.rstrip("/").rpartition(":")
    host = host.strip("[]")
    if not sep or not host or not port_text.isdigit() or not 0 < int(port_text) < 65536:
        raise InputError(f"{address!r}: expected host:port, e.g. tcp://127.0.0.1:8786", source="--scheduler")
    try:
        socket.create_connection((host, int(port_text)), timeout=SCHEDULER_CONNECT_S).close()
    except OSError as exc:
        reason = "timed out" if isinstance(exc, TimeoutError) else (exc.strerror or _first_line(exc))
        raise InputError(f"cannot reach the Dask scheduler at {address} ({reason})", source="--scheduler") from None


def run_batch(
    source,
    output: str | os.PathLike,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    observer: int = 2,
    rendering: bool = True,
    interpolation: str = "auto",
    dominant_white: str = "E",
    overwrite: bool = False,
    progress: Progress | None = None,
    metadata: dict[str, Any] | None = None,
    resume: bool = False,
    csv_dialect: str = "comma",
) -> BatchSummary:
    """Analyse every spectrum of ``source`` and write one row per spectrum to ``output``.

    Parameters
    ----------
    source
        A :class:`~cctkit.readers.wide.ChunkedInput` (see :func:`cctkit.readers.wide.open_chunked`).
    output
        ``.csv``, ``.parquet`` or ``.xlsx`` file; written atomically, never over an input, never
        over an existing file unless ``overwrite``.  An ``.xlsx`` workbook (sheets ``results``
        and ``provenance``, see :mod:`cctkit.spreadsheet`) is streamed from a CSV written to a
        temporary folder first; it holds at most :data:`~cctkit.spreadsheet.XLSX_MAX_ROWS` - 1 rows.
    workers
        Local worker processes (default :func:`default_workers`); 1 runs in this process.
    scheduler
        Address of a Dask scheduler (``tcp://host:port``); when given, chunks run there.
    observer, rendering, interpolation, dominant_white
        Passed to :func:`cctkit.analysis.analyse` (folder members on other grids are resampled by
        the reader, see :func:`cctkit.readers.wide.open_chunked`).
    progress
        Told of every finished chunk.
    metadata
        Provenance written into the Parquet schema metadata (key ``cctkit``, JSON).
    csv_dialect
        ``.csv`` output: ``"comma"`` or ``"semicolon"`` (see :data:`cctkit.spreadsheet.CSV_DIALECTS`).
    resume
        CSV output only.  Write the rows to ``OUTPUT.partial`` with a journal
        (``OUTPUT.partial.json``) of the chunks completed; a run stopped or killed
        leaves both, and the next run with ``resume`` continues after the last complete
        chunk (same input, unchanged, same options and chunk size) with identical results.
        Without ``resume`` a run's temporary file is removed when it is stopped, and
        temporary files of earlier killed runs (and an earlier run's partial results)
        are removed at the start.

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
    if resume and suffix != ".csv":
        raise InputError("--resume works with .csv output", source="--output")
    from .spreadsheet import check_dialect

    csv_dialect = check_dialect(csv_dialect)
    if csv_dialect != "comma" and suffix != ".csv":
        raise InputError(f"--csv-dialect applies to .csv output, not {suffix}", source="--csv-dialect")
    if suffix == ".xlsx":
        return _batch_xlsx(
            source,
            out,
            workers=workers,
            scheduler=scheduler,
            observer=observer,
            rendering=rendering,
            interpolation=interpolation,
            dominant_white=dominant_white,
            overwrite=overwrite,
            progress=progress,
            metadata=metadata,
            inputs=inputs,
        )
    progress = progress or Progress(source.total, enabled=False)
    notes = _clear_leftovers(out, resume)
    identity = _identity(source, out, observer=observer, rendering=rendering, dominant_white=dominant_white)
    if csv_dialect != "comma":
        identity["csv_dialect"] = csv_dialect
    state = _journal_state(out, identity) if resume else None
    chunks = source.chunks()
    if state is not None:
        chunks = itertools.islice(chunks, state["chunks"], None)  # read again, not analysed again
        notes.append(f"resumed after {state['chunks']} complete chunks ({state['spectra']} spectra)")
    opts = (observer, rendering, suffix, interpolation, csv_dialect, dominant_white)
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
    if resume:
        count = _resumable(
            out,
            results,
            state,
            identity,
            progress,
            overwrite=overwrite,
            inputs=inputs,
            source=source,
            csv_dialect=csv_dialect,
        )
        n_chunks = -(-count // source.chunk_size)
        progress.finish()
        return BatchSummary(str(out), count, n_chunks, time.perf_counter() - t0, executor, tuple(notes))
    with atomic_path(out, overwrite=overwrite, inputs=inputs) as tmp:
        if suffix == ".csv":
            writer: Any = _CsvWriter(tmp, csv_dialect=csv_dialect)
        else:
            writer = _ParquetWriter(
                tmp, {"cctkit": json.dumps(metadata or {}, default=str)}, behind=executor == "this process"
            )
        try:
            for n, result in results:
                raise_if_stopped()
                writer.write(result)
                count += n
                n_chunks += 1
                progress.update(n)
        finally:
            results.close()
            writer.close()
        if count == 0:
            raise InputError("no spectra found", source=source.path)
        _unchanged(source, identity)
        raise_if_stopped()
    progress.finish()
    return BatchSummary(str(out), count, n_chunks, time.perf_counter() - t0, executor, tuple(notes))


def _batch_xlsx(source, out: Path, *, overwrite: bool, inputs, metadata, **options) -> BatchSummary:
    """``run_batch`` into a CSV in a temporary folder, then that CSV streamed into the workbook ``out``."""
    import tempfile

    from .safe_io import atomic_path
    from .spreadsheet import csv_file_to_xlsx

    t0 = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="cctkit-batch-") as folder:
        rows = Path(folder) / f"{out.stem}.csv"
        summary = run_batch(source, rows, **options)
        with atomic_path(out, overwrite=overwrite, inputs=inputs) as tmp:
            csv_file_to_xlsx(rows, tmp, provenance=metadata, inputs=[source.path])
    return BatchSummary(
        str(out), summary.spectra, summary.chunks, time.perf_counter() - t0, summary.executor, summary.notes
    )


# --------------------------------------------------------------------------- faults: leftovers, resume


def _partial_paths(out: Path) -> tuple[Path, Path]:
    return out.with_name(out.name + ".partial"), out.with_name(out.name + ".partial.json")


def _clear_leftovers(out: Path, resume: bool) -> list[str]:
    """Remove what killed runs left beside ``out``: their temporary files, and without
    ``resume`` the partial results of a resumable run.  Returns a note per removal."""
    from .safe_io import _alive, glob_escape, remove_stale_temps

    notes = [f"removed {p.name}, left by an earlier run that was killed" for p in remove_stale_temps(out)]
    journal = _partial_paths(out)[1]
    for p in journal.parent.glob(glob_escape(journal.name) + ".*.tmp"):  # a journal being replaced when killed
        pid = p.name[len(journal.name) + 1 : -len(".tmp")]
        if pid.isdigit() and not _alive(int(pid)):
            with contextlib.suppress(OSError):
                p.unlink()
    if not resume:
        for p in _partial_paths(out):
            if p.exists():
                p.unlink()
                notes.append(f"removed {p.name} of an earlier unfinished run (--resume continues such a run)")
    return notes


def _identity(source, out: Path, *, observer: int, rendering: bool, dominant_white: str = "E") -> dict[str, Any]:
    """What must be the same for a run to continue another: the input files (size, modification
    time), the chunking, the options and the version."""
    from . import __version__

    files = []
    for f in dict.fromkeys([*source.files, source.path]):
        try:
            st = os.stat(f)
        except OSError:
            continue
        if not os.path.isdir(f):
            files.append([str(f), st.st_size, st.st_mtime_ns])
    return {
        "cctkit_version": __version__,
        "output": str(out),
        "input": str(source.path),
        "files": files,
        "chunk_size": source.chunk_size,
        "observer": observer,
        "rendering": rendering,
        "dominant_white": dominant_white,
    }


def _unchanged(source, identity: dict[str, Any]) -> None:
    """Refuse results of an input that changed while it was read: the hashes recorded in the
    rows are of the data analysed only if the file stayed the same throughout."""
    now = _identity(
        source,
        Path(identity["output"]),
        observer=identity["observer"],
        rendering=identity["rendering"],
        dominant_white=identity.get("dominant_white", "E"),
    )
    if now["files"] != identity["files"]:
        changed = next((a[0] for a, b in zip(identity["files"], now["files"]) if a != b), source.path)
        raise InputError("the input changed while the run read it; results not written", source=str(changed))


def _journal_state(out: Path, identity: dict[str, Any]) -> dict[str, Any] | None:
    """The journal of an earlier run to continue, or None to start afresh."""
    partial, journal = _partial_paths(out)
    if not journal.exists() or not partial.exists():
        return None
    try:
        state = json.loads(journal.read_text(encoding="utf-8"))
        keys = ("identity", "chunks", "spectra", "bytes", "columns")
        if not isinstance(state, dict) or any(k not in state for k in keys):
            raise ValueError("incomplete")
    except (OSError, ValueError):
        raise InputError(
            f"cannot continue: the journal {journal.name} is unreadable; remove it and {partial.name} to start again",
            source=str(journal),
        ) from None
    if state["identity"] != identity:
        raise InputError(
            "cannot continue: the input, the options or the chunk size differ from the earlier run's; "
            "run without --resume to start again",
            source=str(journal),
        )
    if partial.stat().st_size < state["bytes"]:
        raise InputError(
            f"cannot continue: {partial.name} is shorter than its journal says; run without --resume to start again",
            source=str(partial),
        )
    return state


def _resumable(
    out: Path,
    results,
    state,
    identity,
    progress: Progress,
    *,
    overwrite: bool,
    inputs,
    source,
    csv_dialect: str = "comma",
) -> int:
    """Write the rows to ``OUTPUT.partial``, journalling each complete chunk; put it in place at the end."""
    from .safe_io import place, write_journal

    partial, journal = _partial_paths(out)
    count = 0
    if state is not None:
        with open(partial, "r+b") as fh:  # drop the rows of a chunk that was being written when the run ended
            fh.truncate(state["bytes"])
        count = state["spectra"]
        progress.update(count)
        writer = _CsvWriter(partial, columns=state["columns"], csv_dialect=csv_dialect)
        chunks = state["chunks"]
    else:
        writer = _CsvWriter(partial, csv_dialect=csv_dialect)
        chunks = 0
    try:
        for n, result in results:
            raise_if_stopped()
            writer.write(result)
            count += n
            chunks += 1
            write_journal(
                journal,
                {
                    "identity": identity,
                    "chunks": chunks,
                    "spectra": count,
                    "bytes": writer.durable_size(),
                    "columns": writer.columns,
                },
            )
            progress.update(n)
    except Stopped as exc:
        exc.note = f"the {chunks} complete chunks are kept in {partial.name}; run again with --resume to continue"
        raise
    except OSError as exc:  # disk full, read-only: the finished chunks stay for a later --resume
        from .safe_io import os_error_text

        raise InputError(
            f"cannot write the output ({os_error_text(exc)}); the {chunks} complete chunks are kept "
            f"in {partial.name}: run again with --resume to continue",
            source=str(out),
        ) from None
    finally:
        results.close()
        with contextlib.suppress(OSError):
            writer.close()
    if count == 0:
        raise InputError("no spectra found", source=source.path)
    _unchanged(source, identity)
    raise_if_stopped()
    place(partial, out, overwrite=overwrite, inputs=inputs)
    journal.unlink()
    return count


def _warmed(chunks: Iterator[Spectra], observer: int, rendering: bool) -> Iterator[Spectra]:
    """Build the shared tables in this process before the workers fork, then pass the chunks on."""
    first = True
    for chunk in chunks:
        if first:
            spectra_results(chunk.select(slice(0, 1)), observer=observer, rendering=rendering)
            first = False
        yield chunk
