"""Options and output helpers shared by the subcommands.

* ``--json`` prints exactly one JSON document on stdout; everything else
  (tables, warnings, progress) goes to stderr when ``--json`` is given.
* ``--output FILE`` writes atomically, refuses to replace an existing file
  without ``--overwrite``, and never writes over an input.
"""

from __future__ import annotations

import sys
from collections.abc import Iterable
from pathlib import Path
from typing import Any

import typer

from ..entry import parse_observer  # noqa: F401  (re-exported for the commands)
from ..errors import InputError
from ..formats import csv_text, dumps  # noqa: F401  (re-exported for the commands)

JSON_OPTION = typer.Option(False, "--json", help="Print one JSON document on stdout instead of a table.")
OUTPUT_OPTION = typer.Option(
    None, "--output", "-o", help="Write the result to FILE (.csv, .xlsx or .json by extension)."
)
OVERWRITE_OPTION = typer.Option(False, "--overwrite", help="Allow replacing an existing output file.")
RECURSIVE_OPTION = typer.Option(
    False, "--recursive", "-r", help="For a folder given as input, also read its sub-folders."
)
CSV_DIALECT_OPTION = typer.Option(
    "comma",
    "--csv-dialect",
    metavar="comma|semicolon",
    help="CSV written by --output: comma (decimal point) or semicolon (decimal comma, for spreadsheets "
    "in European locales).",
)
QUANTITY_HELP = "Radiometric quantity of the values: radiant-flux | irradiance | radiance | intensity | relative."
DOMINANT_WHITE_OPTION = typer.Option(
    "E",
    "--dominant-white",
    metavar="E|D65|D50|A|X,Y",
    help="White point of the dominant wavelength and excitation purity: E (equal energy, the default for "
    "light sources), D65, D50, A, or a chromaticity x,y; every output names it.",
)
INTERPOLATION_OPTION = typer.Option(
    "auto",
    "--interpolation",
    help="How spectra not at 1 nm are brought to the 1 nm grid: auto (Sprague, CIE 167, for uniform steps; "
    "PCHIP otherwise; line spectra that ring below zero are flagged), sprague, linear or pchip.",
)
OBSERVER_HELP = "CIE standard observer for colorimetry: 2 (CIE 1931) or 10 (CIE 1964)."


SKIP_ROWS_OPTION = typer.Option(
    None, "--skip-rows", help="Delimited text: take the first N lines as notes, and look for the table below them."
)
DELIMITER_OPTION = typer.Option(
    None,
    "--delimiter",
    help="Delimited text: the column separator, tab | ';' | ',' | space (found out when not given).",
)
DECIMAL_OPTION = typer.Option(
    None, "--decimal", help="Delimited text: the decimal mark, '.' or ',' (found out when not given)."
)
WAVELENGTH_COLUMN_OPTION = typer.Option(
    None, "--wavelength-column", help="Delimited text: the column holding the wavelengths, counted from 1 (default 1)."
)
COLUMNS_OPTION = typer.Option(
    None,
    "--columns",
    help="Delimited text: the value columns to read, counted from 1, e.g. 2,4 or 2-5 (default: every other column).",
)


def table_layout(skip_rows=None, delimiter=None, decimal=None, wavelength_column=None, columns=None):
    """The :class:`~cctkit.readers.TableLayout` the table options ask for (None when none is given)."""
    if skip_rows is None and delimiter is None and decimal is None and wavelength_column is None and columns is None:
        return None
    from ..readers import TableLayout

    return TableLayout.from_options(
        skip_rows=skip_rows, delimiter=delimiter, decimal=decimal, wavelength_column=wavelength_column, columns=columns
    )


def input_files(paths: Iterable[Path], *, recursive: bool = False) -> list[Path]:
    """The files named on the command line, each folder replaced by its spectrum files (sorted)."""
    from ..readers import expand_paths

    return [Path(p) for p in expand_paths(paths, recursive=recursive)]


def emit_json(doc: Any) -> None:
    sys.stdout.write(dumps(doc))
    sys.stdout.flush()


# -1 quiet, 0 normal, 1 verbose: set once per run by the root options --quiet / --verbose.
_VERBOSITY = [0]


def set_verbosity(level: int) -> None:
    _VERBOSITY[0] = int(level)


def verbosity() -> int:
    return _VERBOSITY[0]


def info(message: str) -> None:
    """A line for the person at the terminal (stderr); silent under ``--quiet``."""
    if _VERBOSITY[0] >= 0:
        typer.echo(message, err=True)


def write_output(
    path: Path,
    text: str | bytes,
    *,
    overwrite: bool,
    inputs: Iterable = (),
    dialect: str = "comma",
    announce: bool = True,
    provenance_doc: dict | None = None,
) -> None:
    """Write ``text`` atomically; CSV text becomes a workbook for ``.xlsx`` or ``dialect`` CSV for ``.csv``.

    ``provenance_doc`` (the command's :func:`cctkit.analysis.provenance`, with the interpolation
    actually used) fills the workbook's provenance sheet; default: the library defaults."""
    inputs = list(inputs)
    suffix = Path(path).suffix.lower()
    if suffix == ".xlsx" and isinstance(text, str):
        from ..analysis import provenance
        from ..spreadsheet import csv_to_xlsx

        text = csv_to_xlsx(text, provenance=provenance_doc or provenance(), inputs=inputs)
    elif suffix == ".csv" and isinstance(text, str):
        from ..spreadsheet import csv_in_dialect

        text = csv_in_dialect(text, dialect)
    from ..safe_io import atomic_write

    atomic_write(path, text, overwrite=overwrite, inputs=inputs)
    if announce:
        info(f"wrote {path}")


def require_suffix(path: Path, allowed: tuple[str, ...], option: str = "--output") -> str:
    suffix = path.suffix.lower()
    if suffix not in allowed:
        raise InputError(f"{option} must end in {' or '.join(allowed)}, got {path.name!r}")
    return suffix


def spectrum_file_text(suffix: str, name: str, values, *, quantity: str, unit: str, column: str, comment: str) -> str:
    """One spectrum on the working grid as the text of a CSV or JSON file our readers read back.

    ``suffix`` is ``".csv"`` or ``".json"``; ``column`` is the CSV value header (with its unit),
    ``comment`` the CSV's first line (without ``#``).
    """
    from ..constants import WAVELENGTH_NM

    if suffix == ".csv":
        return f"# {comment}\n" + csv_text(["wavelength (nm)", column], zip(WAVELENGTH_NM.tolist(), values.tolist()))
    doc: dict[str, Any] = {"quantity": quantity}
    if unit:
        doc["unit"] = unit
    doc["wavelength_nm"] = WAVELENGTH_NM.tolist()
    doc["spectra"] = [{"name": name, "values": values.tolist()}]
    return dumps(doc)


def parse_dominant_white(value: str) -> str:
    """The ``--dominant-white`` choice, checked (:func:`cctkit.dominant.resolve_white`); returns its name."""
    from ..dominant import resolve_white

    try:
        return resolve_white(value)[0]
    except InputError as exc:
        raise InputError(f"--dominant-white: {exc.reason}") from None


def parse_interpolation(value: str) -> str:
    """The ``--interpolation`` choice, checked (one of :data:`cctkit.spectra.INTERPOLATION_METHODS`)."""
    from ..spectra import INTERPOLATION_METHODS

    key = str(value).strip().lower()
    if key not in INTERPOLATION_METHODS:
        raise InputError(f"--interpolation must be one of {', '.join(INTERPOLATION_METHODS)}, got {value!r}")
    return key


def ending_process():
    """Around a report written just before the process ends: :func:`cctkit.report.build.process_ends_after`
    (no garbage collection of the report's objects) when the command runs from the console entry
    point, which exits afterwards; nothing when it runs inside another program (a test's runner,
    a script calling the app), whose memory must be collected as usual."""
    from contextlib import nullcontext

    from . import CONSOLE_RUN

    if not CONSOLE_RUN:
        return nullcontext()
    from ..report.build import process_ends_after

    return process_ends_after()
