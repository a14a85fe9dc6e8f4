"""``cctkit batch``: every measure for many spectra, streamed chunk by chunk to CSV or Parquet."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Optional

import typer

from ..errors import InputError
from .options import INTERPOLATION_OPTION, OBSERVER_HELP, OVERWRITE_OPTION, parse_interpolation, QUANTITY_HELP, info, parse_observer, require_suffix


def batch_cmd(
    input_path: Path = typer.Argument(
        ..., metavar="INPUT",
        help="Wide CSV (one spectrum per row, header = wavelengths in nm), a spectrum file, "
        "a folder of spectrum files, or a Parquet file.",
    ),
    output: Path = typer.Option(..., "--output", "-o", help="Results file: .csv or .parquet (one row per spectrum)."),
    chunk_size: int = typer.Option(4096, "--chunk-size", help="Spectra per chunk; memory grows with it [spectra]."),
    workers: Optional[int] = typer.Option(None, "--workers", help="Local worker processes (default: one per available CPU, at most one per chunk)."),
    scheduler: Optional[str] = typer.Option(None, "--scheduler", help="Run the chunks on a Dask scheduler, e.g. tcp://host:8786."),
    quantity: Optional[str] = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    observer: str = typer.Option("2", "--observer", help=OBSERVER_HELP),
    rendering: bool = typer.Option(True, "--rendering/--no-rendering", help="Compute CIE 13.3 and TM-30 colour rendering (the costly part)."),
    overwrite: bool = OVERWRITE_OPTION,
    progress: bool = typer.Option(False, "--progress", help="Show progress on stderr even when it is not a terminal."),
    quiet: bool = typer.Option(False, "--quiet", help="No progress and no summary line (as cctkit --quiet)."),
    interpolation: str = INTERPOLATION_OPTION,
) -> None:
    """Every measure for many spectra, written chunk by chunk to one CSV or Parquet file."""
    from ..analysis import provenance
    from ..batch import Progress, run_batch
    from ..readers.wide import open_chunked
    from ..safe_io import check_output_path
    from ..spectra import Quantity

    require_suffix(output, (".csv", ".parquet"))
    obs = parse_observer(observer)
    interp = parse_interpolation(interpolation)
    if chunk_size < 1:
        raise InputError(f"--chunk-size must be at least 1, got {chunk_size}")
    if workers is not None and workers < 1:
        raise InputError(f"--workers must be at least 1, got {workers}")
    if scheduler is not None and not scheduler.strip():
        raise InputError("--scheduler must be an address such as tcp://host:8786")
    if quantity is not None:
        Quantity.parse(quantity, source="--quantity")
    check_output_path(output, overwrite=overwrite, inputs=[input_path])  # fail before reading anything
    source = open_chunked(input_path, chunk_size=chunk_size, quantity=quantity, interpolation=interp)
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
        overwrite=overwrite,
        progress=bar,
        metadata={**provenance(interpolation=interp), "input": str(input_path), "rendering": rendering},
    )
    if not quiet:
        info(
            f"wrote {summary.output}: {summary.spectra} spectra in {summary.chunks} chunks, "
            f"{summary.elapsed_s:.1f} s ({summary.spectra_per_s:,.0f} spectra/s, {summary.executor})"
        )


def register(app: typer.Typer) -> None:
    app.command("batch")(batch_cmd)
