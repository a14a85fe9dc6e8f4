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

import numpy as np

from ..errors import InputError
from ..spectra import Quantity
from . import (
    ParsedSpectra,
    check_plain_nm,
    combine_quantity,
    content_lines,
    decode_text,
    is_relative_unit,
    looks_like_unit,
    order_axis,
    parse_length_unit,
    parse_spectral_unit,
    short,
)

__all__ = ["parse"]

_LINES = re.compile(r"\r\n|\r|\n")
_NUMBER = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_NUMBER_COMMA = re.compile(r"[+-]?(?:[0-9]+,?[0-9]*|,[0-9]+)(?:[eE][+-]?[0-9]+)?")
_DECIMAL_COMMA_CELL = re.compile(r"[+-]?[0-9]*,[0-9]+(?:[eE][+-]?[0-9]+)?")
_MISSING = {"", "n/a", "na", "nan", "null", "none", "-", "--", "?", "inf", "+inf", "-inf", "infinity",
            "-infinity", "+infinity", "#n/a", "#value!", "#div/0!"}
_GENERIC_NAMES = {"value", "values", "irradiance", "radiance", "intensity", "flux", "power", "relative",
                  "spectrum", "spd", "data", "y", "counts", "signal", "spectral irradiance",
                  "spectral radiance", "spectral intensity", "spectral flux", "spectral power",
                  "radiant flux", "relative power", "relative spectral power", "amplitude", "energy"}


def parse(data: bytes, *, source: str, stem: str) -> ParsedSpectra:
    """Parse delimited text (see the module docstring) into spectra in base units."""
    text, flags = decode_text(data, source)
    directives: dict[str, tuple[str, int]] = {}
    rows = list(content_lines(_LINES.split(text), directives, source=source))
    if not rows:
        raise InputError("no data rows (only comments or blank lines)", source=source)

    delimiter, decimal_comma = _sniff(rows)
    split = _splitter(delimiter)

    header: list[str] | None = None
    header_line = None
    first_cells = split(rows[0][1])
    if _is_header(first_cells, decimal_comma):
        header, header_line = first_cells, rows[0][0]
        rows = rows[1:]
    if not rows:
        raise InputError("header but no data rows", source=source, line=header_line)

    ncol = len(split(rows[0][1]))
    if ncol < 2:
        raise InputError(
            "needs a wavelength column and at least one value column; found 1 column",
            source=source,
            line=rows[0][0],
        )
    if header is not None and len(header) != ncol and delimiter is None:
        header = _merge_bracketed(header)
    if header is not None and len(header) != ncol:
        hint = "; notes above the table must be comment lines starting with #" if len(header) == 1 else ""
        raise InputError(
            f"header has {len(header)} column{'s' if len(header) != 1 else ''} but the data rows have {ncol}{hint}",
            source=source,
            line=header_line,
        )

    table = _numbers(rows, split, ncol, decimal_comma, source)  # (L, ncol)
    lines = [n for n, _ in rows]
    wl = table[:, 0]
    values = table[:, 1:].T

    wl_unit = None if header is None else _name_and_unit(header[0])[1]
    if wl_unit is not None:
        wl_factor = parse_length_unit(wl_unit, source=source, line=header_line)
        wl = np.round(wl * wl_factor, 9)  # 0.395 um * 1000 is 395.00000000000006 in binary
    else:
        check_plain_nm(wl, source=source, line=header_line)

    names, columns, quantity, factors = _columns(header, header_line, ncol, directives, stem, source)
    values = values * factors[:, None]
    wl, values, order_flags = order_axis(wl, values, source=source, lines=lines)
    _check_finite(values, source)
    return ParsedSpectra(
        wavelength_nm=wl,
        values=values,
        names=names,
        columns=columns,
        quantity=quantity,
        flags=flags + order_flags,
    )


# --------------------------------------------------------------------------- layout


def _sniff(rows: list[tuple[int, str]]) -> tuple[str | None, bool]:
    """Delimiter (None = white space) and whether decimals are written with a comma."""
    sample = [s for _, s in rows[1:65]] or [rows[0][1]]
    if any("\t" in s for s in sample):
        delimiter: str | None = "\t"
    elif any(";" in s for s in sample):
        delimiter = ";"
    elif any("," in s for s in sample):
        delimiter = ","
        tokens = [s.split() for s in sample]
        if all(len(t) >= 2 and all(_DECIMAL_COMMA_CELL.fullmatch(c) or _NUMBER.fullmatch(c) for c in t)
               for t in tokens):
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


def _numbers(rows, split, ncol: int, decimal_comma: bool, source: str) -> np.ndarray:
    pattern = _NUMBER_COMMA if decimal_comma else _NUMBER
    out = np.empty((len(rows), ncol), dtype=np.float64)
    for r, (line, text) in enumerate(rows):
        cells = split(text)
        if len(cells) != ncol:
            _row_error(cells, ncol, line, source, decimal_comma)
        for c, cell in enumerate(cells):
            if not pattern.fullmatch(cell):
                _row_error(cells, ncol, line, source, decimal_comma, column=c)
        if decimal_comma:
            cells = [cell.replace(",", ".") for cell in cells]
        out[r] = [float(cell) for cell in cells]
    if not np.all(np.isfinite(out)):
        r, c = np.argwhere(~np.isfinite(out))[0]
        raise InputError(
            f"value in column {c + 1} is beyond floating-point range", source=source, line=rows[r][0]
        )
    return out


def _row_error(cells, ncol, line, source, decimal_comma, column=None):
    texty = [c for c in cells if any(ch.isalpha() for ch in c) and c.lower() not in _MISSING]
    if texty and len(texty) == len(cells) or (texty and any(ch.isalpha() for ch in cells[0])):
        raise InputError(
            f"text among the data rows (a second header?): {short(cells[0])}", source=source, line=line
        )
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
    """Split ``'lamp A (mW/m2/nm)'`` into name and unit text (None when there is no unit)."""
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
                    if looks_like_unit(inner):
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
    return text, None


def _columns(header, header_line, ncol, directives, stem, source):
    """Names, source columns, the stated quantity and per-column factors of the value columns."""
    count = ncol - 1
    default_unit = directives.get("unit")
    stated_q = None
    quantity_line = None
    if "quantity" in directives:
        text, quantity_line = directives["quantity"]
        stated_q = Quantity.parse(text, source=source, line=quantity_line)

    names: list[str] = []
    units: list[tuple[str | None, int | None]] = []
    for k in range(count):
        column_number = k + 2
        name, unit = ("", None)
        if header is not None:
            name, unit = _name_and_unit(header[k + 1])
        line = header_line
        if unit is None and default_unit is not None:
            unit, line = default_unit
        units.append((unit, line))
        if not name:
            name = stem if count == 1 else f"{stem}#{column_number}"
        elif count == 1 and (name.lower() in _GENERIC_NAMES or is_relative_unit(name)):
            name = stem
        names.append(name)

    seen: dict[str, int] = {}
    for k, name in enumerate(names):
        if name in seen:
            raise InputError(
                f"column name {short(name)} appears twice (columns {seen[name] + 2} and {k + 2})",
                source=source,
                line=header_line,
            )
        seen[name] = k

    factors = np.ones(count)
    quantities: list[Quantity | None] = []
    for k, (unit, line) in enumerate(units):
        if unit is None:
            quantities.append(None)
            continue
        q, f = parse_spectral_unit(unit, source=source, line=line)
        quantities.append(q)
        factors[k] = f
    stated_units = {q for q in quantities if q is not None}
    if len(stated_units) > 1:
        raise InputError(
            "value columns are in units of different quantities: "
            + ", ".join(sorted(q.value for q in stated_units)),
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

    if count == 1:
        columns = None
    elif header is not None:
        columns = tuple(names)
    else:
        columns = tuple(str(k + 2) for k in range(count))
    return tuple(names), columns, quantity, factors
