"""Reading many spectra in chunks: wide CSV, folders of spectrum files, Parquet datasets.

:func:`open_chunked` looks at ``path`` and returns a :class:`ChunkedInput`
whose :meth:`~ChunkedInput.chunks` yields :class:`~cctkit.spectra.Spectra` of
at most ``chunk_size`` spectra each, in input order, so that the memory a
batch run needs is bounded by the chunk size and not by the file size.

Layouts
-------
wide CSV (``.csv``, ``.tsv``, ``.txt``)
    One spectrum per row.  The header row holds the wavelengths in nm (plain
    numbers, optionally written ``380nm``), strictly monotonic, at least five;
    an optional first column (any non-numeric header, e.g. ``name``) names the
    spectra.  Cells are separated by tab, semicolon or comma (whichever the
    header uses, in that order of preference).  Lines starting with ``#`` are
    comments; the directives ``# quantity: irradiance`` and ``# unit: mW/m2/nm``
    (before the header) state the quantity and the unit of every value, with
    the same unit grammar as :mod:`cctkit.readers`.  Rows without a name are
    named ``<stem>#<k>`` (``k`` = 1-based spectrum number).  Every malformed
    row is an :class:`~cctkit.errors.InputError` naming the file and its line.
long delimited text
    A file whose header is not a row of wavelengths (a wavelength column and
    one column per spectrum) is read whole by :func:`cctkit.readers.read_spectra`
    (it is limited to ``DEFAULT_MAX_BYTES``) and then cut into chunks.
folder
    Every regular, non-hidden file in the folder (not its sub-folders) with an
    extension :func:`cctkit.readers.read_spectra` knows, in sorted name order:
    wide CSVs as above, every other file by :func:`cctkit.readers.read_spectra`;
    each is resampled to the working grid and spectra from several files share a
    chunk.  All files must hold the same radiometric quantity.
Parquet (``.parquet``, ``.pq``)
    Either one column per wavelength, named by the wavelength in nm (``"380"``,
    ``"380.0"``, ``"380nm"``), or one list column ``values`` whose wavelengths
    are given by the schema metadata key ``wavelength_nm`` (a JSON list).  An
    optional string column ``name`` names the spectra; the metadata key
    ``quantity`` (or ``--quantity``) states the quantity.  Read with
    ``pyarrow`` batch by batch.

Sources: a row of a wide file or Parquet dataset has ``source`` ``path#name``
(``path#k`` when unnamed) and ``sha256`` the digest of the whole file.
"""

from __future__ import annotations

import hashlib
import io
import itertools
import json
import os
import re
import stat
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, Iterator

import numpy as np

from ..errors import Flag, InputError
from ..spectra import Quantity, Spectra, concatenate, to_working_grid
from . import check_plain_nm, order_axis, parse_spectral_unit, short

__all__ = ["ChunkedInput", "open_chunked", "DEFAULT_CHUNK_SIZE", "SPECTRUM_SUFFIXES"]

#: Spectra per chunk unless told otherwise: 4096 x 471 float64 values are 15 MB.
DEFAULT_CHUNK_SIZE = 4096

#: Extensions a folder member must have to be read (those :func:`cctkit.readers.read_spectra` knows).
SPECTRUM_SUFFIXES = (".csv", ".tsv", ".txt", ".dat", ".prn", ".json", ".xml", ".spdx")
_WIDE_SUFFIXES = (".csv", ".tsv", ".txt")
_PARQUET_SUFFIXES = (".parquet", ".pq")
_DIRECTIVE = re.compile(r"^#\s*(quantity|unit)\s*[:=]\s*(.*?)\s*$", re.IGNORECASE)
_WAVELENGTH_CELL = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(?:nm)?\s*$")
#: Plausible wavelengths for a wide header [nm]: anything else is not a header of wavelengths.
_HEADER_RANGE_NM = (100.0, 3000.0)
_MIN_WAVELENGTHS = 5


@dataclass(frozen=True)
class ChunkedInput:
    """A many-spectra input, read lazily in chunks.

    Attributes
    ----------
    path
        The input as given.
    layout
        ``"wide-csv"``, ``"file"`` (any one file read whole), ``"folder"`` or ``"parquet"``.
    total
        Number of spectra when known beforehand (else ``None``).
    files
        Every file the chunks come from (an output must not be any of them).
    chunk_size
        Largest number of spectra per chunk.
    """

    path: str
    layout: str
    total: int | None
    files: tuple[str, ...]
    chunk_size: int
    _make: Callable[[], Iterator[Spectra]] = field(repr=False, compare=False)

    def chunks(self) -> Iterator[Spectra]:
        """Spectra of at most ``chunk_size`` spectra each, in input order."""
        return self._make()


def open_chunked(
    path: str | os.PathLike,
    *,
    chunk_size: int = DEFAULT_CHUNK_SIZE,
    quantity: Quantity | str | None = None,
) -> ChunkedInput:
    """Look at ``path`` and prepare to read it in chunks (see the module docstring).

    Parameters
    ----------
    path
        A wide CSV, a long delimited/JSON/TM-27 file, a folder of such files, or a Parquet file.
    chunk_size
        Largest number of spectra per chunk [spectra].
    quantity
        Radiometric quantity when the input does not state one; an input stating
        another one is refused.

    Raises
    ------
    InputError
        When the input cannot be read; the text names the file (and line).
    """
    source = os.fspath(path)
    if isinstance(source, bytes):
        source = os.fsdecode(source)
    if isinstance(chunk_size, bool) or not isinstance(chunk_size, (int, np.integer)) or chunk_size < 1:
        raise InputError(f"chunk size must be a positive number of spectra, got {chunk_size!r}", source="--chunk-size")
    chunk_size = int(chunk_size)
    wanted = None if quantity is None else (quantity if isinstance(quantity, Quantity) else Quantity.parse(quantity, source="--quantity"))
    p = Path(source)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise InputError("file or folder not found", source=source) from None
    except OSError as exc:
        raise InputError(f"cannot read ({exc.strerror or exc})", source=source) from None
    if stat.S_ISDIR(st.st_mode):
        return _open_folder(p, source, chunk_size, wanted)
    if not stat.S_ISREG(st.st_mode):
        raise InputError("is not a regular file or folder", source=source)
    if st.st_size == 0:
        raise InputError("file is empty", source=source)
    suffix = p.suffix.lower()
    if suffix in _PARQUET_SUFFIXES:
        return _open_parquet(p, source, chunk_size, wanted)
    if suffix in _WIDE_SUFFIXES:
        head = _wide_head(p, source)
        if head is not None:
            return _open_wide(p, source, chunk_size, wanted, head)
    if suffix not in SPECTRUM_SUFFIXES:
        raise InputError(
            f"unknown input type {suffix or '(no extension)'!r}; expected a folder, "
            + ", ".join(SPECTRUM_SUFFIXES + _PARQUET_SUFFIXES),
            source=source,
        )
    return _open_single(p, source, chunk_size, wanted)


def _stated_quantity(stated: Quantity | None, wanted: Quantity | None, source: str) -> Quantity:
    if stated is not None and wanted is not None and stated is not wanted:
        raise InputError(f"the file states quantity {stated.value!r} but {wanted.value!r} was asked for", source=source)
    return stated or wanted or Quantity.RELATIVE


def _rechunk(items: Iterator[Spectra], chunk_size: int) -> Iterator[Spectra]:
    """Spectra of exactly ``chunk_size`` spectra (the last may be shorter) from any sequence of batches."""
    buffer: list[Spectra] = []
    held = 0
    for s in items:
        start = 0
        while start < len(s):
            take = min(chunk_size - held, len(s) - start)
            buffer.append(s if (start == 0 and take == len(s)) else s.select(slice(start, start + take)))
            held += take
            start += take
            if held == chunk_size:
                yield _join(buffer)
                buffer, held = [], 0
    if buffer:
        yield _join(buffer)


def _chain(seqs) -> tuple:
    return tuple(itertools.chain.from_iterable(seqs))


def _join(parts: list[Spectra]) -> Spectra:
    """One Spectra from several; parts on one wavelength axis are joined as measured."""
    if len(parts) == 1:
        return parts[0]
    wl = parts[0].wavelength_nm
    if not all(s.quantity is parts[0].quantity and np.array_equal(s.wavelength_nm, wl) for s in parts[1:]):
        return concatenate(parts)
    return Spectra(
        wavelength_nm=wl,
        values=np.concatenate([s.values for s in parts]),
        names=_chain(s.names for s in parts),
        quantity=parts[0].quantity,
        sources=_chain(s.sources for s in parts),
        sha256=_chain(s.sha256 for s in parts),
        flags=_chain(s.flags for s in parts),
        measured_range_nm=_chain(s.measured_range_nm for s in parts),
    )


# --------------------------------------------------------------------------- single files and folders


def _open_single(p: Path, source: str, chunk_size: int, wanted: Quantity | None) -> ChunkedInput:
    from . import read_spectra

    def make() -> Iterator[Spectra]:
        return _rechunk(iter([read_spectra(p, quantity=wanted)]), chunk_size)

    return ChunkedInput(source, "file", None, (source,), chunk_size, make)


def _open_folder(p: Path, source: str, chunk_size: int, wanted: Quantity | None) -> ChunkedInput:
    try:
        entries = sorted(os.scandir(p), key=lambda e: e.name)
    except OSError as exc:
        raise InputError(f"cannot list the folder ({exc.strerror or exc})", source=source) from None
    files = tuple(
        str(p / e.name)
        for e in entries
        if not e.name.startswith(".") and e.is_file() and Path(e.name).suffix.lower() in SPECTRUM_SUFFIXES
    )
    if not files:
        raise InputError(f"folder holds no spectrum files ({', '.join(SPECTRUM_SUFFIXES)})", source=source)

    def make() -> Iterator[Spectra]:
        from . import read_spectra

        def each() -> Iterator[Spectra]:
            first: Quantity | None = None
            for f in files:
                head = _wide_head(Path(f), f) if Path(f).suffix.lower() in _WIDE_SUFFIXES else None
                if head is not None:
                    parts: Iterator[Spectra] = _open_wide(Path(f), f, chunk_size, wanted, head).chunks()
                else:
                    parts = iter([read_spectra(f, quantity=wanted)])
                for part in parts:
                    s = to_working_grid(part)
                    if first is None:
                        first = s.quantity
                    elif s.quantity is not first:
                        raise InputError(
                            f"holds {s.quantity.value!r} spectra while earlier files hold {first.value!r}; "
                            "a batch needs one quantity",
                            source=f,
                        )
                    yield s

        return _rechunk(each(), chunk_size)

    return ChunkedInput(source, "folder", None, files, chunk_size, make)


# --------------------------------------------------------------------------- wide CSV


@dataclass(frozen=True)
class _WideHead:
    delimiter: str
    named: bool
    wavelength_nm: np.ndarray  # ascending
    reverse: bool
    flags: tuple[Flag, ...]
    quantity: Quantity | None
    factor: float
    header_line: int
    ncells: int


def _open_text(p: Path, source: str):
    try:
        return open(p, "r", encoding="utf-8-sig", newline=None)
    except OSError as exc:
        raise InputError(f"cannot read the file ({exc.strerror or exc})", source=source) from None


def _split(line: str, delimiter: str) -> list[str]:
    if '"' in line:
        import csv

        return [c.strip() for c in next(csv.reader([line], delimiter=delimiter))]
    return [c.strip() for c in line.split(delimiter)]


def _wide_head(p: Path, source: str) -> _WideHead | None:
    """The header of a wide CSV, or ``None`` when the file is not one (a long layout)."""
    directives: dict[str, tuple[str, int]] = {}
    with _open_text(p, source) as fh:
        try:
            for number, raw in enumerate(fh, start=1):
                s = raw.strip()
                if not s:
                    continue
                if s.startswith("#"):
                    m = _DIRECTIVE.match(s)
                    if m:
                        directives[m.group(1).lower()] = (m.group(2), number)
                    continue
                header, header_line = s, number
                break
            else:
                raise InputError("no data rows (only comments or blank lines)", source=source)
        except UnicodeDecodeError:
            return None  # let the general reader report the encoding
    delimiter = "\t" if "\t" in header else ";" if ";" in header else ","
    cells = _split(header, delimiter)
    while len(cells) > 1 and cells[-1] == "":
        cells.pop()
    named = _WAVELENGTH_CELL.match(cells[0]) is None
    wl_cells = cells[1:] if named else cells
    if len(wl_cells) < _MIN_WAVELENGTHS:
        return None
    matches = [_WAVELENGTH_CELL.match(c) for c in wl_cells]
    if any(m is None for m in matches):
        return None
    wl = np.array([float(m.group(1)) for m in matches])
    if not (np.all(np.isfinite(wl)) and wl.min() >= _HEADER_RANGE_NM[0] and wl.max() <= _HEADER_RANGE_NM[1]):
        return None
    steps = np.diff(wl)
    if not (np.all(steps > 0) or np.all(steps < 0)):
        return None  # a long layout's first data row, not a header of wavelengths
    check_plain_nm(wl, source=source, line=header_line)
    ordered, _, flags = order_axis(wl, np.zeros((0, wl.size)), source=source)
    stated = None
    factor = 1.0
    if "unit" in directives:
        text, line = directives["unit"]
        stated, factor = parse_spectral_unit(text, source=source, line=line)
    if "quantity" in directives:
        text, line = directives["quantity"]
        q = Quantity.parse(text, source=f"{source}:{line}")
        if stated is not None and q is not stated:
            raise InputError(f"'# quantity: {q.value}' contradicts the unit {directives['unit'][0]!r}", source=source, line=line)
        stated = q
    return _WideHead(delimiter, named, ordered, bool(steps[0] < 0), flags, stated, factor, header_line, len(cells))


def _digest_and_rows(p: Path, source: str) -> tuple[str, int]:
    """SHA-256 of the file and its number of line ends (an upper bound on its rows)."""
    h = hashlib.sha256()
    lines = 0
    try:
        with open(p, "rb") as fh:
            last = b""
            for block in iter(lambda: fh.read(1 << 22), b""):
                h.update(block)
                lines += block.count(b"\n")
                last = block
    except OSError as exc:
        raise InputError(f"cannot read the file ({exc.strerror or exc})", source=source) from None
    return h.hexdigest(), lines + (0 if last.endswith(b"\n") else 1)


def _open_wide(p: Path, source: str, chunk_size: int, wanted: Quantity | None, head: _WideHead) -> ChunkedInput:
    quantity = _stated_quantity(head.quantity, wanted, source)
    digest, line_count = _digest_and_rows(p, source)
    estimate = max(line_count - head.header_line, 0)

    def make() -> Iterator[Spectra]:
        return _iter_wide(p, source, chunk_size, quantity, head, digest)

    return ChunkedInput(source, "wide-csv", estimate, (source,), chunk_size, make)


def _iter_wide(p: Path, source: str, chunk_size: int, quantity: Quantity, head: _WideHead, digest: str) -> Iterator[Spectra]:
    stem = p.stem or source
    count = 0
    with _open_text(p, source) as fh:
        lines: list[tuple[int, str]] = []
        number = 0
        try:
            for number, raw in enumerate(fh, start=1):
                if number <= head.header_line:
                    continue
                s = raw.strip()
                if not s or s.startswith("#"):
                    continue
                lines.append((number, s))
                if len(lines) == chunk_size:
                    yield _wide_chunk(lines, source, stem, count, quantity, head, digest)
                    count += len(lines)
                    lines = []
        except UnicodeDecodeError:
            raise InputError("not valid UTF-8 text", source=source, line=number + 1) from None
        if lines:
            yield _wide_chunk(lines, source, stem, count, quantity, head, digest)
            count += len(lines)
    if count == 0:
        raise InputError("header but no data rows", source=source, line=head.header_line)


def _wide_chunk(
    lines: list[tuple[int, str]], source: str, stem: str, offset: int, quantity: Quantity, head: _WideHead, digest: str
) -> Spectra:
    d = head.delimiter
    if head.named:
        names: list[str] = []
        bodies: list[str] = []
        for number, s in lines:
            if '"' in s:
                cells = _split(s, d)
                names.append(cells[0])
                bodies.append(d.join(cells[1:]))
            else:
                name, _, body = s.partition(d)
                names.append(name.strip())
                bodies.append(body)
    else:
        names = [f"{stem}#{offset + k + 1}" for k in range(len(lines))]
        bodies = [s for _, s in lines]
    L = head.wavelength_nm.size
    try:
        values = np.loadtxt(io.StringIO("\n".join(bodies)), delimiter=d, dtype=np.float64, ndmin=2, comments=None)
        if values.shape != (len(lines), L):
            raise ValueError("shape")
    except ValueError:
        _diagnose(lines, bodies, L, source, d)
        raise  # _diagnose always raises; kept for the reader of this code
    bad = ~np.isfinite(values)
    if bad.any():
        r, c = np.argwhere(bad)[0]
        raise InputError(
            f"missing or non-finite value at {head.wavelength_nm[::-1][c] if head.reverse else head.wavelength_nm[c]:g} nm",
            source=source,
            line=lines[r][0],
        )
    if head.reverse:
        values = values[:, ::-1]
    if head.factor != 1.0:
        values = values * head.factor
    empty = [k for k, n in enumerate(names) if not n]
    for k in empty:
        names[k] = f"{stem}#{offset + k + 1}"
    sources = tuple(f"{source}#{n}" for n in names) if head.named else tuple(f"{source}#{offset + k + 1}" for k in range(len(lines)))
    return Spectra(
        wavelength_nm=head.wavelength_nm,
        values=values,
        names=tuple(names),
        quantity=quantity,
        sources=sources,
        sha256=(digest,),
        flags=(head.flags,),
    )


def _diagnose(lines: list[tuple[int, str]], bodies: list[str], L: int, source: str, d: str) -> None:
    """Find the first malformed row of a chunk and raise an InputError naming its line."""
    for (number, _), body in zip(lines, bodies):
        cells = _split(body, d)
        if len(cells) != L:
            raise InputError(f"row has {len(cells)} values, the header has {L} wavelengths", source=source, line=number)
        for c, cell in enumerate(cells):
            try:
                float(cell)
            except ValueError:
                what = "empty cell" if cell == "" else f"expected a number, got {short(cell)}"
                raise InputError(f"{what} in value column {c + 1}", source=source, line=number) from None
    raise InputError("cannot parse the rows of this chunk", source=source, line=lines[0][0])


# --------------------------------------------------------------------------- Parquet


def _open_parquet(p: Path, source: str, chunk_size: int, wanted: Quantity | None) -> ChunkedInput:
    try:
        import pyarrow.parquet as pq
    except ImportError:  # pragma: no cover - a declared dependency
        raise InputError("reading Parquet needs the pyarrow package", source=source) from None
    try:
        pf = pq.ParquetFile(p)
    except Exception as exc:  # noqa: BLE001 - pyarrow raises several types for a bad file
        raise InputError(f"not a readable Parquet file ({type(exc).__name__}: {str(exc).splitlines()[0]})", source=source) from None
    schema = pf.schema_arrow
    meta = {k.decode(): v.decode() for k, v in (schema.metadata or {}).items() if not k.startswith(b"ARROW")}
    names_col = "name" if "name" in schema.names else None
    stated = Quantity.parse(meta["quantity"], source=f"{source}: metadata 'quantity'") if "quantity" in meta else None
    quantity = _stated_quantity(stated, wanted, source)
    if "values" in schema.names and "wavelength_nm" in meta:
        try:
            wl = np.asarray(json.loads(meta["wavelength_nm"]), dtype=np.float64)
        except (ValueError, TypeError):
            raise InputError("metadata 'wavelength_nm' is not a JSON list of numbers", source=source) from None
        wl_columns = None
    else:
        wl_columns = []
        wl_list = []
        for name in schema.names:
            m = _WAVELENGTH_CELL.match(name)
            if m:
                wl_columns.append(name)
                wl_list.append(float(m.group(1)))
        if len(wl_columns) < _MIN_WAVELENGTHS:
            raise InputError(
                "Parquet input needs columns named by wavelength in nm, or a list column 'values' "
                "with metadata 'wavelength_nm'",
                source=source,
            )
        wl = np.asarray(wl_list)
    if wl.ndim != 1 or wl.size < _MIN_WAVELENGTHS:
        raise InputError(f"needs at least {_MIN_WAVELENGTHS} wavelengths, got {wl.size}", source=source)
    check_plain_nm(wl, source=source)
    order = np.argsort(wl, kind="stable")
    ordered, _, _ = order_axis(wl[order], np.zeros((0, wl.size)), source=source)  # refuses duplicates
    flags = () if np.array_equal(order, np.arange(wl.size)) else (
        Flag("wavelength-reordered", "wavelength columns were not in ascending order in the file; sorted"),
    )
    from ..spectra import sha256_of_file

    digest = sha256_of_file(p)
    stem = p.stem or source

    def make() -> Iterator[Spectra]:
        columns = ([names_col] if names_col else []) + (wl_columns if wl_columns is not None else ["values"])
        return _rechunk(batches(columns), chunk_size)

    def batches(columns) -> Iterator[Spectra]:
        offset = 0
        for batch in pf.iter_batches(batch_size=chunk_size, columns=columns):
            n = batch.num_rows
            if n == 0:
                continue
            values = _parquet_values(batch, wl_columns, wl.size, source, offset)[:, order]
            bad = ~np.isfinite(values)
            if bad.any():
                r, c = np.argwhere(bad)[0]
                raise InputError(f"row {offset + r + 1}: missing or non-finite value at {ordered[c]:g} nm", source=source)
            if names_col:
                raw = batch.column(names_col).to_pylist()
                names = tuple(str(x) if x not in (None, "") else f"{stem}#{offset + k + 1}" for k, x in enumerate(raw))
                sources = tuple(f"{source}#{x}" for x in names)
            else:
                names = tuple(f"{stem}#{offset + k + 1}" for k in range(n))
                sources = tuple(f"{source}#{offset + k + 1}" for k in range(n))
            yield Spectra(ordered, values, names, quantity=quantity, sources=sources, sha256=(digest,), flags=(flags,))
            offset += n
        if offset == 0:
            raise InputError("holds no rows", source=source)

    return ChunkedInput(source, "parquet", int(pf.metadata.num_rows), (source,), chunk_size, make)


def _parquet_values(batch, wl_columns, L: int, source: str, offset: int) -> np.ndarray:
    import pyarrow as pa

    if wl_columns is not None:
        cols = []
        for name in wl_columns:
            col = batch.column(name)
            if not (pa.types.is_floating(col.type) or pa.types.is_integer(col.type)):
                raise InputError(f"column {name!r} holds {col.type}, not numbers", source=source)
            if col.null_count:
                r = int(np.flatnonzero(np.asarray(col.is_null()))[0])
                raise InputError(f"row {offset + r + 1}: missing value at {name} nm", source=source)
            cols.append(col.to_numpy(zero_copy_only=False).astype(np.float64, copy=False))
        return np.stack(cols, axis=1)
    col = batch.column("values")
    if not (pa.types.is_list(col.type) or pa.types.is_fixed_size_list(col.type) or pa.types.is_large_list(col.type)):
        raise InputError(f"column 'values' holds {col.type}, not lists of numbers", source=source)
    if col.null_count:
        r = int(np.flatnonzero(np.asarray(col.is_null()))[0])
        raise InputError(f"row {offset + r + 1}: missing spectrum in column 'values'", source=source)
    lengths = np.asarray(col.value_lengths()) if hasattr(col, "value_lengths") else None
    if lengths is None:
        import pyarrow.compute as pc

        lengths = np.asarray(pc.list_value_length(col))
    wrong = np.flatnonzero(lengths != L)
    if wrong.size:
        r = int(wrong[0])
        raise InputError(f"row {offset + r + 1}: spectrum has {lengths[r]} values, metadata 'wavelength_nm' has {L}", source=source)
    flat = col.flatten()
    if flat.null_count:
        r = int(np.flatnonzero(np.asarray(flat.is_null()))[0]) // L
        raise InputError(f"row {offset + r + 1}: missing value in column 'values'", source=source)
    return flat.to_numpy(zero_copy_only=False).astype(np.float64, copy=False).reshape(-1, L)
