"""Delimited text: one wavelength column, then one or more value columns.

Layout
------
* Columns are separated by tab, semicolon, comma or white space (detected from
  the data rows, in that order of preference).  With tab, semicolon or white
  space a decimal comma is accepted (``380,5;0,012``); a file mixing decimal
  commas and decimal points is refused.
* Cells may be quoted as spreadsheets write them (``"lamp, north"``).
* Lines whose first non-blank characters are ``#``, ``//`` or ``%`` are comments;
  blank lines, and lines holding nothing but separators, are skipped.
* An optional header row (the first non-comment row, when any of its cells is
  not a number) names the columns.  The first column is the wavelength; a unit in
  brackets or after `` / `` sets its unit (``wavelength (nm)``, ``λ [µm]``);
  without one the wavelengths are taken in nm.  Each value column is one
  spectrum named by its header, and its unit (``lamp A (mW/m²/nm)``) gives the
  quantity and the factor to the base unit (see :mod:`cctkit.readers`).
* Comment directives ``# quantity: irradiance`` and ``# unit: W/m2/nm`` apply to
  every value column whose header carries no unit.
* Without a header the spectra are named after the file (``stem`` for one value
  column, ``stem#k`` with the 1-based column number ``k`` for several).  With a
  single value column and a generic header (``value``, ``irradiance``, ...) the
  file stem is the name.
* Rows in descending wavelength order are reversed (flag ``wavelength-descending``).

Refused, each with the 1-based line number: a second header or text among the
data, empty, ``n/a`` or ``NaN`` cells, values out of floating-point range, rows
with a different number of cells, duplicate or unordered wavelengths.
"""

from __future__ import annotations

import csv
import re
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..spectra import MIN_POINTS, Quantity
from . import (
    ParsedSpectra,
    TableLayout,
    check_plain_nm,
    combine_quantity,
    content_lines,
    decode_text,
    is_relative_unit,
    looks_like_unit,
    normalise_unit,
    order_axis,
    parse_length_unit,
    parse_spectral_unit,
    short,
    unit_dimensions,
)
from .metadata import metadata_from_lines

__all__ = ["parse"]

_LINES = re.compile(r"\r\n|\r|\n")
_NUMBER = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_NUMBER_COMMA = re.compile(r"[+-]?(?:[0-9]+,?[0-9]*|,[0-9]+)(?:[eE][+-]?[0-9]+)?")
_DECIMAL_COMMA_CELL = re.compile(r"[+-]?[0-9]*,[0-9]+(?:[eE][+-]?[0-9]+)?")
_MISSING = {
    "",
    "n/a",
    "na",
    "nan",
    "null",
    "none",
    "-",
    "--",
    "?",
    "inf",
    "+inf",
    "-inf",
    "infinity",
    "-infinity",
    "+infinity",
    "#n/a",
    "#value!",
    "#div/0!",
}
#: Lines of text allowed between two pieces of one table before the second counts as a table of its own.
_MAX_GAP = 2
#: Rows a second monotonic run needs to count as a rival table (shorter runs are metadata).
_MIN_RIVAL = 3
_GENERIC_NAMES = {
    "value",
    "values",
    "irradiance",
    "radiance",
    "intensity",
    "flux",
    "power",
    "relative",
    "spectrum",
    "spd",
    "data",
    "y",
    "counts",
    "signal",
    "spectral irradiance",
    "spectral radiance",
    "spectral intensity",
    "spectral flux",
    "spectral power",
    "radiant flux",
    "relative power",
    "relative spectral power",
    "amplitude",
    "energy",
    "spectral irradiance e",
    "irradiance e",
    "spectral power distribution",
    "absolute",
    "abs",
    "measurement",
    "measured",
    "intensity counts",
    "raw",
    "raw counts",
    "emission",
    "output",
    "photometric",
    "radiometric",
    "reading",
    "level",
    "bestrahlungsstärke",
    "spektrale bestrahlungsstärke",
    "strahldichte",
    "spektrale strahldichte",
    "strahlstärke",
    "strahlungsfluss",
    "strahlungsleistung",
    "intensität",
    "leistung",
    "wert",
    "messwert",
    "éclairement",
    "éclairement énergétique",
    "luminance énergétique",
    "intensité",
    "flux énergétique",
    "puissance",
    "valeur",
    "irradiancia",
    "radiancia",
    "intensidad",
    "valor",
    "irradianza",
    "radianza",
    "intensità",
    "valore",
    "spectral value",
    "spectral values",
}


def parse(
    data: bytes, *, source: str, stem: str, layout: TableLayout | None = None, skipped: list[InputError] | None = None
) -> ParsedSpectra:
    """Parse delimited text (see the module docstring) into spectra in base units.

    With ``skipped`` a list, a value column holding a bad cell (text, empty, missing, beyond
    floating-point range) is left out and its first error appended there (``part`` ``"column"``);
    bad cells of the wavelength column, or rows with the wrong number of cells, still refuse the file.
    """
    layout = layout or TableLayout()
    text, flags = decode_text(data, source)
    lines = _LINES.split(text)
    if lines and lines[-1] == "":
        lines.pop()
    skip = layout.skip_rows
    if skip >= len(lines):
        raise InputError(f"--skip-rows {skip} skips every line of the file ({len(lines)} lines)", source=source)
    directives: dict[str, tuple[str, int]] = {}
    rows = list(content_lines(lines[skip:], directives, source=source, start=skip + 1))
    if not rows:
        raise InputError("no data rows (only comments or blank lines)", source=source)

    delimiter, decimal_comma = _sniff(rows, layout)
    split = _splitter(delimiter)
    wcol = (layout.wavelength_column or 1) - 1
    table = find_table(rows, split, decimal_comma, wcol, source=source)
    first, last, ncol = table.first, table.last, table.ncol
    data_rows = rows[first : last + 1]

    header: list[str] | None = None
    header_line = None
    header_index = None
    if first > 0:
        header, header_index = _header_above(rows, first, split, ncol, delimiter, decimal_comma, source)
        if header is not None:
            header_line = rows[header_index][0]
    if ncol < 2:
        raise InputError(
            "needs a wavelength column and at least one value column; found 1 column",
            source=source,
            line=data_rows[0][0],
        )
    if wcol >= ncol:
        raise InputError(
            f"--wavelength-column {wcol + 1} but the table has {ncol} columns", source=source, line=data_rows[0][0]
        )
    value_cols = _value_columns(layout, wcol, ncol, source, data_rows[0][0])

    column_errors: dict[int, InputError] | None = None if skipped is None else {}
    numbers = _numbers(data_rows, split, ncol, decimal_comma, source, wcol=wcol, column_errors=column_errors)
    line_numbers = [n for n, _ in data_rows]
    wl = numbers[:, wcol]
    if column_errors:
        assert skipped is not None
        bad = [c for c in value_cols if c in column_errors]
        if len(bad) == len(value_cols):
            raise column_errors[bad[0]]  # nothing left to read: the file is bad
        for c in bad:
            exc = column_errors[c]
            what = f"column {c + 1}" if header is None else f"spectrum {short(header[c])}"
            exc = InputError(f"{what} left out: {exc.reason}", source=source, line=exc.line)
            exc.part = "column"
            skipped.append(exc)
        value_cols = [c for c in value_cols if c not in column_errors]
    all_count = len(value_cols) + (len(column_errors) if column_errors else 0)
    values = numbers[:, value_cols].T

    wl_unit = None if header is None else _wavelength_unit(header[wcol])
    if wl_unit is not None:
        wl_factor = parse_length_unit(wl_unit, source=source, line=header_line)
        wl = np.round(wl * wl_factor, 9)  # 0.395 um * 1000 is 395.00000000000006 in binary
    else:
        check_plain_nm(wl, source=source, line=header_line)

    names, columns, quantity, factors = _columns(
        header, header_line, value_cols, directives, stem, source, count=all_count
    )
    values = values * factors[:, None]
    wl, values, order_flags = order_axis(wl, values, source=source, lines=line_numbers)
    _check_finite(values, source)
    top = header_index if header_index is not None else first
    above_end = rows[top][0] - 1  # physical lines before the header (or the data)
    below_start = rows[last][0]  # physical index of the first line after the data
    around = [ln for ln in lines[:above_end]] + [ln for ln in lines[below_start:]]
    return ParsedSpectra(
        wavelength_nm=wl,
        values=values,
        names=names,
        columns=columns,
        quantity=quantity,
        flags=flags + order_flags,
        metadata=metadata_from_lines(around),
    )


# --------------------------------------------------------------------------- finding the table


@dataclass(frozen=True)
class Table:
    """Where the table is: ``rows[first:last + 1]``, ``ncol`` cells per row."""

    first: int
    last: int
    ncol: int


def _value(cells: list[str], wcol: int, pattern) -> float | None:
    if len(cells) <= wcol or not pattern.fullmatch(cells[wcol]):
        return None
    try:
        v = float(cells[wcol].replace(",", "."))
    except ValueError:  # pragma: no cover - the pattern admits only numbers
        return None
    return v if np.isfinite(v) else None


def find_table(rows, split, decimal_comma: bool, wcol: int, *, source: str) -> Table:
    """The data block among ``rows`` (see the module docstring), or an InputError naming line ranges.

    Rows whose wavelength cell is a number form segments of consecutive rows;
    the segment holding the longest strictly monotonic run of all-number rows
    is the table.  A neighbouring segment that carries on its wavelengths, a
    line or two further on, belongs to it (the lines between are then reported
    as bad rows); any other segment with a monotonic run of 3 or more rows is a
    second table, and the file is ambiguous.
    """
    pattern = _NUMBER_COMMA if decimal_comma else _NUMBER
    cells = [split(t) for _, t in rows]
    keys = [_value(c, wcol, pattern) for c in cells]
    numeric = [k is not None and len(c) >= 2 and all(pattern.fullmatch(x) for x in c) for k, c in zip(keys, cells)]

    segments: list[list[int]] = []  # [start, end] row indices of consecutive number-led rows
    for i, k in enumerate(keys):
        if k is None:
            continue
        if segments and segments[-1][1] == i - 1:
            segments[-1][1] = i
        else:
            segments.append([i, i])
    if not segments:
        wide = [(n, c) for (n, _), c in zip(rows, cells) if len(c) >= 2]
        if wide:
            line, first = wide[0]
            heads = [_value([c], 0, pattern) for c in first[1:]]
            nm = [v for v in heads if v is not None and 100 <= v <= 3000]  # plausible wavelengths [nm]
            if len(wide) > 1 and len(nm) == len(heads):  # a name column, then wavelengths: spectra in rows, too few
                raise InputError(
                    f"the header names only {len(nm)} wavelengths ({min(nm):g}-{max(nm):g} nm) for spectra in "
                    f"rows; a spectrum needs at least {MIN_POINTS}",
                    source=source,
                    line=line,
                )
            raise InputError("header but no data rows", source=source, line=wide[-1][0])
        raise InputError(f"no table of numbers found (lines {rows[0][0]}-{rows[-1][0]} hold text only)", source=source)

    def best_run(seg) -> tuple[int, int, int, int]:
        """(length, start, end, direction) of the longest monotonic all-number run in ``seg``."""
        best = (0, seg[0], seg[0], 1)
        i = seg[0]
        while i <= seg[1]:
            if not numeric[i]:
                i += 1
                continue
            j, direction = i, 0
            while j + 1 <= seg[1] and numeric[j + 1] and len(cells[j + 1]) == len(cells[i]):
                step = keys[j + 1] - keys[j]
                d = 1 if step > 0 else -1 if step < 0 else 0
                if d == 0 or (direction and d != direction):
                    break
                direction = d
                j += 1
            if j - i + 1 > best[0]:
                best = (j - i + 1, i, j, direction or 1)
            i = j + 1
        return best

    runs = [best_run(seg) for seg in segments]
    primary = max(range(len(segments)), key=lambda k: runs[k][0])
    length, run_start, _, direction = runs[primary]
    ncol = len(cells[run_start]) if length else len(cells[segments[primary][0]])
    first, last = segments[primary]
    merged = {primary}

    run_keys = np.array([keys[i] for i in range(run_start, run_start + length)], dtype=np.float64)
    step = float(np.max(np.abs(np.diff(run_keys)))) if length >= 2 else np.inf

    def continues(before_key: float | None, after_key: float | None, gap: int) -> bool:
        """Whether ``after_key`` carries on from ``before_key`` across ``gap`` lines, at the table's step."""
        if before_key is None or after_key is None:
            return False
        jump = (after_key - before_key) * direction
        return 0 < jump <= 1.5 * step * (gap + 1) + 1e-9

    k = primary + 1  # later segments that carry on the wavelengths
    while (
        k < len(segments)
        and segments[k][0] - last - 1 <= _MAX_GAP
        and continues(keys[last], keys[segments[k][0]], segments[k][0] - last - 1)
    ):
        last = segments[k][1]
        merged.add(k)
        k += 1
    k = primary - 1  # earlier ones
    while (
        k >= 0
        and first - segments[k][1] - 1 <= _MAX_GAP
        and continues(keys[segments[k][1]], keys[first], first - segments[k][1] - 1)
    ):
        first = segments[k][0]
        merged.add(k)
        k -= 1
    for k, seg in enumerate(segments):
        if k not in merged and runs[k][0] >= _MIN_RIVAL:
            a, b = sorted([(rows[first][0], rows[last][0]), (rows[seg[0]][0], rows[seg[1]][0])])
            raise InputError(
                f"two tables of numbers, lines {a[0]}-{a[1]} and lines {b[0]}-{b[1]}; keep one in the file or "
                "choose one with --skip-rows",
                source=source,
                line=b[0],
            )
    return Table(first=first, last=last, ncol=ncol)


def _header_above(rows, first: int, split, ncol: int, delimiter, decimal_comma: bool, source: str):
    """The header row directly above the data (cells, row index), or (None, None) when that line is metadata."""
    index = first - 1
    line, text = rows[index]
    cells = split(text)
    if len(cells) != ncol and delimiter is None:
        cells = _merge_bracketed(cells)
    if len(cells) == ncol and _is_header(cells, decimal_comma):
        if index > 0 and all(_unit_only(c) for c in cells):
            names = split(rows[index - 1][1])
            if len(names) != ncol and delimiter is None:
                names = _merge_bracketed(names)
            if len(names) == ncol and not any(_unit_only(c) for c in names):
                # names on one line, units on the next
                return [f"{n} [{u.strip('[]()')}]" if u.strip("[]() ") else n for n, u in zip(names, cells)], index - 1
        return cells, index
    if len(cells) >= 2 and _looks_like_wavelength_label(cells[0]):
        raise InputError(
            f"header has {len(cells)} column{'s' if len(cells) != 1 else ''} but the data rows have {ncol}",
            source=source,
            line=line,
        )
    return None, None


_WAVELENGTH_WORDS = re.compile(r"(wave|wellen|longueur|lambda|λ|^wl\b|^nm\b|^\[?nm\]?$|^lam)", re.IGNORECASE)


def _looks_like_wavelength_label(cell: str) -> bool:
    return bool(_WAVELENGTH_WORDS.search(cell.strip()))


def _unit_only(cell: str) -> bool:
    """A header cell that is nothing but a unit (``nm``, ``[W/m2/nm]``, ``(a.u.)``)."""
    t = cell.strip()
    if not t:
        return False
    inner = t[1:-1] if t[:1] in "([" and t[-1:] in ")]" else t
    if not inner.strip():
        return False
    if is_relative_unit(inner):
        return True
    try:
        unit_dimensions(inner)
    except ValueError:
        return False
    return True


def _value_columns(layout: TableLayout, wcol: int, ncol: int, source: str, line: int) -> list[int]:
    if layout.columns is None:
        return [c for c in range(ncol) if c != wcol]
    cols = [c - 1 for c in layout.columns]
    for c in cols:
        if c >= ncol:
            raise InputError(
                f"--columns names column {c + 1} but the table has {ncol} columns", source=source, line=line
            )
        if c == wcol:
            raise InputError(
                f"--columns names column {c + 1}, which is the wavelength column", source=source, line=line
            )
    return cols


# --------------------------------------------------------------------------- layout


_DELIMITERS = {"tab": "\t", ";": ";", ",": ",", "space": None}
_SNIFF_ROWS = 400


def _sniff(rows: list[tuple[int, str]], layout: TableLayout) -> tuple[str | None, bool]:
    """Delimiter (None = white space) and whether decimals are written with a comma.

    Each pair (delimiter, decimal mark) is tried on the first rows; the most
    preferred pair (tab, semicolon, comma, white space; decimal point before
    comma) that splits at least half as many rows into numbers as the best one wins.
    """
    delimiters = [_DELIMITERS[layout.delimiter]] if layout.delimiter else ["\t", ";", ",", None]
    decimals = [layout.decimal == ","] if layout.decimal else [False, True]
    combos = [(d, dc) for d in delimiters for dc in decimals if not (d == "," and dc)]
    sample = [s for _, s in rows[:_SNIFF_ROWS]]
    counts = []
    for d, dc in combos:
        split = _splitter(d)
        pattern = _NUMBER_COMMA if dc else _NUMBER
        n = 0
        for s in sample:
            cells = split(s)
            if len(cells) >= 2 and all(pattern.fullmatch(c) for c in cells):
                n += 1
        counts.append(n)
    best = max(counts)
    if best == 0:
        if layout.delimiter or layout.decimal:
            return combos[0]
        return _sniff_by_characters(rows)
    for combo, n in zip(combos, counts):
        if 2 * n >= best:
            return combo
    return combos[0]  # pragma: no cover - the best pair always qualifies


def _sniff_by_characters(rows: list[tuple[int, str]]) -> tuple[str | None, bool]:
    """Delimiter and decimal mark told by the characters of rows that start with a number."""
    sample = [s for _, s in rows if s[:1].isdigit() or s[:1] in "+-."][:64] or [s for _, s in rows[:64]]
    if any("\t" in s for s in sample):
        delimiter: str | None = "\t"
    elif any(";" in s for s in sample):
        delimiter = ";"
    elif any("," in s for s in sample):
        delimiter = ","
        tokens = [s.split() for s in sample]
        if all(
            len(t) >= 2 and all(_DECIMAL_COMMA_CELL.fullmatch(c) or _NUMBER.fullmatch(c) for c in t) for t in tokens
        ):
            delimiter = None  # "380,5 0,012": white space between decimal-comma numbers
    else:
        delimiter = None
    decimal_comma = False
    if delimiter != ",":
        split = _splitter(delimiter)
        cells = [c for s in sample for c in split(s)]
        decimal_comma = any(_DECIMAL_COMMA_CELL.fullmatch(c) for c in cells)
    return delimiter, decimal_comma


def _splitter(delimiter: str | None):
    if delimiter is None:
        return str.split

    def split(line: str) -> list[str]:
        if '"' in line:
            try:  # quoted cells, as spreadsheets write them: "lamp, north";"0,5"
                raw = next(csv.reader([line], delimiter=delimiter, skipinitialspace=True))
            except (csv.Error, StopIteration):
                raw = line.split(delimiter)
        else:
            raw = line.split(delimiter)
        cells = [c.strip() for c in raw]
        while len(cells) > 1 and cells[-1] == "":
            cells.pop()
        return cells

    return split


def _merge_bracketed(tokens: list[str]) -> list[str]:
    """White-space header cells: glue ``(nm)``-like tokens to the name before them."""
    out: list[str] = []
    depth = 0
    for tok in tokens:
        if out and (depth > 0 or tok.startswith(("(", "[", "/"))):
            out[-1] = f"{out[-1]} {tok}"
        else:
            out.append(tok)
        depth += tok.count("(") + tok.count("[") - tok.count(")") - tok.count("]")
        depth = max(depth, 0)
    return out


def _is_header(cells: list[str], decimal_comma: bool) -> bool:
    if all(_is_number(c, decimal_comma) for c in cells):
        return False
    first = cells[0]
    if _is_number(first, decimal_comma) or (first and first.lower() in _MISSING):
        return False
    if first == "":
        return any(ch.isalpha() for c in cells[1:] for ch in c)
    return True


def _is_number(cell: str, decimal_comma: bool) -> bool:
    return bool((_NUMBER_COMMA if decimal_comma else _NUMBER).fullmatch(cell))


def _numbers(
    rows,
    split,
    ncol: int,
    decimal_comma: bool,
    source: str,
    *,
    wcol: int = 0,
    column_errors: dict[int, InputError] | None = None,
) -> np.ndarray:
    """The table's numbers (rows, ncol).  With ``column_errors`` a dict, a bad cell outside the
    wavelength column ``wcol`` is NaN and the first error of each column is recorded there."""
    pattern = _NUMBER_COMMA if decimal_comma else _NUMBER
    out = np.empty((len(rows), ncol), dtype=np.float64)
    for r, (line, text) in enumerate(rows):
        cells = split(text)
        if len(cells) != ncol:
            _row_error(cells, ncol, line, source, decimal_comma)
        for c, cell in enumerate(cells):
            if not pattern.fullmatch(cell):
                if column_errors is None or c == wcol:
                    _row_error(cells, ncol, line, source, decimal_comma, column=c)
                else:
                    try:
                        _row_error(cells, ncol, line, source, decimal_comma, column=c)
                    except InputError as bad_cell:
                        column_errors.setdefault(c, bad_cell.with_traceback(None))
                    cells[c] = "nan"
        if decimal_comma:
            cells = [cell.replace(",", ".") for cell in cells]
        out[r] = [float(cell) for cell in cells]
    if not np.all(np.isfinite(out)):
        for r, c in np.argwhere(~np.isfinite(out)).tolist():
            if column_errors is not None and c in column_errors:
                continue
            too_big = InputError(
                f"value in column {c + 1} is beyond floating-point range", source=source, line=rows[r][0]
            )
            if column_errors is None or c == wcol:
                raise too_big
            column_errors[c] = too_big
    return out


def _row_error(cells, ncol, line, source, decimal_comma, column=None):
    texty = [c for c in cells if any(ch.isalpha() for ch in c) and c.lower() not in _MISSING]
    if texty and len(texty) == len(cells) or (texty and any(ch.isalpha() for ch in cells[0])):
        raise InputError(f"text among the data rows (a second header?): {short(cells[0])}", source=source, line=line)
    if len(cells) != ncol:
        raise InputError(
            f"row has {len(cells)} cell{'s' if len(cells) != 1 else ''}, expected {ncol}", source=source, line=line
        )
    cell = cells[column]
    where = f"column {column + 1}"
    if cell.lower() in _MISSING:
        what = "empty cell" if cell == "" else f"missing value {short(cell)}"
        raise InputError(f"{what} in {where}; every cell must hold a number", source=source, line=line)
    if not decimal_comma and _DECIMAL_COMMA_CELL.fullmatch(cell):
        raise InputError(
            f"decimal comma {short(cell)} in {where} while the file uses decimal points", source=source, line=line
        )
    if decimal_comma and _NUMBER.fullmatch(cell):
        raise InputError(
            f"decimal point {short(cell)} in {where} while the file uses decimal commas", source=source, line=line
        )
    raise InputError(f"expected a number in {where}, got {short(cell)}", source=source, line=line)


def _check_finite(values: np.ndarray, source: str) -> None:
    if not np.all(np.isfinite(values)):
        raise InputError("a value is beyond floating-point range after unit conversion", source=source)


# --------------------------------------------------------------------------- names and units


def _name_and_unit(cell: str) -> tuple[str, str | None]:
    """Split ``'lamp A (mW/m2/nm)'`` into name and unit text (None when there is no unit).

    The unit may be in brackets or parentheses at the end, after `` / ``, after
    the last white space when it holds a ``/``, or after the last ``_`` of a
    name such as ``wavelength_um`` or ``irradiance_W_per_m2_per_nm``.  A short
    bracketed word that is a unit of something else (``[cd]``, ``(lx)``) is
    returned as a unit too, so that it is refused rather than taken as a name.
    """
    text = cell.strip()
    if text.endswith((")", "]")):
        closer = text[-1]
        opener = "(" if closer == ")" else "["
        depth = 0
        for i in range(len(text) - 1, -1, -1):
            if text[i] == closer:
                depth += 1
            elif text[i] == opener:
                depth -= 1
                if depth == 0:
                    inner = text[i + 1 : -1]
                    if looks_like_unit(normalise_unit(inner)) or _OTHER_UNIT.fullmatch(inner.strip()):
                        return text[:i].strip().removesuffix("/").strip(), inner.strip()
                    break
    if " / " in text:
        name, unit = text.split(" / ", 1)
        return name.strip(), unit.strip()
    parts = text.rsplit(None, 1)
    if len(parts) == 2 and "/" in parts[1]:
        return parts[0].strip(), parts[1].strip()
    if "/" in text and " " not in text and re.search(r"[Ww]", text):
        return "", text
    if "_" in text and " " not in text:
        pieces = text.split("_")
        for k in range(1, len(pieces)):
            unit = "_".join(pieces[k:])
            if _underscore_unit(unit):
                return "_".join(pieces[:k]), unit.replace("_per_", "/").replace("_", " ")
    return text, None


# Units of something other than spectral power that people put in headers; refused, never ignored.
_OTHER_UNIT = re.compile(
    r"(?i)(cd|lx|lux|lm|nits?|cd/m2|cd/m²|cd\s*m-2|K|°C|degC|mV|mA|Hz|ms|µs|us|W|mW|µW|uW|W/m2|W/m²|W/sr)"
)


def _underscore_unit(text: str) -> bool:
    """Whether ``text`` (the tail of a name like ``wavelength_um``) is a wavelength or spectral unit."""
    t = text.replace("_per_", "/").replace("_", " ")
    if t.lower() in ("nm", "um", "µm", "a", "å", "angstrom"):
        return True
    if "/" not in t and " " not in t:
        return False
    try:
        dims = unit_dimensions(normalise_unit(t))[0]
    except ValueError:
        return False
    return dims in ((0, 1, 0), (1, -1, 0), (1, -3, 0), (1, -3, -1), (1, -1, -1))


def _wavelength_unit(cell: str) -> str | None:
    name, unit = _name_and_unit(cell)
    if unit is None and name.strip().lower() in ("nm", "um", "µm", "å", "[nm]", "(nm)"):
        return name.strip("[]() ")
    return unit


def _is_generic(name: str) -> bool:
    """Whether a column name only states a quantity or a unit (and so names no spectrum)."""
    key = re.sub(r"[\s_.:-]+", " ", name.strip().lower()).strip()
    return key in _GENERIC_NAMES or is_relative_unit(name) or is_relative_unit(key)


def _columns(header, header_line, value_cols, directives, stem, source, count=None):
    """Names, source columns, the stated quantity and per-column factors of the value columns.

    ``count`` is the number of value columns the file has (default ``len(value_cols)``; more
    when bad columns were left out), so that names do not depend on what was left out."""
    total = count or len(value_cols)
    count = len(value_cols)
    default_unit = directives.get("unit")
    stated_q = None
    quantity_line = None
    if "quantity" in directives:
        text, quantity_line = directives["quantity"]
        stated_q = Quantity.parse(text, source=source, line=quantity_line)

    names: list[str] = []
    units: list[tuple[str | None, int | None, str | None]] = []
    for col in value_cols:
        column_number = col + 1
        name, unit = ("", None)
        cell = None
        if header is not None:
            cell = header[col]
            name, unit = _name_and_unit(cell)
        line = header_line
        if unit is None and default_unit is not None:
            unit, line = default_unit
            cell = None
        units.append((unit, line, cell))
        if not name or _is_generic(name):
            name = stem if total == 1 else f"{stem}#{column_number}"
        names.append(name)

    seen: dict[str, int] = {}
    for k, name in enumerate(names):
        if name in seen:
            raise InputError(
                f"column name {short(name)} appears twice (columns {value_cols[seen[name]] + 1} and "
                f"{value_cols[k] + 1})",
                source=source,
                line=header_line,
            )
        seen[name] = k

    factors = np.ones(count)
    quantities: list[Quantity | None] = []
    for k, (unit, line, cell) in enumerate(units):
        if unit is None:
            quantities.append(None)
            continue
        try:
            q, f = parse_spectral_unit(unit, source=source, line=line)
        except InputError as exc:
            if cell is None:
                raise
            raise InputError(f"{exc.reason} (column header {short(cell, 60)})", source=source, line=line) from None
        quantities.append(q)
        factors[k] = f
    stated_units = {q for q in quantities if q is not None}
    if len(stated_units) > 1:
        raise InputError(
            "value columns are in units of different quantities: " + ", ".join(sorted(q.value for q in stated_units)),
            source=source,
            line=header_line,
        )
    if stated_units and None in quantities:
        k = quantities.index(None)
        raise InputError(
            f"column {short(names[k])} has no unit while others do; give every value column its unit",
            source=source,
            line=header_line,
        )
    unit_q = next(iter(stated_units)) if stated_units else None
    quantity = combine_quantity(stated_q, unit_q, source=source, line=quantity_line)

    if total == 1:
        columns = None
    elif header is not None:
        columns = tuple(names)
    else:
        columns = tuple(str(c + 1) for c in value_cols)
    return tuple(names), columns, quantity, factors
