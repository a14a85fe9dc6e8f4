"""Command ``uncertainty``: every measure with its Monte Carlo uncertainty (and the GUM u beside it)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import typer

from .options import (
    DOMINANT_WHITE_OPTION,
    JSON_OPTION,
    OBSERVER_HELP,
    OVERWRITE_OPTION,
    QUANTITY_HELP,
    RECURSIVE_OPTION,
    dumps,
    emit_json,
    info,
    input_files,
    parse_dominant_white,
    parse_observer,
    require_suffix,
    write_output,
)

MODEL_HELP = "Uncertainty model of the instrument (TOML; see the README, 'Uncertainty model files')."


def _n(v: Any, d: int) -> str:
    return "n/a" if v is None else f"{v:.{d}f}"


def uncertainty_table(doc: dict[str, Any]) -> str:
    """The human table: value, u, U (k = 2), 95 % interval and the GUM u, per spectrum and measure."""
    from ..spectra import Quantity
    from ..uncertainty import TABLE_ROWS, decimals_for, unit_of

    lines = []
    model = doc["uncertainty_model"]
    lines.append(
        f"model {model['file']} (SHA-256 {model['sha256'][:12]}...); k = 2, 95 % intervals "
        "probabilistically symmetric (JCGM 101)"
    )
    for rec in doc["spectra"]:
        mc = rec["montecarlo"]
        how = (
            f"adaptive, {mc['stages']} stages, "
            + ("stable" if mc["converged"] else "NOT stable at max_draws: " + ", ".join(mc.get("unstable", [])))
            if doc["uncertainty_method"]["adaptive"]
            else "fixed"
        )
        lines.append("")
        lines.append(f"{rec['name']}  ({rec['source']}; M = {mc['draws_M']} draws, {how})")
        head = f"  {'measure':<24} {'value':>12} {'u':>10} {'U (k=2)':>10}  {'95 % interval':<25} {'u GUM':>10}  unit"
        lines.append(head)
        lines.append("  " + "-" * (len(head) - 2))
        for key, label in TABLE_ROWS:
            e = rec.get(key)
            if not isinstance(e, dict):
                continue
            unit = unit_of(key, Quantity(rec["quantity"]))
            unit = "" if unit == "1" else unit
            d = decimals_for(e["u"])
            lo, hi = e["interval_95"]
            interval = f"[{_n(lo, d)}, {_n(hi, d)}]"
            gum = _n(e.get("u_gum"), d + 1) if "u_gum" in e else ""
            lines.append(
                f"  {label:<24} {_n(e['value'], d):>12} {_n(e['u'], d + 1):>10} {_n(e['U'], d + 1):>10}  "
                f"{interval:<25} {gum:>10}  {unit}".rstrip()
            )
            if key == "dominant_wavelength_nm" and doc.get("dominant_white"):
                lines[-1] += f"  (from white {doc['dominant_white']})"
    lines.append("")
    lines.append("R1-R14, X Y Z and the draws' mean are in --json and the CSV.  " + doc["caution"])
    return "\n".join(lines)


def uncertainty_cmd(
    files: list[Path] = typer.Argument(..., help="Spectrum files (CSV/TSV/TXT, JSON, IES TM-27 XML)."),
    model_file: Path = typer.Option(..., "--model", help=MODEL_HELP),
    quantity: str | None = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    observer: str = typer.Option("2", "--observer", help=OBSERVER_HELP),
    repeats: bool = typer.Option(
        False,
        "--as-repeats",
        help="Take every spectrum read as a repeat scan of one "
        "sample: their mean is measured, their scatter is the type-A component (4 or more).",
    ),
    recursive: bool = RECURSIVE_OPTION,
    json_out: bool = JSON_OPTION,
    output: Path | None = typer.Option(None, "--output", "-o", help="Write the results to FILE (.json or .csv)."),
    report: Path | None = typer.Option(None, "--report", help="Also write the uncertainty report to FILE (.pdf)."),
    overwrite: bool = OVERWRITE_OPTION,
    dominant_white: str = DOMINANT_WHITE_OPTION,
) -> None:
    """Every measure with value, standard uncertainty u, U (k = 2) and 95 % interval (Monte Carlo, JCGM 101)."""
    from ..analysis import read_files
    from ..errors import InputError
    from ..safe_io import check_output_path
    from ..spectra import Quantity
    from ..uncertainty import grid_groups, load_model, monte_carlo

    obs = parse_observer(observer)
    white = parse_dominant_white(dominant_white)
    if quantity is not None:
        Quantity.parse(quantity, source="--quantity")
    inputs = [*files, model_file]
    if output is not None:
        require_suffix(output, (".json", ".csv"))
        check_output_path(output, overwrite=overwrite, inputs=inputs)
    if report is not None:
        require_suffix(report, (".pdf",), option="--report")
        if output is not None and report.resolve() == output.resolve():
            raise InputError("--report and --output name the same file", source=str(report))
        check_output_path(report, overwrite=overwrite, inputs=inputs)
    model = load_model(model_file)
    files = input_files(files, recursive=recursive)
    items = read_files(files, quantity=quantity)
    if repeats and len({s.wavelength_nm.tobytes() for s in items}) > 1:
        from ..spectra import to_working_grid

        items = [to_working_grid(s) for s in items]  # scans on different axes: compared on the working grid
    spectra = grid_groups(items)

    def progress(i: int, n: int, m: int) -> None:
        info(f"spectrum {i}/{n}: {m} draws")

    def stage(i: int, m: int) -> None:
        info(f"spectrum {i}: {m} draws so far (adaptive, JCGM 101 7.9)")

    result = monte_carlo(
        spectra, model, observer=obs, repeats=repeats, progress=progress, stage_progress=stage, dominant_white=white
    )
    doc = result.document()
    if output is not None:
        text = dumps(doc) if output.suffix.lower() == ".json" else result.csv()
        write_output(output, text, overwrite=overwrite, inputs=inputs)
    if report is not None:
        from ..report.uncertainty import write_uncertainty_report

        write_uncertainty_report(result, report, overwrite=overwrite, inputs=inputs)
        info(f"wrote {report}")
    if json_out:
        emit_json(doc)
    else:
        typer.echo(uncertainty_table(doc))


def register(app: typer.Typer) -> None:
    app.command("uncertainty")(uncertainty_cmd)
