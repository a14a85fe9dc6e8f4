"""Reading measured spectra from files.

:func:`read_spectra` is the one entry point.  It reads the file's bytes once
(refusing missing files, folders, special files, empty files and files over
``max_bytes``), picks the format by extension (content sniffing for unknown
extensions), and returns a :class:`~cctkit.spectra.Spectra` holding the data
as measured: no resampling, only unit conversion to the base unit of the
quantity and, for files written in descending wavelength order, a reversal
(recorded as a ``wavelength-descending`` flag).

========================  ===============================================
extension                 format
========================  ===============================================
.csv .tsv .txt .dat .prn  delimited text (:mod:`cctkit.readers.delimited`)
.json                     cctkit spectra JSON (:mod:`cctkit.readers.jsonfile`)
.xml .spdx                IES TM-27 spectral data (:mod:`cctkit.readers.tm27`)
========================  ===============================================

Every failure is a :class:`~cctkit.errors.InputError` whose text starts with
the file path (and the 1-based line number where one applies), on one line.

Units
-----
Spectral units are parsed into powers of W, m and sr with SI prefixes, so
``W/m2/nm``, ``W/(m^2 nm)``, ``W m-2 nm-1``, ``mW/m²/nm``, ``µW/cm²/nm``,
``W/m3`` (per metre of wavelength), ``W/nm``, ``mW/nm``, ``W/sr/m2/nm`` and
``W/(sr nm)`` are all understood.  The dimensions give the quantity
(W m⁻¹ → radiant flux per nm, W m⁻³ → irradiance, W sr⁻¹ m⁻³ → radiance,
W sr⁻¹ m⁻¹ → intensity) and the prefixes the factor to the base units
W/nm, W/(m² nm), W/(sr m² nm) and W/(sr nm).  ``a.u.``, ``rel``, ``counts``,
``%`` and the like mean relative values.  Anything else is refused.
"""

from __future__ import annotations

import codecs
import hashlib
import itertools
import os
import re
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import Flag, InputError
from ..spectra import Quantity, Spectra

__all__ = [
    "read_spectra",
    "DEFAULT_MAX_BYTES",
    "ParsedSpectra",
    "parse_spectral_unit",
    "parse_length_unit",
    "decode_text",
    "stream_codec",
    "content_lines",
    "combine_quantity",
    "SPECTRUM_SUFFIXES",
    "TableLayout",
    "normalise_unit",
    "folder_files",
    "expand_paths",
    "unit_dimensions",
]

#: Largest file :func:`read_spectra` reads unless told otherwise [bytes] (256 MiB).
DEFAULT_MAX_BYTES = 256 * 1024 * 1024

_DELIMITED = (".csv", ".tsv", ".txt", ".dat", ".prn")
_JSON = (".json",)
_XML = (".xml", ".spdx")
#: Every extension :func:`read_spectra` reads by its format (others are sniffed).
SPECTRUM_SUFFIXES = _DELIMITED + _JSON + _XML


@dataclass(frozen=True)
class ParsedSpectra:
    """What a format module hands back: data as measured, in base units.

    ``columns`` names each spectrum's place in a multi-spectrum file (used for
    ``sources`` as ``path#column``); ``None`` for a single-spectrum file.
    ``quantity`` is what the file itself states, or ``None`` when it says nothing.
    """

    wavelength_nm: np.ndarray
    values: np.ndarray
    names: tuple[str, ...]
    columns: tuple[str, ...] | None
    quantity: Quantity | None
    flags: tuple[Flag, ...] = ()
    metadata: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class TableLayout:
    """Overrides for delimited text whose table the reader cannot find on its own.

    ``skip_rows`` lines at the top are taken as metadata, unread as numbers;
    ``delimiter`` is one of ``tab``, ``;``, ``,``, ``space`` (white space);
    ``decimal`` is ``.`` or ``,``; ``wavelength_column`` is 1-based; ``columns``
    are the 1-based value columns to keep.  ``None`` means: find it out.
    """

    skip_rows: int = 0
    delimiter: str | None = None
    decimal: str | None = None
    wavelength_column: int | None = None
    columns: tuple[int, ...] | None = None

    def __post_init__(self) -> None:
        if isinstance(self.skip_rows, bool) or not isinstance(self.skip_rows, int) or self.skip_rows < 0:
            raise InputError(f"--skip-rows must be a whole number >= 0, got {self.skip_rows!r}")
        if self.delimiter is not None:
            key = {
                "\\t": "tab",
                "\t": "tab",
                "tab": "tab",
                ";": ";",
                "semicolon": ";",
                ",": ",",
                "comma": ",",
                " ": "space",
                "space": "space",
                "whitespace": "space",
            }.get(str(self.delimiter).lower())
            if key is None:
                raise InputError(f"--delimiter must be one of tab, ';', ',', space; got {self.delimiter!r}")
            object.__setattr__(self, "delimiter", key)
        if self.decimal is not None:
            key = {".": ".", "point": ".", "dot": ".", ",": ",", "comma": ","}.get(str(self.decimal).lower())
            if key is None:
                raise InputError(f"--decimal must be '.' or ',', got {self.decimal!r}")
            if key == "," and self.delimiter == ",":
                raise InputError("--decimal ',' cannot go with --delimiter ','")
            object.__setattr__(self, "decimal", key)
        if self.wavelength_column is not None and (
            isinstance(self.wavelength_column, bool)
            or not isinstance(self.wavelength_column, int)
            or self.wavelength_column < 1
        ):
            raise InputError(f"--wavelength-column must be a column number >= 1, got {self.wavelength_column!r}")
        if self.columns is not None:
            cols = tuple(self.columns)
            if not cols or any(isinstance(c, bool) or not isinstance(c, int) or c < 1 for c in cols):
                raise InputError(f"--columns must be column numbers >= 1, got {self.columns!r}")
            if len(set(cols)) != len(cols):
                raise InputError(f"--columns names a column twice: {self.columns!r}")
            object.__setattr__(self, "columns", cols)

    @property
    def is_default(self) -> bool:
        return self == TableLayout()

    @classmethod
    def from_options(
        cls,
        *,
        skip_rows: int | None = None,
        delimiter: str | None = None,
        decimal: str | None = None,
        wavelength_column: int | None = None,
        columns: str | None = None,
    ) -> TableLayout:
        """A layout from command-line text; ``columns`` as ``2,4`` or ``2-5``."""
        cols = None
        if columns is not None:
            cols_list: list[int] = []
            for part in str(columns).split(","):
                part = part.strip()
                m = re.fullmatch(r"(\d{1,4})\s*-\s*(\d{1,4})", part)
                if m:
                    lo, hi = int(m.group(1)), int(m.group(2))
                    if hi < lo:
                        raise InputError(f"--columns range {part!r} runs backwards")
                    cols_list.extend(range(lo, hi + 1))
                elif re.fullmatch(r"\d{1,4}", part):
                    cols_list.append(int(part))
                else:
                    raise InputError(f"--columns must be numbers such as 2,4 or 2-5, got {columns!r}")
            cols = tuple(cols_list)
        return cls(
            skip_rows=skip_rows or 0,
            delimiter=delimiter,
            decimal=decimal,
            wavelength_column=wavelength_column,
            columns=cols,
        )


def read_spectra(
    path: str | os.PathLike,
    *,
    quantity: Quantity | str | None = None,
    max_bytes: int = DEFAULT_MAX_BYTES,
    layout: TableLayout | None = None,
    skipped: list[InputError] | None = None,
) -> Spectra:
    """Read the spectra in ``path``, as measured.

    Parameters
    ----------
    path
        A delimited-text, JSON or IES TM-27 file (see the module docstring).
    quantity
        Radiometric quantity of the values when the file does not state one.
        When the file states one and this differs, an InputError names both.
    max_bytes
        Refuse files larger than this [bytes].
    layout
        Overrides for finding the table in delimited text (see :class:`TableLayout`).
    skipped
        When a list is given, a spectrum (value column) of delimited text with a bad cell
        (text, empty, missing, beyond floating-point range), or with no positive value in
        380-780 nm (:func:`cctkit.spectra.signal_problems`), is left out and its
        :class:`InputError` (``part`` ``"column"``) appended here instead of refusing the
        file; the file is still refused when nothing is left or when the problem is not
        one column's (the wavelength column, a row's cell count, the header).

    Returns
    -------
    Spectra
        ``sources`` is the path (``path#column`` for files with several spectra),
        ``sha256`` the digest of the file's bytes, ``quantity`` the file's, else
        ``quantity``, else relative.

    Raises
    ------
    InputError
        For every problem with the file or the arguments; the text starts with the path.
    """
    source = _source_of(path)
    p = Path(source)
    wanted = _quantity_argument(quantity, source)
    if isinstance(max_bytes, bool) or not isinstance(max_bytes, (int, np.integer)) or max_bytes <= 0:
        raise InputError(f"max_bytes must be a positive number of bytes, got {max_bytes!r}", source=source)
    data = _read_bytes(p, source, int(max_bytes))
    kind = _format_of(p, data)
    if layout is not None and not layout.is_default and kind != "delimited":
        raise InputError(
            "table layout options apply to delimited text only, not to a "
            f"{'JSON' if kind == 'json' else 'TM-27 XML'} file",
            source=source,
        )
    if kind == "json":
        from . import jsonfile

        parse = jsonfile.parse
    elif kind == "xml":
        from . import tm27

        parse = tm27.parse
    else:
        from . import delimited

        own: list[InputError] | None = None if skipped is None else []
        parsed = delimited.parse(data, source=source, stem=p.stem or source, layout=layout, skipped=own)
        spectra = _to_spectra(parsed, data, source, wanted)
        if own is None or skipped is None:
            return spectra
        spectra = _without_dark_columns(spectra, own, source)
        skipped.extend(own)  # only once the file as a whole was read
        return spectra
    parsed = parse(data, source=source, stem=p.stem or source)
    return _to_spectra(parsed, data, source, wanted)


def folder_files(folder: str | os.PathLike, *, recursive: bool = False) -> tuple[str, ...]:
    """The spectrum files in ``folder``: known extensions, not hidden, sorted by path.

    With ``recursive`` the sub-folders are searched too (hidden ones are not).
    Raises InputError when the folder cannot be listed or holds no such file.
    """
    source = _source_of(folder)
    root = Path(source)
    found: list[str] = []
    pending = [root]
    while pending:
        here = pending.pop()
        try:
            entries = sorted(os.scandir(here), key=lambda e: e.name)
        except OSError as exc:
            raise InputError(f"cannot list the folder ({_oserror_text(exc)})", source=str(here)) from None
        for e in entries:
            if e.name.startswith("."):
                continue
            if e.is_dir(follow_symlinks=False):
                if recursive:
                    pending.append(here / e.name)
            elif e.is_file() and Path(e.name).suffix.lower() in SPECTRUM_SUFFIXES:
                found.append(str(here / e.name))
    if not found:
        where = " or its sub-folders" if recursive else ""
        raise InputError(f"folder{where} holds no spectrum files ({', '.join(SPECTRUM_SUFFIXES)})", source=source)
    return tuple(sorted(found, key=lambda f: Path(f).relative_to(root).parts))


def expand_paths(paths: Iterable[str | os.PathLike], *, recursive: bool = False) -> list[str]:
    """``paths`` with every folder replaced by its spectrum files (:func:`folder_files`), in order."""
    out: list[str] = []
    for path in paths:
        source = _source_of(path)
        if os.path.isdir(source):
            out.extend(folder_files(source, recursive=recursive))
        else:
            out.append(source)
    return out


def _source_of(path) -> str:
    """``path`` (str, bytes or os.PathLike) as the text messages and ``sources`` use."""
    try:
        fspath = os.fspath(path)
    except TypeError:
        raise InputError(f"expected a file path, got {type(path).__name__}", source="path") from None
    if isinstance(fspath, bytes):
        fspath = os.fsdecode(fspath)
    return str(fspath)


def _quantity_argument(quantity, source: str) -> Quantity | None:
    if quantity is None:
        return None
    if isinstance(quantity, Quantity):
        return quantity
    if not isinstance(quantity, str):
        raise InputError(f"quantity argument must be a name, got {type(quantity).__name__}", source=source)
    return Quantity.parse(quantity, source=source)


def resolve_quantity(stated: Quantity | None, wanted: Quantity | None, *, source: str) -> Quantity:
    """The file's quantity, else the asked-for one, else relative; refuses the two disagreeing."""
    if stated is not None and wanted is not None and stated is not wanted:
        raise InputError(f"the file states quantity {stated.value!r} but {wanted.value!r} was asked for", source=source)
    return stated or wanted or Quantity.RELATIVE


def combine_quantity(
    stated: Quantity | None, unit_q: Quantity | None, *, source: str, line: int | None
) -> Quantity | None:
    """The quantity a file states and the one its unit gives, which must agree; either may be absent.

    ``line`` is where the quantity is stated, for the message.
    """
    if stated is not None and unit_q is not None and stated is not unit_q:
        raise InputError(
            f"the stated quantity {stated.value!r} contradicts the unit, which is one of {unit_q.value!r}",
            source=source,
            line=line,
        )
    return stated or unit_q


def _without_dark_columns(spectra: Spectra, skipped: list[InputError], source: str) -> Spectra:
    """``spectra`` without those nothing can be computed from, each reported on ``skipped``."""
    from ..spectra import signal_problems

    dark = {i: f.message for i, f in enumerate(signal_problems(spectra)) if f is not None and f.code == "no-signal"}
    if not dark:
        return spectra
    if len(dark) == len(spectra):
        raise InputError(dark[0], source=source)
    for i, message in dark.items():
        exc = InputError(f"spectrum {short(spectra.names[i])} left out: {message}", source=source)
        exc.part = "column"
        skipped.append(exc)
    return spectra.select([i for i in range(len(spectra)) if i not in dark])


def _to_spectra(parsed: ParsedSpectra, data: bytes, source: str, wanted: Quantity | None) -> Spectra:
    q = resolve_quantity(parsed.quantity, wanted, source=source)
    n = parsed.values.shape[0]
    if parsed.columns is None:
        sources = (source,) * n
    else:
        sources = tuple(f"{source}#{c}" for c in parsed.columns)
    digest = hashlib.sha256(data).hexdigest()
    return Spectra(
        wavelength_nm=parsed.wavelength_nm,
        values=parsed.values,
        names=parsed.names,
        quantity=q,
        sources=sources,
        sha256=(digest,) * n,
        flags=(parsed.flags,) * n,
        metadata=(parsed.metadata,) * n,
    )


# --------------------------------------------------------------------------- bytes and text


def _read_bytes(p: Path, source: str, max_bytes: int) -> bytes:
    from ..safe_io import read_user_file

    data = read_user_file(source, max_bytes=max_bytes).data  # regular files only, bounded, never blocks
    if not data.strip():
        raise InputError("file is empty", source=source)
    return data


def _oserror_text(exc: BaseException) -> str:
    return (getattr(exc, "strerror", None) or str(exc) or type(exc).__name__).replace("\n", " ")


_BOMS = (
    (codecs.BOM_UTF32_LE, "utf-32-le", "UTF-32"),
    (codecs.BOM_UTF32_BE, "utf-32-be", "UTF-32"),
    (codecs.BOM_UTF8, "utf-8", "UTF-8"),
    (codecs.BOM_UTF16_LE, "utf-16-le", "UTF-16"),
    (codecs.BOM_UTF16_BE, "utf-16-be", "UTF-16"),
)
_CONTROL = re.compile(r"[\x00-\x08\x0e-\x1f\x7f]")


_LATIN1 = Flag("text-encoding", "file is not UTF-8; read as Latin-1 (ISO 8859-1)")
_SNIFF_BYTES = 4096


def _bom_codec(head: bytes) -> tuple[str | None, str | None, int]:
    """Codec, label and BOM length told by the first bytes: a BOM, or the NUL pattern of BOM-less UTF-16."""
    for bom, codec, label in _BOMS:
        if head.startswith(bom):
            return codec, label, len(bom)
    guess = _utf16_without_bom(head)
    return guess, ("UTF-16 (no BOM)" if guess else None), 0


def _utf16_without_bom(data: bytes) -> str | None:
    head = data[:_SNIFF_BYTES]
    if len(head) < 4:
        return None
    if len(head) % 2:
        head = head[:-1]
    even, odd = head[0::2], head[1::2]
    if odd.count(0) == len(odd) and even.count(0) == 0:
        return "utf-16-le"
    if even.count(0) == len(even) and odd.count(0) == 0:
        return "utf-16-be"
    return None


def stream_codec(blocks: Iterable[bytes], source: str) -> tuple[str, str, int, tuple[Flag, ...]]:
    """How to read text arriving as ``blocks`` of bytes: ``(codec, label, BOM length, flags)``.

    UTF-8 (with or without BOM), UTF-16/32 with BOM and BOM-less UTF-16 are
    recognised from the first bytes.  Other bytes that are not all UTF-8 are read
    as Latin-1 (older instrument exports write ``µ`` as byte 0xB5), with a
    ``text-encoding`` flag; a NUL byte there is refused as binary.  Every block
    is consumed, in order, so a caller can hash them on the way.
    """
    it = iter(blocks)
    head = b""
    for block in it:
        head += block
        if len(head) >= _SNIFF_BYTES:
            break
    codec, label, skip = _bom_codec(head)
    if codec is not None and label is not None:
        for _ in it:
            pass
        return codec, label, skip, ()
    check = codecs.getincrementaldecoder("utf-8")()
    utf8 = True
    ascii_so_far = True  # the decoder holds nothing back after ASCII: such blocks need no decoding
    offset = 0
    for block in itertools.chain([head], it):
        nul = block.find(b"\x00")
        if nul >= 0:
            raise InputError(f"binary file, not text (NUL byte at offset {offset + nul})", source=source)
        offset += len(block)
        if ascii_so_far and block.isascii():
            continue
        ascii_so_far = False
        if utf8:
            try:
                check.decode(block)
            except UnicodeDecodeError:
                utf8 = False
    if utf8:
        try:
            check.decode(b"", final=True)
        except UnicodeDecodeError:
            utf8 = False
    return ("utf-8", "UTF-8", 0, ()) if utf8 else ("latin-1", "Latin-1", 0, (_LATIN1,))


def check_controls(text: str, *, source: str, first_line: int = 1) -> None:
    """Refuse text holding NUL or other control characters as binary (naming the line)."""
    m = _CONTROL.search(text)
    if m is not None:
        line = first_line + text.count("\n", 0, m.start())
        raise InputError(f"binary file, not text (control character 0x{ord(m.group()):02x})", source=source, line=line)


def decode_text(data: bytes, source: str) -> tuple[str, tuple[Flag, ...]]:
    """Text of ``data``, decoded as :func:`stream_codec` decides, with its flags.

    Text holding NUL or other control characters is refused as binary.
    """
    codec, label, skip, flags = stream_codec([data], source)
    try:
        text = data[skip:].decode(codec)
    except UnicodeDecodeError as exc:
        raise InputError(f"not valid {label} text (bad bytes at offset {exc.start})", source=source) from None
    if not text.strip():
        raise InputError("file is empty", source=source)
    check_controls(text, source=source)
    return text, flags


# --------------------------------------------------------------------------- comment lines and directives

#: Lines whose first non-blank characters are one of these are comments.
COMMENT_PREFIXES = ("#", "//", "%")
_SEPARATORS_ONLY = re.compile(r"[,;\t ]*")
_DIRECTIVE = re.compile(r"^(?:#|//|%)\s*(quantity|unit)\s*[:=]\s*(.*?)\s*$", re.IGNORECASE)


def content_lines(
    lines: Iterable[str], directives: dict[str, tuple[str, int]], *, source: str, start: int = 1
) -> Iterator[tuple[int, str]]:
    """``(line number, stripped text)`` of each line holding data, numbered from ``start``.

    Blank lines, lines of nothing but separators and comment lines are skipped;
    a comment directive (``# quantity: irradiance``, ``# unit: W/m2/nm``) is
    recorded in ``directives`` as ``key -> (text, line)``, and a second one with
    other text is refused.
    """
    for number, raw in enumerate(lines, start=start):
        s = raw.strip()
        if not s or _SEPARATORS_ONLY.fullmatch(s):
            continue
        if s.startswith(COMMENT_PREFIXES):
            m = _DIRECTIVE.match(s)
            if m:
                key = m.group(1).lower()
                if key in directives and directives[key][0] != m.group(2):
                    raise InputError(f"conflicting '# {key}:' lines", source=source, line=number)
                directives[key] = (m.group(2), number)
            continue
        yield number, s


def _format_of(p: Path, data: bytes) -> str:
    ext = p.suffix.lower()
    if ext in _JSON:
        return "json"
    if ext in _XML:
        return "xml"
    if ext in _DELIMITED:
        return "delimited"
    codec, _, skip = _bom_codec(data[:_SNIFF_BYTES])
    head = data[skip : skip + 256].decode(codec or "utf-8", errors="ignore").lstrip()
    if head.startswith(("{", "[")):
        return "json"
    if head.startswith("<"):
        return "xml"
    return "delimited"


# --------------------------------------------------------------------------- wavelength axis


def order_axis(
    wavelength_nm: np.ndarray,
    values: np.ndarray,
    *,
    source: str,
    lines: Sequence[int] | None = None,
) -> tuple[np.ndarray, np.ndarray, tuple[Flag, ...]]:
    """Check the axis is strictly monotonic; reverse a descending one (with a flag).

    ``values`` has shape (N, L).  ``lines`` gives the file line of each point, for messages.
    """
    wl = np.asarray(wavelength_nm, dtype=np.float64)
    vals = np.asarray(values, dtype=np.float64)

    def line_of(i: int) -> int | None:
        return None if lines is None else int(lines[i])

    if wl.size == 0:
        raise InputError("no data rows", source=source)
    bad = np.flatnonzero(~(wl > 0))
    if bad.size:
        i = int(bad[0])
        raise InputError(f"wavelength {wl[i]:g} nm is not positive", source=source, line=line_of(i))
    if wl.size == 1:
        return wl, vals, ()
    steps = np.diff(wl)
    flags: tuple[Flag, ...] = ()
    dup = np.flatnonzero(steps == 0)
    if dup.size:
        i = int(dup[0]) + 1
        raise InputError(f"duplicate wavelength {wl[i]:g} nm", source=source, line=line_of(i))
    descending = steps[0] < 0
    wrong = np.flatnonzero(steps > 0) if descending else np.flatnonzero(steps < 0)
    if wrong.size:
        i = int(wrong[0]) + 1
        order = "descending" if descending else "ascending"
        raise InputError(
            f"wavelengths out of order: {wl[i]:g} nm follows {wl[i - 1]:g} nm in an {order} list",
            source=source,
            line=line_of(i),
        )
    if descending:
        wl = wl[::-1].copy()
        vals = vals[:, ::-1].copy()
        flags = (Flag("wavelength-descending", "wavelengths were in descending order in the file; reversed"),)
    return wl, vals, flags


# --------------------------------------------------------------------------- units

_RELATIVE_UNITS = {
    "",
    "1",
    "-",
    "a.u.",
    "a.u",
    "au",
    "arb",
    "arb.",
    "arb.u.",
    "arb. units",
    "arb units",
    "arbitrary",
    "arbitrary units",
    "rel",
    "rel.",
    "relative",
    "relative units",
    "rel. units",
    "counts",
    "count",
    "cts",
    "%",
    "norm",
    "norm.",
    "normalised",
    "normalized",
    "unitless",
    "dimensionless",
}
# Decimal exponents, kept as integers so that a conversion factor is one exact power of ten.
_PREFIXES = {"p": -12, "n": -9, "u": -6, "m": -3, "c": -2, "d": -1, "k": 3, "M": 6, "G": 9}
# symbol -> (dimension index, decimal exponent of its SI value): dimensions are W, m, sr
_BASE = {"W": (0, 0), "w": (0, 0), "m": (1, 0), "sr": (2, 0), "Å": (1, -10)}
_SUPERSCRIPTS = str.maketrans(
    {
        "⁻": "-",
        "⁺": "+",
        "⁰": "0",
        "¹": "1",
        "²": "2",
        "³": "3",
        "⁴": "4",
        "µ": "u",
        "μ": "u",
        "·": " ",
        "⋅": " ",
        "*": " ",
        "×": " ",
        "^": "",
        "−": "-",
    }
)
# Exponents have at most 6 digits (a longer one is a syntax error, not a huge int), groups nest
# at most _MAX_DEPTH deep (so the recursive reading of groups stays shallow).
_TOKEN = re.compile(
    r"\s*(?:(?P<open>[(\[])|(?P<close>[)\]])|(?P<div>/)|(?P<sym>[A-Za-zÅ]+)(?P<exp>[+-]?\d{1,6}(?!\d))?)"
)
_MAX_DEPTH = 16
#: (W, m, sr) exponents -> quantity; the base unit of each is W (sr) m^-2? nm^-1 = 1e9 in SI.
_SPECTRAL_DIMENSIONS = {
    (1, -1, 0): Quantity.RADIANT_FLUX,
    (1, -3, 0): Quantity.IRRADIANCE,
    (1, -3, -1): Quantity.RADIANCE,
    (1, -1, -1): Quantity.INTENSITY,
}
_BASE_UNIT_EXP = 9  # W/nm = 1e9 W/m; W/(m2 nm) = 1e9 W/m3; likewise with sr^-1


class _UnitSyntax(ValueError):
    """The text is not a product of powers of known symbols."""


# Whole words people write for units and prefixes, and the symbols they stand for (longest first).
_UNIT_WORDS = (
    (r"square\s+(?:metres?|meters?)", "m2"),
    (r"square\s+(?:centimetres?|centimeters?)", "cm2"),
    (r"micrometres?|micrometers?|microns?", "um"),
    (r"nanometres?|nanometers?", "nm"),
    (r"millimetres?|millimeters?", "mm"),
    (r"centimetres?|centimeters?", "cm"),
    (r"metres?|meters?", "m"),
    (r"(?:milli|micro|nano)?watts?", None),
    (r"steradians?", "sr"),
    (r"[aå]ngstr[oö]ms?", "Å"),
    (r"per", "/"),
)
_UNIT_WORD = re.compile(r"(?i)\b(" + "|".join(f"(?:{w})" for w, _ in _UNIT_WORDS) + r")\b")
_WORD_PREFIX = {"milli": "m", "micro": "u", "nano": "n"}
_PREFIX_WORD = re.compile(r"(?i)\b(milli|micro|nano)(?=[A-Za-z])")


def normalise_unit(text: str) -> str:
    """Unit text with spelled-out words as symbols: ``microwatt per cm2 per nm`` -> ``uW / cm2 / nm``.

    Also ``micro``/``milli``/``nano`` glued to a symbol (``microW``) and ``^`` powers.
    """

    def word(m: re.Match) -> str:
        w = m.group(1)
        low = w.lower()
        for pattern, symbol in _UNIT_WORDS:
            if re.fullmatch(pattern, low):
                if symbol is None:  # watts, with or without a prefix word
                    for prefix, sym in _WORD_PREFIX.items():
                        if low.startswith(prefix):
                            return sym + "W"
                    return "W"
                return f" {symbol} " if symbol == "/" else symbol
        return w  # pragma: no cover - the pattern admits only the listed words

    s = _UNIT_WORD.sub(word, text)
    s = _PREFIX_WORD.sub(lambda m: _WORD_PREFIX[m.group(1).lower()], s)
    return s


def unit_dimensions(text: str) -> tuple[tuple[int, int, int], int]:
    """(W, m, sr) exponents and the decimal exponent of the unit's SI value; ValueError if not a unit."""
    return _unit_dimensions(text)


def _unit_dimensions(text: str) -> tuple[tuple[int, int, int], int]:
    """(W, m, sr) exponents and the decimal exponent of the unit's SI value."""
    s = normalise_unit(text).translate(_SUPERSCRIPTS).strip()
    s = re.sub(r"(?<=[A-Za-z0-9)\]])\.(?=[A-Za-z(\[])", " ", s)  # "W.m-2.nm-1"
    pos = 0
    depth = 0
    tokens: list[tuple[str, str, int]] = []
    while pos < len(s):
        m = _TOKEN.match(s, pos)
        if m is None or m.end() == pos:
            if s[pos:].strip() == "":
                break
            raise _UnitSyntax(s[pos:])
        pos = m.end()
        if m.group("open"):
            depth += 1
            if depth > _MAX_DEPTH:
                raise _UnitSyntax("parentheses nested too deeply")
            tokens.append(("(", "", 0))
        elif m.group("close"):
            depth -= 1
            tokens.append((")", "", 0))
        elif m.group("div"):
            tokens.append(("/", "", 0))
        else:
            tokens.append(("sym", m.group("sym"), int(m.group("exp") or 1)))
    dims, factor, end = _unit_group(tokens, 0)
    if end != len(tokens):
        raise _UnitSyntax("unbalanced parentheses")
    return dims, factor


def _unit_group(tokens, i):
    dims = [0, 0, 0]
    factor = 0
    sign = 1
    seen_any = False
    while i < len(tokens):
        kind, sym, exp = tokens[i]
        if kind == ")":
            break
        if kind == "/":
            if not seen_any:
                raise _UnitSyntax("'/' with nothing before it")
            sign = -1
            i += 1
            continue
        if kind == "(":
            sub, f, i = _unit_group(tokens, i + 1)
            if i >= len(tokens) or tokens[i][0] != ")":
                raise _UnitSyntax("unbalanced parentheses")
            i += 1
            for k in range(3):
                dims[k] += sign * sub[k]
            factor += sign * f
            seen_any = True
            continue
        dim, f = _symbol(sym)
        dims[dim] += sign * exp
        factor += f * sign * exp
        seen_any = True
        i += 1
    if not seen_any:
        raise _UnitSyntax("empty unit")
    return tuple(dims), factor, i


def _symbol(sym: str) -> tuple[int, int]:
    if sym in _BASE:
        return _BASE[sym]
    if len(sym) > 1 and sym[0] in _PREFIXES and sym[1:] in _BASE:
        dim, f = _BASE[sym[1:]]
        return dim, f + _PREFIXES[sym[0]]
    raise _UnitSyntax(sym)


def is_relative_unit(text: str) -> bool:
    """Whether ``text`` names relative (unitless) values: ``a.u.``, ``counts``, ``%``, ..."""
    return text.strip().lower() in _RELATIVE_UNITS


def looks_like_unit(text: str) -> bool:
    """Whether bracketed header text is meant as a unit (and not, say, ``(2700 K)``)."""
    t = text.strip()
    if is_relative_unit(t) or "/" in t:
        return True
    try:
        _unit_dimensions(t)
    except _UnitSyntax:
        return False
    return True


def parse_spectral_unit(text: str, *, source: str, line: int | None = None) -> tuple[Quantity, float]:
    """Quantity and factor to its base unit for a spectral unit such as ``mW/m²/nm``.

    Examples (unit arithmetic, SI): ``µW/cm²/nm`` → (irradiance, 0.01);
    ``mW/nm`` → (radiant flux, 0.001); ``W/m3`` → (irradiance, 1e-9).
    """
    t = text.strip()
    if is_relative_unit(t):
        return Quantity.RELATIVE, 1.0
    low = t.lower()
    if "mol" in low or "photon" in low or "einstein" in low:
        raise InputError(f"photon units are not supported: {t!r}; give the values in W", source=source, line=line)
    if re.search(r"\b(lm|lx|cd|lux|nit)\b", low):
        raise InputError(
            f"{t!r} is a photometric unit; spectral radiometric values are needed, e.g. W/nm, W/(m2 nm), "
            "W/(sr m2 nm), W/(sr nm) or a.u.",
            source=source,
            line=line,
        )
    try:
        dims, factor = _unit_dimensions(t)
    except _UnitSyntax:
        raise InputError(
            f"unknown unit {t!r}; expected e.g. W/nm, W/(m2 nm), W/(sr m2 nm), W/(sr nm) or a.u.",
            source=source,
            line=line,
        ) from None
    q = _SPECTRAL_DIMENSIONS.get(dims)
    if q is None:
        raise InputError(
            f"{t!r} is not a spectral power unit; expected e.g. W/nm, W/(m2 nm), W/(sr m2 nm), W/(sr nm)",
            source=source,
            line=line,
        )
    if abs(factor - _BASE_UNIT_EXP) > 30:
        raise InputError(
            f"unit {t!r} is off by a factor of 1e{factor - _BASE_UNIT_EXP}; refused as a typo", source=source, line=line
        )
    return q, 10.0 ** (factor - _BASE_UNIT_EXP)


def parse_length_unit(text: str, *, source: str, line: int | None = None) -> float:
    """Factor from the wavelength unit ``text`` (``nm``, ``um``, ``µm``, ``Å``, ...) to nm."""
    t = text.strip()
    try:
        dims, factor = _unit_dimensions(t)
    except _UnitSyntax:
        dims, factor = None, 0
    if dims != (0, 1, 0) or abs(factor + 9) > 30:
        raise InputError(f"unknown wavelength unit {t!r}; expected nm, um (µm) or Å", source=source, line=line)
    return 10.0 ** (factor + 9)


def check_plain_nm(wavelength_nm: np.ndarray, *, source: str, line: int | None = None) -> None:
    """Refuse a unit-less axis that is plainly in micrometres (all values below 10)."""
    if wavelength_nm.size and float(np.max(wavelength_nm)) < 10.0:
        raise InputError(
            f"wavelengths {float(np.min(wavelength_nm)):g}-{float(np.max(wavelength_nm)):g} look like micrometres; "
            "state the unit, e.g. 'wavelength (um)'",
            source=source,
            line=line,
        )


def short(text: str, limit: int = 40) -> str:
    """``repr`` of ``text`` cut to ``limit`` characters, for one-line messages."""
    t = text if len(text) <= limit else text[: limit - 1] + "…"
    return repr(t)
