"""Reading many spectra in chunks: wide CSV, folders of spectrum files, Parquet datasets.

:func:`open_chunked` looks at ``path`` and returns a :class:`ChunkedInput`
whose :meth:`~ChunkedInput.chunks` yields :class:`~cctkit.spectra.Spectra` of
at most ``chunk_size`` spectra each, in input order, so that the memory a
batch run needs is bounded by the chunk size and not by the file size.

Layouts
-------
wide CSV (``.csv``, ``.tsv``, ``.txt``)
    One spectrum per row.  The header row holds the wavelengths in nm (plain
    numbers, optionally written ``380nm``), strictly monotonic, at least
    :data:`~cctkit.spectra.MIN_POINTS`; an optional first column (any
    non-numeric header, e.g. ``name``) names the spectra.  Cells are separated
    by tab, semicolon or comma (whichever the header uses, in that order of
    preference) and may be quoted.  Text encodings, comment lines (``#``,
    ``//``, ``%``) and the directives ``# quantity: irradiance`` and
    ``# unit: mW/m2/nm`` are those of :mod:`cctkit.readers.delimited`, except
    that the directives must come before the header (a conflicting repeat is
    refused).  Rows without a name are named ``<stem>#<k>`` (``k`` = 1-based
    spectrum number).  Every malformed row is an
    :class:`~cctkit.errors.InputError` naming the file and its line (or, given a
    ``skipped`` list, is left out and recorded there: see :func:`open_chunked`).
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
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import BinaryIO

import numpy as np

from ..errors import Flag, InputError, quiet_arrow_signals
from ..spectra import MIN_POINTS, Quantity, Spectra, sha256_of_file, to_working_grid
from . import (
    SPECTRUM_SUFFIXES,
    _oserror_text,
    _quantity_argument,
    _source_of,
    check_controls,
    check_plain_nm,
    combine_quantity,
    content_lines,
    order_axis,
    parse_spectral_unit,
    resolve_quantity,
    short,
    stream_codec,
)
from .delimited import _MISSING, _NUMBER, _splitter

__all__ = ["ChunkedInput", "open_chunked", "DEFAULT_CHUNK_SIZE", "SPECTRUM_SUFFIXES"]

#: Spectra per chunk unless told otherwise: 4096 x 471 float64 values are 15 MB.
DEFAULT_CHUNK_SIZE = 4096

_WIDE_SUFFIXES = (".csv", ".tsv", ".txt")
_PARQUET_SUFFIXES = (".parquet", ".pq")
_WAVELENGTH_CELL = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(?:nm)?\s*$")
#: Plausible wavelengths for a wide header [nm]: anything else is not a header of wavelengths.
_HEADER_RANGE_NM = (100.0, 3000.0)
_BLOCK_BYTES = 1 << 22


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
        Number of spectra, or an upper bound on it, when known beforehand (else
        ``None``).  For a wide CSV it counts the lines after the header, so
        comment and blank lines make it larger than the number of spectra; for
        Parquet it is exact.
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
    interpolation: str = "auto",
    recursive: bool = False,
    skipped: list[InputError] | None = None,
) -> ChunkedInput:
    """Look at ``path`` and prepare to read it in chunks (see the module docstring).

    ``interpolation`` is how folder members on different grids are brought to the working grid.

    Parameters
    ----------
    path
        A wide CSV, a long delimited/JSON/TM-27 file, a folder of such files, or a Parquet file.
    chunk_size
        Largest number of spectra per chunk [spectra].
    quantity
        Radiometric quantity when the input does not state one; an input stating
        another one is refused.
    recursive
        For a folder, also read the files in its sub-folders (sorted by path).
    skipped
        When a list is given, bad parts of the input are skipped and go on the list (as
        :class:`~cctkit.errors.InputError`, in input order, while the chunks are read)
        instead of stopping the run: a folder member that cannot be read (``part``
        ``"file"``); a row of a wide CSV or Parquet file with a non-numeric, empty, missing
        or non-finite cell, the wrong number of cells, or no positive value in 380-780 nm
        (``"row"``, see :func:`cctkit.spectra.signal_problems`); a value column of a long
        delimited file with such a cell (``"column"``, see :func:`cctkit.readers.read_spectra`).
        What cannot be cut out (the header, the wavelength column, the file as a whole) still
        stops the run.

    Raises
    ------
    InputError
        When the input cannot be read; the text names the file (and line).
    """
    source = _source_of(path)
    if isinstance(chunk_size, bool) or not isinstance(chunk_size, (int, np.integer)) or chunk_size < 1:
        raise InputError(f"chunk size must be a positive number of spectra, got {chunk_size!r}", source="--chunk-size")
    chunk_size = int(chunk_size)
    wanted = _quantity_argument(quantity, source)
    p = Path(source)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise InputError("file or folder not found", source=source) from None
    except (OSError, ValueError) as exc:
        raise InputError(f"cannot read ({_oserror_text(exc)})", source=source) from None
    if stat.S_ISDIR(st.st_mode):
        return _open_folder(
            p, source, chunk_size, wanted, recursive=recursive, skipped=skipped, interpolation=interpolation
        )
    if not stat.S_ISREG(st.st_mode):
        raise InputError("is not a regular file or folder", source=source)
    if st.st_size == 0:
        raise InputError("file is empty", source=source)
    suffix = p.suffix.lower()
    if suffix in _PARQUET_SUFFIXES:
        return _open_parquet(p, source, chunk_size, wanted, skipped)
    if suffix in _WIDE_SUFFIXES:
        head = _wide_head(p, source)
        if head is not None:
            return _open_wide(p, source, chunk_size, wanted, head, skipped)
    if suffix not in SPECTRUM_SUFFIXES:
        raise InputError(
            f"unknown input type {suffix or '(no extension)'!r}; expected a folder, "
            + ", ".join(SPECTRUM_SUFFIXES + _PARQUET_SUFFIXES),
            source=source,
        )
    return _open_single(p, source, chunk_size, wanted, skipped)


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
    """One Spectra from several, joined as measured.

    Every layout yields parts on one wavelength axis with one quantity: a wide
    CSV and a Parquet file have one axis, folder members are resampled to the
    working grid and checked to share a quantity.
    """
    if len(parts) == 1:
        return parts[0]
    return Spectra(
        wavelength_nm=parts[0].wavelength_nm,
        values=np.concatenate([s.values for s in parts]),
        names=_chain(s.names for s in parts),
        quantity=parts[0].quantity,
        sources=_chain(s.sources for s in parts),
        sha256=_chain(s.sha256 for s in parts),
        flags=_chain(s.flags for s in parts),
        measured_range_nm=_chain(s.measured_range_nm for s in parts),
        metadata=_chain(s.metadata for s in parts),
        measured_totals=np.concatenate([s.measured_totals for s in parts]),
        interpolation=_chain(s.interpolation for s in parts),
    )


# --------------------------------------------------------------------------- single files and folders


def _open_single(
    p: Path, source: str, chunk_size: int, wanted: Quantity | None, skipped: list[InputError] | None = None
) -> ChunkedInput:
    from . import read_spectra

    def make() -> Iterator[Spectra]:
        return _rechunk(iter([read_spectra(p, quantity=wanted, skipped=skipped)]), chunk_size)

    return ChunkedInput(source, "file", None, (source,), chunk_size, make)


def _open_folder(
    p: Path,
    source: str,
    chunk_size: int,
    wanted: Quantity | None,
    *,
    recursive: bool = False,
    skipped: list[InputError] | None = None,
    interpolation: str = "auto",
) -> ChunkedInput:
    from . import folder_files

    files = folder_files(p, recursive=recursive)

    def make() -> Iterator[Spectra]:
        from . import read_spectra

        def member(f: str, first: Quantity | None, parts_skipped: list[InputError] | None = None) -> Iterator[Spectra]:
            head = _wide_head(Path(f), f) if Path(f).suffix.lower() in _WIDE_SUFFIXES else None
            if head is not None:
                parts: Iterable[Spectra] = _open_wide(Path(f), f, chunk_size, wanted, head, parts_skipped).chunks()
            else:
                parts = [read_spectra(f, quantity=wanted, skipped=parts_skipped)]
            for part in parts:
                s = to_working_grid(part, interpolation=interpolation)
                if first is not None and s.quantity is not first:
                    raise InputError(
                        f"holds {s.quantity.value!r} spectra while earlier files hold {first.value!r}; "
                        "a batch needs one quantity",
                        source=f,
                    )
                first = first or s.quantity
                yield s

        def each() -> Iterator[Spectra]:
            first: Quantity | None = None
            for f in files:
                got: Iterable[Spectra]
                if skipped is None:
                    got = member(f, first)
                else:
                    parts_skipped: list[InputError] = []
                    try:  # a bad member is skipped whole, so it is read whole before any of it is used
                        got = list(member(f, first, parts_skipped))
                    except InputError as exc:
                        whole = (
                            exc.with_traceback(None) if exc.source else InputError(exc.reason, source=f, line=exc.line)
                        )
                        whole.part = "file"
                        skipped.append(whole)
                        continue
                    skipped.extend(parts_skipped)  # its bad rows or columns, once the rest of it was read
                for s in got:
                    first = first or s.quantity
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
    directives: dict[str, tuple[str, int]]
    codec: str
    label: str
    bom: int
    sha256: str
    line_ends: int
    controls: bool = True  # the bytes may hold control characters: check line by line
    carriage_returns: bool = True  # the bytes may hold CR (line ends other than LF alone)


#: Every byte but the ASCII controls the readers refuse (see ``readers.check_controls``): deleting these
#: from a block leaves its control bytes, if any (one C pass, ten times faster than a regex).
_NOT_CONTROL = bytes(b for b in range(256) if not (b <= 0x08 or 0x0E <= b <= 0x1F or b == 0x7F))


def _scan(p: Path, source: str) -> tuple[tuple[str, str, int, tuple[Flag, ...]], str, int, bool, bool]:
    """The text codec (see :func:`cctkit.readers.stream_codec`), SHA-256 and line count of the file,
    whether any byte is an ASCII control character, and whether any is a CR, in one pass.

    The count is of line ends (LF, CR LF or a lone CR) plus an unterminated last
    line: at least the number of lines.
    """
    h = hashlib.sha256()
    ends = 0
    last = b""
    controls = False
    cr = False

    def blocks() -> Iterator[bytes]:
        nonlocal ends, last, controls, cr
        for block in iter(lambda: fh.read(_BLOCK_BYTES), b""):
            h.update(block)
            controls = controls or bool(block.translate(None, _NOT_CONTROL))
            ends += block.count(b"\n")
            if b"\r" in block:  # one C search; most files have none
                cr = True
                ends += block.count(b"\r") - block.count(b"\r\n")
            if last.endswith(b"\r") and block.startswith(b"\n"):
                ends -= 1
            last = block
            yield block

    try:
        with open(p, "rb") as fh:
            codec = stream_codec(blocks(), source)
    except OSError as exc:
        raise InputError(f"cannot read the file ({_oserror_text(exc)})", source=source) from None
    return codec, h.hexdigest(), ends + (0 if last.endswith((b"\n", b"\r")) else 1), controls, cr


def _open_text(p: Path, source: str, codec: str, bom: int):
    try:
        fh = open(p, "rb")
        fh.seek(bom)
    except OSError as exc:
        raise InputError(f"cannot read the file ({_oserror_text(exc)})", source=source) from None
    return io.TextIOWrapper(fh, encoding=codec, newline=None)


def _checked(lines: Iterable[str], source: str) -> Iterator[str]:
    """The lines, refusing control characters as :func:`cctkit.readers.decode_text` does."""
    for number, raw in enumerate(lines, start=1):
        check_controls(raw, source=source, first_line=number)
        yield raw


def _wide_head(p: Path, source: str) -> _WideHead | None:
    """The header of a wide CSV, or ``None`` when the file is not one (a long layout)."""
    (codec, label, bom, text_flags), digest, line_ends, controls, cr = _scan(p, source)
    directives: dict[str, tuple[str, int]] = {}
    with _open_text(p, source, codec, bom) as fh:
        try:
            first = next(content_lines(_checked(fh, source), directives, source=source), None)
        except UnicodeDecodeError:
            return None  # let the general reader report the encoding
    if first is None:
        raise InputError("no data rows (only comments or blank lines)", source=source)
    header_line, header = first
    delimiter = "\t" if "\t" in header else ";" if ";" in header else ","
    cells = _splitter(delimiter)(header)
    named = _WAVELENGTH_CELL.match(cells[0]) is None
    wl_cells = cells[1:] if named else cells
    if len(wl_cells) < MIN_POINTS:
        few = [m for m in map(_WAVELENGTH_CELL.match, wl_cells) if m is not None]
        if named and len(wl_cells) >= 2 and len(few) == len(wl_cells):  # a name column, then wavelengths: too few
            nm = [float(m.group(1)) for m in few]
            if all(_HEADER_RANGE_NM[0] <= v <= _HEADER_RANGE_NM[1] for v in nm):
                raise InputError(
                    f"the header names only {len(nm)} wavelengths ({min(nm):g}-{max(nm):g} nm); "
                    f"a spectrum needs at least {MIN_POINTS}",
                    source=source,
                    line=header_line,
                )
        return None
    matches = [m for m in map(_WAVELENGTH_CELL.match, wl_cells) if m is not None]
    if len(matches) != len(wl_cells):
        return None
    wl = np.array([float(m.group(1)) for m in matches])
    if not (np.all(np.isfinite(wl)) and wl.min() >= _HEADER_RANGE_NM[0] and wl.max() <= _HEADER_RANGE_NM[1]):
        return None
    steps = np.diff(wl)
    if not (np.all(steps > 0) or np.all(steps < 0)):
        return None  # a long layout's first data row, not a header of wavelengths
    ordered, _, order_flags = order_axis(wl, np.zeros((0, wl.size)), source=source)
    unit_q, factor = None, 1.0
    if "unit" in directives:
        text, line = directives["unit"]
        unit_q, factor = parse_spectral_unit(text, source=source, line=line)
    stated, quantity_line = None, None
    if "quantity" in directives:
        text, quantity_line = directives["quantity"]
        stated = Quantity.parse(text, source=source, line=quantity_line)
    quantity = combine_quantity(stated, unit_q, source=source, line=quantity_line)
    return _WideHead(
        delimiter,
        named,
        ordered,
        bool(steps[0] < 0),
        text_flags + order_flags,
        quantity,
        factor,
        header_line,
        directives,
        codec,
        label,
        bom,
        digest,
        line_ends,
        # in UTF-8 and Latin-1 a control character is its own byte: a file without one needs no line check
        controls or codec not in ("utf-8", "latin-1"),
        cr or codec not in ("utf-8", "latin-1"),
    )


def _open_wide(
    p: Path,
    source: str,
    chunk_size: int,
    wanted: Quantity | None,
    head: _WideHead,
    skipped: list[InputError] | None = None,
) -> ChunkedInput:
    quantity = resolve_quantity(head.quantity, wanted, source=source)
    estimate = max(head.line_ends - head.header_line, 0)

    def make() -> Iterator[Spectra]:
        return _iter_wide(p, source, chunk_size, quantity, head, skipped)

    return ChunkedInput(source, "wide-csv", estimate, (source,), chunk_size, make)


def _no_late_directive(directives: dict[str, tuple[str, int]], head: _WideHead, source: str) -> None:
    """Refuse a ``# key:`` directive found after the header (``directives`` holds every one read so far)."""
    late = [(line, key) for key, (_, line) in directives.items() if key not in head.directives]
    if late:
        line, key = min(late)
        raise InputError(f"'# {key}:' after the header; directives must come before it", source=source, line=line)


def _iter_wide(
    p: Path, source: str, chunk_size: int, quantity: Quantity, head: _WideHead, skipped: list[InputError] | None = None
) -> Iterator[Spectra]:
    if not head.controls and not head.carriage_returns:
        yield from _iter_wide_bytes(p, source, chunk_size, quantity, head, skipped)
        return
    stem = p.stem or source
    count = 0
    directives = dict(head.directives)  # grows with every directive line read after the header

    rows: list[tuple[int, str]] = []
    with _open_text(p, source, head.codec, head.bom) as fh:
        try:
            lines = _checked(fh, source) if head.controls else fh
            for number, s in content_lines(lines, directives, source=source):
                if number <= head.header_line:
                    continue
                rows.append((number, s))
                if len(rows) == chunk_size:
                    _no_late_directive(directives, head, source)
                    chunk = _wide_chunk(rows, source, stem, count, quantity, head, skipped)
                    if chunk is not None:  # None: every row of it was bad and skipped
                        yield chunk
                    count += len(rows)
                    rows = []
        except UnicodeDecodeError:
            raise InputError(f"not valid {head.label} text", source=source) from None
    _no_late_directive(directives, head, source)
    if rows:
        chunk = _wide_chunk(rows, source, stem, count, quantity, head, skipped)
        if chunk is not None:
            yield chunk
        count += len(rows)
    if count == 0:
        raise InputError("header but no data rows", source=source, line=head.header_line)


def _iter_wide_bytes(
    p: Path, source: str, chunk_size: int, quantity: Quantity, head: _WideHead, skipped: list[InputError] | None = None
) -> Iterator[Spectra]:
    """:func:`_iter_wide` for a file of LF line ends in UTF-8 or Latin-1 without control characters, read as bytes.

    A chunk of plain data lines (ASCII, no quote, no blank, comment or padded line: see
    :func:`_plain_rows`) goes to Arrow's parser as one block of bytes, names and numbers alike;
    any other chunk goes line by line through :func:`cctkit.readers.content_lines` and
    :func:`_wide_chunk`, exactly as :func:`_iter_wide` reads it.  The spectra are the same
    (``tests/test_batch.py`` compares both routes).
    """
    stem = p.stem or source
    count = 0
    directives = dict(head.directives)  # grows with every directive line read after the header

    rows: list[tuple[int, str]] = []  # content lines of a chunk read line by line
    try:
        fh = open(p, "rb")
        fh.seek(head.bom)
    except OSError as exc:
        raise InputError(f"cannot read the file ({_oserror_text(exc)})", source=source) from None
    with fh:
        reader = _LineReader(fh)
        number = len(reader.take(head.header_line))  # the lines up to the header, already read by _wide_head
        while True:
            lines = reader.take(chunk_size - len(rows))
            if not lines:
                break
            first = number + 1
            number += len(lines)
            if not rows:
                plain = _plain_rows(b"\n".join(lines), len(lines), head)
                if plain is not None:
                    _no_late_directive(directives, head, source)
                    names, values = plain
                    if names is None:
                        names = [f"{stem}#{count + k + 1}" for k in range(len(lines))]
                    numbers = list(range(first, first + len(lines)))
                    chunk = _wide_spectra(numbers, names, values, {}, source, stem, count, quantity, head, skipped)
                    if chunk is not None:
                        yield chunk
                    count += len(lines)
                    continue
            try:
                text = [line.decode(head.codec) for line in lines]
            except UnicodeDecodeError:
                raise InputError(f"not valid {head.label} text", source=source) from None
            rows.extend(content_lines(text, directives, source=source, start=first))
            if len(rows) == chunk_size:
                _no_late_directive(directives, head, source)
                chunk = _wide_chunk(rows, source, stem, count, quantity, head, skipped)
                if chunk is not None:
                    yield chunk
                count += len(rows)
                rows = []
    _no_late_directive(directives, head, source)
    if rows:
        chunk = _wide_chunk(rows, source, stem, count, quantity, head, skipped)
        if chunk is not None:
            yield chunk
        count += len(rows)
    if count == 0:
        raise InputError("header but no data rows", source=source, line=head.header_line)


class _LineReader:
    """Lines (without their LF) of a binary file, handed out in batches of a given count."""

    def __init__(self, fh: BinaryIO):
        self._fh = fh
        self._lines: list[bytes] = []
        self._next = 0
        self._rest = b""  # the start of a line the last block did not end
        self._eof = False

    def take(self, n: int) -> list[bytes]:
        """The next ``n`` lines, fewer at the end of the file."""
        out: list[bytes] = []
        while len(out) < n:
            if self._next == len(self._lines) and not self._fill():
                break
            k = min(n - len(out), len(self._lines) - self._next)
            out += self._lines[self._next : self._next + k]
            self._next += k
        return out

    def _fill(self) -> bool:
        if self._eof:
            return False
        block = self._fh.read(_BLOCK_BYTES)
        if not block:
            self._eof = True
            self._lines, self._next, self._rest = ([self._rest] if self._rest else []), 0, b""
            return bool(self._lines)
        self._lines = (self._rest + block).split(b"\n")
        self._rest = self._lines.pop()
        self._next = 0
        return True


#: First bytes of a line that :func:`_plain_rows` leaves to the line-by-line route: white space (stripped
#: there), a separator (a line of separators only, or an empty name), a comment's lead (# // %).
_NOT_PLAIN_FIRST = np.zeros(256, dtype=bool)
_NOT_PLAIN_FIRST[list(b" \t\x0b\x0c,;#/%")] = True
_NOT_PLAIN_LAST = np.zeros(256, dtype=bool)
_NOT_PLAIN_LAST[list(b" \t\x0b\x0c")] = True


def _plain_rows(data: bytes, n: int, head: _WideHead) -> tuple[list[str] | None, np.ndarray] | None:
    """Names (None for a file without a name column) and values of ``n`` LF-separated data lines, parsed
    by Arrow in one go; None where the lines are not all plain: not ASCII, a quote, an empty line, a
    line whose first or last byte is in :data:`_NOT_PLAIN_FIRST` / :data:`_NOT_PLAIN_LAST`, or a cell
    Arrow does not read as a number (such lines take the line-by-line route, which names what is wrong).

    On plain lines the line-by-line route strips nothing and splits the name off at the first
    delimiter: the cells Arrow sees are the same text, and the numbers the same bits.
    """
    if not data.isascii() or b'"' in data:
        return None
    a = np.frombuffer(data, dtype=np.uint8)
    breaks = np.flatnonzero(a == 10)
    if breaks.size != n - 1:
        return None
    starts = np.concatenate(([0], breaks + 1))
    ends = np.concatenate((breaks, [a.size]))
    if (starts >= ends).any() or _NOT_PLAIN_FIRST[a[starts]].any() or _NOT_PLAIN_LAST[a[ends - 1]].any():
        return None
    return _arrow_parse(data, head.delimiter, head.wavelength_nm.size, head.named, n)


def _wide_chunk(
    rows: list[tuple[int, str]],
    source: str,
    stem: str,
    offset: int,
    quantity: Quantity,
    head: _WideHead,
    skipped: list[InputError] | None = None,
) -> Spectra | None:
    """The spectra of ``rows``; with ``skipped`` a list, bad rows go there instead (None when none is left)."""
    d = head.delimiter
    split = _splitter(d)
    if head.named:
        names: list[str] = []
        bodies: list[str] = []
        for _, s in rows:
            if '"' in s:
                cells = split(s)
                names.append(cells[0])
                bodies.append(d.join(cells[1:]))
            else:
                name, _, body = s.partition(d)
                names.append(name.strip())
                bodies.append(body)
    else:
        names = [f"{stem}#{offset + k + 1}" for k in range(len(rows))]
        bodies = [s for _, s in rows]
    L = head.wavelength_nm.size
    bad_rows: dict[int, InputError] = {}
    try:  # the fast paths; what they refuse is read (or refused) cell by cell by the delimited rules
        fast: np.ndarray | None = _arrow_values(bodies, d, L)
        if fast is None:
            fast = np.loadtxt(io.StringIO("\n".join(bodies)), delimiter=d, dtype=np.float64, ndmin=2, comments=None)
    except ValueError:
        fast = None
    if fast is not None and fast.shape == (len(rows), L):
        values = fast
    else:  # outside the handler: errors kept for a report must not hold this frame through their context
        values = _cell_by_cell(rows, head, source, None if skipped is None else bad_rows)
    numbers = [number for number, _ in rows]
    return _wide_spectra(numbers, names, values, bad_rows, source, stem, offset, quantity, head, skipped)


def _wide_spectra(
    numbers: list[int],
    names: list[str],
    values: np.ndarray,
    bad_rows: dict[int, InputError],
    source: str,
    stem: str,
    offset: int,
    quantity: Quantity,
    head: _WideHead,
    skipped: list[InputError] | None,
) -> Spectra | None:
    """The spectra of rows parsed into ``names`` and ``values`` (lines ``numbers`` of the file): the checks
    every row passes, the file's order and unit applied."""
    bad = ~np.isfinite(values)
    if bad.any():
        for r in np.flatnonzero(bad.any(axis=1)).tolist():
            if r in bad_rows:
                continue
            c = int(np.argmax(bad[r]))
            exc = InputError(
                f"missing or non-finite value at {_file_wavelength(head, c):g} nm", source=source, line=numbers[r]
            )
            if skipped is None:
                raise exc
            bad_rows[r] = exc
    if head.reverse:
        values = values[:, ::-1]
    if head.factor != 1.0:
        values = values * head.factor
    empty = [k for k, n in enumerate(names) if not n]
    for k in empty:
        names[k] = f"{stem}#{offset + k + 1}"
    if skipped is not None:
        for r in _no_signal_rows(head.wavelength_nm, values, exclude=bad_rows):
            bad_rows[r] = InputError(_NO_SIGNAL, source=source, line=numbers[r])
    keep = np.ones(len(numbers), dtype=bool)
    if bad_rows:
        assert skipped is not None  # without it the first bad row raised above
        for r in sorted(bad_rows):
            exc = bad_rows[r]
            exc.part = "row"
            skipped.append(exc)
            keep[r] = False
        if not keep.any():
            return None
        values = values[keep]
    kept = np.flatnonzero(keep).tolist()
    names = [names[k] for k in kept]
    sources = tuple(f"{source}#{n}" for n in names) if head.named else tuple(f"{source}#{offset + k + 1}" for k in kept)
    return Spectra(
        wavelength_nm=head.wavelength_nm,
        values=values,
        names=tuple(names),
        quantity=quantity,
        sources=sources,
        sha256=(head.sha256,),
        flags=(head.flags,),
    )


_NO_SIGNAL = "no signal: no positive value in 380-780 nm (all zero or below zero); nothing can be computed"


def _no_signal_rows(wavelength_nm: np.ndarray, values: np.ndarray, exclude=()) -> list[int]:
    """Rows (0-based) with no positive value in the visible band, as :func:`cctkit.spectra.signal_problems`
    judges a spectrum measured over all of ``wavelength_nm`` (rows in ``exclude`` left out).

    An axis that misses 380-780 nm altogether is a property of the whole file, not of its rows:
    its rows are kept (and flagged ``no-visible-data`` by the analysis).
    """
    from ..constants import VISIBLE_BAND_NM

    inside = (wavelength_nm >= VISIBLE_BAND_NM[0] - 1e-9) & (wavelength_nm <= VISIBLE_BAND_NM[1] + 1e-9)
    if not inside.any() or values.shape[0] == 0:
        return []
    with np.errstate(invalid="ignore"):
        dark = ~(values[:, inside] > 0).any(axis=1)
    return [r for r in np.flatnonzero(dark).tolist() if r not in exclude]


def _arrow_values(bodies: list[str], delimiter: str | None, L: int) -> np.ndarray | None:
    """The numbers of ``bodies`` (rows of exactly ``L`` plain numbers) parsed by Arrow's CSV reader, or None
    where it cannot say (no pyarrow, white-space columns, any cell that is not a plain number, a row of
    another length); the caller then takes the slower routes, which name the bad cell.

    Arrow and ``np.loadtxt`` both round each decimal number correctly, so the values are the same bits
    (``tests/test_batch.py``); Arrow parses a chunk several times faster.
    """
    if not bodies:
        return None
    parsed = _arrow_parse("\n".join(bodies).encode("utf-8"), delimiter, L, False, len(bodies))
    return None if parsed is None else parsed[1]


def _arrow_parse(
    data: bytes, delimiter: str | None, L: int, named: bool, n: int
) -> tuple[list[str] | None, np.ndarray] | None:
    """``n`` rows of ``data`` (CSV without quotes) parsed by Arrow: the first cells as text when ``named``,
    then exactly ``L`` numbers; None where Arrow cannot read them so (see :func:`_arrow_values`)."""
    if delimiter not in (",", ";", "\t"):
        return None
    try:
        import pyarrow as pa
        import pyarrow.csv as pacsv
    except ImportError:  # pragma: no cover - a declared dependency
        return None
    quiet_arrow_signals(pa)  # its per-call signal handling loses a stop signal now and then
    names = [f"c{k}" for k in range(L)]
    types = dict.fromkeys(names, pa.float64())
    if named:
        names.insert(0, "name")
        types["name"] = pa.string()
    try:
        table = pacsv.read_csv(
            io.BytesIO(data),
            read_options=pacsv.ReadOptions(column_names=names, use_threads=False, block_size=1 << 30),
            parse_options=pacsv.ParseOptions(
                delimiter=delimiter,
                quote_char=False,
                double_quote=False,
                escape_char=False,
                newlines_in_values=False,
                ignore_empty_lines=False,
            ),
            convert_options=pacsv.ConvertOptions(
                column_types=types,
                null_values=[],
                strings_can_be_null=False,
                quoted_strings_can_be_null=False,
            ),
        )
    except (pa.ArrowException, ValueError, UnicodeError):
        return None
    if table.num_rows != n or table.num_columns != len(names):
        return None
    from ..arrow_buffers import floats_from_arrow  # not to_numpy(): it imports pandas (~0.5 s)

    cols = [floats_from_arrow(table.column(k)) for k in range(int(named), len(names))]
    present = [c for c in cols if c is not None]
    if len(present) != L:
        return None
    text = [str(x).strip() for x in table.column(0).to_pylist()] if named else None
    return text, np.column_stack(present)


def _file_wavelength(head: _WideHead, column: int) -> float:
    """Wavelength of value column ``column`` (0-based) in the file's order [nm]."""
    return float(head.wavelength_nm[::-1][column] if head.reverse else head.wavelength_nm[column])


def _cell_by_cell(
    rows: list[tuple[int, str]], head: _WideHead, source: str, bad_rows: dict[int, InputError] | None = None
) -> np.ndarray:
    """The values of ``rows`` split and checked as the delimited reader does; an InputError names a bad row.

    With ``bad_rows`` a dict, a bad row is recorded there (0-based row -> error) and left NaN instead.
    """
    L = head.wavelength_nm.size
    out = np.empty((len(rows), L), dtype=np.float64)
    for r, (number, s) in enumerate(rows):
        if bad_rows is None:
            out[r] = _row_values(s, number, head, source)
            continue
        try:
            out[r] = _row_values(s, number, head, source)
        except InputError as exc:
            bad_rows[r] = exc.with_traceback(None)  # kept for the report, not the chunk its frames hold
            out[r] = np.nan
    return out


def _row_values(s: str, number: int, head: _WideHead, source: str) -> list[float]:
    """The values of one data row (line ``number``), or the InputError naming what is wrong with it."""
    split = _splitter(head.delimiter)
    L = head.wavelength_nm.size
    cells = split(s)  # trailing empty cells are dropped
    if head.named:
        cells = cells[1:]
    if len(cells) < L and s.endswith(head.delimiter):
        raise InputError(f"empty cell in value column {len(cells) + 1}", source=source, line=number)
    if len(cells) != L:
        raise InputError(f"row has {len(cells)} values, the header has {L} wavelengths", source=source, line=number)
    for c, cell in enumerate(cells):
        if _NUMBER.fullmatch(cell):
            continue
        if cell == "":
            raise InputError(f"empty cell in value column {c + 1}", source=source, line=number)
        if cell.lower() in _MISSING:
            raise InputError(
                f"missing or non-finite value at {_file_wavelength(head, c):g} nm", source=source, line=number
            )
        raise InputError(f"expected a number, got {short(cell)} in value column {c + 1}", source=source, line=number)
    return [float(cell) for cell in cells]


# --------------------------------------------------------------------------- Parquet


def _open_parquet(
    p: Path, source: str, chunk_size: int, wanted: Quantity | None, skipped: list[InputError] | None = None
) -> ChunkedInput:
    try:
        import pyarrow.parquet as pq
    except ImportError:  # pragma: no cover - a declared dependency
        raise InputError("reading Parquet needs the pyarrow package", source=source) from None
    try:
        pf = pq.ParquetFile(p)
    except Exception as exc:  # noqa: BLE001 - pyarrow raises several types for a bad file
        raise InputError(
            f"not a readable Parquet file ({type(exc).__name__}: {str(exc).splitlines()[0]})", source=source
        ) from None
    schema = pf.schema_arrow
    meta = {k.decode(): v.decode() for k, v in (schema.metadata or {}).items() if not k.startswith(b"ARROW")}
    names_col = "name" if "name" in schema.names else None
    stated = Quantity.parse(meta["quantity"], source=f"{source}: metadata 'quantity'") if "quantity" in meta else None
    quantity = resolve_quantity(stated, wanted, source=source)
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
        if len(wl_columns) < MIN_POINTS:
            raise InputError(
                "Parquet input needs columns named by wavelength in nm, or a list column 'values' "
                "with metadata 'wavelength_nm'",
                source=source,
            )
        wl = np.asarray(wl_list)
    if wl.ndim != 1 or wl.size < MIN_POINTS:
        raise InputError(f"needs at least {MIN_POINTS} wavelengths, got {wl.size}", source=source)
    check_plain_nm(wl, source=source)
    order = np.argsort(wl, kind="stable")
    ordered, _, _ = order_axis(wl[order], np.zeros((0, wl.size)), source=source)  # refuses duplicates
    flags = (
        ()
        if np.array_equal(order, np.arange(wl.size))
        else (Flag("wavelength-reordered", "wavelength columns were not in ascending order in the file; sorted"),)
    )
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
            values = _parquet_values(batch, wl_columns, wl.size, source, offset, lenient=skipped is not None)[:, order]
            bad = ~np.isfinite(values)
            bad_rows: dict[int, InputError] = {}
            for r in np.flatnonzero(bad.any(axis=1)).tolist():
                c = int(np.argmax(bad[r]))
                exc = InputError(
                    f"row {offset + r + 1}: missing or non-finite value at {ordered[c]:g} nm", source=source
                )
                if skipped is None:
                    raise exc
                bad_rows[r] = exc
            if skipped is not None:
                for r in _no_signal_rows(ordered, values, exclude=bad_rows):
                    bad_rows[r] = InputError(f"row {offset + r + 1}: {_NO_SIGNAL}", source=source)
            if names_col:
                raw = batch.column(names_col).to_pylist()
                names = tuple(str(x) if x not in (None, "") else f"{stem}#{offset + k + 1}" for k, x in enumerate(raw))
                sources = tuple(f"{source}#{x}" for x in names)
            else:
                names = tuple(f"{stem}#{offset + k + 1}" for k in range(n))
                sources = tuple(f"{source}#{offset + k + 1}" for k in range(n))
            offset += n
            if bad_rows:
                assert skipped is not None
                for r in sorted(bad_rows):
                    bad_rows[r].part = "row"
                    skipped.append(bad_rows[r])
                kept = [k for k in range(n) if k not in bad_rows]
                if not kept:
                    continue
                values = values[kept]
                names = tuple(names[k] for k in kept)
                sources = tuple(sources[k] for k in kept)
            yield Spectra(ordered, values, names, quantity=quantity, sources=sources, sha256=(digest,), flags=(flags,))
        if offset == 0:
            raise InputError("holds no rows", source=source)

    return ChunkedInput(source, "parquet", int(pf.metadata.num_rows), (source,), chunk_size, make)


def _parquet_values(batch, wl_columns, L: int, source: str, offset: int, lenient: bool = False) -> np.ndarray:
    """The batch's values (rows, L); with ``lenient`` a missing value is NaN (its row is then skipped)."""
    import pyarrow as pa

    from ..arrow_buffers import floats_from_arrow

    if wl_columns is not None:
        cols = []
        for name in wl_columns:
            col = batch.column(name)
            if not (pa.types.is_floating(col.type) or pa.types.is_integer(col.type)):
                raise InputError(f"column {name!r} holds {col.type}, not numbers", source=source)
            if col.null_count and not lenient:
                r = int(np.flatnonzero(np.asarray(col.is_null()))[0])
                raise InputError(f"row {offset + r + 1}: missing value at {name} nm", source=source)
            if col.null_count:
                col = col.cast(pa.float64()).fill_null(float("nan"))
            fast = floats_from_arrow(col)  # not to_numpy(): it imports pandas (~0.5 s)
            cols.append(fast if fast is not None else col.to_numpy(zero_copy_only=False).astype(np.float64, copy=False))
        return np.stack(cols, axis=1)
    col = batch.column("values")
    if not (pa.types.is_list(col.type) or pa.types.is_fixed_size_list(col.type) or pa.types.is_large_list(col.type)):
        raise InputError(f"column 'values' holds {col.type}, not lists of numbers", source=source)
    missing = np.asarray(col.is_null()) if col.null_count else np.zeros(len(col), dtype=bool)
    if missing.any() and not lenient:
        r = int(np.flatnonzero(missing)[0])
        raise InputError(f"row {offset + r + 1}: missing spectrum in column 'values'", source=source)
    if missing.any():  # a row of NaN for each missing spectrum, skipped as a bad row
        col = pa.array([v if v is not None else [float("nan")] * L for v in col.to_pylist()], type=col.type)
    lengths = np.asarray(col.value_lengths())
    wrong = np.flatnonzero(lengths != L)
    if wrong.size:
        r = int(wrong[0])
        raise InputError(
            f"row {offset + r + 1}: spectrum has {lengths[r]} values, metadata 'wavelength_nm' has {L}", source=source
        )
    flat = col.flatten()
    if flat.null_count and lenient:
        flat = flat.cast(pa.float64()).fill_null(float("nan"))
    elif flat.null_count:
        r = int(np.flatnonzero(np.asarray(flat.is_null()))[0]) // L
        raise InputError(f"row {offset + r + 1}: missing value in column 'values'", source=source)
    fast = floats_from_arrow(flat)
    values = fast if fast is not None else flat.to_numpy(zero_copy_only=False).astype(np.float64, copy=False)
    return values.reshape(-1, L)
