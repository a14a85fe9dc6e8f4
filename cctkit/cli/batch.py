"""``cctkit batch``: every measure for many spectra, streamed chunk by chunk to CSV or Parquet."""

from __future__ import annotations

import sys
from pathlib import Path

import typer

from ..errors import InputError
from .options import (
    CSV_DIALECT_OPTION,
    DOMINANT_WHITE_OPTION,
    INTERPOLATION_OPTION,
    OBSERVER_HELP,
    OVERWRITE_OPTION,
    QUANTITY_HELP,
    RECURSIVE_OPTION,
    info,
    parse_dominant_white,
    parse_interpolation,
    parse_observer,
    require_suffix,
    write_output,
)

#: Exit status of a run that finished but skipped inputs it could not read (``--skip-bad``).
EXIT_SKIPPED = 4


def batch_cmd(
    input_path: Path = typer.Argument(
        ...,
        metavar="INPUT",
        help="Wide CSV (one spectrum per row, header = wavelengths in nm), a spectrum file, "
        "a folder of spectrum files, or a Parquet file.",
    ),
    output: Path = typer.Option(
        ...,
        "--output",
        "-o",
        help="Results file: .csv, .parquet or .xlsx (one row per spectrum; .xlsx holds at most 1,048,575 rows).",
    ),
    chunk_size: int = typer.Option(4096, "--chunk-size", help="Spectra per chunk; memory grows with it [spectra]."),
    workers: int | None = typer.Option(
        None, "--workers", help="Local worker processes (default: one per available CPU, at most one per chunk)."
    ),
    scheduler: str | None = typer.Option(
        None, "--scheduler", help="Run the chunks on a Dask scheduler, e.g. tcp://host:8786."
    ),
    quantity: str | None = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    observer: str = typer.Option("2", "--observer", help=OBSERVER_HELP),
    rendering: bool = typer.Option(
        True, "--rendering/--no-rendering", help="Compute CIE 13.3 and TM-30 colour rendering (the costly part)."
    ),
    overwrite: bool = OVERWRITE_OPTION,
    progress: bool = typer.Option(False, "--progress", help="Show progress on stderr even when it is not a terminal."),
    quiet: bool = typer.Option(False, "--quiet", help="No progress and no summary line (as cctkit --quiet)."),
    interpolation: str = INTERPOLATION_OPTION,
    dominant_white: str = DOMINANT_WHITE_OPTION,
    resume: bool = typer.Option(
        False,
        "--resume",
        help="CSV output: keep the finished chunks if the run is stopped "
        "or killed, and continue an earlier such run from its last complete chunk.",
    ),
    recursive: bool = RECURSIVE_OPTION,
    csv_dialect: str = CSV_DIALECT_OPTION,
    skip_bad: bool = typer.Option(
        False,
        "--skip-bad",
        help="Skip what cannot be read and go on: a folder's unreadable files, a wide CSV's or Parquet file's bad "
        "rows (text, empty, NaN or infinite cells, wrong cell count, no positive value in 380-780 nm), a long "
        "file's bad value columns.  Each becomes a row (file, line, skipped, cause) of OUTPUT-STEM.errors.csv "
        f"beside the output, and the exit status is {EXIT_SKIPPED} when anything was skipped.",
    ),
) -> None:
    """Every measure for many spectra, written chunk by chunk to one CSV, Parquet or Excel file.

    Exit status: 0 all read; 2 bad input (without --skip-bad the first bad file, row or cell stops the
    run and no output is left); 4 finished with --skip-bad but something was skipped (see the errors file).
    """
    from ..analysis import provenance
    from ..batch import Progress, run_batch
    from ..readers.wide import open_chunked
    from ..safe_io import check_output_path
    from ..spectra import Quantity
    from ..spreadsheet import check_dialect

    suffix = require_suffix(output, (".csv", ".parquet", ".xlsx"))
    csv_dialect = check_dialect(csv_dialect)
    if csv_dialect != "comma" and suffix != ".csv":
        raise InputError(f"--csv-dialect applies to .csv output, not {suffix}")
    if resume and suffix != ".csv":
        raise InputError("--resume works with .csv output")
    obs = parse_observer(observer)
    interp = parse_interpolation(interpolation)
    white = parse_dominant_white(dominant_white)
    if chunk_size < 1:
        raise InputError(f"--chunk-size must be at least 1, got {chunk_size}")
    if workers is not None and workers < 1:
        raise InputError(f"--workers must be at least 1, got {workers}")
    if scheduler is not None and not scheduler.strip():
        raise InputError("--scheduler must be an address such as tcp://host:8786")
    if quantity is not None:
        Quantity.parse(quantity, source="--quantity")
    check_output_path(output, overwrite=overwrite, inputs=[input_path])  # fail before reading anything
    errors_path = errors_file_for(output)
    if skip_bad:
        check_output_path(errors_path, overwrite=overwrite, inputs=[input_path])
    skipped: list[InputError] | None = [] if skip_bad else None
    source = open_chunked(
        input_path, chunk_size=chunk_size, quantity=quantity, recursive=recursive, interpolation=interp, skipped=skipped
    )
    from .options import verbosity

    quiet = quiet or verbosity() < 0
    show = not quiet and (progress or sys.stderr.isatty())
    bar = Progress(source.total, enabled=show)
    summary = run_batch(
        source,
        output,
        workers=workers,
        scheduler=scheduler,
        observer=obs,
        rendering=rendering,
        interpolation=interp,
        dominant_white=white,
        overwrite=overwrite,
        progress=bar,
        metadata={**provenance(interpolation=interp), "input": str(input_path), "rendering": rendering},
        resume=resume,
        csv_dialect=csv_dialect,
    )
    for note in summary.notes:
        info(f"note: {note}")
    if skipped is not None:
        write_output(errors_path, errors_csv(skipped), overwrite=overwrite, inputs=[input_path], dialect=csv_dialect)
    if not quiet:
        info(
            f"wrote {summary.output}: {summary.spectra} spectra in {summary.chunks} chunks, "
            f"{summary.elapsed_s:.1f} s ({summary.spectra_per_s:,.0f} spectra/s, {summary.executor})"
        )
        if skipped:
            info(f"skipped {skipped_text(skipped)} that could not be read; see {errors_path}")
    if skipped:
        raise typer.Exit(EXIT_SKIPPED)


def errors_file_for(output: Path) -> Path:
    """Where ``batch --skip-bad`` writes its errors table: ``STEM.errors.csv`` beside ``output``."""
    return output.with_name(f"{output.stem}.errors.csv")


def errors_csv(errors: list[InputError]) -> str:
    """One row per skipped part of the input: file, line (empty when none applies), what was
    skipped (file, row or column), cause."""
    from ..formats import csv_text

    return csv_text(["file", "line", "skipped", "cause"], ([e.source or "", e.line, e.part, e.reason] for e in errors))


def skipped_text(errors: list[InputError]) -> str:
    """``"3 files, 25 rows"``: what was skipped, counted by kind."""
    counts: dict[str, int] = {}
    for e in errors:
        counts[e.part] = counts.get(e.part, 0) + 1
    return ", ".join(f"{n} {part}{'s' if n != 1 else ''}" for part, n in counts.items())


def register(app: typer.Typer) -> None:
    app.command("batch")(batch_cmd)
