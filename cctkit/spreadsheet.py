"""Tables for spreadsheets: an ``.xlsx`` workbook, and CSV in the regional dialects.

Every table cctkit writes is first CSV text from :func:`cctkit.formats.csv_text` (floats
at repr precision, NaN as an empty cell).  This module turns that text into

* an ``.xlsx`` workbook (openpyxl, the ``excel`` extra): a sheet ``results`` holding the
  table with numbers as numeric cells, and a sheet ``provenance`` with the versions, the
  conventions and every input's SHA-256;
* CSV in another dialect: ``semicolon`` separates fields with ``;`` and writes the decimal
  comma, which is what spreadsheets set to most European locales open column by column.

A cell is a number when its whole text reads as a decimal number (``-12``, ``0.25``,
``1e-05``); everything else stays text.  Leading ``#`` lines of the CSV (a spectrum
file's comment) go to the provenance sheet, or stay comment lines in a CSV dialect.
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Iterable
from typing import Any

__all__ = [
    "CSV_DIALECTS",
    "XLSX_MAX_ROWS",
    "check_dialect",
    "csv_in_dialect",
    "csv_to_xlsx",
    "csv_file_to_xlsx",
    "read_xlsx_table",
]

#: Rows a worksheet holds (the header included): the format's limit, 2**20.
XLSX_MAX_ROWS = 1_048_576

#: CSV dialects ``--csv-dialect`` accepts: (field separator, decimal mark).
CSV_DIALECTS = {"comma": (",", "."), "semicolon": (";", ",")}

_NUMBER = re.compile(r"[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?")


def check_dialect(name: str) -> str:
    """``name`` as a key of :data:`CSV_DIALECTS`, or :class:`~cctkit.errors.InputError`."""
    from .errors import InputError

    key = str(name).strip().lower()
    if key not in CSV_DIALECTS:
        raise InputError(f"--csv-dialect must be one of {', '.join(CSV_DIALECTS)}, got {name!r}")
    return key


def _split(text: str) -> tuple[list[str], list[list[str]]]:
    """Leading ``#`` comment lines (without ``#``) and the CSV rows of ``text``."""
    lines = text.splitlines(keepends=True)
    comments = []
    while lines and lines[0].startswith("#"):
        comments.append(lines.pop(0)[1:].strip())
    return comments, list(csv.reader(io.StringIO("".join(lines))))


def _is_number(cell: str) -> bool:
    # "0123" is an identifier (a sample number), not the number 123
    return bool(_NUMBER.fullmatch(cell)) and not re.fullmatch(r"[-+]?0\d+", cell)


def csv_in_dialect(text: str, dialect: str) -> str:
    """CSV ``text`` (comma, decimal point) rewritten in ``dialect`` (see :data:`CSV_DIALECTS`)."""
    sep, mark = CSV_DIALECTS[check_dialect(dialect)]
    if (sep, mark) == (",", "."):
        return text
    comments, rows = _split(text)
    buf = io.StringIO()
    for c in comments:
        buf.write(f"# {c}\n")
    w = csv.writer(buf, delimiter=sep, lineterminator="\n")
    for row in rows:
        w.writerow([c.replace(".", mark) if _is_number(c) else c for c in row])
    return buf.getvalue()


def _cell_value(cell: str) -> Any:
    if cell == "":
        return None
    if _is_number(cell):
        if re.fullmatch(r"[-+]?\d+", cell) and len(cell.lstrip("+-")) <= 15:
            return int(cell)
        return float(cell)
    return cell


def csv_to_xlsx(text: str, *, provenance: dict[str, Any] | None = None, inputs: Iterable = ()) -> bytes:
    """The workbook (bytes) of CSV ``text``: sheet ``results`` and sheet ``provenance``.

    ``provenance`` is flattened into key/value rows (nested keys joined with ``.``);
    each of ``inputs`` (paths) gets a row with its SHA-256.
    """
    try:
        from openpyxl import Workbook
    except ImportError:
        from .errors import InputError

        raise InputError("writing .xlsx needs openpyxl; install it with: pip install 'cctkit[excel]'") from None
    comments, rows = _split(text)
    wb = Workbook()
    ws = wb.active
    ws.title = "results"
    for r, row in enumerate(rows, start=1):
        for c, raw in enumerate(row, start=1):
            value = _cell_value(raw) if r > 1 else (raw or None)
            cell = ws.cell(row=r, column=c, value=value)
            if isinstance(value, str):
                cell.data_type = "s"  # text stays text, even when it starts with "="
    if rows:
        ws.freeze_panes = "B2"
    meta = wb.create_sheet("provenance")
    for row in _provenance_rows(comments, provenance, inputs):
        _append_text(meta, row)
    _fixed_dates(wb)
    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()


def _provenance_rows(comments: list[str], provenance: dict[str, Any] | None, inputs: Iterable) -> list[list[Any]]:
    from pathlib import Path

    rows: list[list[Any]] = [["key", "value"]]
    rows += [["note", note] for note in comments]
    rows += [[key, value] for key, value in _flat(provenance or {})]
    for item in inputs:
        p = Path(item)
        digest = ""
        if p.is_file():
            from .spectra import sha256_of_file

            digest = sha256_of_file(p)
        rows.append([f"input {p.name}", str(p)])
        rows.append([f"input {p.name} sha256", digest])
    return rows


def _fixed_dates(wb) -> None:
    """Fixed document dates: the same table gives the same workbook contents."""
    import datetime

    fixed = datetime.datetime(2000, 1, 1)
    wb.properties.created = fixed
    wb.properties.modified = fixed
    wb.properties.creator = "cctkit"


def csv_file_to_xlsx(csv_path, xlsx_path, *, provenance: dict[str, Any] | None = None, inputs: Iterable = ()) -> int:
    """Stream the CSV file ``csv_path`` (comma, decimal point) into the workbook ``xlsx_path``,
    row by row in constant memory; sheets and cells as :func:`csv_to_xlsx` makes them.

    Returns the number of data rows.  A table of more rows than a worksheet holds
    (:data:`XLSX_MAX_ROWS` with the header) is refused with an
    :class:`~cctkit.errors.InputError` before anything is written.
    """
    try:
        from openpyxl import Workbook
        from openpyxl.cell import WriteOnlyCell
    except ImportError:
        from .errors import InputError

        raise InputError("writing .xlsx needs openpyxl; install it with: pip install 'cctkit[excel]'") from None
    from .errors import InputError

    with open(csv_path, encoding="utf-8", newline="") as fh:
        lines = sum(1 for _ in csv.reader(fh))
    if lines > XLSX_MAX_ROWS:
        raise InputError(
            f"{lines - 1:,} rows do not fit in one worksheet (at most {XLSX_MAX_ROWS - 1:,}); "
            "write .csv or .parquet instead",
            source=str(xlsx_path),
        )
    wb = Workbook(write_only=True)
    ws = wb.create_sheet("results")
    ws.freeze_panes = "B2"

    def text(value: str, sheet=ws):
        cell = WriteOnlyCell(sheet, value=value)
        cell.data_type = "s"  # text stays text, even when it starts with "="
        return cell

    count = 0
    with open(csv_path, encoding="utf-8", newline="") as fh:
        for r, row in enumerate(csv.reader(fh)):
            if r == 0:
                ws.append([text(c) if c else None for c in row])
                continue
            values = [_cell_value(c) for c in row]
            ws.append([text(v) if isinstance(v, str) else v for v in values])
            count += 1
    meta = wb.create_sheet("provenance")
    for prow in _provenance_rows([], provenance, inputs):
        meta.append([text(v, meta) if isinstance(v, str) else v for v in prow])
    _fixed_dates(wb)
    wb.save(xlsx_path)
    return count


def _append_text(ws, values: list[Any]) -> None:
    ws.append(values)
    for cell in ws[ws.max_row]:
        if isinstance(cell.value, str):
            cell.data_type = "s"


def _flat(doc: dict[str, Any], prefix: str = "") -> list[tuple[str, Any]]:
    out: list[tuple[str, Any]] = []
    for k, v in doc.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            out.extend(_flat(v, key + "."))
        elif isinstance(v, (list, tuple)):
            out.append((key, ", ".join(str(x) for x in v)))
        else:
            out.append((key, v if isinstance(v, (int, float, str)) or v is None else str(v)))
    return out


def read_xlsx_table(path, sheet: str = "results") -> list[list[Any]]:
    """The cell values of ``sheet`` as rows (for checks and for users reading a workbook back)."""
    from openpyxl import load_workbook

    wb = load_workbook(path, read_only=True, data_only=False)
    try:
        return [list(r) for r in wb[sheet].iter_rows(values_only=True)]
    finally:
        wb.close()
